//! Expected bands: what a healthy coil of a design can show on the sense input.
//!
//! # What is measured
//!
//! Firmware converts the sense-resistor voltage to current with the *nominal* sense resistance, so
//! a sense resistor that is `k_s` times its nominal value reads `k_s` times the true current. All
//! currents, slopes and times here are in those measured terms:
//!
//! - final current `I∞ = k_s·V_d/R_on`, with `V_d` the drive (supply − bipolar saturation) and
//!   `R_on = R_w + R_wiring + k_s·R_sense (+ R_DS(on))` the on-loop resistance;
//! - time constant `τ = L/R_on` (armature released);
//! - initial slope `s = I∞/τ = k_s·V_d/L` — independent of every resistance;
//! - time to a comparator threshold `I_th` (measured terms): `t = τ·ln(I∞/(I∞ − I_th))`.
//!
//! # Why the corners bound the band
//!
//! The toleranced inputs are the winding resistance factor `k_R`, the inductance factor `k_L`, the
//! winding temperature `T`, the supply `V` and the sense factor `k_s`. The winding resistance
//! `R_w = R_ref·k_R·(1 + α(T − T_ref))` rises with `k_R` and with `T` (α ≥ 0). Each figure is
//! monotone in each input separately over the whole box:
//!
//! | figure | k_R, T (via R_w) | k_L | V | k_s |
//! |---|---|---|---|---|
//! | I∞ | ↓ | — | ↑ | ↑ (`∂I∞/∂k_s = V_d·(R_on − k_s·R_sense)/R_on² > 0`) |
//! | τ | ↓ | ↑ | — | ↓ |
//! | s | — | ↓ | ↑ | ↑ |
//! | R_on | ↑ | — | — | ↑ |
//! | t to threshold | ↑ | ↑ | ↓ | ↓ |
//!
//! For the threshold time write `x = I_th·R_on/(k_s·V_d) = (I_th/V_d)·(R_x/k_s + R_sense)` (R_x:
//! every resistance but the sense resistor) and `t = (L/R_on)·(−ln(1 − x))`: both factors fall as
//! `k_s` rises, both rise with `R_w`; and `t = (L·I_th/(k_s·V_d))·g(x)` with `g(x) = −ln(1−x)/x`
//! increasing, so t falls as V rises. A function that is monotone in each coordinate of a box takes
//! its minimum and maximum at vertices of the box, so the 2⁵ = 32 corners bound every band. All 32
//! are evaluated (the cost is 32 resolves), so no sign above is relied on to pick one corner; the
//! tests check random interior points against the bands.

use crate::design::{DriverDesign, CORNER_COUNT};
use crate::error::{positive, Error, Param, Why};
use crate::physics::circuit::{OperatingPoint, SupplyRange, TemperatureRange};
use crate::physics::coil::{Armature, Coil};
use crate::physics::first_order::FirstOrder;
use crate::units::{Amps, Henries, Ohms, Seconds, Volts};

/// A closed interval `[min, max]` of one quantity.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Span<Q> {
    /// Lower end.
    pub min: Q,
    /// Upper end.
    pub max: Q,
}

impl Span<f32> {
    /// Whether `min ≤ x ≤ max` (false for NaN).
    pub fn contains(&self, x: f32) -> bool {
        self.min <= x && x <= self.max
    }
}

macro_rules! span_of_quantity {
    ($($q:ty),*) => {$(
        impl Span<$q> {
            /// Whether `min ≤ x ≤ max` (false for NaN).
            pub fn contains(&self, x: $q) -> bool {
                self.min.value() <= x.value() && x.value() <= self.max.value()
            }
            /// The ends as plain `f32` in the SI unit.
            pub fn to_f32(&self) -> Span<f32> {
                Span { min: self.min.value(), max: self.max.value() }
            }
        }
    )*};
}
span_of_quantity!(Amps, Seconds, Ohms, Henries, Volts);

/// A running min/max accumulator over corners.
#[derive(Clone, Copy)]
struct Hull {
    min: f32,
    max: f32,
}

impl Hull {
    const EMPTY: Hull = Hull {
        min: f32::INFINITY,
        max: f32::NEG_INFINITY,
    };
    fn add(&mut self, x: f32) {
        if x < self.min {
            self.min = x;
        }
        if x > self.max {
            self.max = x;
        }
    }
    fn finite(self) -> Result<Span<f32>, Error> {
        if self.min.is_finite() && self.max.is_finite() {
            Ok(Span {
                min: self.min,
                max: self.max,
            })
        } else {
            Err(Error::OutsideModel(crate::error::Limit::Overflow))
        }
    }
}

