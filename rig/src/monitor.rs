//! An independent check of the edges the pins really made, against the channel limits the
//! scheduler was given and against what the simulated coils did.
//!
//! It sees only the drive of each switch (off / full / PWM) as the plant received it, with the
//! plant's time and state, and checks:
//!
//! 1. **on-time**: a pulse shorter than the minimum on-time must not have moved the armature (it
//!    is a diagnostic pulse, below pull-in); a pulse of at least the minimum on-time on a healthy
//!    coil at a healthy supply must have seated the armature before its off edge (the numerical
//!    plant confirms the closed-form pull-in budget);
//! 2. **off-time**: from an off edge to the next on edge at least the minimum off-time, and at that
//!    on edge the coil is at rest (armature released, current below 1 mA);
//! 3. **inrush**: at no instant more coils in their inrush window `[on, on + min(window, length))`
//!    than the cap;
//! 4. **thermal**: each thermal bucket, evaluated exactly (`b' = p − b/τ`, solved per phase with
//!    `e^(−Δt/τ)` in f64, heat per pulse added at the off edge), never above its capacity.
//!
//! It shares no code with the scheduler's own bookkeeping (which bounds the heat with integer
//! tables); it only takes the limits themselves from it.
//!
//! The monitor counts what it finds and hands each finding, as a [`Violation`], to the sink its
//! caller gives (the firmware logs it with defmt, a host test prints it): it logs nothing itself.
//! `CH` is the number of channels, `PULSES` the most pulses the inrush check keeps (more is a
//! violation of its own).

use coilwise::schedule::ChannelLimits;

/// A broken constraint, at plant time `t_us` (µs) on channel `ch`.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Violation {
    /// A thermal bucket above its capacity.
    Heat {
        /// Plant time, µs.
        t_us: u64,
        /// Channel.
        ch: usize,
        /// Bucket: 0 the clamp's, 1 the coil's.
        bucket: usize,
        /// Its heat, µJ.
        heat_uj: f32,
        /// Its capacity, µJ.
        capacity_uj: f32,
    },
    /// Switched on sooner than the minimum off-time after the last off edge.
    OffTime {
        /// Plant time, µs.
        t_us: u64,
        /// Channel.
        ch: usize,
        /// The off-time, µs.
        off_us: u64,
        /// The minimum, µs.
        min_us: u64,
    },
    /// Switched on while the coil still carried current or its armature was not at rest.
    NotAtRest {
        /// Plant time, µs.
        t_us: u64,
        /// Channel.
        ch: usize,
        /// Coil current at the on edge, A.
        amps: f32,
    },
    /// A pulse shorter than the minimum on-time moved the armature.
    ShortPulseMoved {
        /// Plant time of the off edge, µs.
        t_us: u64,
        /// Channel.
        ch: usize,
        /// Pulse length, µs.
        length_us: u64,
        /// The minimum on-time, µs.
        min_us: u64,
    },
    /// A pulse of at least the minimum on-time on a healthy coil ended before the armature seated.
    NotSeated {
        /// Plant time of the off edge, µs.
        t_us: u64,
        /// Channel.
        ch: usize,
        /// Pulse length, µs.
        length_us: u64,
    },
    /// More pulses than the inrush check keeps.
    TooManyPulses {
        /// The most it keeps.
        kept: usize,
    },
    /// More coils in their inrush window at once than the cap.
    Inrush {
        /// Most coils at once.
        worst: usize,
        /// The cap.
        cap: usize,
    },
}

impl core::fmt::Display for Violation {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        match *self {
            Violation::Heat {
                t_us,
                ch,
                bucket,
                heat_uj,
                capacity_uj,
            } => write!(
                f,
                "t={t_us} us ch {ch}: thermal bucket {bucket} at {heat_uj} uJ, capacity {capacity_uj} uJ"
            ),
            Violation::OffTime {
                t_us,
                ch,
                off_us,
                min_us,
            } => write!(f, "t={t_us} us ch {ch}: on after {off_us} us off, minimum {min_us} us"),
            Violation::NotAtRest { t_us, ch, amps } => write!(
                f,
                "t={t_us} us ch {ch}: switched on while the coil is not at rest ({amps} A)"
            ),
            Violation::ShortPulseMoved {
                t_us,
                ch,
                length_us,
                min_us,
            } => write!(
                f,
                "t={t_us} us ch {ch}: a {length_us} us pulse (below the {min_us} us minimum) moved the armature"
            ),
            Violation::NotSeated { t_us, ch, length_us } => write!(
                f,
                "t={t_us} us ch {ch}: a {length_us} us pulse on a healthy coil ended before the armature seated"
            ),
            Violation::TooManyPulses { kept } => {
                write!(f, "more than {kept} pulses: inrush check incomplete")
            }
            Violation::Inrush { worst, cap } => {
                write!(f, "{worst} coils in their inrush window at once, cap {cap}")
            }
        }
    }
}

