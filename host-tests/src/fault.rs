//! Faults that can be injected into a channel at any time, and the set of
//! faults active on a channel.

use crate::params::{check, finite_ge0, finite_gt0, SimError};

/// A fault that can be injected into a channel at any time.
///
/// Injecting keeps the coil's terminal current continuous; the change of
/// stored magnetic energy is booked as [`crate::Energy::removed_by_events`].
/// A later fault of the same kind replaces the earlier one;
/// [`Fault::ShortedTurns`] and [`Fault::ShortedTurnsLumped`] replace each
/// other. [`crate::Bench::clear_faults`] removes them all.
#[non_exhaustive]
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Fault {
    /// The coil circuit is open (broken wire): no current can flow. If it
    /// opens while current flows, the stored energy is booked as
    /// [`crate::Energy::removed_by_events`] (the arc is not modelled).
    /// Closed secondary loops (eddy path, shorted section) keep decaying.
    Open,
    /// Coil terminals shorted: the coil is replaced by `residual_ohms` and
    /// `residual_henries` (> 0); the current is then limited by switch,
    /// sense and wiring resistance. The replaced coil's secondary loops and
    /// saturation ([`crate::Magnetics`]) are dropped with it.
    Short {
        /// Resistance of the short in ohms (≥ 0).
        residual_ohms: f64,
        /// Inductance left in the loop (wiring), henries (> 0).
        residual_henries: f64,
    },
    /// An insulation fault bridges a section of `fraction · N` turns: the
    /// section becomes a closed loop (section + bridge) magnetically coupled
    /// to the rest of the winding, which still carries the terminal current
    /// through the bridge.
    ///
    /// Loops (mesh currents): the healthy part carries the terminal current
    /// `i₀`, the section carries `i₁`, the bridge `i₀ − i₁`:
    ///
    /// `dλ₀/dt = v_coil − R₀·i₀ − R_b·(i₀ − i₁)`,
    /// `dλ₁/dt = R_b·(i₀ − i₁) − R₁·i₁`,
    ///
    /// with `R₀ = (1 − f)·R`, `R₁ = f·R` (resistance by turn count) and the
    /// inductance matrix `L₀ = a·(1 − f)²`, `L₁ = a·f²`,
    /// `M = k·sqrt(L₀·L₁)` (inductance by turns squared), where
    /// `a = L/((1 − f)² + f² + 2·k·f·(1 − f))` keeps the intact coil's
    /// series inductance `L₀ + L₁ + 2M` equal to the coil's `L(x)`. With
    /// `R_b → ∞` the coil is intact; with a small `R_b` the section acts as a
    /// shorted secondary and the terminal current rises with two time
    /// constants (see [`crate::Magnetics`] for the common-flux form used with
    /// an eddy loop and saturation).
    ShortedTurns {
        /// Fraction `f` of the turns in the shorted section, in (0, 1).
        fraction: f64,
        /// Magnetic coupling `k` between the section and the rest, in (0, 1)
        /// (0.85–0.98 is usual for turns on one bobbin).
        coupling: f64,
        /// Resistance of the insulation-fault bridge, ohms (≥ 0, finite).
        bridge_ohms: f64,
    },
    /// The lumped simplification of shorted turns: a fraction `f ∈ [0, 1)` of
    /// the turns is taken out of the circuit — resistance scales by
    /// `(1 − f)`, inductance (both positions) by `(1 − f)²` — and the
    /// shorted loop's coupled action is ignored. Not physical (a bridged
    /// section is a closed coupled loop: use [`Fault::ShortedTurns`]); kept
    /// because the firmware demo's logged runs were made with it.
    ShortedTurnsLumped {
        /// Fraction of turns shorted.
        fraction: f64,
    },
    /// Extra series resistance (corroded connector), ohms (≥ 0).
    SeriesResistance {
        /// Added resistance in ohms.
        ohms: f64,
    },
    /// The armature is stuck where it is now (no motion).
    StuckArmature,
}

impl Fault {
    /// Checks the fault's parameters against their documented domains.
    pub(crate) fn validate(&self) -> Result<(), SimError> {
        match *self {
            Fault::Open | Fault::StuckArmature => Ok(()),
            Fault::Short {
                residual_ohms,
                residual_henries,
            } => {
                finite_ge0(residual_ohms, "fault.residual_ohms")?;
                finite_gt0(residual_henries, "fault.residual_henries")
            }
            Fault::ShortedTurns {
                fraction,
                coupling,
                bridge_ohms,
            } => {
                check(
                    cfg!(feature = "coupled-physics"),
                    "fault.shorted_turns (needs the `coupled-physics` feature)",
                )?;
                check(fraction > 0.0 && fraction < 1.0, "fault.fraction")?;
                check(coupling > 0.0 && coupling < 1.0, "fault.coupling")?;
                finite_ge0(bridge_ohms, "fault.bridge_ohms")
            }
            Fault::ShortedTurnsLumped { fraction } => check(
                fraction.is_finite() && (0.0..1.0).contains(&fraction),
                "fault.fraction",
            ),
            Fault::SeriesResistance { ohms } => finite_ge0(ohms, "fault.ohms"),
        }
    }
}

/// A bridged section of turns: fraction, coupling, bridge resistance.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Section {
    pub fraction: f64,
    pub coupling: f64,
    pub bridge_ohms: f64,
}

/// Active faults of one channel.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub(crate) struct FaultSet {
    pub open: bool,
    pub short: Option<(f64, f64)>,
    /// Lumped shorted fraction ([`Fault::ShortedTurnsLumped`]).
    pub shorted_fraction: f64,
    /// Coupled shorted section ([`Fault::ShortedTurns`]).
    pub section: Option<Section>,
    pub extra_ohms: f64,
    pub stuck: bool,
}

impl FaultSet {
    pub(crate) fn apply(&mut self, f: Fault) {
        match f {
            Fault::Open => self.open = true,
            Fault::Short {
                residual_ohms,
                residual_henries,
            } => self.short = Some((residual_ohms, residual_henries)),
            Fault::ShortedTurns {
                fraction,
                coupling,
                bridge_ohms,
            } => {
                self.shorted_fraction = 0.0;
                self.section = Some(Section {
                    fraction,
                    coupling,
                    bridge_ohms,
                });
            }
            Fault::ShortedTurnsLumped { fraction } => {
                self.section = None;
                self.shorted_fraction = fraction;
            }
            Fault::SeriesResistance { ohms } => self.extra_ohms = ohms,
            Fault::StuckArmature => self.stuck = true,
        }
    }
}
