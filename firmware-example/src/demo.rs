//! The scripted greenhouse demo (**invented** scenario): what the simulated world does, what the
//! programme asks, and what the firmware must conclude — checked at the end of the run.
//!
//! The script knows its faults, so the checker can tell whether each was detected on the right
//! channel and that no healthy pulse was flagged. It lives here, beside the QEMU board, and not in
//! the application: the application knows nothing of the script.
//!
//! Times are ms after power-up. The self-check runs first (a few ms); the programme starts at
//! 100 ms.
//!
//! | ms | world (plant) | programme | the firmware must |
//! |---:|---|---|---|
//! | 0 | valve C's wire is open | — | find it at the self-check, isolate C, learn no baseline for it |
//! | 0 | the pump relay has a strong eddy path (5 % of its current, 20 % of its τ) | — | keep it healthy; learn A, B and the pump (3 pulses each) and keep the records in flash |
//! | 100 | | valves A and B together | stagger B behind A's inrush window |
//! | 100 | | valve C | refuse: isolated |
//! | 120 | | valve A for 5 ms | refuse: below minimum on-time |
//! | 150 | valve A will still carry 25 mA (8 %) at its next switch-on | | |
//! | 190 | | valve A again | delay: A's minimum off-time; its rise (residual current) healthy |
//! | 200 | | valve B, within 2 ms | refuse: B's off-time has not run out |
//! | 300 | | pump, twice | second waits for the first (channel busy) |
//! | 400 | | pump within 50 ms | refuse: thermal budget (the queued runs fill it) |
//! | 420 | | pump | delay: thermal budget |
//! | 450 | valve A: 30 % of its turns bridged through 0.5 Ω (coupled, k = 0.95) | | |
//! | 500 | | valve A | rise says shorted turns: isolate A |
//! | 700 | | valve A | refuse: isolated |
//! | 800 | 24 V rail sags to 17 V | | |
//! | 850 | | valve B | rise says supply low: hold the 24 V rail back |
//! | 1000 | | valve B | supply re-check pulse: still low, refuse |
//! | 1100 | 24 V rail back to 24 V | | |
//! | 1200 | | valve B | re-check healthy: go ahead once the coil is at rest after it |
//! | 1250 | | valve B at 1400 ms | accept the set time |
//! | 1600 | pump wire breaks | | |
//! | ≈2231 | | (the thermally delayed pump run) | rise says open circuit: isolate the pump |
//! | 2600 | | pump | refuse: isolated |
//! | 2900 | a bit of valve A's flash record flips | | |
//! | 3100 | (simulated reset) | new driver from the flash page | B and the pump judged with their stored baselines (one pulse, no relearning); A's record refused (checksum), A not learnt (its shorted turns); C none |

use coilwise::diagnosis::Finding;
use coilwise::schedule::{DelayReason, Refusal};
use coilwise::Instant;
use coilwise_driver::{Event, EventKind, Refused, Source};
use coilwise_host_tests::Fault;

use crate::board::{Happening, Scripted};
use crate::scenario::{CHANNELS, PUMP_RAIL, VALVE_RAIL};

/// The driver as the demo uses it: the scenario's channels, 8 pulses queued, 8 events.
pub type Drv<'a, Sw, Pwm, Sense> =
    coilwise_driver::Driver<'a, Sw, Pwm, Sense, CHANNELS, QUEUE, EVENTS>;

/// Pulses pending or in flight the scheduler holds at most.
pub const QUEUE: usize = 8;
/// Events the driver queues between two drains of the demo loop.
pub const EVENTS: usize = 8;

/// When a programme step asks its pulse to start.
#[derive(Clone, Copy, Debug, PartialEq, Eq, defmt::Format)]
pub enum StartAt {
    /// As soon as the constraints allow.
    Now,
    /// At this time, ms after power-up (or as soon after as allowed).
    At(u32),
}

/// One request of the timed programme.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Step {
    /// When the request is made, ms after power-up.
    pub at_ms: u32,
    /// The channel.
    pub channel: usize,
    /// Pulse length, ms.
    pub duration_ms: u32,
    /// Asked start.
    pub start: StartAt,
    /// Refuse rather than start more than this late, ms (`None`: any delay).
    pub within_ms: Option<u32>,
}

/// What became of a request, as the checker sees it.
#[derive(Clone, Copy, Debug, PartialEq, defmt::Format)]
pub enum Outcome {
    /// Starts when asked.
    Accepted,
    /// Starts later, for this reason.
    Delayed(DelayReason),
    /// Refused by the driver.
    Refused(Refused),
}

/// Valve A, B, C and the pump relay.
const A: usize = 0;
const B: usize = 1;
const C: usize = 2;
const PUMP: usize = 3;

