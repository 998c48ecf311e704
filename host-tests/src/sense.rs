//! Current sensing as firmware sees it: ADC counts with quantisation and
//! deterministic noise.

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

/// How an ADC channel converts current into counts.
///
/// `code = round(i/full_scale·2^bits + offset + noise)`, clamped to
/// `[0, 2^bits − 1]` (unipolar), with `noise` Gaussian of
/// `noise_lsb_rms` counts RMS.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AdcConfig {
    /// Resolution in bits (1…16).
    pub bits: u8,
    /// Current that maps to `2^bits` counts, A (> 0).
    pub full_scale_amps: f64,
    /// Gaussian noise, counts RMS (≥ 0).
    pub noise_lsb_rms: f64,
    /// Offset error, counts (finite).
    pub offset_lsb: f64,
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
        check(self.offset_lsb.is_finite(), "adc.offset_lsb")
    }

    /// Convert a current to a code, drawing noise from `rng`.
    pub fn convert(&self, amps: f64, rng: &mut Prng) -> u16 {
        let max = ((1u32 << self.bits) - 1) as f64;
        let mut x = amps / self.full_scale_amps * (1u32 << self.bits) as f64 + self.offset_lsb;
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
