use super::*;

// Holds with and without feature `thermal-budget` (CI runs both): a bucket is kept and used
// with the feature, refused with the one documented error without it, never dropped
// silently (feature gating, common practice, no source).
#[test]
fn thermal_buckets_left_out_of_the_build_are_refused() {
    let l = ChannelLimits::new(Ticks(10), Ticks(20)).unwrap();
    let rate = TickRate::new(1_000_000).unwrap();
    let b = ThermalBucket::from_rating(Watts::new(0.5), Seconds::new(2.0), rate).unwrap();
    let (clamp, coil) = (l.with_clamp_heat(b), l.with_coil_heat(b));
    if cfg!(feature = "thermal-budget") {
        assert_eq!(clamp.map(|c| c.clamp_heat()), Ok(Some(b)));
        assert_eq!(coil.map(|c| c.coil_heat()), Ok(Some(b)));
        assert_eq!(clamp.map(|c| c.buckets().iter().flatten().count()), Ok(1));
    } else {
        assert_eq!(clamp, Err(LimitsError::FeatureDisabled));
        assert_eq!(coil, Err(LimitsError::FeatureDisabled));
        assert!(l.buckets().is_empty());
    }
}

#[test]
fn limits_validate() {
    assert_eq!(
        ChannelLimits::new(Ticks(0), Ticks(5)),
        Err(LimitsError::ZeroMinOn)
    );
    assert_eq!(
        ChannelLimits::new(Ticks(5), Ticks(0)),
        Err(LimitsError::ZeroMinOff)
    );
    assert_eq!(
        ChannelLimits::new(Ticks(5), Ticks((1 << 30) + 1)),
        Err(LimitsError::TooLong)
    );
    let l = ChannelLimits::new(Ticks(10), Ticks(20)).unwrap();
    assert_eq!(l.with_max_on(Ticks(9)), Err(LimitsError::MaxOnBelowMinOn));
    let h = HoldPhase::new(Ticks(9), HoldDuty(1000)).unwrap();
    assert_eq!(l.with_hold(h), Err(LimitsError::HoldBeforeMinOn));
    assert_eq!(
        HoldPhase::new(Ticks(10), HoldDuty(0)),
        Err(LimitsError::ZeroDuty)
    );
    assert_eq!(
        HoldPhase::new(Ticks(10), HoldDuty(9000))
            .unwrap()
            .with_ceiling(HoldDuty(8000)),
        Err(LimitsError::DutyAboveCeiling)
    );
    let small = ThermalBucket::new(100, Ticks(1000))
        .unwrap()
        .with_per_pulse(100);
    assert_eq!(l.with_clamp_heat(small), Err(LimitsError::BucketTooSmall));
}

#[test]
fn duty_rounds_up_and_rejects_non_fractions() {
    assert_eq!(HoldDuty::from_fraction(0.5), Ok(HoldDuty(32_768)));
    let d = HoldDuty::from_fraction(0.3).unwrap();
    assert!(d.fraction() >= 0.3);
    assert!(d.fraction() - 0.3 < 1.0 / 65_536.0 + 1e-7);
    for bad in [0.0, -0.1, 1.0, 0.999_999_9, f32::NAN, f32::INFINITY] {
        assert_eq!(HoldDuty::from_fraction(bad), Err(LimitsError::NotAFraction));
    }
    assert_eq!(HoldDuty(32_768).compare(1000), 500);
    assert_eq!(HoldDuty(1).compare(1000), 1);
}

/// `from_design` folds the budget's three points one at a time; `from_budget` reads them
/// from the whole budget: the same limits, buckets and errors.
#[test]
fn from_design_equals_from_budget_of_the_same_design() {
    use crate::physics::circuit::tests::valve;
    use crate::physics::circuit::{SupplyRange, TemperatureRange};
    use crate::physics::clamp::Clamp;
    use crate::units::{Celsius, Volts};
    let rate = TickRate::new(100_000).unwrap();
    let heat = HeatRatings {
        clamp: Some(HeatRating {
            power: Watts::new(0.5),
            time_constant: Seconds::new(10.0),
        }),
        coil: Some(HeatRating {
            power: Watts::new(3.0),
            time_constant: Seconds::new(120.0),
        }),
    };
    for clamp in [
        Clamp::diode_zener(Volts::new(0.8), Volts::new(30.0)).unwrap(),
        Clamp::diode(Volts::new(0.8)).unwrap(),
    ] {
        let mut design = DriverDesign::new(
            valve(clamp),
            SupplyRange::with_tolerance(Volts::new(24.0), 0.1).unwrap(),
            TemperatureRange::new(Celsius::new(-25.0), Celsius::new(70.0)).unwrap(),
            rate,
        );
        design.tolerances.resistance = 0.05;
        let budget = design.budget().unwrap();
        for h in [HeatRatings::default(), heat] {
            assert_eq!(
                ChannelLimits::from_design(&design, &h, None),
                ChannelLimits::from_budget(&budget, rate, &h, None)
            );
        }
        // A coil that cannot pull in at the hot corner: both refuse it alike.
        design.supply = SupplyRange::with_tolerance(Volts::new(12.0), 0.1).unwrap();
        let refused = ChannelLimits::from_design(&design, &heat, None);
        assert_eq!(
            refused,
            Err(LimitsError::Design(design.budget().unwrap_err()))
        );
    }
}

#[test]
fn phases_split_at_the_hold_point() {
    let l = ChannelLimits::new(Ticks(10), Ticks(20))
        .unwrap()
        .with_hold(HoldPhase::new(Ticks(15), HoldDuty(20_000)).unwrap())
        .unwrap();
    assert_eq!(l.phases(12), (12, 0));
    assert_eq!(l.phases(15), (15, 0));
    assert_eq!(l.phases(40), (15, 25));
}