/// The simulated world's script.
pub static SCRIPT: [Scripted; 8] = [
    Scripted {
        at_ms: 0,
        what: Happening::Fault {
            channel: C,
            fault: Fault::Open,
        },
    },
    Scripted {
        at_ms: 150,
        // Valve A's second pulse (asked at 190 ms, right after its first ends at 180 ms) starts
        // with 25 mA (8 % of its final current) still in the coil.
        what: Happening::Residual {
            channel: A,
            amps: 0.025,
        },
    },
    Scripted {
        at_ms: 450,
        what: Happening::Fault {
            channel: A,
            // A section of 30 % of the turns bridged through 0.5 Ω: a closed loop coupled to
            // the rest of the winding (k = 0.95).
            fault: Fault::ShortedTurns {
                fraction: 0.3,
                coupling: 0.95,
                bridge_ohms: 0.5,
            },
        },
    },
    Scripted {
        at_ms: 800,
        what: Happening::Supply {
            rail: VALVE_RAIL,
            volts: 17.0,
        },
    },
    Scripted {
        at_ms: 1100,
        what: Happening::Supply {
            rail: VALVE_RAIL,
            volts: 24.0,
        },
    },
    Scripted {
        at_ms: 1600,
        what: Happening::Fault {
            channel: PUMP,
            fault: Fault::Open,
        },
    },
    // During the simulated power-off: one bit of valve A's baseline record (slot 0, byte 9,
    // inside its inductance field) flips.
    Scripted {
        at_ms: 2900,
        what: Happening::FlashBitFlip {
            offset: 9,
            mask: 0x04,
        },
    },
    // Nothing happens after this; it marks the end of the script for the checker's windows.
    Scripted {
        at_ms: 3000,
        what: Happening::Supply {
            rail: PUMP_RAIL,
            volts: 12.0,
        },
    },
];

/// What a programme step must come to.
#[derive(Clone, Copy, Debug, PartialEq, Eq, defmt::Format)]
pub enum Expect {
    /// Accepted at the asked time.
    Accepted,
    /// Delayed for this reason.
    Delayed(DelayReason),
    /// Refused as too late, for this reason.
    TooLate(DelayReason),
    /// Refused as shorter than the minimum on-time.
    BelowMinOn,
    /// Refused by the application: channel isolated.
    Isolated,
    /// Refused by the application: supply rail low.
    SupplyLow,
}

const fn step(at_ms: u32, channel: usize, duration_ms: u32) -> Step {
    Step {
        at_ms,
        channel,
        duration_ms,
        start: StartAt::Now,
        within_ms: None,
    }
}

const fn within(mut s: Step, ms: u32) -> Step {
    s.within_ms = Some(ms);
    s
}

const fn at(mut s: Step, ms: u32) -> Step {
    s.start = StartAt::At(ms);
    s
}

/// Number of programme steps.
pub const STEPS: usize = 18;

/// The programme table.
const TABLE: [(Step, Expect); STEPS] = [
    (step(100, A, 80), Expect::Accepted),
    (step(100, B, 80), Expect::Delayed(DelayReason::Inrush)),
    (step(100, C, 60), Expect::Isolated),
    (step(120, A, 5), Expect::BelowMinOn),
    (step(190, A, 60), Expect::Delayed(DelayReason::OffTime)),
    (
        within(step(200, B, 60), 2),
        Expect::TooLate(DelayReason::OffTime),
    ),
    (step(300, PUMP, 500), Expect::Accepted),
    (
        step(300, PUMP, 500),
        Expect::Delayed(DelayReason::ChannelBusy),
    ),
    (
        within(step(400, PUMP, 500), 50),
        Expect::TooLate(DelayReason::Thermal),
    ),
    (step(420, PUMP, 500), Expect::Delayed(DelayReason::Thermal)),
    (step(500, A, 60), Expect::Accepted),
    (step(700, A, 60), Expect::Isolated),
    (step(850, B, 60), Expect::Accepted),
    (step(1000, B, 60), Expect::SupplyLow),
    (step(1200, B, 60), Expect::Delayed(DelayReason::OffTime)),
    (at(step(1250, B, 60), 1400), Expect::Accepted),
    (step(2600, PUMP, 100), Expect::Isolated),
    (step(2700, B, 60), Expect::Accepted),
];

/// The programme and what each step must come to (see the module table).
pub static PROGRAMME: [(Step, Expect); STEPS] = TABLE;

