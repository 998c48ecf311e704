//! The driver on the simulated greenhouse rig (numerical coil plant of `coilwise-host-tests`,
//! invented parts): the cases the QEMU firmware checks, each watched by the independent edge
//! monitor (minimum on/off-time, coil at rest at every on edge, armature seated by every pulse
//! of at least the minimum on-time on a healthy coil, inrush cap, thermal buckets solved
//! exactly).
//!
//! The faults are the plant's own (an open winding carries no current; shorted turns lower
//! resistance and inductance by the square of the turns left — "inductance goes with turns
//! squared", common practice, no source); what a correct diagnosis must say of each is a fact
//! of the trade, not a figure computed by the driver.

mod sim;

use coilwise::diagnosis::Finding;
use coilwise::schedule::{DelayReason, Refusal};
use coilwise_driver::{
    commission::Phase, EventKind, Granted, Health, Pulse, Refused, Source, TickSource,
};
use coilwise_host_tests::Fault;
use sim::run::{ms, on_channel, run_until, ticks_ms};
use sim::{rig, Happening};

const A: usize = 0;
const B: usize = 1;
const C: usize = 2;
const PUMP: usize = 3;

fn judged(kinds: &[EventKind], source: Source) -> Vec<Finding> {
    kinds
        .iter()
        .filter_map(|k| match k {
            EventKind::Judged {
                source: s, finding, ..
            } if *s == source => Some(*finding),
            _ => None,
        })
        .collect()
}

fn finish(plant: &sim::Shared) {
    let mut p = plant.borrow_mut();
    assert!(
        p.hw.monitor.finish(sim::print_violation).held,
        "the edge monitor found broken constraints"
    );
    assert!(p.hw.monitor.edges() > 0);
}

#[test]
fn commissioning_isolates_an_open_wire_before_it_is_driven() {
    let (plant, mut clock, mut drv) = rig(&[(0, Happening::Fault(C, Fault::Open))]);
    // Nothing is driven before commissioning.
    assert_eq!(
        drv.request(clock.now(), A, Pulse::now(ticks_ms(80))),
        Err(Refused::NotCommissioned)
    );
    drv.commission_blocking(&mut clock).expect("commissioning");
    assert_eq!(drv.phase(), Phase::Ready);
    let mut log = Vec::new();
    while let Some(e) = drv.pop_event() {
        log.push(e);
    }
    for ch in [A, B, PUMP] {
        // One diagnostic pulse per baseline learning pulse, each healthy.
        assert_eq!(
            judged(&on_channel(&log, ch as u8), Source::Probe),
            [Finding::Healthy; coilwise_driver::LEARN_PULSES as usize]
        );
        assert!(drv.status(ch).unwrap().health.in_service());
    }
    assert_eq!(
        judged(&on_channel(&log, C as u8), Source::Probe),
        [Finding::OpenCircuit]
    );
    assert_eq!(
        drv.status(C).unwrap().health,
        Health::Isolated(Finding::OpenCircuit)
    );
    assert!(log
        .iter()
        .any(|e| e.kind == EventKind::Commissioned { in_service: 3 }));
    let now = clock.now();
    assert_eq!(
        drv.request(now, C, Pulse::now(ticks_ms(60))),
        Err(Refused::Isolated(Finding::OpenCircuit))
    );
    finish(&plant);
}

