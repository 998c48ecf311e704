//! The simulated bench: N coil channels on one supply, integrated in time.

use crate::params::{
    ChannelParams, Fault, Mechanics, SimError, SolverSettings, Stepping, Supply, Topology,
};
use crate::plant::{self, Eff, FaultSet, Op, DYN, K};

/// Smallest step the adaptive controller will try, seconds.
const H_MIN: f64 = 1e-15;
/// Velocity below which a bounce is considered to have ended, m/s.
const REST_SPEED: f64 = 1e-6;
/// Tolerated overshoot past an end stop, as a fraction of the stroke.
const STOP_TOL: f64 = 1e-9;
/// Retries to land a step on an end stop or on current zero.
const MAX_REFINE: u32 = 12;

const R_V: usize = 0;
const R_ESRC: usize = 1;
const R_ERES: usize = 2;

#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct State<const N: usize> {
    pub ch: [[f64; K]; N],
    pub rail: [f64; 3],
}

impl<const N: usize> State<N> {
    const ZERO: Self = State {
        ch: [[0.0; K]; N],
        rail: [0.0; 3],
    };

    /// `self = y + Σ (h·c_m)·k_m`, fixed arity so the loops unroll.
    #[inline(always)]
    fn lin<const M: usize>(&mut self, y: &Self, h: f64, c: [f64; M], k: [&Self; M]) {
        let hc: [f64; M] = core::array::from_fn(|m| h * c[m]);
        for ch in 0..N {
            for j in 0..K {
                let mut acc = y.ch[ch][j];
                for m in 0..M {
                    acc += hc[m] * k[m].ch[ch][j];
                }
                self.ch[ch][j] = acc;
            }
        }
        for j in 0..3 {
            let mut acc = y.rail[j];
            for m in 0..M {
                acc += hc[m] * k[m].rail[j];
            }
            self.rail[j] = acc;
        }
    }
}

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
    /// resistor), volts, since the last [`Bench::reset_stats`].
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
    const NEW: Self = ChannelStats {
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
    /// Present inductance, H.
    pub inductance_henries: f64,
    /// Magnetic force on the armature, N.
    pub magnetic_force_newtons: f64,
    /// Whether the switch is on.
    pub gate_on: bool,
    /// Armature state.
    pub armature: ArmatureState,
}

/// Energy bookkeeping of one channel, joules, cumulative since the bench was
/// built (sinks) or present values (stored).
///
/// Balance (what [`Energy::balance_error_since`] checks):
/// `Δfrom_rail = Δ(magnetic + capacitor + kinetic + spring) + Δ(all sinks)`,
/// and mechanically `Δmechanical_work = Δ(kinetic + spring) + Δ(damping + impact)`.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Energy {
    /// Delivered by the rail into this channel (`∫ V+·i_switch dt`).
    pub from_rail: f64,
    /// Heat in the winding resistance.
    pub winding: f64,
    /// Heat in wiring and added series resistance.
    pub wiring: f64,
    /// Heat in the sense resistor.
    pub sense: f64,
    /// Switch loss while conducting (on-state, body diode).
    pub switch_conduction: f64,
    /// Switch loss in avalanche (off-state breakdown).
    pub switch_avalanche: f64,
    /// Energy into the clamp.
    pub clamp: f64,
    /// Heat in the snubber resistor.
    pub snubber_resistor: f64,
    /// Work of the magnetic force on the armature (`∫ F·v dt`).
    pub mechanical_work: f64,
    /// Viscous damping loss.
    pub damping: f64,
    /// Lost at stop impacts (kinetic energy not returned by restitution).
    pub impact: f64,
    /// Removed by discrete events: faults that change the coil, the
    /// current floor, and end-stop projection corrections.
    pub removed_by_events: f64,
    /// Stored in the magnetic field now, `½·L(x)·i²`.
    pub magnetic_stored: f64,
    /// Stored in the snubber capacitor now, `½·C·vc²`.
    pub capacitor_stored: f64,
    /// Kinetic energy of the armature now, `½·m·v²`.
    pub kinetic: f64,
    /// Return-spring energy now, `F0·p + ½·k·p²`.
    pub spring: f64,
}

impl Energy {
    /// Sum of all sinks (J).
    pub fn dissipated(&self) -> f64 {
        self.winding
            + self.wiring
            + self.sense
            + self.switch_conduction
            + self.switch_avalanche
            + self.clamp
            + self.snubber_resistor
            + self.damping
            + self.impact
            + self.removed_by_events
    }

    /// Sum of stored energies (J).
    pub fn stored(&self) -> f64 {
        self.magnetic_stored + self.capacitor_stored + self.kinetic + self.spring
    }

    /// Energy not accounted for between `start` and `self`, J:
    /// `Δfrom_rail − Δstored − Δdissipated`. Zero up to integration error.
    pub fn balance_error_since(&self, start: &Energy) -> f64 {
        (self.from_rail - start.from_rail)
            - (self.stored() - start.stored())
            - (self.dissipated() - start.dissipated())
    }

