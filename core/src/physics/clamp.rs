//! Clamp types: what the coil's current is driven through at switch-off, and the checks on each
//! clamp's own values. The release waveform, energy split and switch stress each clamp produces
//! live in [`super::release`] (re-exported here as [`Release`] and [`EnergySplit`]).

use super::domain::clamp_voltage_in_range;
pub use super::release::{EnergySplit, Release};
use crate::error::{positive, Error, Param, Why};
use crate::units::{Farads, Ohms, Volts};

/// What absorbs the coil's energy at switch-off.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Clamp {
    /// Plain freewheel diode across the coil. Slow release, lowest switch voltage.
    Diode {
        /// Diode forward drop at the coil current, V (> 0).
        forward: Volts,
    },
    /// Diode in series with a zener or TVS, across the coil. Fast release.
    DiodeZener {
        /// Diode forward drop, V (> 0).
        forward: Volts,
        /// Total voltage across the coil while clamping: V_Z + V_F, V (> `forward`).
        clamp_voltage: Volts,
    },
    /// Diode in series with a resistor, across the coil.
    DiodeResistor {
        /// Diode forward drop, V (> 0).
        forward: Volts,
        /// Series resistor, Ω (> 0).
        resistance: Ohms,
    },
    /// Zener / TVS from the switch node to the opposite rail (across the switch): the switch node
    /// is held at `clamp_voltage` from the rail; the supply keeps feeding the coil while it clamps.
    AcrossSwitch {
        /// Clamping voltage across the switch, V (> supply).
        clamp_voltage: Volts,
    },
    /// No clamp: the switch avalanches at its breakdown voltage and absorbs the energy itself.
    Unclamped,
    /// Bidirectional TVS straight across the coil, no series diode. At switch-off it clamps the
    /// coil's reverse voltage at `clamp_voltage` like [`Clamp::DiodeZener`]; but it also sees the
    /// full forward coil voltage while the switch is on, so the on-state coil voltage must stay
    /// below its `standoff` (checked at release, where the supply is known).
    TvsAcrossCoil {
        /// Voltage across the coil while clamping (TVS clamping voltage at the coil current), V
        /// (> `standoff`).
        clamp_voltage: Volts,
        /// Reverse standoff voltage: the highest voltage at which the TVS does not conduct
        /// (V_RWM on a datasheet), V (> 0).
        standoff: Volts,
    },
    /// Series resistor + capacitor across the coil, no diode. Second-order: modelled exactly while
    /// overdamped or critically damped (`(R + R_s)² ≥ 4L/C`), an error when it would ring. The
    /// capacitor is taken as charged to the on-state coil voltage at switch-off.
    RcSnubber {
        /// Snubber resistor R_s, Ω (> 0).
        resistance: Ohms,
        /// Snubber capacitor C, F (> 0).
        capacitance: Farads,
    },
}

/// The clamp type without its values (for reports and logs).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum ClampKind {
    /// [`Clamp::Diode`].
    Diode,
    /// [`Clamp::DiodeZener`].
    DiodeZener,
    /// [`Clamp::DiodeResistor`].
    DiodeResistor,
    /// [`Clamp::AcrossSwitch`].
    AcrossSwitch,
    /// [`Clamp::Unclamped`].
    Unclamped,
    /// [`Clamp::TvsAcrossCoil`].
    TvsAcrossCoil,
    /// [`Clamp::RcSnubber`].
    RcSnubber,
}

impl ClampKind {
    /// Whether this build supports the clamp type: its cargo feature is on (`clamp-diode`,
    /// `clamp-diode-zener`, `clamp-diode-resistor`, `clamp-across-switch`, `clamp-unclamped`,
    /// `clamp-tvs-across-coil`, `clamp-rc-snubber`; all of them by default). A compile-time
    /// constant per kind.
    pub const fn is_built(self) -> bool {
        match self {
            ClampKind::Diode => cfg!(feature = "clamp-diode"),
            ClampKind::DiodeZener => cfg!(feature = "clamp-diode-zener"),
            ClampKind::DiodeResistor => cfg!(feature = "clamp-diode-resistor"),
            ClampKind::AcrossSwitch => cfg!(feature = "clamp-across-switch"),
            ClampKind::Unclamped => cfg!(feature = "clamp-unclamped"),
            ClampKind::TvsAcrossCoil => cfg!(feature = "clamp-tvs-across-coil"),
            ClampKind::RcSnubber => cfg!(feature = "clamp-rc-snubber"),
        }
    }

    /// `Ok` when [`ClampKind::is_built`], else the error every clamp of a left-out type gets.
    pub(crate) const fn built(self) -> Result<(), Error> {
        if self.is_built() {
            Ok(())
        } else {
            Err(Error::invalid(Param::ClampType, Why::FeatureDisabled))
        }
    }
}

