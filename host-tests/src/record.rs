//! Waveform recorder (needs the `std` feature): equally spaced samples of
//! every channel plus the event log, with helpers for assertions.

use std::vec::Vec;

use crate::observe::{ArmatureState, Event, EventKind, Probe};

/// One recorded sample of one channel.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Sample {
    /// Time, ns.
    pub t_ns: u64,
    /// Channel index.
    pub channel: usize,
    /// Coil current, A.
    pub coil_amps: f64,
    /// Switch current, A.
    pub switch_amps: f64,
    /// Voltage across the switch, V.
    pub switch_volts: f64,
    /// Switched node to ground, V.
    pub node_volts: f64,
    /// Rail voltage, V.
    pub rail_volts: f64,
    /// Cumulative energy into the clamp, J.
    pub clamp_joules: f64,
    /// Normalised armature position (0 released … 1 operated).
    pub position: f64,
    /// Gate on.
    pub gate_on: bool,
    /// Armature state.
    pub armature: ArmatureState,
}

impl Sample {
    pub(crate) fn from_probe(channel: usize, p: &Probe, clamp_joules: f64) -> Sample {
        Sample {
            t_ns: p.t_ns,
            channel,
            coil_amps: p.coil_amps,
            switch_amps: p.switch_amps,
            switch_volts: p.switch_volts,
            node_volts: p.node_volts,
            rail_volts: p.rail_volts,
            clamp_joules,
            position: p.position,
            gate_on: p.gate_on,
            armature: p.armature,
        }
    }
}

/// A recording: samples of all channels every `interval_ns`, and events.
///
/// Samples are taken exactly on the grid `start + k·interval` (the
/// integrator lands on those instants). Extremes *between* samples are in
/// [`crate::ChannelStats`], which is updated at every integration step.
#[derive(Debug, Clone, PartialEq)]
pub struct Recording {
    /// Sampling interval, ns.
    pub interval_ns: u64,
    /// Time of the first sample, ns.
    pub start_ns: u64,
    /// Number of channels.
    pub channels: usize,
    /// Samples, in time order, channels interleaved.
    pub samples: Vec<Sample>,
    /// Events, in time order.
    pub events: Vec<Event>,
    pub(crate) next_ns: u64,
}

impl Recording {
    pub(crate) fn new(interval_ns: u64, start_ns: u64, channels: usize) -> Self {
        Recording {
            interval_ns,
            start_ns,
            channels,
            samples: Vec::new(),
            events: Vec::new(),
            next_ns: start_ns,
        }
    }

    /// Samples of one channel, in time order.
    pub fn channel(&self, ch: usize) -> impl Iterator<Item = &Sample> + '_ {
        self.samples.iter().filter(move |s| s.channel == ch)
    }

    /// Largest recorded switch voltage of a channel, V (`None` if no sample).
    pub fn max_switch_volts(&self, ch: usize) -> Option<f64> {
        self.channel(ch).map(|s| s.switch_volts).reduce(f64::max)
    }

    /// Largest recorded coil current of a channel, A.
    pub fn max_coil_amps(&self, ch: usize) -> Option<f64> {
        self.channel(ch).map(|s| s.coil_amps).reduce(f64::max)
    }

    /// Coil current at `t_ns`, linearly interpolated between samples;
    /// `None` outside the recorded span.
    pub fn current_at(&self, ch: usize, t_ns: u64) -> Option<f64> {
        let mut prev: Option<&Sample> = None;
        for s in self.channel(ch) {
            if s.t_ns == t_ns {
                return Some(s.coil_amps);
            }
            if s.t_ns > t_ns {
                let p = prev?;
                let f = (t_ns - p.t_ns) as f64 / (s.t_ns - p.t_ns) as f64;
                return Some(p.coil_amps + f * (s.coil_amps - p.coil_amps));
            }
            prev = Some(s);
        }
        None
    }

    /// Events of one channel.
    pub fn events_of(&self, ch: usize) -> impl Iterator<Item = &Event> + '_ {
        self.events.iter().filter(move |e| e.channel == ch)
    }

    /// Time of the first event of a kind on a channel at or after `from_ns`.
    pub fn first_event(&self, ch: usize, kind: EventKind, from_ns: u64) -> Option<u64> {
        self.events_of(ch)
            .find(|e| {
                e.t_ns >= from_ns
                    && core::mem::discriminant(&e.kind) == core::mem::discriminant(&kind)
            })
            .map(|e| e.t_ns)
    }

    /// Whether, at time `t_ns`, the armature of a channel is back on its
    /// released stop after its last operation (true if it never left it).
    pub fn released_before(&self, ch: usize, t_ns: u64) -> bool {
        let mut released = true;
        for e in self.events_of(ch).filter(|e| e.t_ns <= t_ns) {
            match e.kind {
                EventKind::ArmatureMoving => released = false,
                EventKind::ArmatureReleased => released = true,
                _ => {}
            }
        }
        released
    }

    /// Cumulative clamp energy of a channel at the last sample, J.
    pub fn clamp_joules(&self, ch: usize) -> Option<f64> {
        self.channel(ch).last().map(|s| s.clamp_joules)
    }

    /// Whether the coil current of a channel ever decreased by more than
    /// `tol_amps` while the gate was on and then rose again (the dip of a
    /// moving armature). Returns the time of the local maximum, ns.
    pub fn rise_dip(&self, ch: usize, tol_amps: f64) -> Option<u64> {
        let mut max: Option<(u64, f64)> = None;
        let mut dip_min: Option<f64> = None;
        for s in self.channel(ch) {
            if !s.gate_on {
                max = None;
                dip_min = None;
                continue;
            }
            let i = s.coil_amps;
            match (max, dip_min) {
                (None, _) => max = Some((s.t_ns, i)),
                (Some((tm, _)), Some(dm)) => {
                    if i > dm + tol_amps {
                        return Some(tm);
                    }
                    dip_min = Some(dm.min(i));
                }
                (Some((_, im)), None) => {
                    if i > im {
                        max = Some((s.t_ns, i));
                    } else if im - i > tol_amps {
                        dip_min = Some(i);
                    }
                }
            }
        }
        None
    }

    /// Comma-separated values, one row per sample, with a header line.
    pub fn to_csv(&self) -> std::string::String {
        use core::fmt::Write;
        let mut out = std::string::String::from(
            "t_ns,channel,coil_amps,switch_amps,switch_volts,node_volts,rail_volts,clamp_joules,position,gate_on\n",
        );
        for s in &self.samples {
            let _ = writeln!(
                out,
                "{},{},{:.9e},{:.9e},{:.6},{:.6},{:.6},{:.9e},{:.6},{}",
                s.t_ns,
                s.channel,
                s.coil_amps,
                s.switch_amps,
                s.switch_volts,
                s.node_volts,
                s.rail_volts,
                s.clamp_joules,
                s.position,
                u8::from(s.gate_on)
            );
        }
        out
    }
}
