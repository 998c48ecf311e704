//! Comparator readings (time to a threshold) and steady-current readings.

use super::rise::{judge_slope_tau, Allowances};
use super::{
    estimates, finite_pos, healthy_or_supply, Criteria, Estimates, Finding, Undetermined, Verdict,
};
use crate::diagnosis::band::{Expected, ThresholdBand};
use crate::diagnosis::fit::TraceFault;
use crate::error::{Error, Param, Why};
use crate::time::{Instant, TickRate};
use crate::units::{Amps, Seconds};

/// A comparator reading: when the measured current crossed the threshold, or how long it was
/// watched without crossing.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum ThresholdReading {
    /// Crossed this long after switch-on.
    Crossed(Seconds),
    /// Not crossed within this long after switch-on.
    NotCrossed {
        /// Time watched, s.
        waited: Seconds,
    },
}

impl ThresholdReading {
    /// A reading from timer instants: switch-on, the capture of the crossing (if any) and now.
    /// Wrap-safe for spans below 2³¹ ticks ([`Instant::since`]).
    ///
    /// # Errors
    /// A crossing before switch-on, or `now` before switch-on (or before the crossing):
    /// [`Error::Invalid`] ([`Param::Time`], [`Why::Negative`]).
    pub fn from_instants(
        rate: TickRate,
        switch_on: Instant,
        crossing: Option<Instant>,
        now: Instant,
    ) -> Result<Self, Error> {
        let waited = now.since(switch_on);
        if waited < 0 {
            return Err(Error::invalid(Param::Time, Why::Negative));
        }
        match crossing {
            Some(c) => {
                let d = c.since(switch_on);
                if d < 0 || now.since(c) < 0 {
                    return Err(Error::invalid(Param::Time, Why::Negative));
                }
                Ok(Self::Crossed(rate.seconds(crate::time::Ticks(d as u32))))
            }
            None => Ok(Self::NotCrossed {
                waited: rate.seconds(crate::time::Ticks(waited as u32)),
            }),
        }
    }
}

/// Judges a comparator time-to-threshold, with a steady-current reading when there is one.
///
/// - Time only: before the band (less `model_margin`) → [`Finding::ShortedTurns`], before
///   `short_fraction` of the band's minimum → [`Finding::ShortCircuit`]; after the band →
///   [`Finding::SlowRise`]; never crossed although watched past the band → [`Finding::OpenCircuit`].
/// - With a steady current `I` (above the threshold): `τ = t/ln(I/(I − I_th))` and `s = I/τ` are
///   judged as a fitted rise, each with `model_margin` plus the sensitivity of τ to a
///   `model_margin` error in I. Not crossed: the steady reading is judged alone
///   ([`judge_steady`]).
///
/// Never panics; negative or non-finite times and currents are
/// [`Finding::SensorImplausible`].
pub fn judge_threshold(
    reading: ThresholdReading,
    band: &ThresholdBand,
    steady: Option<Amps>,
    expected: &Expected,
    criteria: &Criteria,
) -> Verdict {
    let m = criteria.model_margin;
    let none = Estimates::default();
    let t_lo = band.time.min.value() * (1.0 - m);
    let t_hi = band.time.max.value() * (1.0 + m);
    match reading {
        ThresholdReading::Crossed(t) => {
            let t = t.value();
            if !(t.is_finite() && t >= 0.0) {
                return Verdict::new(Finding::SensorImplausible(TraceFault::BadTime), none);
            }
            if let Some(i) = steady {
                let i = i.value();
                let i_th = band.threshold.value();
                if !i.is_finite() {
                    return Verdict::new(
                        Finding::SensorImplausible(TraceFault::NotFinite { index: 0 }),
                        none,
                    );
                }
                if i <= i_th * (1.0 + m) || t <= 0.0 {
                    return Verdict::new(
                        Finding::SensorImplausible(TraceFault::Inconsistent),
                        none,
                    );
                }
                // τ = t / ln(I/(I − I_th)); d ln τ / d ln I = (I_th/(I − I_th)) / ln(I/(I − I_th)).
                let g = libm::log1pf(i_th / (i - i_th));
                let tau = t / g;
                let sens = (i_th / (i - i_th)) / g;
                let half_tau = m + sens * m;
                let mut est = estimates(expected, i, Some(tau));
                let finding = if finite_pos(tau).is_none() {
                    Finding::SensorImplausible(TraceFault::Inconsistent)
                } else {
                    judge_slope_tau(
                        (i / tau, tau, i),
                        half_tau + m,
                        Some(half_tau),
                        Allowances::FIRST_ORDER,
                        expected,
                        criteria,
                    )
                };
                est.quality = None;
                return Verdict::new(finding, est);
            }
            let finding = if t < t_lo * criteria.short_fraction {
                Finding::ShortCircuit
            } else if t < t_lo {
                Finding::ShortedTurns
            } else if t > t_hi {
                Finding::SlowRise
            } else {
                healthy_or_supply(expected)
            };
            Verdict::new(finding, none)
        }
        ThresholdReading::NotCrossed { waited } => {
            let w = waited.value();
            if !(w.is_finite() && w >= 0.0) {
                return Verdict::new(Finding::SensorImplausible(TraceFault::BadTime), none);
            }
            if w <= t_hi {
                return Verdict::new(Finding::CannotTell(Undetermined::NotYet), none);
            }
            match steady {
                Some(i) => judge_steady(i, expected, criteria),
                None => Verdict::new(
                    if expected.supply_below_design {
                        Finding::SupplyLow
                    } else {
                        Finding::OpenCircuit
                    },
                    none,
                ),
            }
        }
    }
}

/// Judges a steady (final) current reading alone against the final-current band
/// ([`Expected::final_current`], the hull of `k_s·V_d/R_on`), widened by `model_margin`. Above
/// the band (too little resistance) → [`Finding::ShortedTurns`] (beyond `short_current` × the
/// band's top → [`Finding::ShortCircuit`]); below it → [`Finding::HighResistance`] (assuming the
/// supply within its band: without a supply reading a low supply reads the same, and a supply
/// known to be below the design's range gives [`Finding::SupplyLow`]); at or below
/// `open_fraction` of the band's bottom → [`Finding::OpenCircuit`].
///
/// Never panics.
pub fn judge_steady(current: Amps, expected: &Expected, criteria: &Criteria) -> Verdict {
    let i = current.value();
    let m = criteria.model_margin;
    if !i.is_finite() {
        return Verdict::new(
            Finding::SensorImplausible(TraceFault::NotFinite { index: 0 }),
            Estimates::default(),
        );
    }
    let est = estimates(expected, i, None);
    let i_min = expected.final_current.min.value();
    let i_max = expected.final_current.max.value();
    if i < -m * i_min {
        return Verdict::new(
            Finding::SensorImplausible(TraceFault::BelowZero { index: 0 }),
            est,
        );
    }
    if i <= criteria.open_fraction * i_min {
        return Verdict::new(
            if expected.supply_below_design {
                Finding::SupplyLow
            } else {
                Finding::OpenCircuit
            },
            est,
        );
    }
    let finding = if i > i_max * criteria.short_current {
        Finding::ShortCircuit
    } else if i > i_max * (1.0 + m) {
        Finding::ShortedTurns
    } else if i < i_min * (1.0 - m) {
        if expected.supply_below_design {
            Finding::SupplyLow
        } else {
            Finding::HighResistance
        }
    } else {
        healthy_or_supply(expected)
    };
    Verdict::new(finding, est)
}
