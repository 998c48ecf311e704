//! The simulated bench: N coil channels on one supply, integrated in time.
//!
//! This module holds the bench itself (construction, drive, faults, time);
//! [`step`] integrates, [`watch`] keeps the books after each step,
//! [`readout`] reports probes and energy.

mod drive;
mod inject;
mod readout;
mod step;
mod watch;

use crate::fault::FaultSet;
use crate::magnetics::Magnetics;
use crate::observe::{
    ArmatureState, ChannelStats, Comparator, EventKind, SensePoint, SolverCounters,
};
use crate::params::{ChannelParams, Mechanics, SimError, Supply};
use crate::plant::{self, Eff, Op, K};
use crate::sense::ComparatorErrors;
use crate::settings::{SolverSettings, Stepping};
use drive::Drive;

/// Tolerated overshoot past an end stop, as a fraction of the stroke.
const STOP_TOL: f64 = 1e-9;

const R_V: usize = 0;
const R_ESRC: usize = 1;
const R_ERES: usize = 2;

/// The integrated state: per-channel slots and the rail (voltage, source and
/// source-resistor energy).
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct State<const N: usize> {
    pub ch: [[f64; K]; N],
    pub rail: [f64; 3],
}

#[derive(Debug, Clone, Copy, PartialEq)]
struct Status {
    stats: ChannelStats,
    armature: ArmatureState,
    removed: f64,
    impact: f64,
    comparator: Option<Comparator>,
    cmp_errors: ComparatorErrors,
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
/// Memory: about `(18·N + 3)·8` bytes per state copy; a step keeps four
/// copies on the stack (≈ 0.7 KiB for N = 1) besides the bench's own two.
#[derive(Debug, Clone)]
pub struct Bench<const N: usize> {
    supply: Supply,
    params: [ChannelParams; N],
    faults: [FaultSet; N],
    mag: [Magnetics; N],
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

    /// [`Bench::single`] built straight into `slot` (`None` first, `Some` on success), with no
    /// bench-sized temporary on the caller's stack: for a firmware that keeps its benches in
    /// static memory and fits them on a small stack.
    ///
    /// Errors: as [`Bench::new`] (the slot is then `None`).
    #[inline(never)]
    pub fn single_into(
        slot: &mut Option<Self>,
        supply: Supply,
        channel: ChannelParams,
        settings: SolverSettings,
    ) -> Result<(), SimError> {
        Bench::new_into(slot, supply, [channel], settings)
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
        let mut slot = None;
        Bench::new_into(&mut slot, supply, params, settings)?;
        slot.ok_or(SimError::InvalidParameter("bench"))
    }

    /// [`Bench::new`] built straight into `slot` (see [`Bench::single_into`]).
    ///
    /// Errors: as [`Bench::new`] (the slot is then `None`).
    pub fn new_into(
        slot: &mut Option<Self>,
        supply: Supply,
        params: [ChannelParams; N],
        settings: SolverSettings,
    ) -> Result<(), SimError> {
        *slot = None;
        supply.validate()?;
        settings.validate()?;
        for p in &params {
            p.validate()?;
        }
        let faults = [FaultSet::default(); N];
        let mag = [Magnetics::LINEAR; N];
        let eff: [Eff; N] = core::array::from_fn(|c| Eff::new(&params[c], &faults[c], &mag[c]));
        let blocked: [bool; N] = core::array::from_fn(|c| params[c].snubber.is_none());
        let mut y = State::<N>::ZERO;
        let mut st = [Status {
            stats: ChannelStats::NEW,
            armature: ArmatureState::Released,
            removed: 0.0,
            impact: 0.0,
            comparator: None,
            cmp_errors: ComparatorErrors::NONE,
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
        *slot = Some(Bench {
            supply,
            params,
            faults,
            mag,
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
        });
        Ok(())
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

    /// Give a channel's comparator an input offset and a propagation delay
    /// ([`ComparatorErrors`]); kept when the comparator is replaced.
    ///
    /// Errors: [`SimError::NoSuchChannel`];
    /// [`SimError::InvalidParameter`]`("comparator.offset_amps")` if not finite.
    pub fn set_comparator_errors(
        &mut self,
        ch: usize,
        errors: ComparatorErrors,
    ) -> Result<(), SimError> {
        self.check_ch(ch)?;
        crate::params::check(errors.offset_amps.is_finite(), "comparator.offset_amps")?;
        self.st[ch].cmp_errors = errors;
        Ok(())
    }

    fn emit(&mut self, ch: usize, kind: EventKind, t_ns: u64) {
        #[cfg(feature = "std")]
        if let Some(r) = self.rec.as_mut() {
            r.events.push(crate::observe::Event {
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
                if self.blocked[c] && !self.eff[c].plain() {
                    // The winding's flux linkage was not integrated while the
                    // clamp blocked: make it consistent with zero current.
                    let e = &self.eff[c];
                    let i = e.currents(&self.y.ch[c], true);
                    e.set_currents(&mut self.y.ch[c], &i);
                }
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
}

#[cfg(test)]
mod tests {
    /// A bench lives in firmware RAM (one per channel on the QEMU boards, the
    /// smallest with 16 KiB): keep a channel's plant within a fixed budget.
    #[test]
    fn a_channel_of_plant_stays_within_its_ram_budget() {
        let bytes = core::mem::size_of::<super::Bench<1>>();
        let budget = 1_400;
        assert!(
            bytes <= budget,
            "Bench<1> is {bytes} bytes (budget {budget})"
        );
    }

    /// Built in place or by value, a bench is the same; a refused one leaves the slot empty.
    #[test]
    fn a_bench_built_in_place_is_the_bench_built_by_value() {
        use super::Bench;
        use crate::{demo, SolverSettings, Supply};
        let by_value = Bench::single(
            Supply::ideal(24.0),
            demo::valve_24v(),
            SolverSettings::default(),
        )
        .unwrap();
        let mut slot = Some(by_value.clone());
        Bench::single_into(
            &mut slot,
            Supply::ideal(24.0),
            demo::valve_24v(),
            SolverSettings::default(),
        )
        .unwrap();
        let mut a = slot.unwrap();
        let mut b = by_value;
        a.set_gate(0, true).unwrap();
        b.set_gate(0, true).unwrap();
        a.advance_to(5_000_000);
        b.advance_to(5_000_000);
        assert_eq!(a.probe(0).unwrap(), b.probe(0).unwrap());
        let mut slot = Some(a);
        let bad = Bench::single_into(
            &mut slot,
            Supply::ideal(f64::NAN),
            demo::valve_24v(),
            SolverSettings::default(),
        );
        assert!(bad.is_err());
        assert!(slot.is_none());
    }
}
