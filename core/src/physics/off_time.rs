//! Safe minimum off-time: how long a coil must stay off before the next pulse.

use super::clamp::Release;
use super::repetition::min_period;
use crate::error::{non_negative, Error, Param};
use crate::units::{Amps, Joules, Seconds, Watts};

/// What the off-time has to cover besides the electrical release.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct OffTimeNeeds {
    /// Current the coil must have decayed to before the next pulse (0 A for "fully at rest"), A.
    pub residual_current: Amps,
    /// Mechanical release allowance: armature travel back to rest *after* the current has fallen
    /// below drop-out, s.
    pub mechanical_release: Seconds,
    /// Clamp power rating and the pulse on-time, for the thermal limit (`None`: not checked).
    pub clamp_thermal: Option<(Watts, Seconds)>,
}

/// Which requirement set the off-time.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum OffTimeLimit {
    /// Current below drop-out, then the mechanical allowance.
    Release,
    /// Current down to the stated residual.
    Residual,
    /// The clamp's average power rating at this pulse length.
    ClampThermal,
}

/// The safe minimum off-time and each requirement behind it, s.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct OffTime {
    /// Electrical decay to drop-out plus mechanical release allowance.
    pub release: Seconds,
    /// Decay to the residual current.
    pub residual: Seconds,
    /// `E_clamp / P_rating − t_on` (0 when not checked or already met by the on-time).
    pub thermal: Seconds,
    /// The largest of the three: the safe minimum off-time.
    pub required: Seconds,
    /// Which one it is.
    pub limit: OffTimeLimit,
}

/// Safe minimum off-time for one release:
/// `t_off = max(t(i = I_drop) + t_mech, t(i = I_residual), E_clamp/P_rating − t_on)`, s.
///
/// The residual time is [`Release::settle_time`]: for the first-order clamps the plain time to
/// that current, for the RC snubber the time after which it stays within it.
///
/// The mechanical allowance is added to the electrical release (the armature only starts to move
/// once the current is below drop-out), which is longer than taking the larger of the two.
///
/// # Errors
/// Invalid needs; [`crate::Limit::Overflow`] when the sum overflows f32.
pub fn min_off_time(
    release: &Release,
    drop_out: Amps,
    needs: &OffTimeNeeds,
) -> Result<OffTime, Error> {
    let electrical = release.time_to_current(drop_out)?;
    let residual = release.settle_time(needs.residual_current)?;
    let clamp_energy = match needs.clamp_thermal {
        None => Joules::new(0.0),
        Some(_) => release.energy()?.clamp,
    };
    off_time_from_parts(electrical, residual, clamp_energy, needs)
}

/// [`min_off_time`] from the release's times and clamp energy already in hand (the design budget
/// evaluates them once).
pub(crate) fn off_time_from_parts(
    electrical: Seconds,
    residual: Seconds,
    clamp_energy: Joules,
    needs: &OffTimeNeeds,
) -> Result<OffTime, Error> {
    let mech = non_negative(needs.mechanical_release.value(), Param::Time)?;
    let electrical = electrical.value();
    let residual = residual.value();
    let thermal = match needs.clamp_thermal {
        None => 0.0,
        Some((rating, on_time)) => {
            let on = non_negative(on_time.value(), Param::Time)?;
            let period = min_period(clamp_energy, rating)?.value();
            libm::fmaxf(period - on, 0.0)
        }
    };
    let release_total = crate::error::result(electrical + mech)?;
    let (required, limit) = if release_total >= residual && release_total >= thermal {
        (release_total, OffTimeLimit::Release)
    } else if residual >= thermal {
        (residual, OffTimeLimit::Residual)
    } else {
        (thermal, OffTimeLimit::ClampThermal)
    };
    Ok(OffTime {
        release: Seconds::new(release_total),
        residual: Seconds::new(residual),
        thermal: Seconds::new(thermal),
        required: Seconds::new(required),
        limit,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::physics::circuit::{tests::valve, OperatingPoint};
    use crate::physics::clamp::Clamp;
    use crate::units::{Celsius, Volts};

    fn release() -> Release {
        valve(Clamp::diode(Volts::new(0.8)).unwrap())
            .release(
                &OperatingPoint::new(Volts::new(24.0), Celsius::new(20.0)),
                Amps::new(0.13),
            )
            .unwrap()
    }

    #[test]
    fn the_largest_requirement_wins() {
        let r = release();
        let drop = Amps::new(0.0133);
        let base = OffTimeNeeds {
            residual_current: Amps::new(0.0),
            mechanical_release: Seconds::from_millis(0.0),
            clamp_thermal: None,
        };
        let o = min_off_time(&r, drop, &base).unwrap();
        // Common practice, no source: the safe off-time is the largest of its requirements.
        // With a plain diode, decaying to zero takes longer than to drop-out.
        assert_eq!(o.limit, OffTimeLimit::Residual);
        assert_eq!(o.required, r.time_to_zero().unwrap());
        let mech = OffTimeNeeds {
            mechanical_release: Seconds::from_millis(200.0),
            ..base
        };
        let o = min_off_time(&r, drop, &mech).unwrap();
        assert_eq!(o.limit, OffTimeLimit::Release);
        assert!(o.required.value() > 0.2);
        let hot = OffTimeNeeds {
            clamp_thermal: Some((Watts::new(0.001), Seconds::from_millis(10.0))),
            ..base
        };
        let o = min_off_time(&r, drop, &hot).unwrap();
        assert_eq!(o.limit, OffTimeLimit::ClampThermal);
        let e = r.energy().unwrap().clamp.value();
        assert!((o.required.value() - (e / 0.001 - 0.010)).abs() < 1e-5);
    }

    #[test]
    fn bad_needs_are_errors() {
        let r = release();
        let bad = OffTimeNeeds {
            residual_current: Amps::new(f32::NAN),
            mechanical_release: Seconds::new(0.0),
            clamp_thermal: None,
        };
        assert!(min_off_time(&r, Amps::new(0.01), &bad).is_err());
    }
}