    /// Mechanical balance error between `start` and `self`, J:
    /// `Δwork − Δ(kinetic + spring) − Δ(damping + impact)`.
    pub fn mechanical_error_since(&self, start: &Energy) -> f64 {
        (self.mechanical_work - start.mechanical_work)
            - (self.kinetic + self.spring - start.kinetic - start.spring)
            - (self.damping + self.impact - start.damping - start.impact)
    }
}

/// Energy bookkeeping of the supply (J).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct SupplyEnergy {
    /// Delivered by the ideal source.
    pub from_source: f64,
    /// Heat in the source resistance.
    pub source_resistor: f64,
    /// Stored in the bulk capacitor now.
    pub bulk_stored: f64,
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

#[derive(Debug, Clone, Copy, PartialEq)]
enum Drive {
    Pin(bool),
    Pwm {
        period_ns: u64,
        on_ns: u64,
        origin_ns: u64,
    },
}

impl Drive {
    fn commanded_on(&self) -> bool {
        match *self {
            Drive::Pin(on) => on,
            Drive::Pwm { on_ns, .. } => on_ns > 0,
        }
    }

    fn gate_at(&self, t: u64) -> bool {
        match *self {
            Drive::Pin(on) => on,
            Drive::Pwm {
                period_ns,
                on_ns,
                origin_ns,
            } => {
                if on_ns == 0 {
                    false
                } else if on_ns >= period_ns {
                    true
                } else {
                    (t.saturating_sub(origin_ns)) % period_ns < on_ns
                }
            }
        }
    }

    fn next_edge_after(&self, t: u64) -> Option<u64> {
        match *self {
            Drive::Pin(_) => None,
            Drive::Pwm {
                period_ns,
                on_ns,
                origin_ns,
            } => {
                if on_ns == 0 || on_ns >= period_ns {
                    return None;
                }
                let phase = t.saturating_sub(origin_ns) % period_ns;
                Some(if phase < on_ns {
                    t + (on_ns - phase)
                } else {
                    t + (period_ns - phase)
                })
            }
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq)]
struct Status {
    stats: ChannelStats,
    armature: ArmatureState,
    removed: f64,
    impact: f64,
    comparator: Option<Comparator>,
    armed: bool,
    prev_sense: f64,
    prev_t_ns: f64,
}

/// N coil channels sharing one supply: the plant.
///
/// Time only moves through [`Bench::advance_ns`] / [`Bench::advance_to`]
/// (or the [`crate::VirtualClock`] that calls them). Gates are set with
/// [`Bench::set_gate`] / [`Bench::set_pwm`] (or [`crate::GatePin`] /
/// [`crate::PwmGate`]).
///
/// Memory: about `(14·N + 3)·8` bytes per state copy; a step keeps seven
/// copies on the stack (≈ 0.9 KiB for N = 1).
#[derive(Debug, Clone)]
pub struct Bench<const N: usize> {
    supply: Supply,
    params: [ChannelParams; N],
    faults: [FaultSet; N],
    eff: [Eff; N],
    settings: SolverSettings,
    y: State<N>,
    k1: State<N>,
    k1_valid: bool,
    now_ns: u64,
    drive: [Drive; N],
    gate: [bool; N],
    blocked: [bool; N],
    h_next: f64,
    st: [Status; N],
    counters: SolverCounters,
    #[cfg(feature = "std")]
    rec: Option<crate::record::Recording>,
}

impl Bench<1> {
    /// A single-channel bench.
    pub fn single(
        supply: Supply,
        channel: ChannelParams,
        settings: SolverSettings,
    ) -> Result<Self, SimError> {
        Bench::new(supply, [channel], settings)
    }
}

impl<const N: usize> Bench<N> {
    /// Build a bench at rest: all switches off, currents zero, armatures at
    /// their released stop (or at the fixed position), rail charged.
    ///
    /// Errors: [`SimError`] when any parameter is outside its domain.
    pub fn new(
        supply: Supply,
        params: [ChannelParams; N],
        settings: SolverSettings,
    ) -> Result<Self, SimError> {
        supply.validate()?;
        settings.validate()?;
        for p in &params {
            p.validate()?;
        }
        let faults = [FaultSet::default(); N];
        let eff: [Eff; N] = core::array::from_fn(|c| Eff::new(&params[c], &faults[c]));
        let blocked: [bool; N] = core::array::from_fn(|c| params[c].snubber.is_none());
        let mut y = State::<N>::ZERO;
        let mut st = [Status {
            stats: ChannelStats::NEW,
            armature: ArmatureState::Released,
            removed: 0.0,
            impact: 0.0,
            comparator: None,
            armed: false,
            prev_sense: 0.0,
            prev_t_ns: 0.0,
        }; N];
        for c in 0..N {
            if let Mechanics::Fixed { position } = params[c].mechanics {
                y.ch[c][plant::POS] = position;
                if position >= 1.0 {
                    st[c].armature = ArmatureState::Operated;
                } else if position > 0.0 {
                    st[c].armature = ArmatureState::Moving;
                }
            }
        }
        y.rail[R_V] = supply.volts;
        let h0 = match settings.stepping {
            Stepping::Adaptive { max_step_s, .. } => max_step_s * 0.1,
            Stepping::Fixed { step_s } => step_s,
        };
        Ok(Bench {
            supply,
            params,
            faults,
            eff,
            settings,
            y,
            k1: State::ZERO,
            k1_valid: false,
            now_ns: 0,
            drive: [Drive::Pin(false); N],
            gate: [false; N],
            blocked,
            h_next: h0,
            st,
            counters: SolverCounters::default(),
            #[cfg(feature = "std")]
            rec: None,
        })
    }