/// What [`Monitor::finish`] found over the run.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Summary {
    /// Drive changes seen.
    pub edges: u32,
    /// Pulses seen (off edges).
    pub pulses: u32,
    /// Most coils in their inrush window at once.
    pub worst_inrush: usize,
    /// The inrush cap.
    pub inrush_cap: usize,
    /// Broken constraints.
    pub violations: u32,
    /// Limits were given and no constraint was broken.
    pub held: bool,
}

/// The drive of one switch.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum DriveState {
    /// Off.
    Off,
    /// On at full drive.
    Full,
    /// PWM at this duty (of the board's maximum).
    Pwm(u16),
}

/// What the plant shows of a channel at an edge.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PlantView {
    /// Coil current, A.
    pub coil_amps: f64,
    /// Armature resting on its released stop.
    pub at_rest: bool,
    /// The armature left its released stop since the latest switch-on.
    pub moved: bool,
    /// The armature reached its operated stop since the latest switch-on.
    pub operated: bool,
    /// A fault is injected on the coil or its rail is below the design range.
    pub degraded: bool,
}

/// One thermal bucket, in µJ and ticks (f64).
#[derive(Clone, Copy, Debug)]
struct Heat {
    capacity: f64,
    tau: f64,
    on_rate: f64,
    hold_rate: f64,
    per_pulse: f64,
}

#[derive(Clone, Copy, Debug)]
struct Limits {
    min_on: u64,
    min_off: u64,
    window: u64,
    heat: [Option<Heat>; 2],
}

#[derive(Clone, Copy, Debug)]
struct Watch {
    state: DriveState,
    on_at: Option<u64>,
    last_off: Option<u64>,
    /// Heat per bucket, µJ, as of `heat_at`.
    heat: [f64; 2],
    heat_at: u64,
    pulses: u32,
}

/// The monitor (see the module docs). Times are ticks of 1 µs.
pub struct Monitor<const CH: usize, const PULSES: usize> {
    limits: Option<[Limits; CH]>,
    inrush_cap: usize,
    watch: [Watch; CH],
    windows: heapless::Vec<(u32, u32), PULSES>,
    violations: u32,
    edges: u32,
}

fn bucket(b: Option<coilwise::schedule::ThermalBucket>) -> Option<Heat> {
    b.map(|b| Heat {
        capacity: f64::from(b.capacity_uj()),
        tau: f64::from(b.time_constant().get()),
        on_rate: f64::from(b.on_rate().0) / 65_536.0,
        hold_rate: f64::from(b.hold_rate().0) / 65_536.0,
        per_pulse: f64::from(b.per_pulse_uj()),
    })
}

impl<const CH: usize, const PULSES: usize> Default for Monitor<CH, PULSES> {
    fn default() -> Self {
        Self::new()
    }
}

impl<const CH: usize, const PULSES: usize> Monitor<CH, PULSES> {
    /// A monitor without limits yet (it counts edges only until [`Monitor::set_limits`]).
    pub const fn new() -> Self {
        Self {
            limits: None,
            inrush_cap: CH,
            watch: [Watch {
                state: DriveState::Off,
                on_at: None,
                last_off: None,
                heat: [0.0; 2],
                heat_at: 0,
                pulses: 0,
            }; CH],
            windows: heapless::Vec::new(),
            violations: 0,
            edges: 0,
        }
    }

    /// The limits to check against: each channel's, and the inrush cap.
    pub fn set_limits(&mut self, limits: &[ChannelLimits; CH], inrush_cap: u8) {
        self.limits = Some(core::array::from_fn(|ch| {
            let l = &limits[ch];
            Limits {
                min_on: u64::from(l.min_on().get()),
                min_off: u64::from(l.min_off().get()),
                window: u64::from(l.inrush_window().get()),
                heat: [bucket(l.clamp_heat()), bucket(l.coil_heat())],
            }
        }));
        self.inrush_cap = usize::from(inrush_cap);
    }

