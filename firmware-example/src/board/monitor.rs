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

use coilwise::schedule::ChannelLimits;

use crate::scenario::CHANNELS;

/// Most pulses the inrush check keeps (more is reported as a violation of its own).
const MAX_PULSES: usize = 40;

/// The drive of one switch.
#[derive(Clone, Copy, Debug, PartialEq, Eq, defmt::Format)]
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
pub struct Monitor {
    limits: Option<[Limits; CHANNELS]>,
    inrush_cap: usize,
    watch: [Watch; CHANNELS],
    windows: heapless::Vec<(u32, u32), MAX_PULSES>,
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

impl Default for Monitor {
    fn default() -> Self {
        Self::new()
    }
}

impl Monitor {
    /// A monitor without limits yet (it counts edges only until [`Monitor::set_limits`]).
    pub const fn new() -> Self {
        Self {
            limits: None,
            inrush_cap: CHANNELS,
            watch: [Watch {
                state: DriveState::Off,
                on_at: None,
                last_off: None,
                heat: [0.0; 2],
                heat_at: 0,
                pulses: 0,
            }; CHANNELS],
            windows: heapless::Vec::new(),
            violations: 0,
            edges: 0,
        }
    }

    /// The limits to check against: each channel's, and the inrush cap.
    pub fn set_limits(&mut self, limits: &[ChannelLimits; CHANNELS], inrush_cap: u8) {
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

    fn violation(&mut self) {
        self.violations += 1;
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

    fn check_heat(&mut self, ch: usize, t: u64, lim: &Limits) {
        for (k, h) in lim.heat.iter().enumerate() {
            let Some(h) = h else { continue };
            let b = self.watch[ch].heat[k];
            // A µJ of slack for the integer rounding of the rates the scheduler was given.
            if b > h.capacity + 1.0 {
                defmt::error!(
                    "[monitor] t={=u64} us ch {=usize}: thermal bucket {=usize} at {=f32} uJ, capacity {=f32} uJ",
                    t,
                    ch,
                    k,
                    b as f32,
                    h.capacity as f32
                );
                self.violation();
            }
        }
    }

    /// A drive change of channel `ch` at plant time `t_ns`, with the plant's state just before it.
    pub fn drive(&mut self, t_ns: u64, ch: usize, new: DriveState, plant: &PlantView) {
        self.edges += 1;
        let t = t_ns / 1_000;
        let Some(limits) = self.limits else {
            self.watch[ch].state = new;
            return;
        };
        let lim = limits[ch];
        let old = self.watch[ch].state;
        self.heat_to(ch, t, &lim);
        match (old, new) {
            (DriveState::Off, _) => {
                if let Some(off) = self.watch[ch].last_off {
                    if t - off < lim.min_off {
                        defmt::error!(
                            "[monitor] t={=u64} us ch {=usize}: on after {=u64} us off, minimum {=u64} us",
                            t,
                            ch,
                            t - off,
                            lim.min_off
                        );
                        self.violation();
                    }
                }
                if !plant.at_rest || plant.coil_amps.abs() > 1e-3 {
                    defmt::error!(
                        "[monitor] t={=u64} us ch {=usize}: switched on while the coil is not at rest ({=f32} A)",
                        t,
                        ch,
                        plant.coil_amps as f32
                    );
                    self.violation();
                }
                self.watch[ch].on_at = Some(t);
            }
            (_, DriveState::Off) => {
                let on = self.watch[ch].on_at.unwrap_or(t);
                let length = t - on;
                if length < lim.min_on && plant.moved {
                    defmt::error!(
                        "[monitor] t={=u64} us ch {=usize}: a {=u64} us pulse (below the {=u64} us minimum) moved the armature",
                        t,
                        ch,
                        length,
                        lim.min_on
                    );
                    self.violation();
                }
                if length >= lim.min_on && !plant.degraded && !plant.operated {
                    defmt::error!(
                        "[monitor] t={=u64} us ch {=usize}: a {=u64} us pulse on a healthy coil ended before the armature seated",
                        t,
                        ch,
                        length
                    );
                    self.violation();
                }
                // Ticks of a run shorter than 2^32 µs (71 minutes).
                let end = on + lim.window.min(length);
                if self.windows.push((on as u32, end as u32)).is_err() {
                    defmt::error!(
                        "[monitor] more than {=usize} pulses: inrush check incomplete",
                        MAX_PULSES
                    );
                    self.violation();
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
        self.check_heat(ch, t, &lim);
        self.watch[ch].state = new;
    }

    /// Checks the inrush windows, logs a summary, and returns whether every check held.
    pub fn finish(&mut self) -> bool {
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
            defmt::error!(
                "[monitor] {=usize} coils in their inrush window at once, cap {=usize}",
                worst,
                self.inrush_cap
            );
            self.violation();
        }
        let pulses: u32 = self.watch.iter().map(|w| w.pulses).sum();
        defmt::info!(
            "[monitor] {=u32} drive changes, {=u32} pulses; most coils in inrush at once: {=usize} (cap {=usize}); violations: {=u32}",
            self.edges,
            pulses,
            worst,
            self.inrush_cap,
            self.violations
        );
        self.limits.is_some() && self.violations == 0
    }
}