    fn check_ch(&self, ch: usize) -> Result<(), SimError> {
        if ch < N {
            Ok(())
        } else {
            Err(SimError::NoSuchChannel)
        }
    }

    /// Simulated time in ns since the bench was built.
    pub fn now_ns(&self) -> u64 {
        self.now_ns
    }

    /// Parameters of a channel.
    pub fn params(&self, ch: usize) -> Result<&ChannelParams, SimError> {
        self.check_ch(ch)?;
        Ok(&self.params[ch])
    }

    /// The supply as configured now.
    pub fn supply(&self) -> Supply {
        self.supply
    }

    /// Integration statistics.
    pub fn counters(&self) -> SolverCounters {
        self.counters
    }

    fn rail_volts_of(&self, y: &State<N>) -> f64 {
        if self.supply.source_ohms > 0.0 {
            y.rail[R_V]
        } else {
            self.supply.volts
        }
    }

    /// Rail voltage now, V.
    pub fn rail_volts(&self) -> f64 {
        self.rail_volts_of(&self.y)
    }

    fn deriv(&self, y: &State<N>, out: &mut State<N>) {
        let vp = self.rail_volts_of(y);
        let mut draw = 0.0;
        for c in 0..N {
            draw += plant::derive(
                &self.params[c],
                &self.eff[c],
                &y.ch[c],
                vp,
                self.gate[c],
                self.blocked[c],
                &mut out.ch[c],
            );
        }
        let s = &self.supply;
        if s.source_ohms > 0.0 {
            let i_src = (s.volts - vp) / s.source_ohms;
            out.rail[R_V] = (i_src - draw) / s.bulk_farads;
            out.rail[R_ESRC] = s.volts * i_src;
            out.rail[R_ERES] = i_src * i_src * s.source_ohms;
        } else {
            out.rail[R_V] = 0.0;
            out.rail[R_ESRC] = s.volts * draw;
            out.rail[R_ERES] = 0.0;
        }
    }

    fn op(&self, c: usize) -> Op {
        plant::operate(
            &self.params[c],
            &self.eff[c],
            &self.y.ch[c],
            self.rail_volts(),
            self.gate[c],
            self.blocked[c],
        )
    }

    /// Instantaneous quantities of a channel.
    pub fn probe(&self, ch: usize) -> Result<Probe, SimError> {
        self.check_ch(ch)?;
        Ok(self.probe_unchecked(ch))
    }

    fn probe_unchecked(&self, c: usize) -> Probe {
        let op = self.op(c);
        let vp = self.rail_volts();
        let n = op.node;
        let node_volts = match self.params[c].topology {
            Topology::LowSide => n.w,
            Topology::HighSide => vp - n.w,
        };
        Probe {
            t_ns: self.now_ns,
            coil_amps: op.i,
            switch_amps: n.i_sw,
            clamp_amps: n.i_cl,
            snubber_amps: n.i_sn,
            switch_volts: n.w - n.i_sw * self.params[c].sense_ohms,
            node_volts,
            clamp_volts: n.w - vp,
            rail_volts: vp,
            position: op.x,
            velocity_m_per_s: self.y.ch[c][plant::VEL],
            inductance_henries: op.l,
            magnetic_force_newtons: op.force,
            gate_on: self.gate[c],
            armature: self.st[c].armature,
        }
    }

    /// Energy bookkeeping of a channel.
    pub fn energy(&self, ch: usize) -> Result<Energy, SimError> {
        self.check_ch(ch)?;
        let c = ch;
        let y = &self.y.ch[c];
        let op = self.op(c);
        let e = &self.eff[c];
        let cap = match self.params[c].snubber {
            Some(s) => 0.5 * s.farads * y[plant::VC] * y[plant::VC],
            None => 0.0,
        };
        let (kin, spring) = match self.params[c].mechanics {
            Mechanics::Moving(a) => (
                0.5 * a.mass_kg * y[plant::VEL] * y[plant::VEL],
                e.spring_energy(y[plant::POS]),
            ),
            Mechanics::Fixed { .. } => (0.0, 0.0),
        };
        Ok(Energy {
            from_rail: y[plant::E_RAIL],
            winding: y[plant::E_WIND],
            wiring: y[plant::E_WIRE],
            sense: y[plant::E_SENSE],
            switch_conduction: y[plant::E_SWC],
            switch_avalanche: y[plant::E_SWA],
            clamp: y[plant::E_CLAMP],
            snubber_resistor: y[plant::E_SNUB],
            mechanical_work: y[plant::E_MECH],
            damping: y[plant::E_DAMP],
            impact: self.st[c].impact,
            removed_by_events: self.st[c].removed,
            magnetic_stored: 0.5 * op.l * op.i * op.i,
            capacitor_stored: cap,
            kinetic: kin,
            spring,
        })
    }

