//! Sampled current traces: the sample type, how the samples were taken, and a fixed buffer.

use crate::error::{finite, non_negative, positive, Error, Param, Why};
use crate::units::{Amps, Seconds};

/// One sample of the sense input: a raw ADC count or a value already in amperes.
///
/// `to_f32` is exact for every integer up to 2²⁴ (all 8-, 12- and 16-bit converters).
pub trait Sample: Copy {
    /// Whether samples are integer counts (quantised to 1, adding 1/√12 RMS noise).
    const IS_INTEGER: bool;
    /// The sample as an `f32` (count or amperes; may be NaN/∞ for float samples).
    fn to_f32(self) -> f32;
    /// Whether every value of the type is an integer of magnitude at most 2¹⁶, so that
    /// [`Sample::to_count`] and [`Sample::to_f32`] both give it exactly (`u8`, `u16`, `i16`).
    /// The fit then checks the trace in integer arithmetic. Default `false`.
    const EXACT_COUNT: bool = false;
    /// The sample as an integer count; exact when [`Sample::EXACT_COUNT`] holds, otherwise
    /// unused by the crate (the default returns 0).
    #[inline]
    fn to_count(self) -> i32 {
        0
    }
}

macro_rules! sample_int {
    ($exact:literal: $($t:ty),*) => {$(
        impl Sample for $t {
            const IS_INTEGER: bool = true;
            #[inline]
            fn to_f32(self) -> f32 {
                self as f32
            }
            const EXACT_COUNT: bool = $exact;
            #[inline]
            fn to_count(self) -> i32 {
                // Lossless for the exact types; wraps for large u32, whose EXACT_COUNT is false.
                self as i32
            }
        }
    )*};
}
sample_int!(true: u8, u16, i16);
sample_int!(false: u32, i32);

impl Sample for f32 {
    const IS_INTEGER: bool = false;
    #[inline]
    fn to_f32(self) -> f32 {
        self
    }
}

/// How a trace was sampled: `current_k = (raw_k − zero)·amps_per_count` at `t_k = first + k·period`
/// after switch-on.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Sampling {
    period: f32,
    first: f32,
    amps_per_count: f32,
    zero: f32,
    full_scale: f32,
    noise: f32,
    floor: f32,
}

impl Sampling {
    /// Longest sample period and latest first sample the model takes, s (1000 s). A coil rise
    /// sampled slower than this is no rise; the bound keeps every sample time
    /// `first + k·period` finite in f32 for any index a slice can hold (k < 2⁶⁴).
    pub const MAX_TIME: Seconds = Seconds::new(1.0e3);

    /// Shortest sample period the model takes, s (1 ps, far below any converter): a shorter one
    /// makes sample times and the fitted τ underflow.
    pub const MIN_PERIOD: Seconds = Seconds::new(1.0e-12);

    /// Range of `amps_per_count` the model takes, A per raw unit (10⁻¹⁵ … 10¹⁵): beyond it the
    /// currents and their squares leave f32's normal range.
    pub const SCALE_RANGE: (f32, f32) = (1.0e-15, 1.0e15);

    /// Samples every `period` (s, [`Sampling::MIN_PERIOD`] ≤ period ≤ [`Sampling::MAX_TIME`])
    /// scaled by `amps_per_count` (A per count, within [`Sampling::SCALE_RANGE`]; 1.0 for samples
    /// already in amperes).
    /// Defaults: first sample at switch-on (t = 0), zero at count 0, no saturation level, no noise
    /// beyond quantisation.
    ///
    /// # Errors
    /// [`Error::Invalid`]: [`Param::Time`] for the period, [`Param::Current`] for the scale
    /// ([`Why::OutOfRange`] outside the ranges above).
    pub fn new(period: Seconds, amps_per_count: f32) -> Result<Self, Error> {
        let period = at_most_max_time(positive(period.value(), Param::Time)?)?;
        if period < Self::MIN_PERIOD.value() {
            return Err(Error::invalid(Param::Time, Why::OutOfRange));
        }
        let apc = positive(amps_per_count, Param::Current)?;
        if !(Self::SCALE_RANGE.0..=Self::SCALE_RANGE.1).contains(&apc) {
            return Err(Error::invalid(Param::Current, Why::OutOfRange));
        }
        Ok(Self {
            period,
            first: 0.0,
            amps_per_count: apc,
            zero: 0.0,
            full_scale: f32::INFINITY,
            noise: 0.0,
            floor: f32::NEG_INFINITY,
        })
    }