/// What the script makes of channel `ch` at `t_ms`: the finding a correct diagnosis gives.
fn truth(ch: usize, t_ms: u32) -> Finding {
    let mut finding = Finding::Healthy;
    let mut rail_low = false;
    for e in SCRIPT.iter().filter(|e| e.at_ms <= t_ms) {
        match e.what {
            Happening::Fault { channel, fault } if channel == ch => {
                finding = match fault {
                    Fault::Open => Finding::OpenCircuit,
                    Fault::ShortedTurns { .. } | Fault::ShortedTurnsLumped { .. } => {
                        Finding::ShortedTurns
                    }
                    _ => Finding::CannotTell(coilwise::diagnosis::Undetermined::NotYet),
                };
            }
            Happening::Supply { rail, volts } if rail == rail_of(ch) => {
                rail_low = volts < 0.9 * nominal(rail);
            }
            _ => {}
        }
    }
    if finding == Finding::Healthy && rail_low {
        Finding::SupplyLow
    } else {
        finding
    }
}

fn rail_of(ch: usize) -> u8 {
    if ch == PUMP {
        PUMP_RAIL
    } else {
        VALVE_RAIL
    }
}

fn nominal(r: u8) -> f64 {
    if r == PUMP_RAIL {
        12.0
    } else {
        24.0
    }
}

fn matches(outcome: &Outcome, expect: &Expect) -> bool {
    match (outcome, expect) {
        (Outcome::Accepted, Expect::Accepted) => true,
        (Outcome::Delayed(reason), Expect::Delayed(r)) => reason == r,
        (
            Outcome::Refused(Refused::Schedule(Refusal::TooLate { reason, .. })),
            Expect::TooLate(r),
        ) => reason == r,
        (Outcome::Refused(Refused::Schedule(Refusal::BelowMinOn { .. })), Expect::BelowMinOn) => {
            true
        }
        (Outcome::Refused(Refused::Isolated(_)), Expect::Isolated) => true,
        (Outcome::Refused(Refused::SupplyLow), Expect::SupplyLow) => true,
        _ => false,
    }
}

/// The checker: compares every request outcome and verdict with the script.
pub struct Checker {
    /// Per channel: the programme step waiting for a supply re-check.
    pub(crate) awaiting: [Option<usize>; CHANNELS],
    handled: [bool; STEPS],
    /// Per scripted event: whether a verdict on its channel named it.
    detected: [bool; SCRIPT.len()],
    failures: u32,
    verdicts: u32,
    /// Per channel: baselines learnt, stored records refused.
    pub learned: [u8; CHANNELS],
    pub(crate) rejected: [u8; CHANNELS],
    /// Time origin of the controller's instants (power-up), ticks.
    pub origin: coilwise::Instant,
}

impl Checker {
    /// A checker for a controller whose time origin is `origin`.
    pub const fn new(origin: coilwise::Instant) -> Self {
        Self {
            awaiting: [None; CHANNELS],
            handled: [false; STEPS],
            detected: [false; SCRIPT.len()],
            failures: 0,
            verdicts: 0,
            learned: [0; CHANNELS],
            rejected: [0; CHANNELS],
            origin,
        }
    }

    /// Logs the outcome of the check and returns whether everything the script demands held.
    #[inline(never)]
    pub fn finish(&mut self) -> bool {
        for (i, h) in self.handled.iter().enumerate() {
            if !h {
                defmt::error!("[check] programme step {=usize} was never handled", i);
                self.failures += 1;
            }
        }
        let mut expected_faults = 0u32;
        for (k, e) in SCRIPT.iter().enumerate() {
            let needed = match e.what {
                Happening::Fault { .. } => true,
                Happening::Supply { rail, volts } => volts < 0.9 * nominal(rail),
                Happening::Residual { .. } | Happening::FlashBitFlip { .. } => false,
            };
            if !needed {
                continue;
            }
            expected_faults += 1;
            if self.detected[k] {
                defmt::info!(
                    "[check] scripted event {=usize} (t={=u32} ms) detected on the right channel",
                    k,
                    e.at_ms
                );
            } else {
                defmt::error!(
                    "[check] scripted event {=usize} (t={=u32} ms) was NOT detected",
                    k,
                    e.at_ms
                );
                self.failures += 1;
            }
        }
        defmt::info!(
            "[check] {=u32} verdicts, {=usize} requests, {=u32} scripted faults; failures: {=u32}",
            self.verdicts,
            STEPS,
            expected_faults,
            self.failures
        );
        self.failures == 0
    }
}

impl Checker {
    /// Programme step `index` came to `outcome`.
    pub(crate) fn request(&mut self, index: usize, outcome: &Outcome) {
        let Some((_, expect)) = PROGRAMME.get(index) else {
            self.failures += 1;
            return;
        };
        if let Some(h) = self.handled.get_mut(index) {
            *h = true;
        }
        if !matches(outcome, expect) {
            defmt::error!(
                "[check] step {=usize}: got {}, the script expects {}",
                index,
                outcome,
                expect
            );
            self.failures += 1;
        }
    }

