//! Property tests: random request sequences through the driver on the simulated greenhouse rig
//! (numerical coil plant, invented parts), with random faults and supply sags.
//!
//! - **Never an edge that breaks a coil's limits**: the independent edge monitor (copied from the
//!   QEMU board: off-time, coil at rest at every on edge, armature seated by every pulse of at
//!   least the minimum on-time on a healthy coil, a shorter one never moving it, inrush cap,
//!   thermal buckets solved exactly in f64) finds nothing, and every on period recorded at the
//!   plant is either a diagnostic pulse (no longer than the channel's) or a pulse of at least
//!   the minimum on-time and at most the longest length asked.
//! - **Never a lost event without the overflow count saying so**: with a 4-slot queue popped at
//!   random, events popped + the counts of the `Lost` markers + the loss not yet reported equal
//!   the events emitted, and the total lost equals the last two.

mod sim;

use std::sync::atomic::{AtomicU64, Ordering};

use coilwise::Ticks;
use coilwise_driver::{EventKind, Pulse, Start, TickSource};
use coilwise_host_tests::Fault;
use proptest::prelude::*;
use sim::monitor::DriveState;
use sim::{rig_e, Happening, CHANNELS};

#[derive(Clone, Debug)]
enum Op {
    Request {
        ch: usize,
        ms: u32,
        held: bool,
        at: Option<u32>,
        within: Option<u32>,
    },
    Cancel(usize),
    Release(usize),
    Reenable(usize),
    Wait(u32),
    Pop(usize),
}

fn op() -> impl Strategy<Value = Op> {
    prop_oneof![
        4 => (0..CHANNELS + 1, 1u32..400, any::<bool>(), proptest::option::of(0u32..300), proptest::option::of(0u32..100))
            .prop_map(|(ch, ms, held, at, within)| Op::Request { ch, ms, held: held && ms > 100, at, within }),
        1 => (0..CHANNELS).prop_map(Op::Cancel),
        1 => (0..CHANNELS).prop_map(Op::Release),
        1 => (0..CHANNELS).prop_map(Op::Reenable),
        3 => (0u32..250).prop_map(Op::Wait),
        2 => (0usize..6).prop_map(Op::Pop),
    ]
}

fn happening() -> impl Strategy<Value = (u32, Happening)> {
    prop_oneof![
        (0u32..2_000, 0..CHANNELS).prop_map(|(t, ch)| (t, Happening::Fault(ch, Fault::Open))),
        (0u32..2_000, 0..CHANNELS, 0.2f64..0.5).prop_map(|(t, ch, f)| (
            t,
            Happening::Fault(
                ch,
                Fault::ShortedTurns {
                    fraction: f,
                    coupling: 0.9,
                    bridge_ohms: 0.5
                }
            )
        )),
        (0u32..2_000, 0usize..2, 0.6f64..0.8).prop_map(|(t, g, k)| {
            let nominal = if g == 0 { 24.0 } else { 12.0 };
            (t, Happening::Supply(g, nominal * k))
        }),
    ]
}

