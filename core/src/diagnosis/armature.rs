//! Armature movement: the dip in the rising current.
//!
//! While the armature travels, the inductance rises as the air gap closes and the flux linkage
//! `λ = L(x)·i` obeys `dλ/dt = V − R·i`, so `L·di/dt = V − R·i − i·(dL/dx)·ẋ`: the motional term
//! `i·(dL/dx)·ẋ` pulls the current down. The trace rises, peaks as the armature starts to move
//! fast, falls to a valley when it seats, and rises again towards the same I∞ with the larger
//! (operated) inductance. No dip after the current has passed pull-in means the armature did not
//! move (or moved too slowly to show, which a coil of this kind should not do).

use super::fit::TraceFault;
use super::sample::{Sample, Sampling};
use crate::units::{Amps, Seconds};

/// Dip detection settings.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub struct MovementCriteria {
    /// A dip must be deeper than this many noise RMS (default 8).
    pub sigmas: f32,
    /// …and deeper than this fraction of the peak (default 0.01).
    pub min_depth: f32,
}

impl Default for MovementCriteria {
    fn default() -> Self {
        Self {
            sigmas: 8.0,
            min_depth: 0.01,
        }
    }
}

/// What the trace shows of the armature.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Movement {
    /// The current dipped: the armature moved.
    Moved {
        /// Time of the peak before the dip (the armature is travelling), s after switch-on.
        at: Seconds,
        /// Time of the valley (the armature seated), s after switch-on.
        seated: Seconds,
        /// Current at the peak, A.
        peak: Amps,
        /// Depth of the dip, peak − valley, A.
        depth: Amps,
    },
    /// No dip in the whole trace, which ends at `by` (s after switch-on).
    NotSeen {
        /// Time of the last sample examined, s.
        by: Seconds,
    },
}

