//! Current sensing as firmware sees it: ADC counts with quantisation,
//! converter errors (offset of either sign, gain error, seeded noise,
//! clipping at both ends) and sampling-start latency with jitter.

use crate::observe::SensePoint;
use crate::params::{check, finite_ge0, finite_gt0, SimError};

/// Small deterministic pseudo-random generator (SplitMix64 output function
/// on a Weyl sequence). Not cryptographic; same seed → same sequence on
/// every platform.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Prng {
    state: u64,
}

impl Prng {
    /// A generator from a seed (any value, including 0).
    pub const fn new(seed: u64) -> Self {
        Prng { state: seed }
    }

    /// Next 64 random bits.
    pub fn next_u64(&mut self) -> u64 {
        self.state = self.state.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.state;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// Uniform in (0, 1): 53 random bits, never exactly 0 or 1.
    pub fn uniform(&mut self) -> f64 {
        ((self.next_u64() >> 11) as f64 + 0.5) * (1.0 / (1u64 << 53) as f64)
    }

    /// Standard normal deviate (Box–Muller; mean 0, variance 1).
    pub fn gaussian(&mut self) -> f64 {
        let u1 = self.uniform();
        let u2 = self.uniform();
        libm::sqrt(-2.0 * libm::log(u1)) * libm::cos(2.0 * core::f64::consts::PI * u2)
    }

    /// Normal deviate with a mean and standard deviation.
    pub fn normal(&mut self, mean: f64, sd: f64) -> f64 {
        mean + sd * self.gaussian()
    }
}

/// How an ADC channel converts current into counts, with its errors.
///
/// Transfer (unipolar converter):
///
/// `code = round((1 + g)·i/I_fs·2^bits + offset + noise)`, clipped to
/// `[0, 2^bits − 1]`,
///
/// with `g` the gain error, `offset` in counts of either sign (a negative
/// offset reads small currents as 0: the converter clips at zero, it cannot
/// report below it), and `noise` Gaussian of `noise_lsb_rms` counts RMS from
/// a seeded [`Prng`]. Timing: a burst of conversions triggered at a
/// switch-on edge starts `start_latency_ns + U(0, start_jitter_ns)` after
/// it ([`AdcConfig::start_delay_ns`], used by [`crate::SenseAdc::capture`]).
/// All errors are zero in [`AdcConfig::new`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AdcConfig {
    /// Resolution in bits (1…16).
    pub bits: u8,
    /// Current that maps to `2^bits` counts, A (> 0).
    pub full_scale_amps: f64,
    /// Gaussian noise, counts RMS (≥ 0).
    pub noise_lsb_rms: f64,
    /// Offset error, counts (finite, either sign).
    pub offset_lsb: f64,
    /// Relative gain error `g` (finite, > −1): `+0.01` reads 1 % high.
    pub gain_error: f64,
    /// Fixed delay from the trigger (switch-on edge) to the first
    /// conversion of a burst, ns.
    pub start_latency_ns: u64,
    /// Extra start delay drawn uniformly in `[0, start_jitter_ns]` for each
    /// burst, ns.
    pub start_jitter_ns: u64,
    /// Noise seed.
    pub seed: u64,
    /// What current is sensed.
    pub sense: SensePoint,
}

impl AdcConfig {
    /// A noiseless 12-bit converter on the sense resistor current with the
    /// given full scale.
    pub const fn new(full_scale_amps: f64) -> Self {
        AdcConfig {
            bits: 12,
            full_scale_amps,
            noise_lsb_rms: 0.0,
            offset_lsb: 0.0,
            gain_error: 0.0,
            start_latency_ns: 0,
            start_jitter_ns: 0,
            seed: 1,
            sense: SensePoint::Switch,
        }
    }

    /// Full scale from a shunt, amplifier and reference:
    /// `I_fs = V_ref / (gain · R_sense)`.
    pub fn from_shunt(sense_ohms: f64, ref_volts: f64, gain: f64) -> Self {
        Self::new(ref_volts / (gain * sense_ohms))
    }

    /// Same converter with Gaussian noise (counts RMS) and a seed.
    pub const fn with_noise(mut self, noise_lsb_rms: f64, seed: u64) -> Self {
        self.noise_lsb_rms = noise_lsb_rms;
        self.seed = seed;
        self
    }

