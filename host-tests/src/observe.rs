//! What the bench reports: armature state, sense points, comparator, events,
//! per-channel running statistics, instantaneous probes and solver counters.

use crate::fault::Fault;

/// Position of the armature relative to its stops.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum ArmatureState {
    /// Resting on the released stop.
    #[default]
    Released,
    /// Between the stops.
    Moving,
    /// Resting on the operated stop.
    Operated,
}

/// What a comparator or ADC looks at.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum SensePoint {
    /// The current in the sense resistor (switch current): what a shunt in
    /// the switch path sees. Zero while the clamp carries the coil current.
    #[default]
    Switch,
    /// The coil current itself (an in-line sensor in the coil lead).
    Coil,
}

/// A current comparator on one channel. It arms at every commanded
/// switch-on and latches the first upward crossing of the threshold.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Comparator {
    /// Threshold in amperes.
    pub threshold_amps: f64,
    /// What current it compares.
    pub sense: SensePoint,
}

/// Something that happened on a channel (or on the bench).
#[non_exhaustive]
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum EventKind {
    /// The firmware switched the channel on (pin high, or PWM duty from 0).
    SwitchOn,
    /// The firmware switched the channel off (pin low, or PWM duty to 0).
    SwitchOff,
    /// The PWM duty changed (new on-time in ns per period).
    DutyChanged {
        /// On-time per period, ns.
        on_ns: u64,
        /// Period, ns.
        period_ns: u64,
    },
    /// The armature left the released stop.
    ArmatureMoving,
    /// The armature reached the operated stop.
    ArmatureOperated,
    /// The armature left the operated stop.
    ArmatureLeftOperated,
    /// The armature came back to the released stop.
    ArmatureReleased,
    /// With the switch off, the coil current reached zero (clamp blocking).
    CurrentZero,
    /// The comparator tripped.
    ComparatorTrip,
    /// A fault was injected.
    FaultInjected(Fault),
    /// All faults were cleared.
    FaultsCleared,
    /// The supply voltage was changed (new volts).
    SupplyChanged(f64),
    /// The coil's magnetic extras were changed ([`crate::Bench::set_magnetics`]).
    MagneticsChanged,
    /// The coil current was set ([`crate::Bench::set_current`]; amperes).
    CurrentSet(f64),
}

/// A timestamped event.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Event {
    /// Time in ns since the start of the simulation.
    pub t_ns: u64,
    /// Channel index (0 for bench-wide events).
    pub channel: usize,
    /// What happened.
    pub kind: EventKind,
}

/// Running extremes and times of one channel, updated at every accepted
/// integration step (not only at recorder samples).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ChannelStats {
    /// Largest voltage across the switch itself (excluding the sense
    /// resistor), volts, since the last [`crate::Bench::reset_stats`].
    pub peak_switch_volts: f64,
    /// Largest switched-node voltage to ground, volts.
    pub peak_node_volts: f64,
    /// Smallest switched-node voltage to ground, volts (negative for a
    /// high-side switch at switch-off).
    pub min_node_volts: f64,
    /// Largest coil current, amperes.
    pub peak_coil_amps: f64,
    /// Time of the last commanded switch-on, ns.
    pub last_on_ns: Option<u64>,
    /// Time of the last commanded switch-off, ns.
    pub last_off_ns: Option<u64>,
    /// First time the armature left the released stop since the last switch-on.
    pub moved_ns: Option<u64>,
    /// First time the armature reached the operated stop since the last switch-on.
    pub operated_ns: Option<u64>,
    /// Last time the armature came back to the released stop since the last switch-off.
    pub released_ns: Option<u64>,
    /// Time the coil current reached zero since the last switch-off.
    pub current_zero_ns: Option<u64>,
    /// Time the comparator tripped since the last switch-on.
    pub comparator_trip_ns: Option<u64>,
}

impl ChannelStats {
    pub(crate) const NEW: Self = ChannelStats {
        peak_switch_volts: f64::NEG_INFINITY,
        peak_node_volts: f64::NEG_INFINITY,
        min_node_volts: f64::INFINITY,
        peak_coil_amps: f64::NEG_INFINITY,
        last_on_ns: None,
        last_off_ns: None,
        moved_ns: None,
        operated_ns: None,
        released_ns: None,
        current_zero_ns: None,
        comparator_trip_ns: None,
    };

    /// Comparator trip time measured from the last switch-on, ns.
    pub fn comparator_ns_since_on(&self) -> Option<u64> {
        match (self.comparator_trip_ns, self.last_on_ns) {
            (Some(t), Some(on)) if t >= on => Some(t - on),
            _ => None,
        }
    }

    /// Comparator trip as a timer capture value (ticks of `tick_hz` since
    /// switch-on, rounded down like a free-running counter).
    pub fn comparator_ticks_since_on(&self, tick_hz: u32) -> Option<u64> {
        self.comparator_ns_since_on()
            .map(|ns| ((ns as u128 * tick_hz as u128) / 1_000_000_000) as u64)
    }
}

/// Instantaneous electrical and mechanical quantities of one channel.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Probe {
    /// Time, ns.
    pub t_ns: u64,
    /// Coil current, A.
    pub coil_amps: f64,
    /// Switch (and sense-resistor) current, A.
    pub switch_amps: f64,
    /// Clamp current, A.
    pub clamp_amps: f64,
    /// Snubber current, A.
    pub snubber_amps: f64,
    /// Voltage across the switch itself, V (drain–source for a low-side MOSFET).
    pub switch_volts: f64,
    /// Switched coil terminal to ground, V.
    pub node_volts: f64,
    /// Voltage across the clamp in its conducting direction, V.
    pub clamp_volts: f64,
    /// Rail voltage, V.
    pub rail_volts: f64,
    /// Normalised armature position (0 released … 1 operated).
    pub position: f64,
    /// Armature velocity, m/s.
    pub velocity_m_per_s: f64,
    /// Inductance of the winding's position law `L(x)` now, H (before any
    /// shorted section, eddy loop or saturation).
    pub inductance_henries: f64,
    /// Current in the bridged section of shorted turns, A (0 without one).
    pub section_amps: f64,
    /// Current in the eddy-current loop, A (0 without one).
    pub eddy_amps: f64,
    /// Magnetic force on the armature, N.
    pub magnetic_force_newtons: f64,
    /// Whether the switch is on.
    pub gate_on: bool,
    /// Armature state.
    pub armature: ArmatureState,
}

/// Integration statistics.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct SolverCounters {
    /// Accepted steps.
    pub steps: u64,
    /// Steps rejected by error control.
    pub rejected: u64,
    /// Steps shortened to land on an end stop or current zero.
    pub refined: u64,
    /// Right-hand-side evaluations.
    pub evaluations: u64,
}