/// A supply voltage measured by the firmware at the time of the test.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct SupplyReading {
    volts: f32,
    accuracy: f32,
}

impl SupplyReading {
    /// A reading of `volts` (finite, > 0) good to ± `accuracy` (fraction, 0 ≤ a ≤ 0.5).
    ///
    /// # Errors
    /// [`Error::Invalid`] with [`Param::Supply`] or [`Param::Tolerance`].
    pub fn new(volts: Volts, accuracy: f32) -> Result<Self, Error> {
        let v = positive(volts.value(), Param::Supply)?;
        let a = crate::error::non_negative(accuracy, Param::Tolerance)?;
        if a > 0.5 {
            return Err(Error::invalid(Param::Tolerance, Why::OutOfRange));
        }
        Ok(Self {
            volts: v,
            accuracy: a,
        })
    }

    /// The reading, V.
    pub const fn volts(&self) -> Volts {
        Volts::new(self.volts)
    }

    /// The accuracy, ± fraction.
    pub const fn accuracy(&self) -> f32 {
        self.accuracy
    }

    /// The interval the true supply lies in: `[V·(1 − a), V·(1 + a)]`, V.
    pub fn span(&self) -> Span<Volts> {
        Span {
            min: Volts::new(self.volts * (1.0 - self.accuracy)),
            max: Volts::new(self.volts * (1.0 + self.accuracy)),
        }
    }
}

/// What the firmware knows at the time of a test beyond the design, to narrow the bands.
///
/// Without any of it the bands cover the design's whole supply and temperature ranges; with a
/// ±10 % winding and −40…+85 °C that is a 2 : 1 spread of resistance, wide enough to hide a
/// connector that doubles the loop resistance of a cold coil. A supply reading and a winding
/// temperature window (for a coil tested at start-up, the board temperature sensor ± a few kelvin)
/// make resistance faults visible.
#[derive(Clone, Copy, Debug, PartialEq, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Conditions {
    /// Supply measured now; `None`: anywhere in the design's supply range.
    pub supply: Option<SupplyReading>,
    /// Winding temperature window now; `None`: anywhere in the design's temperature range.
    pub winding_temperature: Option<TemperatureRange>,
}

/// Every band a healthy coil of a design stays within under given conditions, in measured terms
/// (see the module docs), plus what the classifiers need to turn a measurement into estimates.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Expected {
    /// Final (steady) current, A.
    pub final_current: Span<Amps>,
    /// Time constant with the armature released, s.
    pub tau: Span<Seconds>,
    /// Initial slope `k_s·V_d/L`, A/s.
    pub slope: Span<f32>,
    /// On-loop resistance `R_on`, Ω.
    pub loop_resistance: Span<Ohms>,
    /// Inductance with the armature released, H.
    pub inductance: Span<Henries>,
    /// Sensed drive `k_s·V_d`, V: the drive voltage as the current reading scales it.
    pub sensed_drive: Span<Volts>,
    /// Time from switch-on to the armature having moved, at the latest: the slowest corner's
    /// electrical pull-in plus the design's operate allowance. `None` when some corner never pulls
    /// in (then a missing movement proves nothing).
    pub movement_by: Option<Seconds>,
    /// Pull-in current in measured terms at the high sense corner, A: above it the armature must
    /// have started to move.
    pub pull_in_reading: Amps,
    /// The design's mechanical operate allowance, s.
    pub operate_allowance: Seconds,
    /// Whether the supply band comes from a measurement.
    pub supply_measured: bool,
    /// Whether the measured supply (if any) lies below the design's minimum.
    pub supply_below_design: bool,
    pub(super) coil: Coil,
    pub(super) external: f32,
    pub(super) drive_mid: f32,
}

/// The design with its supply and temperature ranges replaced by what the conditions say, so that
/// [`DriverDesign::corner`] walks the narrowed box.
pub(crate) fn narrowed(
    design: &DriverDesign,
    conditions: &Conditions,
) -> Result<DriverDesign, Error> {
    let mut d = *design;
    if let Some(r) = conditions.supply {
        let s = r.span();
        d.supply = SupplyRange::new(s.min, r.volts(), s.max)?;
    }
    if let Some(t) = conditions.winding_temperature {
        d.temperature = t;
    }
    Ok(d)
}