    /// Same converter with static errors: offset (counts, either sign),
    /// relative gain error, Gaussian noise (counts RMS) and its seed.
    pub const fn with_errors(
        mut self,
        offset_lsb: f64,
        gain_error: f64,
        noise_lsb_rms: f64,
        seed: u64,
    ) -> Self {
        self.offset_lsb = offset_lsb;
        self.gain_error = gain_error;
        self.noise_lsb_rms = noise_lsb_rms;
        self.seed = seed;
        self
    }

    /// Same converter with a sampling-start latency and jitter (ns).
    pub const fn with_start_delay(mut self, latency_ns: u64, jitter_ns: u64) -> Self {
        self.start_latency_ns = latency_ns;
        self.start_jitter_ns = jitter_ns;
        self
    }

    /// Delay of a burst's first conversion after its trigger, ns:
    /// `start_latency_ns + U(0, start_jitter_ns)` (uniform, whole ns; draws
    /// from `rng` only when the jitter is non-zero).
    pub fn start_delay_ns(&self, rng: &mut Prng) -> u64 {
        if self.start_jitter_ns == 0 {
            return self.start_latency_ns;
        }
        let span = self.start_jitter_ns.saturating_add(1);
        let extra = (rng.uniform() * span as f64) as u64;
        self.start_latency_ns
            .saturating_add(extra.min(self.start_jitter_ns))
    }

    /// Same converter with a different resolution.
    pub const fn with_bits(mut self, bits: u8) -> Self {
        self.bits = bits;
        self
    }

    /// Same converter on another sense point.
    pub const fn with_sense(mut self, sense: SensePoint) -> Self {
        self.sense = sense;
        self
    }

    /// Amperes per count.
    pub fn amps_per_count(&self) -> f64 {
        self.full_scale_amps / (1u32 << self.bits) as f64
    }

    pub(crate) fn validate(&self) -> Result<(), SimError> {
        check((1..=16).contains(&self.bits), "adc.bits")?;
        finite_gt0(self.full_scale_amps, "adc.full_scale_amps")?;
        finite_ge0(self.noise_lsb_rms, "adc.noise_lsb_rms")?;
        check(self.offset_lsb.is_finite(), "adc.offset_lsb")?;
        check(
            self.gain_error.is_finite() && self.gain_error > -1.0,
            "adc.gain_error",
        )
    }

    /// Convert a current (A) to a code, drawing noise from `rng` (one
    /// Gaussian draw when the noise is non-zero). The transfer is in the
    /// type docs; NaN converts to 0.
    pub fn convert(&self, amps: f64, rng: &mut Prng) -> u16 {
        let max = ((1u32 << self.bits) - 1) as f64;
        let mut ideal = amps / self.full_scale_amps * (1u32 << self.bits) as f64;
        if self.gain_error != 0.0 {
            ideal *= 1.0 + self.gain_error;
        }
        let mut x = ideal + self.offset_lsb;
        if self.noise_lsb_rms > 0.0 {
            x += self.noise_lsb_rms * rng.gaussian();
        }
        let r = libm::round(x);
        if r.is_nan() || r <= 0.0 {
            0
        } else if r >= max {
            max as u16
        } else {
            r as u16
        }
    }
}

/// Errors of a channel's current comparator ([`crate::Comparator`]): an
/// input offset and a propagation delay, set with
/// [`crate::Bench::set_comparator_errors`] at any time.
///
/// The comparator trips when the sensed current first reaches
/// `threshold + offset_amps` after a switch-on, and reports the trip
/// `delay_ns` later: [`crate::ChannelStats::comparator_trip_ns`] and the
/// [`crate::EventKind::ComparatorTrip`] event carry the delayed time (so the
/// event can precede, in a recording, events of the following `delay_ns`).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct ComparatorErrors {
    /// Input offset referred to the sensed current, A (finite, either sign).
    pub offset_amps: f64,
    /// Propagation delay from the crossing to the reported trip, ns.
    pub delay_ns: u64,
}

impl ComparatorErrors {
    /// No offset, no delay.
    pub const NONE: Self = ComparatorErrors {
        offset_amps: 0.0,
        delay_ns: 0,
    };
}