#[test]
fn shorted_turns_isolate_the_channel_at_its_next_rise() {
    let (plant, mut clock, mut drv) = rig(&[(
        150,
        Happening::Fault(
            A,
            Fault::ShortedTurns {
                fraction: 0.3,
                coupling: 0.95,
                bridge_ohms: 0.5,
            },
        ),
    )]);
    drv.commission_blocking(&mut clock).unwrap();
    let mut log = Vec::new();
    run_until(&mut drv, &mut clock, ms(100), &mut log);
    // A healthy pulse first, then the fault appears, then the next pulse shows it.
    assert!(matches!(
        drv.request(clock.now(), A, Pulse::now(ticks_ms(60))),
        Ok(Granted::Accepted { .. })
    ));
    run_until(&mut drv, &mut clock, ms(200), &mut log);
    run_until(&mut drv, &mut clock, ms(250), &mut log);
    let g = drv.request(clock.now(), A, Pulse::now(ticks_ms(200)));
    assert!(matches!(g, Ok(Granted::Accepted { .. })), "{g:?}");
    run_until(&mut drv, &mut clock, ms(600), &mut log);
    let a = on_channel(&log, A as u8);
    assert_eq!(
        judged(&a, Source::Rise),
        [Finding::Healthy, Finding::ShortedTurns]
    );
    // Isolated while its 200 ms pulse was running: the pulse was cut short.
    let iso = a
        .iter()
        .find_map(|k| match k {
            EventKind::Isolated {
                finding, off_at, ..
            } => Some((*finding, *off_at)),
            _ => None,
        })
        .expect("isolation event");
    assert_eq!(iso.0, Finding::ShortedTurns);
    let off = iso.1.expect("the pulse was on");
    assert!(off.since(ms(250)) < 200_000, "off at {off:?}");
    assert_eq!(
        drv.request(clock.now(), A, Pulse::now(ticks_ms(60))),
        Err(Refused::Isolated(Finding::ShortedTurns))
    );
    finish(&plant);
}

#[test]
fn supply_sag_holds_the_rail_back_until_a_diagnostic_pulse_finds_it_again() {
    let (plant, mut clock, mut drv) = rig(&[
        (100, Happening::Supply(0, 17.0)),
        (600, Happening::Supply(0, 24.0)),
    ]);
    drv.commission_blocking(&mut clock).unwrap();
    let mut log = Vec::new();
    run_until(&mut drv, &mut clock, ms(200), &mut log);
    assert!(drv
        .request(clock.now(), B, Pulse::now(ticks_ms(60)))
        .is_ok());
    run_until(&mut drv, &mut clock, ms(400), &mut log);
    let b = on_channel(&log, B as u8);
    assert_eq!(judged(&b, Source::Rise), [Finding::SupplyLow]);
    assert!(b.contains(&EventKind::SupplyLow { group: 0 }));
    // The coil is not blamed.
    assert!(drv.status(B).unwrap().health.in_service());
    assert!(drv.status(A).unwrap().supply_low);
    // Still low: the re-check pulse confirms, the request is refused.
    assert_eq!(
        drv.request(clock.now(), A, Pulse::now(ticks_ms(60))),
        Ok(Granted::AwaitingSupplyCheck)
    );
    run_until(&mut drv, &mut clock, ms(500), &mut log);
    let a = on_channel(&log, A as u8);
    assert!(a.contains(&EventKind::Refused(Refused::SupplyLow)), "{a:?}");
    // Back in range: the re-check passes and the request goes ahead.
    run_until(&mut drv, &mut clock, ms(700), &mut log);
    assert_eq!(
        drv.request(clock.now(), A, Pulse::now(ticks_ms(60))),
        Ok(Granted::AwaitingSupplyCheck)
    );
    run_until(&mut drv, &mut clock, ms(900), &mut log);
    let a = on_channel(&log, A as u8);
    assert!(
        a.contains(&EventKind::SupplyRecovered { group: 0 }),
        "{a:?}"
    );
    assert!(a.iter().any(|k| matches!(
        k,
        EventKind::Delayed {
            reason: DelayReason::OffTime,
            ..
        }
    ) || matches!(k, EventKind::Accepted { .. })));
    assert_eq!(judged(&a, Source::Rise), [Finding::Healthy]);
    assert!(!drv.status(A).unwrap().supply_low);
    finish(&plant);
}