    /// Energy bookkeeping summed over all channels (field by field).
    pub fn energy_total(&self) -> Energy {
        let mut t = Energy::default();
        for c in 0..N {
            if let Ok(e) = self.energy(c) {
                t.from_rail += e.from_rail;
                t.winding += e.winding;
                t.wiring += e.wiring;
                t.sense += e.sense;
                t.switch_conduction += e.switch_conduction;
                t.switch_avalanche += e.switch_avalanche;
                t.clamp += e.clamp;
                t.snubber_resistor += e.snubber_resistor;
                t.mechanical_work += e.mechanical_work;
                t.damping += e.damping;
                t.impact += e.impact;
                t.removed_by_events += e.removed_by_events;
                t.magnetic_stored += e.magnetic_stored;
                t.capacitor_stored += e.capacitor_stored;
                t.kinetic += e.kinetic;
                t.spring += e.spring;
            }
        }
        t
    }

    /// Supply-side energy bookkeeping.
    pub fn supply_energy(&self) -> SupplyEnergy {
        let v = self.rail_volts();
        SupplyEnergy {
            from_source: self.y.rail[R_ESRC],
            source_resistor: self.y.rail[R_ERES],
            bulk_stored: 0.5 * self.supply.bulk_farads * v * v,
        }
    }

    /// Running extremes and event times of a channel.
    pub fn stats(&self, ch: usize) -> Result<ChannelStats, SimError> {
        self.check_ch(ch)?;
        Ok(self.st[ch].stats)
    }

    /// Reset the running extremes (peaks) of a channel; event times are kept.
    pub fn reset_stats(&mut self, ch: usize) -> Result<(), SimError> {
        self.check_ch(ch)?;
        let s = &mut self.st[ch].stats;
        s.peak_switch_volts = f64::NEG_INFINITY;
        s.peak_node_volts = f64::NEG_INFINITY;
        s.min_node_volts = f64::INFINITY;
        s.peak_coil_amps = f64::NEG_INFINITY;
        self.update_peaks(ch);
        Ok(())
    }

    /// Armature state of a channel.
    pub fn armature(&self, ch: usize) -> Result<ArmatureState, SimError> {
        self.check_ch(ch)?;
        Ok(self.st[ch].armature)
    }

    /// Fit (or remove, with `None`) a current comparator on a channel. It
    /// arms at the next commanded switch-on.
    pub fn set_comparator(&mut self, ch: usize, cmp: Option<Comparator>) -> Result<(), SimError> {
        self.check_ch(ch)?;
        if let Some(c) = cmp {
            crate::params::check(c.threshold_amps.is_finite(), "comparator.threshold_amps")?;
        }
        let s = &mut self.st[ch];
        s.comparator = cmp;
        s.armed = false;
        s.stats.comparator_trip_ns = None;
        Ok(())
    }

    fn emit(&mut self, ch: usize, kind: EventKind, t_ns: u64) {
        #[cfg(feature = "std")]
        if let Some(r) = self.rec.as_mut() {
            r.events.push(Event {
                t_ns,
                channel: ch,
                kind,
            });
        }
        #[cfg(not(feature = "std"))]
        let _ = (ch, kind, t_ns);
    }

    /// Switch a channel on (`true`) or off, as a GPIO would.
    pub fn set_gate(&mut self, ch: usize, on: bool) -> Result<(), SimError> {
        self.check_ch(ch)?;
        self.set_drive(ch, Drive::Pin(on));
        Ok(())
    }

    /// Drive a channel with PWM: `period_ns` per cycle, `on_ns` on-time at
    /// the start of each cycle. A running carrier keeps its phase when the
    /// duty changes; a new one starts now. `on_ns = 0` is off,
    /// `on_ns ≥ period_ns` is fully on.
    pub fn set_pwm(&mut self, ch: usize, period_ns: u64, on_ns: u64) -> Result<(), SimError> {
        self.check_ch(ch)?;
        crate::params::check(period_ns > 0, "pwm.period_ns")?;
        let origin_ns = match self.drive[ch] {
            Drive::Pwm {
                period_ns: p,
                origin_ns,
                ..
            } if p == period_ns => origin_ns,
            _ => self.now_ns,
        };
        let on_ns = on_ns.min(period_ns);
        self.emit(ch, EventKind::DutyChanged { on_ns, period_ns }, self.now_ns);
        self.set_drive(
            ch,
            Drive::Pwm {
                period_ns,
                on_ns,
                origin_ns,
            },
        );
        Ok(())
    }

    /// Whether the gate of a channel is on right now.
    pub fn gate_on(&self, ch: usize) -> Result<bool, SimError> {
        self.check_ch(ch)?;
        Ok(self.gate[ch])
    }

