//! The healthy bands as stored figures: [`Expected`] without the design on the device.
//!
//! [`Expected::new`] walks the design's 32 tolerance corners, which links the circuit physics
//! (resolve, energize, the clamp's validation) into a firmware. A small firmware can instead keep
//! the bands as plain numbers computed at design time — the design tool's `constants` command
//! prints them as a `HEALTHY_BANDS` constant with these field names — and rebuild the same
//! [`Expected`] at start-up with [`Expected::from_figures`]: a few comparisons, no physics.
//!
//! The figures are the design's bands under [`super::Conditions::default`] (the design's own
//! supply and temperature ranges). Bands narrowed by a supply reading or a temperature window
//! need the design: use [`Expected::new`].

use super::band::{Expected, Span};
use crate::error::{Error, Param, Why};
use crate::physics::coil::Coil;
use crate::units::{Amps, Celsius, Henries, Ohms, PerKelvin, Seconds, Volts};

/// Every figure of an [`Expected`], in SI units as plain `f32` (`[min, max]` for a band).
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct BandFigures {
    /// Final current in measured terms, A.
    pub final_current_a: [f32; 2],
    /// Time constant with the armature released, s.
    pub tau_s: [f32; 2],
    /// Initial slope `k_s·V_d/L`, A/s.
    pub slope_a_per_s: [f32; 2],
    /// On-loop resistance, Ω.
    pub loop_ohms: [f32; 2],
    /// Inductance with the armature released, H.
    pub inductance_h: [f32; 2],
    /// Sensed drive `k_s·V_d`, V.
    pub sensed_drive_v: [f32; 2],
    /// Latest time from switch-on to the armature having moved, s; negative when some corner
    /// never pulls in (a missing movement then proves nothing).
    pub movement_by_s: f32,
    /// Pull-in current in measured terms at the high sense corner, A.
    pub pull_in_reading_a: f32,
    /// The design's mechanical operate allowance, s.
    pub operate_allowance_s: f32,
    /// Nominal on-loop resistance outside the winding (wiring + sense + switch), Ω.
    pub external_ohms: f32,
    /// The coil's nominal figures: winding resistance at the reference temperature, Ω.
    pub coil_ohms: f32,
    /// Reference temperature of `coil_ohms` and of the must-operate/-release voltages, °C.
    pub coil_reference_celsius: f32,
    /// Temperature coefficient of the winding resistance, 1/K.
    pub coil_alpha_per_kelvin: f32,
    /// Inductance with the armature released and operated, H.
    pub coil_inductance_h: [f32; 2],
    /// Must-operate and must-release voltages at the reference temperature, V.
    pub coil_must_volts: [f32; 2],
}

/// `[min, max]` with `0 < min ≤ max < ∞`, as a span.
fn band(v: [f32; 2], param: Param) -> Result<Span<f32>, Error> {
    let [min, max] = v;
    if !(min.is_finite() && max.is_finite()) {
        return Err(Error::invalid(param, Why::NotFinite));
    }
    if min <= 0.0 {
        return Err(Error::invalid(param, Why::NotPositive));
    }
    if min > max {
        return Err(Error::invalid(param, Why::OutOfRange));
    }
    Ok(Span { min, max })
}

fn non_negative(x: f32, param: Param) -> Result<f32, Error> {
    if !x.is_finite() {
        Err(Error::invalid(param, Why::NotFinite))
    } else if x < 0.0 {
        Err(Error::invalid(param, Why::Negative))
    } else {
        Ok(x)
    }
}

impl Expected {
    /// The bands from stored figures (see the module docs): the [`Expected`] that
    /// [`Expected::new`] gives for the design under the default conditions, when `f` is
    /// [`Expected::figures`] of it (exactly: the figures are its own f32 values).
    ///
    /// # Errors
    /// [`Error::Invalid`]: a band not finite, not positive or with `min > max`; a time, current or
    /// resistance not finite or negative (the pull-in reading: not positive); coil figures as
    /// [`Coil::new`] and [`Coil::with_temperature_coefficient`] refuse them.
    pub fn from_figures(f: &BandFigures) -> Result<Self, Error> {
        let i = band(f.final_current_a, Param::Current)?;
        let t = band(f.tau_s, Param::Time)?;
        let l = band(f.inductance_h, Param::InductanceReleased)?;
        let r = band(f.loop_ohms, Param::WindingResistance)?;
        let v = band(f.sensed_drive_v, Param::Supply)?;
        let slope = band(f.slope_a_per_s, Param::Current)?;
        let movement_by = if f.movement_by_s < 0.0 {
            None
        } else {
            Some(Seconds::new(non_negative(f.movement_by_s, Param::Time)?))
        };
        let pull_in = non_negative(f.pull_in_reading_a, Param::Current)?;
        if pull_in <= 0.0 {
            return Err(Error::invalid(Param::Current, Why::NotPositive));
        }
        let coil = Coil::new(
            Ohms::new(f.coil_ohms),
            Celsius::new(f.coil_reference_celsius),
            Henries::new(f.coil_inductance_h[0]),
            Henries::new(f.coil_inductance_h[1]),
            Volts::new(f.coil_must_volts[0]),
            Volts::new(f.coil_must_volts[1]),
        )?
        .with_temperature_coefficient(PerKelvin::new(f.coil_alpha_per_kelvin))?;
        let operate = non_negative(f.operate_allowance_s, Param::Time)?;
        let external = non_negative(f.external_ohms, Param::WindingResistance)?;
        Ok(Self {
            final_current: Span {
                min: Amps::new(i.min),
                max: Amps::new(i.max),
            },
            tau: Span {
                min: Seconds::new(t.min),
                max: Seconds::new(t.max),
            },
            slope,
            loop_resistance: Span {
                min: Ohms::new(r.min),
                max: Ohms::new(r.max),
            },
            inductance: Span {
                min: Henries::new(l.min),
                max: Henries::new(l.max),
            },
            sensed_drive: Span {
                min: Volts::new(v.min),
                max: Volts::new(v.max),
            },
            movement_by,
            pull_in_reading: Amps::new(pull_in),
            operate_allowance: Seconds::new(operate),
            supply_measured: false,
            supply_below_design: false,
            coil,
            external,
            drive_mid: Expected::mid_drive(v),
        })
    }