#[test]
fn refusals_carry_their_reasons() {
    let (plant, mut clock, mut drv) = rig(&[]);
    drv.commission_blocking(&mut clock).unwrap();
    let mut log = Vec::new();
    run_until(&mut drv, &mut clock, ms(100), &mut log);
    let now = clock.now();
    let min_on = drv.limits()[A].min_on();
    assert_eq!(
        drv.request(now, A, Pulse::now(ticks_ms(5))),
        Err(Refused::Schedule(Refusal::BelowMinOn { min_on }))
    );
    assert!(matches!(
        drv.request(now, A, Pulse::now(ticks_ms(60))),
        Ok(Granted::Accepted { .. })
    ));
    // Valve B waits for A's inrush window (cap 1).
    assert!(matches!(
        drv.request(now, B, Pulse::now(ticks_ms(60))),
        Ok(Granted::Delayed {
            reason: DelayReason::Inrush,
            ..
        })
    ));
    // A again within 2 ms: A's off-time has not run out.
    assert!(matches!(
        drv.request(now, A, Pulse::now(ticks_ms(60)).within(ticks_ms(2))),
        Err(Refused::Schedule(Refusal::TooLate {
            reason: DelayReason::ChannelBusy,
            ..
        }))
    ));
    // The pump's thermal budget: queued runs fill it.
    for _ in 0..2 {
        assert!(drv.request(now, PUMP, Pulse::now(ticks_ms(500))).is_ok());
    }
    assert!(matches!(
        drv.request(now, PUMP, Pulse::now(ticks_ms(500)).within(ticks_ms(50))),
        Err(Refused::Schedule(Refusal::TooLate {
            reason: DelayReason::Thermal | DelayReason::ChannelBusy,
            ..
        }))
    ));
    assert_eq!(
        drv.request(now, 7, Pulse::now(ticks_ms(60))),
        Err(Refused::Schedule(Refusal::UnknownChannel))
    );
    // Every refusal is also an event.
    while let Some(e) = drv.pop_event() {
        log.push(e);
    }
    let refusals = log
        .iter()
        .filter(|e| matches!(e.kind, EventKind::Refused(_)))
        .count();
    assert_eq!(refusals, 4);
    run_until(&mut drv, &mut clock, ms(2_500), &mut log);
    finish(&plant);
}

#[test]
fn a_held_pulse_runs_until_released_and_never_below_its_minimum_on_time() {
    let (plant, mut clock, mut drv) = rig(&[]);
    drv.commission_blocking(&mut clock).unwrap();
    let mut log = Vec::new();
    run_until(&mut drv, &mut clock, ms(100), &mut log);
    let g = drv
        .request(clock.now(), B, Pulse::held(ticks_ms(2_000)))
        .unwrap();
    let Granted::Accepted { start } = g else {
        panic!("{g:?}")
    };
    // Nothing queues behind a held pulse.
    assert_eq!(
        drv.request(clock.now(), B, Pulse::now(ticks_ms(60))),
        Err(Refused::Busy)
    );
    run_until(&mut drv, &mut clock, ms(103), &mut log);
    // Released 3 ms in: it stays on until its minimum on-time.
    let s = drv.release(clock.now(), B).unwrap();
    let min_on = drv.limits()[B].min_on();
    match s {
        coilwise::schedule::Stopping::Ending {
            off_at, deferred, ..
        } => {
            assert_eq!(off_at, start.after(min_on));
            assert_eq!(deferred, Some(DelayReason::MinOnTime));
        }
        other => panic!("{other:?}"),
    }
    run_until(&mut drv, &mut clock, ms(300), &mut log);
    assert!(!drv.status(B).unwrap().on);
    // A second held pulse, released late.
    assert!(drv
        .request(clock.now(), B, Pulse::held(ticks_ms(2_000)))
        .is_ok());
    run_until(&mut drv, &mut clock, ms(700), &mut log);
    assert!(drv.status(B).unwrap().on);
    drv.release(clock.now(), B).unwrap();
    run_until(&mut drv, &mut clock, ms(800), &mut log);
    assert!(!drv.status(B).unwrap().on);
    assert_eq!(
        judged(&on_channel(&log, B as u8), Source::Rise),
        [Finding::Healthy; 2]
    );
    finish(&plant);
}