    fn set_drive(&mut self, c: usize, d: Drive) {
        let was = self.drive[c].commanded_on();
        let now_on = d.commanded_on();
        self.drive[c] = d;
        let t = self.now_ns;
        if !was && now_on {
            let s = &mut self.st[c];
            s.stats.last_on_ns = Some(t);
            s.stats.moved_ns = None;
            s.stats.operated_ns = None;
            s.stats.comparator_trip_ns = None;
            s.armed = s.comparator.is_some();
            self.emit(c, EventKind::SwitchOn, t);
        } else if was && !now_on {
            let s = &mut self.st[c];
            s.stats.last_off_ns = Some(t);
            s.stats.released_ns = None;
            s.stats.current_zero_ns = None;
            self.emit(c, EventKind::SwitchOff, t);
        }
        self.refresh_gate(c);
    }

    fn refresh_gate(&mut self, c: usize) {
        let g = self.drive[c].gate_at(self.now_ns);
        if g != self.gate[c] {
            self.gate[c] = g;
            self.k1_valid = false;
            if g {
                self.blocked[c] = false;
            }
        }
        // The sensed current can jump at a gate edge: restart the crossing
        // detector from the present value.
        self.st[c].prev_sense = self.sensed(c);
        self.st[c].prev_t_ns = self.now_ns as f64;
        self.update_peaks(c);
    }

    fn sensed(&self, c: usize) -> f64 {
        match self.st[c].comparator {
            Some(cmp) => {
                let op = self.op(c);
                match cmp.sense {
                    SensePoint::Switch => op.node.i_sw,
                    SensePoint::Coil => op.i,
                }
            }
            None => 0.0,
        }
    }

    /// Inject a fault into a channel now. The coil current is kept
    /// continuous (flux is re-scaled); any change of stored magnetic energy
    /// is booked as [`Energy::removed_by_events`].
    pub fn inject(&mut self, ch: usize, fault: Fault) -> Result<(), SimError> {
        self.check_ch(ch)?;
        match fault {
            Fault::Open | Fault::StuckArmature => {}
            Fault::Short {
                residual_ohms,
                residual_henries,
            } => {
                crate::params::finite_ge0(residual_ohms, "fault.residual_ohms")?;
                crate::params::finite_gt0(residual_henries, "fault.residual_henries")?;
            }
            Fault::ShortedTurns { fraction } => crate::params::check(
                fraction.is_finite() && (0.0..1.0).contains(&fraction),
                "fault.fraction",
            )?,
            Fault::SeriesResistance { ohms } => crate::params::finite_ge0(ohms, "fault.ohms")?,
        }
        let mut f = self.faults[ch];
        f.apply(fault);
        self.change_faults(ch, f);
        self.emit(ch, EventKind::FaultInjected(fault), self.now_ns);
        Ok(())
    }

    /// Remove all faults of a channel (same energy rule as [`Bench::inject`]).
    pub fn clear_faults(&mut self, ch: usize) -> Result<(), SimError> {
        self.check_ch(ch)?;
        self.change_faults(ch, FaultSet::default());
        self.emit(ch, EventKind::FaultsCleared, self.now_ns);
        Ok(())
    }

    fn change_faults(&mut self, c: usize, f: FaultSet) {
        let old = self.op(c);
        let was_open = self.eff[c].open;
        self.faults[c] = f;
        self.eff[c] = Eff::new(&self.params[c], &f);
        let e = self.eff[c];
        let y = &mut self.y.ch[c];
        let (l_new, _) = e.inductance(y[plant::POS] / e.stroke);
        let i_new = if e.open || was_open { 0.0 } else { old.i };
        y[plant::LAM] = l_new * i_new;
        let w_old = 0.5 * old.l * old.i * old.i;
        let w_new = 0.5 * l_new * i_new * i_new;
        self.st[c].removed += w_old - w_new;
        if !e.moving {
            if let Mechanics::Moving(a) = self.params[c].mechanics {
                let v = y[plant::VEL];
                self.st[c].removed += 0.5 * a.mass_kg * v * v;
            }
            y[plant::VEL] = 0.0;
        }
        self.k1_valid = false;
    }

    /// Change the (open-circuit) supply voltage now, e.g. a supply sag.
    pub fn set_supply_volts(&mut self, volts: f64) -> Result<(), SimError> {
        crate::params::finite_ge0(volts, "supply.volts")?;
        self.supply.volts = volts;
        self.k1_valid = false;
        self.emit(0, EventKind::SupplyChanged(volts), self.now_ns);
        Ok(())
    }

    /// Advance simulated time by `dt_ns` nanoseconds.
    pub fn advance_ns(&mut self, dt_ns: u64) {
        let t = self.now_ns.saturating_add(dt_ns);
        self.advance_to(t);
    }