/// Every corner of the (narrowed) tolerance box.
pub(crate) fn corners(d: &DriverDesign) -> impl Iterator<Item = OperatingPoint> + '_ {
    (0..CORNER_COUNT).map_while(|k| d.corner(k))
}

impl Expected {
    /// The bands of `design` under `conditions`, each the hull of its value over the 32 tolerance
    /// corners (exact bounds by monotonicity; see the module docs).
    ///
    /// Supply band: the reading ± its accuracy when given, else the design's range. Temperature:
    /// the given window, else the design's range. Results carry f32 rounding only.
    ///
    /// # Errors
    /// Invalid tolerances or design values; [`crate::error::Limit::NoHeadroom`] when a corner has no
    /// drive voltage.
    pub fn new(design: &DriverDesign, conditions: &Conditions) -> Result<Self, Error> {
        design.tolerances.validate()?;
        let d = narrowed(design, conditions)?;
        let c = &design.circuit;
        let operate = crate::error::non_negative(design.operate_allowance.value(), Param::Time)?;
        let (mut i_inf, mut tau, mut slope, mut r_on, mut ind, mut drive) = (
            Hull::EMPTY,
            Hull::EMPTY,
            Hull::EMPTY,
            Hull::EMPTY,
            Hull::EMPTY,
            Hull::EMPTY,
        );
        let mut latest_pull_in = Hull::EMPTY;
        let mut always_pulls_in = true;
        let i_pull = c.coil().pull_in_current().value();
        for op in corners(&d) {
            let resolved = c.resolve(&op)?;
            let rise = c.energize(&op, Armature::Released, Amps::new(0.0))?;
            let k_s = op.sense_factor;
            let i_m = k_s * rise.asymptote();
            i_inf.add(i_m);
            tau.add(rise.tau().value());
            slope.add(i_m / rise.tau().value());
            r_on.add(resolved.on_loop.value());
            ind.add(resolved.inductance_released);
            drive.add(k_s * resolved.drive.value());
            match rise.time_to(i_pull) {
                Ok(t) => latest_pull_in.add(t.value()),
                Err(Error::Unreachable { .. }) => always_pulls_in = false,
                Err(e) => return Err(e),
            }
        }
        let drive = drive.finite()?;
        let nominal_sense = c.sense().value();
        let (_, switch_r) = c.switch().on_state();
        let movement_by = if always_pulls_in {
            let t = latest_pull_in.finite()?.max + operate;
            Some(Seconds::new(crate::error::result(t)?))
        } else {
            None
        };
        let to_q = |s: Span<f32>| (s.min, s.max);
        let (a0, a1) = to_q(i_inf.finite()?);
        let (t0, t1) = to_q(tau.finite()?);
        let (r0, r1) = to_q(r_on.finite()?);
        let (l0, l1) = to_q(ind.finite()?);
        Ok(Self {
            final_current: Span {
                min: Amps::new(a0),
                max: Amps::new(a1),
            },
            tau: Span {
                min: Seconds::new(t0),
                max: Seconds::new(t1),
            },
            slope: slope.finite()?,
            loop_resistance: Span {
                min: Ohms::new(r0),
                max: Ohms::new(r1),
            },
            inductance: Span {
                min: Henries::new(l0),
                max: Henries::new(l1),
            },
            sensed_drive: Span {
                min: Volts::new(drive.min),
                max: Volts::new(drive.max),
            },
            movement_by,
            pull_in_reading: Amps::new(crate::error::result(
                i_pull * (1.0 + design.tolerances.sense),
            )?),
            operate_allowance: Seconds::new(operate),
            supply_measured: conditions.supply.is_some(),
            supply_below_design: d.supply.max().value() < design.supply.min().value(),
            coil: *c.coil(),
            external: c.wiring().value() + nominal_sense + switch_r,
            drive_mid: Self::mid_drive(drive),
        })
    }

    /// The mid-band sensed drive of a drive band, V (halves first: the sum of two drives near
    /// f32::MAX overflows).
    pub(super) fn mid_drive(drive: Span<f32>) -> f32 {
        0.5 * drive.min + 0.5 * drive.max
    }

    /// The coil of the design (nominal values), for temperature estimates.
    pub const fn coil(&self) -> &Coil {
        &self.coil
    }

    /// Nominal resistance outside the winding in the on-loop (wiring + sense + MOSFET), Ω.
    pub const fn external_resistance(&self) -> Ohms {
        Ohms::new(self.external)
    }