/// Cases per property: 256, or `COILWISE_PROP_CASES` for a longer campaign outside CI.
fn cases() -> u32 {
    std::env::var("COILWISE_PROP_CASES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(256)
}

/// Totals over the cases run, printed with `--nocapture` (so a report can quote what the
/// properties exercised).
struct Stats {
    name: &'static str,
    cases: AtomicU64,
    edges: AtomicU64,
    lost: AtomicU64,
    emitted: AtomicU64,
    lossy: AtomicU64,
    last_lost: AtomicU64,
}

impl Stats {
    const fn new(name: &'static str) -> Self {
        Stats {
            name,
            cases: AtomicU64::new(0),
            edges: AtomicU64::new(0),
            lost: AtomicU64::new(0),
            emitted: AtomicU64::new(0),
            lossy: AtomicU64::new(0),
            last_lost: AtomicU64::new(0),
        }
    }
}

static SMALL: Stats = Stats::new("4-slot queue");
static LARGE: Stats = Stats::new("32-slot queue, popped always");

impl Stats {
    fn record(&self, edges: usize, lost: u32, emitted: u32) {
        let n = self.cases.fetch_add(1, Ordering::Relaxed) + 1;
        self.edges.fetch_add(edges as u64, Ordering::Relaxed);
        self.lost.fetch_add(u64::from(lost), Ordering::Relaxed);
        self.emitted
            .fetch_add(u64::from(emitted), Ordering::Relaxed);
        self.lossy.fetch_add(u64::from(lost > 0), Ordering::Relaxed);
        self.last_lost.store(u64::from(lost), Ordering::Relaxed);
        if n.is_multiple_of(64) {
            println!(
                "props ({}): {n} cases, {} drive changes, {} events emitted, {} lost (in {} cases), all accounted for",
                self.name,
                self.edges.load(Ordering::Relaxed),
                self.emitted.load(Ordering::Relaxed),
                self.lost.load(Ordering::Relaxed),
                self.lossy.load(Ordering::Relaxed)
            );
        }
    }
}

/// One case: `script` on the rig, `ops` through a driver with an `E`-slot queue (popped at every
/// step when `pop_always`, else only at the `Pop` steps).
fn check<const E: usize>(
    script: &[(u32, Happening)],
    ops: &[Op],
    pop_always: bool,
    stats: &Stats,
) -> Result<(), TestCaseError> {
    let (plant, mut clock, mut drv) = rig_e::<E>(script);
    let mut popped = 0u64;
    let mut marked = 0u64;
    let mut longest = [0u32; CHANNELS];
    let mut pop = |drv: &mut sim::RigDriverE<E>, n: usize| {
        for _ in 0..n {
            match drv.pop_event() {
                Some(e) => match e.kind {
                    EventKind::Lost { count } => marked += u64::from(count),
                    _ => popped += 1,
                },
                None => break,
            }
        }
    };
    drv.commission(clock.now())
        .expect("self-check holds on the host");
    for o in ops.iter().cloned() {
        let now = clock.now();
        match o {
            Op::Request {
                ch,
                ms,
                held,
                at,
                within,
            } => {
                let ticks = Ticks(ms * 1000);
                let mut p = if held {
                    Pulse::held(ticks)
                } else {
                    Pulse::now(ticks)
                };
                if let Some(a) = at {
                    p.start = Start::At(now.after(Ticks(a * 1000)));
                }
                if let Some(w) = within {
                    p = p.within(Ticks(w * 1000));
                }
                if drv.request(now, ch, p).is_ok() && ch < CHANNELS {
                    longest[ch] = longest[ch].max(ticks.get());
                }
            }
            Op::Cancel(ch) => {
                let _ = drv.cancel(now, ch);
            }
            Op::Release(ch) => {
                let _ = drv.release(now, ch);
            }
            Op::Reenable(ch) => {
                let _ = drv.reenable(now, ch);
            }
            Op::Wait(ms) => {
                let until = now.after(Ticks(ms * 1000));
                loop {
                    let t = clock.now();
                    let next = drv.service(t).expect("time only moves forward");
                    if t.is_at_or_after(until) {
                        break;
                    }
                    clock.wait_until(if next.since(until) < 0 { next } else { until });
                }
            }
            Op::Pop(n) => pop(&mut drv, n),
        }
        if pop_always {
            pop(&mut drv, usize::MAX);
        }
        let _ = drv.service(clock.now()).expect("service");
    }
    // Let everything finish: cancel all, run 3 s.
    for ch in 0..CHANNELS {
        let _ = drv.cancel(clock.now(), ch);
    }
    let end = clock.now().after(Ticks(3_000_000));
    loop {
        let t = clock.now();
        let next = drv.service(t).expect("service");
        if t.is_at_or_after(end) {
            break;
        }
        clock.wait_until(if next.since(end) < 0 { next } else { end });
    }
    pop(&mut drv, usize::MAX);
    let q = drv.events();
    prop_assert_eq!(
        q.unreported_loss(),
        0,
        "a pop after the last loss reports it"
    );
    prop_assert_eq!(popped + marked, u64::from(q.emitted()));
    prop_assert_eq!(marked, u64::from(q.lost()));

    let mut p = plant.borrow_mut();
    prop_assert_eq!(p.hw.monitor.violations(), 0);
    prop_assert!(p.hw.monitor.finish(sim::print_violation).held);
    let limits = drv.limits();
    let mut on_since: [Option<u64>; CHANNELS] = [None; CHANNELS];
    for &(t, ch, s) in p.edges.iter() {
        match (on_since[ch], s) {
            (None, DriveState::Full | DriveState::Pwm(_)) => on_since[ch] = Some(t),
            (Some(on), DriveState::Off) => {
                let us = (t - on) / 1000;
                let probe = drv
                    .config(ch)
                    .and_then(|c| c.diagnosis)
                    .map_or(0, |d| d.probe.length.get());
                let min_on = u64::from(limits[ch].min_on().get());
                prop_assert!(
                    us <= u64::from(probe) || (us >= min_on && us <= u64::from(longest[ch])),
                    "ch{} on for {} us: probe {} us, min on {} us, longest asked {} us",
                    ch,
                    us,
                    probe,
                    min_on,
                    longest[ch]
                );
                on_since[ch] = None;
            }
            _ => {}
        }
    }
    stats.record(p.edges.len(), q.lost(), q.emitted());
    Ok(())
}

proptest! {
    #![proptest_config(ProptestConfig {
        cases: cases(),
        failure_persistence: None,
        ..ProptestConfig::default()
    })]

    /// A 4-slot queue popped now and then: losses happen, every one is counted.
    #[test]
    fn random_requests_never_break_a_limit_nor_lose_an_event_silently(
        script in proptest::collection::vec(happening(), 0..3),
        ops in proptest::collection::vec(op(), 1..60),
    ) {
        check::<4>(&script, &ops, false, &SMALL)?;
    }

    /// A 32-slot queue popped at every step: nothing is lost at all.
    #[test]
    fn a_queue_popped_often_enough_loses_nothing(
        script in proptest::collection::vec(happening(), 0..3),
        ops in proptest::collection::vec(op(), 1..60),
    ) {
        check::<32>(&script, &ops, true, &LARGE)?;
        prop_assert_eq!(LARGE.last_lost.load(Ordering::Relaxed), 0);
    }
}