    /// An `bits`-bit converter (1…24) whose top count `2^bits − 1` reads `full_scale` amperes:
    /// `amps_per_count = full_scale/(2^bits − 1)`, and counts at the top are taken as saturated.
    ///
    /// # Errors
    /// As [`Sampling::new`]; `bits` outside 1…24: [`Param::Current`] / [`Why::OutOfRange`].
    pub fn adc(period: Seconds, bits: u8, full_scale: Amps) -> Result<Self, Error> {
        if !(1..=24).contains(&bits) {
            return Err(Error::invalid(Param::Current, Why::OutOfRange));
        }
        let top = ((1u32 << bits) - 1) as f32;
        let fs = positive(full_scale.value(), Param::Current)?;
        let mut s = Self::new(period, fs / top)?;
        s.full_scale = top;
        s.floor = 0.0;
        Ok(s)
    }

    /// The same sampling with the first sample `first` seconds after switch-on (finite,
    /// 0 ≤ first ≤ [`Sampling::MAX_TIME`]).
    pub fn with_first_sample(mut self, first: Seconds) -> Result<Self, Error> {
        self.first = at_most_max_time(non_negative(first.value(), Param::Time)?)?;
        Ok(self)
    }

    /// The same sampling with the raw value that reads zero current (finite; from a reading taken
    /// with the switch off).
    pub fn with_zero(mut self, zero: f32) -> Result<Self, Error> {
        self.zero = finite(zero, Param::Current)?;
        Ok(self)
    }

    /// The same sampling with the raw value at and above which the converter is saturated
    /// (finite, > zero; `f32::INFINITY` for none).
    pub fn with_full_scale(mut self, full_scale: f32) -> Result<Self, Error> {
        if full_scale.is_nan() {
            return Err(Error::invalid(Param::Current, Why::NotFinite));
        }
        if full_scale <= self.zero {
            return Err(Error::invalid(Param::Current, Why::Inverted));
        }
        self.full_scale = full_scale;
        Ok(self)
    }

    /// The same sampling with the converter's RMS noise in raw units (finite, ≥ 0), quantisation
    /// excluded (it is added as 1/√12 count).
    pub fn with_noise(mut self, rms: f32) -> Result<Self, Error> {
        self.noise = non_negative(rms, Param::Current)?;
        Ok(self)
    }

    /// The same sampling with the raw value at and below which the converter is clipped at its
    /// bottom (finite, or `f32::NEG_INFINITY` for none; [`Sampling::adc`] sets count 0): a
    /// negative offset reads there while the current is still small.
    ///
    /// # Errors
    /// NaN or +∞: [`Error::Invalid`] ([`Param::Current`], [`Why::NotFinite`]).
    pub fn with_floor(mut self, floor: f32) -> Result<Self, Error> {
        if floor.is_nan() || floor == f32::INFINITY {
            return Err(Error::invalid(Param::Current, Why::NotFinite));
        }
        self.floor = floor;
        Ok(self)
    }

    /// Raw value at and below which the converter is clipped (−∞: none).
    pub const fn floor(&self) -> f32 {
        self.floor
    }

    /// Sample period, s.
    pub const fn period(&self) -> Seconds {
        Seconds::new(self.period)
    }
    /// Time of the first sample after switch-on, s.
    pub const fn first(&self) -> Seconds {
        Seconds::new(self.first)
    }
    /// Amperes per raw unit.
    pub const fn amps_per_count(&self) -> f32 {
        self.amps_per_count
    }
    /// Raw value of zero current.
    pub const fn zero(&self) -> f32 {
        self.zero
    }
    /// Raw saturation level (∞: none).
    pub const fn full_scale(&self) -> f32 {
        self.full_scale
    }
    /// Converter noise, RMS raw units (quantisation excluded).
    pub const fn noise(&self) -> f32 {
        self.noise
    }

    /// Total RMS noise in raw units, quantisation included: `√(σ² + 1/12)`.
    pub fn total_noise(&self) -> f32 {
        libm::sqrtf(self.noise * self.noise + 1.0 / 12.0)
    }

    /// Time of sample `k`: `t_k = first + k·period`, s (f32; exact to rounding for k < 2²⁴;
    /// finite and ≥ 0 for every `k`, by the bounds on `first` and `period`).
    pub fn time_of(&self, k: usize) -> Seconds {
        Seconds::new(self.first + k as f32 * self.period)
    }

    /// A raw value in amperes: `(raw − zero)·amps_per_count`.
    pub fn amps(&self, raw: f32) -> f32 {
        (raw - self.zero) * self.amps_per_count
    }
}

/// `Ok(t)` for a time within [`Sampling::MAX_TIME`], else [`Param::Time`] / [`Why::OutOfRange`].
fn at_most_max_time(t: f32) -> Result<f32, Error> {
    if t > Sampling::MAX_TIME.value() {
        return Err(Error::invalid(Param::Time, Why::OutOfRange));
    }
    Ok(t)
}