impl Clamp {
    /// A plain diode with forward drop `forward` (V, > 0).
    pub fn diode(forward: Volts) -> Result<Self, Error> {
        let c = Clamp::Diode { forward };
        c.validate().map(|()| c)
    }

    /// Diode + zener/TVS; `clamp_voltage` is the total across the coil (V_Z + V_F), > `forward`.
    pub fn diode_zener(forward: Volts, clamp_voltage: Volts) -> Result<Self, Error> {
        let c = Clamp::DiodeZener {
            forward,
            clamp_voltage,
        };
        c.validate().map(|()| c)
    }

    /// Diode + resistor (`resistance` > 0 Ω).
    pub fn diode_resistor(forward: Volts, resistance: Ohms) -> Result<Self, Error> {
        let c = Clamp::DiodeResistor {
            forward,
            resistance,
        };
        c.validate().map(|()| c)
    }

    /// Bidirectional TVS across the coil, no series diode: clamps at `clamp_voltage` (V) and
    /// stays off below `standoff` (V, 0 < standoff < clamp_voltage).
    pub fn tvs_across_coil(clamp_voltage: Volts, standoff: Volts) -> Result<Self, Error> {
        let c = Clamp::TvsAcrossCoil {
            clamp_voltage,
            standoff,
        };
        c.validate().map(|()| c)
    }

    /// Series R–C snubber across the coil (`resistance` > 0 Ω, `capacitance` > 0 F). Whether it is
    /// damped enough for the model is checked at release, where L and R are known.
    pub fn rc_snubber(resistance: Ohms, capacitance: Farads) -> Result<Self, Error> {
        let c = Clamp::RcSnubber {
            resistance,
            capacitance,
        };
        c.validate().map(|()| c)
    }

    /// Checks the clamp's own values (finite, voltages within
    /// [`super::domain::CLAMP_VOLTAGE_RANGE`], clamp voltage above diode drop, TVS standoff below its
    /// clamping voltage, resistors at most [`super::domain::MAX_RESISTANCE`]). Whether a clamp across the switch sits above the supply, and
    /// whether a TVS across the coil stays below its standoff while the switch is on, is checked at
    /// release, where the supply is known.
    ///
    /// # Errors
    /// [`Why::FeatureDisabled`] on [`Param::ClampType`] when the clamp type's cargo feature is off
    /// ([`ClampKind::is_built`]); otherwise the value errors above.
    pub fn validate(&self) -> Result<(), Error> {
        self.kind().built()?;
        match *self {
            Clamp::Diode { forward } => {
                clamp_voltage_in_range(forward, Param::DiodeDrop)?;
            }
            Clamp::DiodeZener {
                forward,
                clamp_voltage,
            } => {
                let vf = clamp_voltage_in_range(forward, Param::DiodeDrop)?;
                let vc = clamp_voltage_in_range(clamp_voltage, Param::ClampVoltage)?;
                if vc <= vf {
                    return Err(Error::invalid(Param::ClampVoltage, Why::BelowDiodeDrop));
                }
            }
            Clamp::DiodeResistor {
                forward,
                resistance,
            } => {
                clamp_voltage_in_range(forward, Param::DiodeDrop)?;
                let r = positive(resistance.value(), Param::ClampResistance)?;
                super::domain::resistance_in_range(r, Param::ClampResistance)?;
            }
            Clamp::AcrossSwitch { clamp_voltage } => {
                clamp_voltage_in_range(clamp_voltage, Param::ClampVoltage)?;
            }
            Clamp::Unclamped => {}
            Clamp::TvsAcrossCoil {
                clamp_voltage,
                standoff,
            } => {
                let vc = clamp_voltage_in_range(clamp_voltage, Param::ClampVoltage)?;
                let vs = clamp_voltage_in_range(standoff, Param::StandoffVoltage)?;
                if vs >= vc {
                    return Err(Error::invalid(Param::StandoffVoltage, Why::Inverted));
                }
            }
            Clamp::RcSnubber {
                resistance,
                capacitance,
            } => {
                let r = positive(resistance.value(), Param::ClampResistance)?;
                super::domain::resistance_in_range(r, Param::ClampResistance)?;
                positive(capacitance.value(), Param::Capacitance)?;
            }
        }
        Ok(())
    }