    fn violation(&mut self, v: Violation, sink: &mut impl FnMut(&Violation)) {
        self.violations += 1;
        sink(&v);
    }

    /// Broken constraints seen so far.
    pub fn violations(&self) -> u32 {
        self.violations
    }

    /// Drive changes seen so far.
    pub fn edges(&self) -> u32 {
        self.edges
    }

    /// Heat of channel `ch` brought forward to `t` at the power of its present drive state.
    fn heat_to(&mut self, ch: usize, t: u64, lim: &Limits) {
        let w = &mut self.watch[ch];
        let dt = t.saturating_sub(w.heat_at) as f64;
        for (k, h) in lim.heat.iter().enumerate() {
            let Some(h) = h else { continue };
            let p = match w.state {
                DriveState::Off => 0.0,
                DriveState::Full => h.on_rate,
                DriveState::Pwm(_) => h.hold_rate,
            };
            let steady = p * h.tau;
            w.heat[k] = steady + (w.heat[k] - steady) * libm::exp(-dt / h.tau);
        }
        w.heat_at = t;
    }

    fn check_heat(&mut self, ch: usize, t: u64, lim: &Limits, sink: &mut impl FnMut(&Violation)) {
        for (k, h) in lim.heat.iter().enumerate() {
            let Some(h) = h else { continue };
            let b = self.watch[ch].heat[k];
            // A µJ of slack for the integer rounding of the rates the scheduler was given.
            if b > h.capacity + 1.0 {
                let v = Violation::Heat {
                    t_us: t,
                    ch,
                    bucket: k,
                    heat_uj: b as f32,
                    capacity_uj: h.capacity as f32,
                };
                self.violation(v, sink);
            }
        }
    }

    /// A drive change of channel `ch` at plant time `t_ns`, with the plant's state just before it;
    /// each broken constraint goes to `sink`. A channel outside `0..CH` is counted as an edge and
    /// otherwise ignored.
    pub fn drive(
        &mut self,
        t_ns: u64,
        ch: usize,
        new: DriveState,
        plant: &PlantView,
        mut sink: impl FnMut(&Violation),
    ) {
        self.edges += 1;
        let t = t_ns / 1_000;
        if ch >= CH {
            return;
        }
        let Some(limits) = self.limits else {
            self.watch[ch].state = new;
            return;
        };
        let sink = &mut sink;
        let lim = limits[ch];
        let old = self.watch[ch].state;
        self.heat_to(ch, t, &lim);
        match (old, new) {
            (DriveState::Off, _) => {
                if let Some(off) = self.watch[ch].last_off {
                    if t - off < lim.min_off {
                        let v = Violation::OffTime {
                            t_us: t,
                            ch,
                            off_us: t - off,
                            min_us: lim.min_off,
                        };
                        self.violation(v, sink);
                    }
                }
                if !plant.at_rest || plant.coil_amps.abs() > 1e-3 {
                    let v = Violation::NotAtRest {
                        t_us: t,
                        ch,
                        amps: plant.coil_amps as f32,
                    };
                    self.violation(v, sink);
                }
                self.watch[ch].on_at = Some(t);
            }
            (_, DriveState::Off) => {
                let on = self.watch[ch].on_at.unwrap_or(t);
                let length = t - on;
                if length < lim.min_on && plant.moved {
                    let v = Violation::ShortPulseMoved {
                        t_us: t,
                        ch,
                        length_us: length,
                        min_us: lim.min_on,
                    };
                    self.violation(v, sink);
                }
                if length >= lim.min_on && !plant.degraded && !plant.operated {
                    let v = Violation::NotSeated {
                        t_us: t,
                        ch,
                        length_us: length,
                    };
                    self.violation(v, sink);
                }
                // Ticks of a run shorter than 2^32 µs (71 minutes).
                let end = on + lim.window.min(length);
                if self.windows.push((on as u32, end as u32)).is_err() {
                    self.violation(Violation::TooManyPulses { kept: PULSES }, sink);
                }
                for (k, h) in lim.heat.iter().enumerate() {
                    if let Some(h) = h {
                        self.watch[ch].heat[k] += h.per_pulse;
                    }
                }
                self.watch[ch].last_off = Some(t);
                self.watch[ch].pulses += 1;
            }
            _ => {}
        }
        self.check_heat(ch, t, &lim, sink);
        self.watch[ch].state = new;
    }