/// A fixed-capacity trace buffer of `N` samples (no heap), filled in time order.
#[derive(Clone, Debug, Default)]
pub struct SampleBuffer<S, const N: usize> {
    samples: heapless::Vec<S, N>,
}

impl<S: Sample, const N: usize> SampleBuffer<S, N> {
    /// An empty buffer (usable in a `static`).
    pub const fn new() -> Self {
        Self {
            samples: heapless::Vec::new(),
        }
    }

    /// Appends a sample; a full buffer hands it back.
    pub fn push(&mut self, sample: S) -> Result<(), S> {
        self.samples.push(sample)
    }

    /// Empties the buffer for the next trace.
    pub fn clear(&mut self) {
        self.samples.clear();
    }

    /// The samples so far, oldest first.
    pub fn as_slice(&self) -> &[S] {
        &self.samples
    }

    /// Number of samples held.
    pub fn len(&self) -> usize {
        self.samples.len()
    }

    /// Whether no sample is held.
    pub fn is_empty(&self) -> bool {
        self.samples.is_empty()
    }

    /// Whether the buffer holds `N` samples.
    pub fn is_full(&self) -> bool {
        self.samples.is_full()
    }

    /// The capacity `N`.
    pub const fn capacity(&self) -> usize {
        N
    }
}

#[cfg(feature = "defmt")]
impl<S: Sample + defmt::Format, const N: usize> defmt::Format for SampleBuffer<S, N> {
    fn format(&self, f: defmt::Formatter) {
        defmt::write!(f, "SampleBuffer({=usize}/{=usize})", self.samples.len(), N)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn adc_scale_and_validation() {
        let s = Sampling::adc(Seconds::from_micros(50.0), 12, Amps::new(0.4095)).unwrap();
        assert!((s.amps_per_count() - 1e-4).abs() < 1e-9);
        assert_eq!(s.full_scale(), 4095.0);
        assert!((s.amps(2047.0) - 0.2047).abs() < 1e-6);
        // Quantisation noise of an ideal converter: 1/√12 LSB (textbook, from memory).
        assert!((s.total_noise() - 0.288_675).abs() < 1e-5);
        assert!(Sampling::adc(Seconds::new(1e-4), 0, Amps::new(1.0)).is_err());
        assert!(Sampling::adc(Seconds::new(1e-4), 25, Amps::new(1.0)).is_err());
        assert!(Sampling::new(Seconds::new(0.0), 1.0).is_err());
        assert!(Sampling::new(Seconds::new(1e-4), f32::NAN).is_err());
        assert!(s.with_first_sample(Seconds::new(-1.0)).is_err());
        assert!(s
            .with_zero(5000.0)
            .unwrap()
            .with_full_scale(4095.0)
            .is_err());
        assert!(s.with_noise(-0.1).is_err());
        assert!((s.time_of(10).value() - 5e-4).abs() < 1e-9);
    }

    /// Found by fuzzing `fit_trace` (issue 11 item 14): a subnormal period (1.4e-45 s) and a
    /// scale of 2e-38 A/count gave a fit with τ = 0 inside `Ok`. Such samplings are refused.
    #[test]
    fn periods_and_scales_outside_the_model_are_refused() {
        let out = Err(Error::invalid(Param::Time, Why::OutOfRange));
        assert_eq!(Sampling::new(Seconds::new(1.4e-45), 1.0), out);
        assert_eq!(Sampling::new(Seconds::new(1.0e-13), 1.0), out);
        assert_eq!(Sampling::new(Seconds::new(1.0e4), 1.0), out);
        let out = Err(Error::invalid(Param::Current, Why::OutOfRange));
        assert_eq!(Sampling::new(Seconds::new(1e-4), 2.0e-38), out);
        assert_eq!(Sampling::new(Seconds::new(1e-4), 1.0e16), out);
        assert!(Sampling::new(Sampling::MIN_PERIOD, Sampling::SCALE_RANGE.0).is_ok());
        assert!(Sampling::new(Sampling::MAX_TIME, Sampling::SCALE_RANGE.1).is_ok());
    }

    #[test]
    fn buffer_hands_back_when_full() {
        let mut b: SampleBuffer<u16, 3> = SampleBuffer::new();
        assert!(b.is_empty());
        for v in 0..3 {
            b.push(v).unwrap();
        }
        assert!(b.is_full());
        assert_eq!(b.push(9), Err(9));
        assert_eq!(b.as_slice(), &[0, 1, 2]);
        b.clear();
        assert_eq!(b.len(), 0);
        assert_eq!(b.capacity(), 3);
    }
}