    /// Mid-band sensed drive `k_s·V_d`, V: the value estimates are scaled with.
    pub const fn nominal_drive(&self) -> Volts {
        Volts::new(self.drive_mid)
    }
}

/// The band of the time from switch-on until the measured current reaches a comparator threshold.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ThresholdBand {
    /// The threshold, A in measured terms (comparator reference / nominal sense resistance).
    pub threshold: Amps,
    /// Earliest and latest crossing of a healthy coil, s.
    pub time: Span<Seconds>,
}

impl ThresholdBand {
    /// `t = τ·ln(I∞/(I∞ − I_th))` at each of the 32 corners (via [`FirstOrder::time_to`]), min and
    /// max. Accuracy: f32 rounding of the closed form.
    ///
    /// # Errors
    /// [`Error::Unreachable`] when a healthy coil at some corner never reaches the threshold (pick a
    /// lower threshold); a threshold not finite or ≤ 0: [`Error::Invalid`] ([`Param::Current`]);
    /// design errors as [`Expected::new`].
    pub fn new(
        design: &DriverDesign,
        conditions: &Conditions,
        threshold: Amps,
    ) -> Result<Self, Error> {
        let i_th = positive(threshold.value(), Param::Current)?;
        design.tolerances.validate()?;
        let d = narrowed(design, conditions)?;
        let mut hull = Hull::EMPTY;
        for op in corners(&d) {
            let rise = design
                .circuit
                .energize(&op, Armature::Released, Amps::new(0.0))?;
            let measured = FirstOrder::new(0.0, op.sense_factor * rise.asymptote(), rise.tau())?;
            hull.add(measured.time_to(i_th)?.value());
        }
        let h = hull.finite()?;
        Ok(Self {
            threshold: Amps::new(i_th),
            time: Span {
                min: Seconds::new(h.min),
                max: Seconds::new(h.max),
            },
        })
    }
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;
    use crate::physics::circuit::{Circuit, Switch, Tolerances, Topology};
    use crate::physics::clamp::Clamp;
    use crate::time::TickRate;
    use crate::units::Celsius;

    /// Invented demo design: a greenhouse controller's 24 V valve, 180 Ω, 0.30/0.45 H, must-operate
    /// 15 V, low-side MOSFET, 0.5 Ω sense, ±10 % supply, −40…+85 °C winding.
    pub(crate) fn valve_design() -> DriverDesign {
        let coil = Coil::new(
            Ohms::new(180.0),
            Celsius::new(20.0),
            Henries::new(0.30),
            Henries::new(0.45),
            Volts::new(15.0),
            Volts::new(2.4),
        )
        .unwrap();
        let circuit = Circuit::new(
            coil,
            Switch::Mosfet {
                on_resistance: Ohms::new(0.1),
                breakdown: Volts::new(60.0),
            },
            Topology::LowSide,
            Ohms::new(0.5),
            Ohms::new(0.4),
            Clamp::diode(Volts::new(0.8)).unwrap(),
        )
        .unwrap();
        let mut d = DriverDesign::new(
            circuit,
            SupplyRange::with_tolerance(Volts::new(24.0), 0.1).unwrap(),
            TemperatureRange::new(Celsius::new(-40.0), Celsius::new(85.0)).unwrap(),
            TickRate::new(1_000_000).unwrap(),
        );
        d.tolerances = Tolerances {
            resistance: 0.1,
            inductance: 0.1,
            sense: 0.01,
        };
        d.operate_allowance = Seconds::from_millis(8.0);
        d
    }

    /// Tiny deterministic generator for interior points (SplitMix64).
    struct Mix(u64);
    impl Mix {
        fn unit(&mut self) -> f32 {
            self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
            let mut z = self.0;
            z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
            z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
            ((z ^ (z >> 31)) >> 40) as f32 / (1u64 << 24) as f32
        }
    }