    /// Checks the inrush windows (a violation goes to `sink`) and sums up the run.
    pub fn finish(&mut self, mut sink: impl FnMut(&Violation)) -> Summary {
        let mut worst = 0usize;
        for &(s, _) in self.windows.iter() {
            let open = self
                .windows
                .iter()
                .filter(|&&(a, b)| a <= s && s < b)
                .count();
            worst = worst.max(open);
        }
        if worst > self.inrush_cap {
            let v = Violation::Inrush {
                worst,
                cap: self.inrush_cap,
            };
            self.violation(v, &mut sink);
        }
        Summary {
            edges: self.edges,
            pulses: self.watch.iter().map(|w| w.pulses).sum(),
            worst_inrush: worst,
            inrush_cap: self.inrush_cap,
            violations: self.violations,
            held: self.limits.is_some() && self.violations == 0,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use coilwise::schedule::HeatRatings;

    const AT_REST: PlantView = PlantView {
        coil_amps: 0.0,
        at_rest: true,
        moved: false,
        operated: false,
        degraded: false,
    };
    const SEATED: PlantView = PlantView {
        coil_amps: 0.3,
        at_rest: false,
        moved: true,
        operated: true,
        degraded: false,
    };

    /// Valve A's limits on both channels of a two-channel monitor, inrush cap 1.
    fn monitor() -> (Monitor<2, 8>, u64, u64, u64) {
        let design = crate::scenario::valve_design(crate::scenario::TICK_HZ).unwrap();
        let l = ChannelLimits::from_design(&design, &HeatRatings::default(), None).unwrap();
        let mut m = Monitor::new();
        m.set_limits(&[l, l], 1);
        let us = |t: coilwise::Ticks| u64::from(t.get()) * 1_000; // 1 µs ticks, in ns
        (m, us(l.min_on()), us(l.min_off()), us(l.inrush_window()))
    }

    #[test]
    fn a_run_within_the_limits_holds() {
        let (mut m, on, off, window) = monitor();
        let mut seen = 0;
        m.drive(0, 0, DriveState::Full, &AT_REST, |_| seen += 1);
        m.drive(on, 0, DriveState::Off, &SEATED, |_| seen += 1);
        // Channel 1 pulls in after channel 0's inrush window closed.
        let t1 = on.max(window);
        m.drive(t1, 1, DriveState::Full, &AT_REST, |_| seen += 1);
        m.drive(t1 + on, 1, DriveState::Off, &SEATED, |_| seen += 1);
        m.drive(on + off, 0, DriveState::Full, &AT_REST, |_| seen += 1);
        let s = m.finish(|_| seen += 1);
        assert_eq!(seen, 0);
        assert!(s.held);
        assert_eq!((s.edges, s.pulses, s.violations), (5, 2, 0));
    }

    #[test]
    fn each_broken_limit_is_reported_once() {
        let (mut m, on, off, _) = monitor();
        let mut seen = heapless::Vec::<Violation, 8>::new();
        let mut sink = |v: &Violation| {
            let _ = seen.push(*v);
        };
        m.drive(0, 0, DriveState::Full, &AT_REST, &mut sink);
        // Channel 1 pulls in a tick later: two coils in inrush against a cap of one.
        m.drive(1_000, 1, DriveState::Full, &AT_REST, &mut sink);
        // Off one tick before the minimum on-time, and the armature moved: a pulse too short.
        m.drive(on - 1_000, 0, DriveState::Off, &SEATED, &mut sink);
        m.drive(1_000 + on, 1, DriveState::Off, &SEATED, &mut sink);
        // On again one tick short of the minimum off-time.
        m.drive(
            on - 1_000 + off - 1_000,
            0,
            DriveState::Full,
            &AT_REST,
            &mut sink,
        );
        let s = m.finish(&mut sink);
        assert!(!s.held);
        assert!(matches!(seen[0], Violation::ShortPulseMoved { ch: 0, .. }));
        assert!(matches!(seen[1], Violation::OffTime { ch: 0, .. }));
        assert!(matches!(seen[2], Violation::Inrush { worst: 2, cap: 1 }));
        assert_eq!(s.violations as usize, seen.len());
        assert_eq!(seen.len(), 3);
    }
}