/// Finds the first dip deeper than the criteria in one pass: track the running peak; the first
/// sample below it by more than `max(sigmas·σ, min_depth·peak)` (σ: converter noise with
/// quantisation) confirms a dip; the valley is the lowest sample after the peak until the current
/// climbs back by the same amount or the trace ends. Samples at or above saturation end the scan.
///
/// O(1) memory; never panics. Every field of the result is finite; times ≥ 0, `seated ≥ at`,
/// `depth ≥ 0`.
///
/// # Errors
/// [`TraceFault::NotFinite`] for a NaN/∞ sample, and for a finite sample whose current
/// `(raw − zero)·amps_per_count` — or the dip's depth in amperes — overflows f32 (index of that
/// sample: no converter reads such a value); [`TraceFault::TooFewSamples`] for an empty trace.
pub fn detect_movement<S: Sample>(
    samples: &[S],
    sampling: &Sampling,
    criteria: &MovementCriteria,
) -> Result<Movement, TraceFault> {
    let quantum = if S::IS_INTEGER { 1.0f32 } else { 0.0 };
    let noise = libm::sqrtf(sampling.noise() * sampling.noise() + quantum / 12.0);
    let sigmas = if criteria.sigmas.is_finite() {
        criteria.sigmas.max(0.0)
    } else {
        8.0
    };
    let depth = if criteria.min_depth.is_finite() {
        criteria.min_depth.max(0.0)
    } else {
        0.01
    };
    let mut peak = f32::NEG_INFINITY;
    let mut peak_k = 0usize;
    // (peak index, valley value, valley index) once a dip is confirmed.
    let mut dip: Option<(usize, f32, f32, usize)> = None;
    let mut last = None;
    for (k, s) in samples.iter().enumerate() {
        let x = s.to_f32();
        if !x.is_finite() {
            return Err(TraceFault::NotFinite { index: k as u32 });
        }
        if x >= sampling.full_scale() {
            break;
        }
        last = Some(k);
        let c = x - sampling.zero();
        if !(c * sampling.amps_per_count()).is_finite() {
            return Err(TraceFault::NotFinite { index: k as u32 });
        }
        match dip {
            None => {
                if c > peak {
                    peak = c;
                    peak_k = k;
                } else {
                    let thr = (sigmas * noise).max(depth * peak.abs());
                    if peak - c > thr {
                        dip = Some((peak_k, peak, c, k));
                    }
                }
            }
            Some((pk, pv, valley, vk)) => {
                let thr = (sigmas * noise).max(depth * pv.abs());
                if c < valley {
                    dip = Some((pk, pv, c, k));
                } else if c - valley > thr {
                    let _ = vk;
                    break;
                }
            }
        }
    }
    let Some(last) = last else {
        return Err(TraceFault::TooFewSamples { usable: 0 });
    };
    let apc = sampling.amps_per_count();
    Ok(match dip {
        Some((pk, pv, valley, vk)) => {
            // Peak and valley are finite in amperes (checked above); their difference need not be.
            let depth = (pv - valley) * apc;
            if !depth.is_finite() {
                return Err(TraceFault::NotFinite { index: vk as u32 });
            }
            Movement::Moved {
                at: sampling.time_of(pk),
                seated: sampling.time_of(vk),
                peak: Amps::new(pv * apc),
                depth: Amps::new(depth),
            }
        }
        None => Movement::NotSeen {
            by: sampling.time_of(last),
        },
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    extern crate std;
    use std::vec::Vec;

    fn trace_with_dip() -> Vec<u16> {
        // A rise, a 15 % dip between samples 40 and 55, then a slower rise (shape only).
        (0..100)
            .map(|k| {
                let k = k as f32;
                let rise = 3000.0 * (1.0 - libm::expf(-k / 25.0));
                let dip = if (40.0..70.0).contains(&k) {
                    let x = (k - 40.0) / 30.0;
                    450.0 * libm::sinf(core::f32::consts::PI * x)
                } else {
                    0.0
                };
                (rise - dip) as u16
            })
            .collect()
    }

    #[test]
    fn finds_the_dip_and_its_valley() {
        let s = Sampling::adc(Seconds::new(1e-4), 12, Amps::new(4.095)).unwrap();
        let m = detect_movement(&trace_with_dip(), &s, &MovementCriteria::default()).unwrap();
        let Movement::Moved {
            at, seated, depth, ..
        } = m
        else {
            panic!("no dip found: {m:?}");
        };
        assert!(at.value() > 3.5e-3 && at.value() < 4.6e-3, "{at:?}");
        assert!(seated.value() > at.value());
        assert!(depth.value() > 0.1);
    }

    #[test]
    fn a_plain_rise_has_no_dip() {
        let s = Sampling::adc(Seconds::new(1e-4), 12, Amps::new(4.095)).unwrap();
        let t: Vec<u16> = (0..100)
            .map(|k| (3000.0 * (1.0 - libm::expf(-(k as f32) / 25.0))) as u16)
            .collect();
        assert_eq!(
            detect_movement(&t, &s, &MovementCriteria::default()),
            Ok(Movement::NotSeen { by: s.time_of(99) })
        );
        assert!(detect_movement::<u16>(&[], &s, &MovementCriteria::default()).is_err());
        let f = Sampling::new(Seconds::new(1e-4), 1.0).unwrap();
        assert_eq!(
            detect_movement(&[0.0, f32::NAN], &f, &MovementCriteria::default()),
            Err(TraceFault::NotFinite { index: 1 })
        );
    }

    /// Issue 11 item 12: a huge sample period or scale gave `by`, `at`, `seated`, `peak` and
    /// `depth` = ∞ inside `Ok`. Every field of an `Ok` is finite now, the times ≥ 0 and the
    /// currents' depth ≥ 0; what cannot be represented is refused.
    #[test]
    fn huge_period_or_scale_gives_finite_fields_or_an_error() {
        let dip = trace_with_dip();
        let plain: Vec<u16> = (0..100).map(|k| (k * 30) as u16).collect();
        let floats: Vec<f32> = [f32::MAX, -f32::MAX, f32::MAX, 0.0, f32::MAX].to_vec();
        for (period, scale) in [
            (1.0e38f32, 1.0f32),
            (f32::MAX, 1.0),
            (1.0e-4, 1.0e38),
            (1.0e-4, f32::MAX),
            (1.0e36, 1.0e36),
        ] {
            let Ok(s) = Sampling::new(Seconds::new(period), scale) else {
                continue;
            };
            let c = MovementCriteria::default();
            let all = [
                detect_movement(&dip, &s, &c),
                detect_movement(&plain, &s, &c),
                detect_movement(&floats, &s, &c),
            ];
            for m in all {
                match m {
                    Ok(Movement::Moved {
                        at,
                        seated,
                        peak,
                        depth,
                    }) => {
                        for x in [at.value(), seated.value(), peak.value(), depth.value()] {
                            assert!(x.is_finite(), "{period} {scale}: {m:?}");
                        }
                        assert!(at.value() >= 0.0 && seated >= at && depth.value() >= 0.0);
                    }
                    Ok(Movement::NotSeen { by }) => {
                        assert!(by.value().is_finite() && by.value() >= 0.0, "{m:?}")
                    }
                    Err(_) => {}
                }
            }
        }
        assert!(Sampling::new(Seconds::new(1.0e38), 1.0).is_err());
        let s = Sampling::new(Seconds::new(1.0e-4), 1.0).unwrap();
        assert!(s.with_first_sample(Seconds::new(f32::MAX)).is_err());
    }
}