    /// A driver event: verdicts are checked against the script; the outcome of a request that
    /// waited for a supply re-check resolves its step.
    pub(crate) fn event(&mut self, e: &Event) {
        let ch = usize::from(e.channel);
        let resolved = match e.kind {
            EventKind::Accepted { .. } => Some(Outcome::Accepted),
            EventKind::Delayed { reason, .. } => Some(Outcome::Delayed(reason)),
            EventKind::Refused(r) => Some(Outcome::Refused(r)),
            EventKind::Judged {
                source, finding, ..
            } => {
                self.verdict(e.at, ch, source, finding);
                None
            }
            EventKind::BaselineLearned { .. } => {
                if let Some(n) = self.learned.get_mut(ch) {
                    *n += 1;
                }
                None
            }
            EventKind::BaselineRejected(_) => {
                if let Some(n) = self.rejected.get_mut(ch) {
                    *n += 1;
                }
                None
            }
            EventKind::Lost { .. } => {
                defmt::error!("[check] driver events were lost");
                self.failures += 1;
                None
            }
            _ => None,
        };
        if let (Some(o), Some(slot)) = (resolved, self.awaiting.get_mut(ch)) {
            if let Some(index) = slot.take() {
                self.request(index, &o);
            }
        }
    }

    fn verdict(&mut self, at: Instant, channel: usize, kind: Source, finding: Finding) {
        self.verdicts += 1;
        let t_ms = (at.since(self.origin).max(0) as u32) / 1000;
        let want = truth(channel, t_ms);
        if finding == Finding::ShapeUnexplained && want.is_coil_fault() {
            // The trace is not a healthy coil's and the model cannot name it: no false alarm, no
            // isolation on it alone (the driver's rule), and no credit for detecting the fault.
            defmt::info!(
                "[check] ch{=usize} at t={=u32} ms ({}): unexplained shape on a coil with a scripted fault ({}): not isolated on it alone, as designed",
                channel,
                t_ms,
                kind,
                want
            );
            return;
        }
        if finding != want {
            defmt::error!(
                "[check] ch{=usize} at t={=u32} ms ({}): verdict {}, the script says {}",
                channel,
                t_ms,
                kind,
                finding,
                want
            );
            self.failures += 1;
            return;
        }
        // Credit the scripted event this verdict reveals (the latest one in force on the channel).
        let mut credit = None;
        for (k, e) in SCRIPT.iter().enumerate().filter(|(_, e)| e.at_ms <= t_ms) {
            match e.what {
                Happening::Fault { channel: c, .. } if c == channel => credit = Some(k),
                Happening::Supply { rail, volts }
                    if rail == rail_of(channel)
                        && volts < 0.9 * nominal(rail)
                        && want == Finding::SupplyLow =>
                {
                    credit = Some(k);
                }
                _ => {}
            }
        }
        if want != Finding::Healthy {
            if let Some(k) = credit {
                self.detected[k] = true;
            }
        }
    }
}

impl Checker {
    /// After the simulated reset's commissioning: `taken` says which stored records the new
    /// driver accepted, `learned_before` the baselines learnt before the reset, `same` whether
    /// each accepted channel's baseline is byte-exact the stored one. The script demands: valve
    /// B and the pump relay judged with their stored baselines (no relearning), valve A's
    /// record refused (the flipped bit), valve C (never learnt: open) without one, and no
    /// channel learning anew (A and C are faulty).
    #[inline(never)]
    pub fn after_reset(
        &mut self,
        taken: [bool; CHANNELS],
        learned_before: [u8; CHANNELS],
        same: [bool; CHANNELS],
    ) {
        let want = [false, true, false, true];
        let relearnt = (0..CHANNELS).any(|i| self.learned[i] != learned_before[i]);
        let exact = (0..CHANNELS).all(|i| !taken[i] || same[i]);
        let ok = taken == want && !relearnt && exact && self.rejected[A] >= 1;
        if ok {
            defmt::info!("[check] after the reset: valve B and the pump relay judged with their stored baselines (byte-exact, not relearnt); valve A's corrupted record refused; valve C had none");
        } else {
            defmt::error!(
                "[check] after the reset: records taken {}, the script expects {}; relearnt: {=bool}; byte-exact: {=bool}; A refused {=u8}",
                taken,
                want,
                relearnt,
                exact,
                self.rejected[A]
            );
            self.failures += 1;
        }
    }
}