    /// Advance simulated time to `t_ns` (no-op if that is not in the future).
    pub fn advance_to(&mut self, t_ns: u64) {
        while self.now_ns < t_ns {
            let mut end = t_ns;
            for c in 0..N {
                if let Some(e) = self.drive[c].next_edge_after(self.now_ns) {
                    end = end.min(e);
                }
            }
            #[cfg(feature = "std")]
            if let Some(r) = self.rec.as_ref() {
                end = end.min(r.next_ns.max(self.now_ns + 1));
            }
            self.integrate_to(end);
            self.now_ns = end;
            for c in 0..N {
                self.refresh_gate(c);
            }
            #[cfg(feature = "std")]
            self.record_due();
        }
    }

    fn ensure_k1(&mut self) {
        if !self.k1_valid {
            let mut k = State::ZERO;
            self.deriv(&self.y, &mut k);
            self.counters.evaluations += 1;
            self.k1 = k;
            self.k1_valid = true;
        }
    }

    fn quiescent(&self) -> bool {
        self.k1.ch.iter().all(|row| row.iter().all(|v| *v == 0.0))
            && self.k1.rail.iter().all(|v| *v == 0.0)
    }

    /// Error norm of a trial step (∞-norm of scaled errors).
    fn error_norm(
        &self,
        y0: &State<N>,
        y1: &State<N>,
        h: f64,
        k: [&State<N>; 4],
        rtol: f64,
        atol_i: f64,
    ) -> f64 {
        // Bogacki–Shampine error weights b − b*.
        const E: [f64; 4] = [-5.0 / 72.0, 1.0 / 12.0, 1.0 / 9.0, -1.0 / 8.0];
        let mut m: f64 = 0.0;
        for c in 0..N {
            let e = &self.eff[c];
            let (l, _) = e.inductance(y0.ch[c][plant::POS] / e.stroke);
            let atol = [atol_i * l, 1e-7 * e.stroke, 1e-4 * e.stroke, 1e-6];
            for (j, at) in atol.iter().enumerate().take(DYN) {
                let err = h
                    * (E[0] * k[0].ch[c][j]
                        + E[1] * k[1].ch[c][j]
                        + E[2] * k[2].ch[c][j]
                        + E[3] * k[3].ch[c][j]);
                let sc = at + rtol * y0.ch[c][j].abs().max(y1.ch[c][j].abs());
                let r = err.abs() / sc;
                if r.is_nan() {
                    return f64::INFINITY;
                }
                m = m.max(r);
            }
        }
        if self.supply.source_ohms > 0.0 {
            let err = h
                * (E[0] * k[0].rail[R_V]
                    + E[1] * k[1].rail[R_V]
                    + E[2] * k[2].rail[R_V]
                    + E[3] * k[3].rail[R_V]);
            let sc = 1e-6 + rtol * y0.rail[R_V].abs().max(y1.rail[R_V].abs());
            let r = err.abs() / sc;
            if r.is_nan() {
                return f64::INFINITY;
            }
            m = m.max(r);
        }
        m
    }

    /// Fraction θ ∈ (0, 1) of the trial step at which the first event
    /// (end-stop contact or current zero) needs the step to end, if the
    /// trial overshoots one by more than the tolerance.
    fn event_fraction(&self, y1: &State<N>) -> Option<f64> {
        let mut theta: Option<f64> = None;
        let mut take = |t: f64| {
            let t = t.clamp(1e-9, 1.0);
            theta = Some(match theta {
                Some(o) => o.min(t),
                None => t,
            });
        };
        for c in 0..N {
            let e = &self.eff[c];
            if e.moving {
                let p0 = self.y.ch[c][plant::POS];
                let p1 = y1.ch[c][plant::POS];
                let tol = STOP_TOL * e.stroke;
                if p1 < -tol && p0 > 0.0 {
                    take(p0 / (p0 - p1) * (1.0 + 1e-9));
                } else if p1 > e.stroke + tol && p0 < e.stroke {
                    take((e.stroke - p0) / (p1 - p0) * (1.0 + 1e-9));
                }
            }
            if !self.gate[c] && !self.blocked[c] && !e.open && self.params[c].snubber.is_none() {
                let (l0, _) = e.inductance(self.y.ch[c][plant::POS] / e.stroke);
                let (l1, _) = e.inductance(y1.ch[c][plant::POS] / e.stroke);
                let i0 = self.y.ch[c][plant::LAM] / l0;
                let i1 = y1.ch[c][plant::LAM] / l1;
                let floor = self.settings.current_floor_amps;
                if i1 < -floor && i0 > 0.0 {
                    take(i0 / (i0 - i1));
                }
            }
        }
        theta
    }