    /// The figures [`Expected::from_figures`] rebuilds these bands from (for the design tool, or
    /// a firmware that stores its bands). Supply and temperature conditions are not part of them.
    pub fn figures(&self) -> BandFigures {
        let c = self.coil();
        let pair = |s: Span<f32>| [s.min, s.max];
        BandFigures {
            final_current_a: [
                self.final_current.min.value(),
                self.final_current.max.value(),
            ],
            tau_s: [self.tau.min.value(), self.tau.max.value()],
            slope_a_per_s: pair(self.slope),
            loop_ohms: [
                self.loop_resistance.min.value(),
                self.loop_resistance.max.value(),
            ],
            inductance_h: [self.inductance.min.value(), self.inductance.max.value()],
            sensed_drive_v: [self.sensed_drive.min.value(), self.sensed_drive.max.value()],
            movement_by_s: self.movement_by.map_or(-1.0, |t| t.value()),
            pull_in_reading_a: self.pull_in_reading.value(),
            operate_allowance_s: self.operate_allowance.value(),
            external_ohms: self.external_resistance().value(),
            coil_ohms: c.resistance_ref().value(),
            coil_reference_celsius: c.reference_temperature().value(),
            coil_alpha_per_kelvin: c.temperature_coefficient().value(),
            coil_inductance_h: [
                c.inductance(crate::Armature::Released).value(),
                c.inductance(crate::Armature::Operated).value(),
            ],
            coil_must_volts: [c.must_operate().value(), c.must_release().value()],
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::diagnosis::band::Conditions;
    use crate::diagnosis::verdict::{judge_threshold, ThresholdReading};
    use crate::diagnosis::{Criteria, ThresholdBand};

    fn valve() -> crate::DriverDesign {
        crate::diagnosis::band::tests::valve_design()
    }

    #[test]
    fn the_figures_rebuild_the_same_bands() {
        let d = valve();
        let e = Expected::new(&d, &Conditions::default()).unwrap();
        let back = Expected::from_figures(&e.figures()).unwrap();
        assert_eq!(back, e);
        // And the verdicts on them are the same (a comparator reading inside and outside).
        let band = ThresholdBand::new(&d, &Conditions::default(), Amps::new(0.05)).unwrap();
        let c = Criteria::default();
        for t in [0.2, 1.0, 3.0] {
            let r = ThresholdReading::Crossed(Seconds::new(band.time.min.value() * t));
            assert_eq!(
                judge_threshold(r, &band, None, &back, &c),
                judge_threshold(r, &band, None, &e, &c)
            );
        }
    }

    #[test]
    fn bad_figures_are_refused_by_name() {
        let e = Expected::new(&valve(), &Conditions::default()).unwrap();
        let good = e.figures();
        let mut f = good;
        f.tau_s = [f.tau_s[1], f.tau_s[0] * 0.5];
        assert_eq!(
            Expected::from_figures(&f),
            Err(Error::invalid(Param::Time, Why::OutOfRange))
        );
        let mut f = good;
        f.final_current_a[0] = f32::NAN;
        assert_eq!(
            Expected::from_figures(&f),
            Err(Error::invalid(Param::Current, Why::NotFinite))
        );
        let mut f = good;
        f.loop_ohms = [0.0, 1.0];
        assert!(Expected::from_figures(&f).is_err());
        let mut f = good;
        f.coil_must_volts = [1.0, 2.0];
        assert_eq!(
            Expected::from_figures(&f),
            Err(Error::invalid(
                Param::MustReleaseVoltage,
                Why::ReleaseAboveOperate
            ))
        );
        let mut f = good;
        f.operate_allowance_s = -1.0;
        assert!(Expected::from_figures(&f).is_err());
        let mut f = good;
        f.movement_by_s = -1.0;
        assert_eq!(Expected::from_figures(&f).unwrap().movement_by, None);
    }
}
