//! Bookkeeping after each accepted step: end-stop and current-floor
//! projections, running extremes, armature events, the comparator, and the
//! recorder.

use super::{Bench, R_V};
use crate::observe::{ArmatureState, EventKind, SensePoint};
use crate::params::{Mechanics, Topology};
use crate::plant::{self, Op};

/// Velocity below which a bounce is considered to have ended, m/s.
const REST_SPEED: f64 = 1e-6;

impl<const N: usize> Bench<N> {
    pub(super) fn after_step(&mut self, t_ns: f64) {
        let t_u = libm::round(t_ns) as u64;
        let floor = self.settings.current_floor_amps;
        for c in 0..N {
            let e = &self.eff[c];
            let no_snubber = self.params[c].snubber.is_none();
            let off = e.open || (self.blocked[c] && no_snubber && !self.gate[c]);
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
                    let (mag_old, mag_new) = if e.plain() {
                        let (l_old, _) = e.inductance(p / e.stroke);
                        let (l_new, _) = e.inductance(pt / e.stroke);
                        let lam = y[plant::LAM];
                        (0.5 * lam * lam / l_old, 0.5 * lam * lam / l_new)
                    } else {
                        // Flux linkages are kept across the projection.
                        let w_old = e.stored(y, off);
                        y[plant::POS] = pt;
                        (w_old, e.stored(y, off))
                    };
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
            if !self.gate[c] && !self.blocked[c] && no_snubber && !e.open {
                let y = &mut self.y.ch[c];
                let (l, _) = e.inductance(y[plant::POS] / e.stroke);
                let i = if e.plain() {
                    y[plant::LAM] / l
                } else {
                    e.currents(y, false)[0]
                };
                if i <= floor {
                    if e.plain() {
                        self.st[c].removed += 0.5 * l * i * i;
                        y[plant::LAM] = 0.0;
                    } else {
                        // The terminal loop opens; the secondary loops keep
                        // their flux linkages.
                        let w_old = e.stored(y, false);
                        let il = e.currents(y, true);
                        e.set_currents(y, &il);
                        self.st[c].removed += w_old - e.stored(y, true);
                    }
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

    pub(super) fn update_peaks(&mut self, c: usize) {
        let op = self.op(c);
        self.update_peaks_from(c, &op);
    }

    pub(super) fn update_peaks_from(&mut self, c: usize, op: &Op) {
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

    pub(super) fn update_armature(&mut self, c: usize, t: u64) {
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

    pub(super) fn update_comparator(&mut self, c: usize, t_ns: f64, op: &Op) {
        let Some(cmp) = self.st[c].comparator else {
            return;
        };
        let q = match cmp.sense {
            SensePoint::Switch => op.node.i_sw,
            SensePoint::Coil => op.i,
        };
        let s = self.st[c];
        let errs = s.cmp_errors;
        let level = if errs.offset_amps != 0.0 {
            cmp.threshold_amps + errs.offset_amps
        } else {
            cmp.threshold_amps
        };
        if s.armed && s.prev_sense < level && q >= level {
            let th = (level - s.prev_sense) / (q - s.prev_sense);
            let tc = s.prev_t_ns + th * (t_ns - s.prev_t_ns);
            let tu = (libm::round(tc) as u64).saturating_add(errs.delay_ns);
            self.st[c].stats.comparator_trip_ns = Some(tu);
            self.st[c].armed = false;
            self.emit(c, EventKind::ComparatorTrip, tu);
        }
        self.st[c].prev_sense = q;
        self.st[c].prev_t_ns = t_ns;
    }

    #[cfg(feature = "std")]
    pub(super) fn record_due(&mut self) {
        let due = match self.rec.as_ref() {
            Some(r) => r.next_ns <= self.now_ns,
            None => false,
        };
        if due {
            self.push_samples();
        }
    }

    #[cfg(feature = "std")]
    pub(super) fn push_samples(&mut self) {
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