    fn integrate_to(&mut self, end_ns: u64) {
        let span = (end_ns - self.now_ns) as f64 * 1e-9;
        let t0_ns = self.now_ns as f64;
        let mut t = 0.0;
        let (adaptive, rtol, atol_i, hmax) = match self.settings.stepping {
            Stepping::Adaptive {
                rel_tol,
                abs_tol_amps,
                max_step_s,
            } => (true, rel_tol, abs_tol_amps, max_step_s),
            Stepping::Fixed { step_s } => (false, 0.0, 0.0, step_s),
        };
        let mut k2 = State::<N>::ZERO;
        let mut k3 = State::<N>::ZERO;
        let mut k4 = State::<N>::ZERO;
        let mut ys = State::<N>::ZERO;
        let mut y1 = State::<N>::ZERO;
        while t < span {
            self.ensure_k1();
            if self.quiescent() {
                break;
            }
            let rem = span - t;
            let mut h = if adaptive {
                self.h_next.min(hmax)
            } else {
                hmax
            };
            if h >= rem * (1.0 - 1e-12) {
                h = rem;
            }
            let mut refines = 0u32;
            loop {
                let y0 = &self.y;
                let k1 = &self.k1;
                ys.lin(y0, h, [0.5], [k1]);
                self.deriv(&ys, &mut k2);
                ys.lin(y0, h, [0.75], [&k2]);
                self.deriv(&ys, &mut k3);
                y1.lin(y0, h, [2.0 / 9.0, 1.0 / 3.0, 4.0 / 9.0], [k1, &k2, &k3]);
                self.deriv(&y1, &mut k4);
                let mut en = 0.0;
                if adaptive {
                    en = self.error_norm(y0, &y1, h, [k1, &k2, &k3, &k4], rtol, atol_i);
                }
                self.counters.evaluations += 3;
                if adaptive && en > 1.0 && h > H_MIN {
                    let fac = (0.9 * libm::cbrt(1.0 / en)).clamp(0.1, 0.9);
                    h = (h * fac).max(H_MIN);
                    self.counters.rejected += 1;
                    continue;
                }
                if refines < MAX_REFINE {
                    if let Some(theta) = self.event_fraction(&y1) {
                        h = (h * theta).max(H_MIN);
                        refines += 1;
                        self.counters.refined += 1;
                        continue;
                    }
                }
                // Accept.
                let landed = h == rem;
                core::mem::swap(&mut self.y, &mut y1);
                core::mem::swap(&mut self.k1, &mut k4);
                self.k1_valid = true;
                self.counters.steps += 1;
                t = if landed { span } else { t + h };
                if adaptive {
                    let fac = if en > 0.0 {
                        (0.9 * libm::cbrt(1.0 / en)).clamp(0.2, 5.0)
                    } else {
                        5.0
                    };
                    // A step cut short to land on an edge says little about
                    // the next one: do not shrink because of it.
                    let hn = h * fac;
                    self.h_next = if landed || refines > 0 {
                        hn.max(self.h_next)
                    } else {
                        hn
                    }
                    .min(hmax);
                }
                self.after_step(t0_ns + t * 1e9);
                break;
            }
        }
    }

    /// Projections (end stops, current floor), extremes, comparator, events.
    fn after_step(&mut self, t_ns: f64) {
        let t_u = libm::round(t_ns) as u64;
        let floor = self.settings.current_floor_amps;
        for c in 0..N {
            let e = self.eff[c];
            // End stops.
            if e.moving {
                let y = &mut self.y.ch[c];
                let p = y[plant::POS];
                let v = y[plant::VEL];
                let (target, into) = if p < 0.0 {
                    (Some(0.0), v < 0.0)
                } else if p > e.stroke {
                    (Some(e.stroke), v > 0.0)
                } else {
                    (None, false)
                };
                if let Some(pt) = target {
                    let (l_old, _) = e.inductance(p / e.stroke);
                    let (l_new, _) = e.inductance(pt / e.stroke);
                    let lam = y[plant::LAM];
                    let mag_old = 0.5 * lam * lam / l_old;
                    let mag_new = 0.5 * lam * lam / l_new;
                    let mut v_new = if into { -e.arm.restitution * v } else { v };
                    if v_new.abs() < REST_SPEED {
                        v_new = 0.0;
                    }
                    let m = e.arm.mass_kg;
                    let mech = 0.5 * m * (v * v - v_new * v_new) + e.spring_energy(p)
                        - e.spring_energy(pt);
                    self.st[c].impact += mech;
                    self.st[c].removed += mag_old - mag_new;
                    y[plant::POS] = pt;
                    y[plant::VEL] = v_new;
                    self.k1_valid = false;
                }
            }
            // Current floor: the clamp stops conducting.
            if !self.gate[c] && !self.blocked[c] && self.params[c].snubber.is_none() && !e.open {
                let (l, _) = e.inductance(self.y.ch[c][plant::POS] / e.stroke);
                let i = self.y.ch[c][plant::LAM] / l;
                if i <= floor {
                    self.st[c].removed += 0.5 * l * i * i;
                    self.y.ch[c][plant::LAM] = 0.0;
                    self.blocked[c] = true;
                    self.k1_valid = false;
                    if self.st[c].stats.current_zero_ns.is_none() {
                        self.st[c].stats.current_zero_ns = Some(t_u);
                        self.emit(c, EventKind::CurrentZero, t_u);
                    }
                }
            }
        }
        // Rail settled exactly (lets a bench at rest skip ahead).
        if self.supply.source_ohms > 0.0 {
            let d = self.supply.volts - self.y.rail[R_V];
            if d != 0.0 && d.abs() <= 1e-12 * self.supply.volts.max(1.0) {
                self.y.rail[R_V] = self.supply.volts;
                self.k1_valid = false;
            }
        }
        for c in 0..N {
            let op = self.op(c);
            self.update_peaks_from(c, &op);
            self.update_armature(c, t_u);
            self.update_comparator(c, t_ns, &op);
        }
    }