#[test]
fn an_operator_reenables_a_repaired_channel_after_a_diagnostic_pulse() {
    let (plant, mut clock, mut drv) = rig(&[(0, Happening::Fault(C, Fault::Open))]);
    drv.commission_blocking(&mut clock).unwrap();
    let mut log = Vec::new();
    run_until(&mut drv, &mut clock, ms(50), &mut log);
    // Not repaired yet: the re-check pulse isolates it again.
    drv.reenable(clock.now(), C).unwrap();
    assert_eq!(
        drv.request(clock.now(), C, Pulse::now(ticks_ms(60))),
        Err(Refused::NotCommissioned)
    );
    run_until(&mut drv, &mut clock, ms(100), &mut log);
    assert_eq!(
        drv.status(C).unwrap().health,
        Health::Isolated(Finding::OpenCircuit)
    );
    // Repaired (the plant's fault cleared), re-enabled, back in service.
    plant.borrow_mut().repair(C);
    drv.reenable(clock.now(), C).unwrap();
    run_until(&mut drv, &mut clock, ms(200), &mut log);
    assert!(on_channel(&log, C as u8).contains(&EventKind::Reenabled));
    assert!(matches!(
        drv.request(clock.now(), C, Pulse::now(ticks_ms(60))),
        Ok(Granted::Accepted { .. })
    ));
    run_until(&mut drv, &mut clock, ms(400), &mut log);
    assert_eq!(
        judged(&on_channel(&log, C as u8), Source::Rise),
        [Finding::Healthy]
    );
    assert!(drv.reenable(clock.now(), C).is_err());
    finish(&plant);
}

#[test]
fn a_sense_failure_takes_only_its_channel_out_of_service() {
    let (plant, mut clock, mut drv) = rig(&[]);
    drv.commission_blocking(&mut clock).unwrap();
    let mut log = Vec::new();
    run_until(&mut drv, &mut clock, ms(100), &mut log);
    plant.borrow_mut().broken_sense = Some(B);
    assert!(drv
        .request(clock.now(), B, Pulse::now(ticks_ms(60)))
        .is_ok());
    assert!(drv
        .request(clock.now(), A, Pulse::now(ticks_ms(60)))
        .is_ok());
    run_until(&mut drv, &mut clock, ms(300), &mut log);
    let kind = coilwise_driver::ErrorKind::Sense(coilwise_driver::SenseErrorKind::Overrun);
    assert!(on_channel(&log, B as u8).contains(&EventKind::HardwareFault(kind)));
    assert_eq!(drv.status(B).unwrap().health, Health::Faulted(kind));
    assert!(!drv.status(B).unwrap().on);
    assert_eq!(
        judged(&on_channel(&log, A as u8), Source::Rise),
        [Finding::Healthy]
    );
    finish(&plant);
}

/// The monitor is not a rubber stamp: edges made behind the driver's back (a pulse below the
/// minimum on-time on a valve, on again 1 ms after its off edge) are reported.
#[test]
fn the_monitor_reports_edges_that_break_the_limits() {
    use embedded_hal::digital::OutputPin;
    let (plant, mut clock, drv) = rig(&[]);
    let mut hw = drv.free();
    let sw = &mut hw[A].switch;
    sw.set_high().unwrap();
    clock.wait_until(ms(30));
    sw.set_low().unwrap();
    clock.wait_until(ms(31));
    sw.set_high().unwrap();
    clock.wait_until(ms(40));
    sw.set_low().unwrap();
    let mut p = plant.borrow_mut();
    assert!(p.hw.monitor.violations() >= 1);
    assert!(!p.hw.monitor.finish(sim::print_violation).held);
}

/// A wire that breaks in service: the next rise says open circuit, the channel is isolated and
/// its pulse ends at its minimum on-time; the other channels carry on.
#[test]
fn an_open_wire_in_service_isolates_at_the_next_rise() {
    let (plant, mut clock, mut drv) = rig(&[(150, Happening::Fault(PUMP, Fault::Open))]);
    drv.commission_blocking(&mut clock).unwrap();
    let mut log = Vec::new();
    run_until(&mut drv, &mut clock, ms(200), &mut log);
    let start = clock.now();
    assert!(drv.request(start, PUMP, Pulse::now(ticks_ms(300))).is_ok());
    assert!(drv.request(start, A, Pulse::now(ticks_ms(60))).is_ok());
    run_until(&mut drv, &mut clock, ms(700), &mut log);
    let pump = on_channel(&log, PUMP as u8);
    assert_eq!(judged(&pump, Source::Rise), [Finding::OpenCircuit]);
    let off = pump.iter().find_map(|k| match k {
        EventKind::Isolated { off_at, .. } => *off_at,
        _ => None,
    });
    assert_eq!(off, Some(start.after(drv.limits()[PUMP].min_on())));
    assert_eq!(
        judged(&on_channel(&log, A as u8), Source::Rise),
        [Finding::Healthy]
    );
    finish(&plant);
}