    #[test]
    fn interior_points_stay_inside_the_corner_bands() {
        let d = valve_design();
        let e = Expected::new(&d, &Conditions::default()).unwrap();
        let th = ThresholdBand::new(&d, &Conditions::default(), Amps::new(0.05)).unwrap();
        let mut g = Mix(7);
        let lerp = |a: f32, b: f32, u: f32| a + (b - a) * u;
        let tol = 1.0 + 2e-6;
        for _ in 0..2000 {
            let op = OperatingPoint {
                supply: Volts::new(lerp(21.6, 26.4, g.unit())),
                temperature: Celsius::new(lerp(-40.0, 85.0, g.unit())),
                resistance_factor: lerp(0.9, 1.1, g.unit()),
                inductance_factor: lerp(0.9, 1.1, g.unit()),
                sense_factor: lerp(0.99, 1.01, g.unit()),
            };
            let rise = d
                .circuit
                .energize(&op, Armature::Released, Amps::new(0.0))
                .unwrap();
            let i_m = op.sense_factor * rise.asymptote();
            let tau = rise.tau().value();
            assert!(i_m <= e.final_current.max.value() * tol);
            assert!(i_m >= e.final_current.min.value() / tol);
            assert!(tau <= e.tau.max.value() * tol && tau >= e.tau.min.value() / tol);
            let s = i_m / tau;
            assert!(s <= e.slope.max * tol && s >= e.slope.min / tol);
            let m = FirstOrder::new(0.0, i_m, rise.tau()).unwrap();
            let t = m.time_to(0.05).unwrap().value();
            assert!(t <= th.time.max.value() * tol && t >= th.time.min.value() / tol);
        }
    }

    #[test]
    fn bands_match_hand_worked_corners() {
        // Worked by hand from Ohm's law and τ = L/R (RL circuit, textbook, from memory):
        // slowest corner: R_w = 180·1.1·(1 + 0.00393·65) = 248.58 Ω, R_on = 248.58 + 0.4 + 0.505
        // + 0.1 = 249.585 Ω, L = 0.27 H → τ_min = 1.0818 ms; cold corner R_w = 180·0.9·(1 −
        // 0.00393·60) = 123.80 Ω, R_on = 124.795 Ω (sense −1 %), L = 0.33 → τ_max = 2.6443 ms.
        let d = valve_design();
        let e = Expected::new(&d, &Conditions::default()).unwrap();
        let rel = |a: f32, b: f32| ((a - b) / b).abs();
        assert!(rel(e.tau.min.value(), 0.27 / 249.585) < 1e-4);
        assert!(rel(e.tau.max.value(), 0.33 / 124.795) < 1e-4);
        // Highest reading: 26.4 V, sense +1 %: 1.01·26.4/(123.80 + 0.4 + 0.505 + 0.1).
        assert!(rel(e.final_current.max.value(), 1.01 * 26.4 / 124.805) < 1e-4);
        // Slope is V/L: lowest 0.99·21.6/0.33, highest 1.01·26.4/0.27 (A/s).
        assert!(rel(e.slope.min, 0.99 * 21.6 / 0.33) < 1e-5);
        assert!(rel(e.slope.max, 1.01 * 26.4 / 0.27) < 1e-5);
        assert!(e.movement_by.is_some());
    }

    #[test]
    fn knowledge_narrows_the_band() {
        let d = valve_design();
        let wide = Expected::new(&d, &Conditions::default()).unwrap();
        let narrow = Expected::new(
            &d,
            &Conditions {
                supply: Some(SupplyReading::new(Volts::new(24.0), 0.01).unwrap()),
                winding_temperature: Some(
                    TemperatureRange::new(Celsius::new(15.0), Celsius::new(25.0)).unwrap(),
                ),
            },
        )
        .unwrap();
        let width = |s: Span<Ohms>| s.max.value() / s.min.value();
        assert!(width(narrow.loop_resistance) < width(wide.loop_resistance));
        assert!(width(narrow.loop_resistance) < 1.3);
        assert!(!narrow.supply_below_design);
        let low = Expected::new(
            &d,
            &Conditions {
                supply: Some(SupplyReading::new(Volts::new(18.0), 0.01).unwrap()),
                winding_temperature: None,
            },
        )
        .unwrap();
        assert!(low.supply_below_design && low.supply_measured);
    }

    #[test]
    fn an_unreachable_threshold_is_an_error() {
        let d = valve_design();
        assert!(matches!(
            ThresholdBand::new(&d, &Conditions::default(), Amps::new(0.15)),
            Err(Error::Unreachable { .. })
        ));
        assert!(ThresholdBand::new(&d, &Conditions::default(), Amps::new(f32::NAN)).is_err());
        assert!(ThresholdBand::new(&d, &Conditions::default(), Amps::new(-1.0)).is_err());
        assert!(SupplyReading::new(Volts::new(24.0), 0.7).is_err());
        assert!(SupplyReading::new(Volts::new(f32::INFINITY), 0.01).is_err());
    }
}