    fn update_peaks(&mut self, c: usize) {
        let op = self.op(c);
        self.update_peaks_from(c, &op);
    }

    fn update_peaks_from(&mut self, c: usize, op: &Op) {
        let vp = self.rail_volts();
        let n = op.node;
        let node_volts = match self.params[c].topology {
            Topology::LowSide => n.w,
            Topology::HighSide => vp - n.w,
        };
        let switch_volts = n.w - n.i_sw * self.params[c].sense_ohms;
        let s = &mut self.st[c].stats;
        s.peak_switch_volts = s.peak_switch_volts.max(switch_volts);
        s.peak_node_volts = s.peak_node_volts.max(node_volts);
        s.min_node_volts = s.min_node_volts.min(node_volts);
        s.peak_coil_amps = s.peak_coil_amps.max(op.i);
    }

    fn update_armature(&mut self, c: usize, t: u64) {
        let e = &self.eff[c];
        if !matches!(self.params[c].mechanics, Mechanics::Moving(_)) {
            return;
        }
        let p = self.y.ch[c][plant::POS];
        let at_rel = p <= 0.0;
        let at_op = p >= e.stroke;
        let old = self.st[c].armature;
        let new = if at_rel {
            ArmatureState::Released
        } else if at_op {
            ArmatureState::Operated
        } else {
            ArmatureState::Moving
        };
        if new == old {
            return;
        }
        self.st[c].armature = new;
        match (old, new) {
            (ArmatureState::Released, _) => {
                if self.st[c].stats.moved_ns.is_none() {
                    self.st[c].stats.moved_ns = Some(t);
                }
                self.emit(c, EventKind::ArmatureMoving, t);
            }
            (ArmatureState::Operated, _) => self.emit(c, EventKind::ArmatureLeftOperated, t),
            _ => {}
        }
        match new {
            ArmatureState::Operated => {
                if self.st[c].stats.operated_ns.is_none() {
                    self.st[c].stats.operated_ns = Some(t);
                }
                self.emit(c, EventKind::ArmatureOperated, t);
            }
            ArmatureState::Released => {
                self.st[c].stats.released_ns = Some(t);
                self.emit(c, EventKind::ArmatureReleased, t);
            }
            ArmatureState::Moving => {}
        }
    }

    fn update_comparator(&mut self, c: usize, t_ns: f64, op: &Op) {
        let Some(cmp) = self.st[c].comparator else {
            return;
        };
        let q = match cmp.sense {
            SensePoint::Switch => op.node.i_sw,
            SensePoint::Coil => op.i,
        };
        let s = self.st[c];
        if s.armed && s.prev_sense < cmp.threshold_amps && q >= cmp.threshold_amps {
            let th = (cmp.threshold_amps - s.prev_sense) / (q - s.prev_sense);
            let tc = s.prev_t_ns + th * (t_ns - s.prev_t_ns);
            let tu = libm::round(tc) as u64;
            self.st[c].stats.comparator_trip_ns = Some(tu);
            self.st[c].armed = false;
            self.emit(c, EventKind::ComparatorTrip, tu);
        }
        self.st[c].prev_sense = q;
        self.st[c].prev_t_ns = t_ns;
    }

    #[cfg(feature = "std")]
    fn record_due(&mut self) {
        let due = match self.rec.as_ref() {
            Some(r) => r.next_ns <= self.now_ns,
            None => false,
        };
        if due {
            self.push_samples();
        }
    }

    #[cfg(feature = "std")]
    fn push_samples(&mut self) {
        let mut samples = [None; N];
        for (c, slot) in samples.iter_mut().enumerate() {
            let p = self.probe_unchecked(c);
            let clamp = self.y.ch[c][plant::E_CLAMP];
            *slot = Some(crate::record::Sample::from_probe(c, &p, clamp));
        }
        if let Some(r) = self.rec.as_mut() {
            for s in samples.into_iter().flatten() {
                r.samples.push(s);
            }
            while r.next_ns <= self.now_ns {
                r.next_ns += r.interval_ns;
            }
        }
    }

    /// Start recording every channel each `interval_ns` (≥ 1) from now;
    /// replaces any running recording. Events are recorded too.
    #[cfg(feature = "std")]
    pub fn start_recording(&mut self, interval_ns: u64) {
        let interval_ns = interval_ns.max(1);
        self.rec = Some(crate::record::Recording::new(interval_ns, self.now_ns, N));
        self.push_samples();
    }

    /// The running recording, if any.
    #[cfg(feature = "std")]
    pub fn recording(&self) -> Option<&crate::record::Recording> {
        self.rec.as_ref()
    }

    /// Stop recording and hand the recording over.
    #[cfg(feature = "std")]
    pub fn take_recording(&mut self) -> Option<crate::record::Recording> {
        self.rec.take()
    }
}
