//! Repetition rate against the clamp's power rating.

use crate::error::{non_negative, positive, result, Error, Param};
use crate::units::{Hertz, Joules, Seconds, Watts};

/// Clamp average power at a repetition rate: `P = E_pulse · f`, W.
///
/// Domain: E ≥ 0 J, f ≥ 0 Hz, finite.
pub fn clamp_average_power(energy_per_pulse: Joules, rate: Hertz) -> Result<Watts, Error> {
    let e = non_negative(energy_per_pulse.value(), Param::PowerRating)?;
    let f = non_negative(rate.value(), Param::Frequency)?;
    result(e * f).map(Watts::new)
}

/// Highest repetition rate a clamp rated `rating` can take: `f_max = P_rating / E_pulse`, Hz.
/// An energy of 0 J gives +∞ Hz (no thermal limit) — the one place an infinity is meaningful, so
/// it is returned as `None`; so is a rate beyond f32's range (a rating so large against the
/// pulse energy that the clamp sets no thermal limit).
///
/// # Errors
/// Energy not finite or negative; rating not finite or ≤ 0 ([`Param::PowerRating`]).
pub fn max_repetition_rate(
    energy_per_pulse: Joules,
    rating: Watts,
) -> Result<Option<Hertz>, Error> {
    let e = non_negative(energy_per_pulse.value(), Param::PowerRating)?;
    let p = positive(rating.value(), Param::PowerRating)?;
    if e == 0.0 {
        return Ok(None);
    }
    let f = p / e;
    Ok(f.is_finite().then_some(Hertz::new(f)))
}

/// Shortest period between pulses for the clamp rating: `T_min = E_pulse / P_rating`, s.
pub fn min_period(energy_per_pulse: Joules, rating: Watts) -> Result<Seconds, Error> {
    let e = non_negative(energy_per_pulse.value(), Param::PowerRating)?;
    let p = positive(rating.value(), Param::PowerRating)?;
    result(e / p).map(Seconds::new)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn power_rate_and_period_are_consistent() {
        let e = Joules::new(0.004);
        let p = clamp_average_power(e, Hertz::new(10.0)).unwrap();
        // Textbook, from memory: average power = energy per pulse × repetition rate.
        assert!((p.value() - 0.04).abs() < 1e-7);
        let f = max_repetition_rate(e, Watts::new(0.5)).unwrap().unwrap();
        assert!((f.value() - 125.0).abs() < 1e-3);
        let t = min_period(e, Watts::new(0.5)).unwrap();
        assert!((t.value() * f.value() - 1.0).abs() < 1e-6);
        assert_eq!(
            max_repetition_rate(Joules::new(0.0), Watts::new(1.0)),
            Ok(None)
        );
        assert!(max_repetition_rate(e, Watts::new(0.0)).is_err());
        // A rate beyond f32 is no limit, like a pulse of 0 J.
        assert_eq!(
            max_repetition_rate(Joules::new(1.0e-30), Watts::new(f32::MAX)),
            Ok(None)
        );
        assert!(clamp_average_power(Joules::new(f32::NAN), Hertz::new(1.0)).is_err());
    }
}