    /// The clamp type.
    pub const fn kind(&self) -> ClampKind {
        match self {
            Clamp::Diode { .. } => ClampKind::Diode,
            Clamp::DiodeZener { .. } => ClampKind::DiodeZener,
            Clamp::DiodeResistor { .. } => ClampKind::DiodeResistor,
            Clamp::AcrossSwitch { .. } => ClampKind::AcrossSwitch,
            Clamp::Unclamped => ClampKind::Unclamped,
            Clamp::TvsAcrossCoil { .. } => ClampKind::TvsAcrossCoil,
            Clamp::RcSnubber { .. } => ClampKind::RcSnubber,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::physics::circuit::tests::{try_valve, valve};
    use crate::physics::circuit::OperatingPoint;
    use crate::units::{Amps, Celsius};

    fn op() -> OperatingPoint {
        OperatingPoint::new(Volts::new(24.0), Celsius::new(20.0))
    }

    /// One clamp of every type with values valid for the test valve, in [`ClampKind`] order,
    /// built as literals (no validation on the way).
    fn one_of_each() -> [Clamp; 7] {
        [
            Clamp::Diode {
                forward: Volts::new(0.8),
            },
            Clamp::DiodeZener {
                forward: Volts::new(0.8),
                clamp_voltage: Volts::new(34.0),
            },
            Clamp::DiodeResistor {
                forward: Volts::new(0.8),
                resistance: Ohms::new(220.0),
            },
            Clamp::AcrossSwitch {
                clamp_voltage: Volts::new(47.0),
            },
            Clamp::Unclamped,
            Clamp::TvsAcrossCoil {
                clamp_voltage: Volts::new(34.0),
                standoff: Volts::new(26.0),
            },
            Clamp::RcSnubber {
                resistance: Ohms::new(1000.0),
                capacitance: Farads::from_micro(10.0),
            },
        ]
    }

    // Holds under every feature set (CI runs it with single clamp features too): a clamp type
    // left out of the build is refused with one documented error wherever it enters, never
    // computed with another type's formula (feature gating, common practice, no source).
    #[test]
    fn a_clamp_type_left_out_of_the_build_is_refused() {
        let off = Err(Error::invalid(Param::ClampType, Why::FeatureDisabled));
        let kinds = [
            ClampKind::Diode,
            ClampKind::DiodeZener,
            ClampKind::DiodeResistor,
            ClampKind::AcrossSwitch,
            ClampKind::Unclamped,
            ClampKind::TvsAcrossCoil,
            ClampKind::RcSnubber,
        ];
        for (c, kind) in one_of_each().into_iter().zip(kinds) {
            assert_eq!(c.kind(), kind);
            let circuit = try_valve(c);
            if kind.is_built() {
                assert_eq!(c.validate(), Ok(()), "{kind:?}");
                let rel = circuit.unwrap().release(&op(), Amps::new(0.1)).unwrap();
                assert!(rel.time_to_zero().unwrap().value() > 0.0, "{kind:?}");
                assert_eq!(rel.snubber().is_some(), kind == ClampKind::RcSnubber);
            } else {
                assert_eq!(c.validate(), off, "{kind:?}");
                assert_eq!(circuit.map(|_| ()), off, "{kind:?}");
            }
        }
        assert_eq!(
            ClampKind::RcSnubber.is_built(),
            cfg!(feature = "clamp-rc-snubber")
        );
        assert_eq!(ClampKind::Diode.is_built(), cfg!(feature = "clamp-diode"));
    }

    #[test]
    fn bad_clamps_are_errors() {
        assert_eq!(
            Clamp::diode_zener(Volts::new(0.8), Volts::new(0.5)),
            Err(Error::invalid(Param::ClampVoltage, Why::BelowDiodeDrop))
        );
        assert!(Clamp::diode(Volts::new(0.0)).is_err());
        assert!(Clamp::diode(Volts::new(f32::NAN)).is_err());
        assert!(Clamp::diode_resistor(Volts::new(0.7), Ohms::new(-1.0)).is_err());
        assert_eq!(
            Clamp::tvs_across_coil(Volts::new(30.0), Volts::new(30.0)),
            Err(Error::invalid(Param::StandoffVoltage, Why::Inverted))
        );
        assert!(Clamp::tvs_across_coil(Volts::new(30.0), Volts::new(0.0)).is_err());
        assert!(Clamp::tvs_across_coil(Volts::new(f32::NAN), Volts::new(20.0)).is_err());
        assert_eq!(
            Clamp::tvs_across_coil(Volts::new(30.0), Volts::new(26.0))
                .unwrap()
                .kind(),
            ClampKind::TvsAcrossCoil
        );
        let low = valve(Clamp::AcrossSwitch {
            clamp_voltage: Volts::new(20.0),
        });
        assert_eq!(
            low.release(&op(), Amps::new(0.1)),
            Err(Error::invalid(Param::ClampVoltage, Why::BelowSupply))
        );
    }
}
