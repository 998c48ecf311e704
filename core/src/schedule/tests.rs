//! Scheduler behaviour, one rule per test. The randomised replay against an independent checker
//! lives in `host-tests/tests/schedule_props.rs`.

extern crate std;
use std::vec::Vec;

use super::*;
use crate::time::{Instant, Ticks};

type Edges = heapless::Vec<PinEvent, 16>;

fn valve() -> ChannelLimits {
    // Invented demo valve in ticks of 1 ms: 40 ms pull-in, 60 ms off-time, 25 ms inrush.
    ChannelLimits::new(Ticks(40), Ticks(60))
        .unwrap()
        .with_inrush_window(Ticks(25))
        .unwrap()
}

fn sched<const C: usize>(cap: u8, now: u32) -> Scheduler<C, 4> {
    Scheduler::new([valve(); C], cap, Instant(now)).unwrap()
}

/// Polls at every wake until `until` (inclusive), collecting every edge.
fn run<const C: usize, const Q: usize>(
    s: &mut Scheduler<C, Q>,
    from: Instant,
    until: Instant,
) -> Vec<PinEvent> {
    let mut all = Vec::new();
    let mut now = from;
    loop {
        let mut out = Edges::new();
        let wake = s.poll(now, &mut out).unwrap();
        all.extend(out.iter().copied());
        if wake.cause == WakeCause::OutputFull {
            continue;
        }
        if wake.at.since(until) > 0 || wake.cause == WakeCause::KeepAlive {
            return all;
        }
        now = wake.at;
    }
}

fn ev(ch: u8, at: u32, action: PinAction) -> PinEvent {
    PinEvent {
        channel: ChannelId(ch),
        at: Instant(at),
        action,
    }
}

#[test]
fn one_pulse_gives_on_then_off_at_the_asked_ticks() {
    let mut s = sched::<1>(1, 100);
    let a = s
        .submit(
            Instant(100),
            Request::at(ChannelId(0), Ticks(50), Instant(120)),
        )
        .unwrap();
    assert_eq!(
        a,
        Admission::Accepted {
            start: Instant(120)
        }
    );
    let mut out = Edges::new();
    let w = s.poll(Instant(110), &mut out).unwrap();
    assert!(out.is_empty());
    assert_eq!(
        w,
        Wake {
            at: Instant(120),
            cause: WakeCause::Event
        }
    );
    let edges = run(&mut s, Instant(120), Instant(1000));
    assert_eq!(
        edges,
        [ev(0, 120, PinAction::On), ev(0, 170, PinAction::Off)]
    );
    assert_eq!(s.pending(), 0);
    assert_eq!(s.next_wake().cause, WakeCause::KeepAlive);
}

#[test]
fn off_time_counts_from_the_off_edge() {
    let mut s = sched::<1>(1, 0);
    s.submit(Instant(0), Request::now(ChannelId(0), Ticks(50)))
        .unwrap();
    // Asked while the first pulse is on: behind it, plus 60 ticks off.
    let b = s
        .submit(
            Instant(0),
            Request::at(ChannelId(0), Ticks(40), Instant(10)),
        )
        .unwrap();
    assert_eq!(
        b,
        Admission::Delayed {
            reason: DelayReason::ChannelBusy,
            until: Instant(110)
        }
    );
    // Asked during the off-time of the second.
    let c = s
        .submit(
            Instant(0),
            Request::at(ChannelId(0), Ticks(40), Instant(160)),
        )
        .unwrap();
    assert_eq!(
        c,
        Admission::Delayed {
            reason: DelayReason::OffTime,
            until: Instant(210)
        }
    );
    let edges = run(&mut s, Instant(0), Instant(1000));
    let times: Vec<u32> = edges.iter().map(|e| e.at.0).collect();
    assert_eq!(times, [0, 50, 110, 150, 210, 250]);
}

#[test]
fn simultaneous_turn_ons_are_staggered_under_the_inrush_cap() {
    let mut s = sched::<3>(1, 0);
    let starts: Vec<_> = (0..3)
        .map(|c| {
            s.submit(Instant(0), Request::now(ChannelId(c), Ticks(100)))
                .unwrap()
        })
        .collect();
    assert_eq!(
        starts,
        [
            Admission::Accepted { start: Instant(0) },
            Admission::Delayed {
                reason: DelayReason::Inrush,
                until: Instant(25)
            },
            Admission::Delayed {
                reason: DelayReason::Inrush,
                until: Instant(50)
            },
        ]
    );
    let mut two = sched::<3>(2, 0);
    let s2: Vec<u32> = (0..3)
        .map(|c| {
            two.submit(Instant(0), Request::now(ChannelId(c), Ticks(100)))
                .unwrap()
                .start()
                .0
        })
        .collect();
    assert_eq!(s2, [0, 0, 25]);
}

#[test]
fn a_stagger_fills_the_first_gap_that_is_long_enough() {
    let mut s = sched::<3>(1, 0);
    s.submit(Instant(0), Request::at(ChannelId(0), Ticks(40), Instant(0)))
        .unwrap();
    s.submit(
        Instant(0),
        Request::at(ChannelId(1), Ticks(40), Instant(40)),
    )
    .unwrap();
    // Gap [25, 40) is 15 ticks, too short for a 25-tick window; [65, ∞) fits.
    let a = s
        .submit(
            Instant(0),
            Request::at(ChannelId(2), Ticks(40), Instant(10)),
        )
        .unwrap();
    assert_eq!(a.start(), Instant(65));
}

#[test]
fn peak_and_hold_emits_the_hold_edge_after_the_pull_in_phase() {
    let hold = HoldPhase::new(Ticks(45), HoldDuty(20_000))
        .unwrap()
        .with_ceiling(HoldDuty(30_000))
        .unwrap();
    let l = valve().with_hold(hold).unwrap();
    let mut s: Scheduler<1, 4> = Scheduler::new([l], 1, Instant(0)).unwrap();
    s.submit(Instant(0), Request::now(ChannelId(0), Ticks(200)))
        .unwrap();
    // Not longer than the pull-in phase: no hold edge.
    s.submit(Instant(0), Request::now(ChannelId(0), Ticks(45)))
        .unwrap();
    s.submit(Instant(0), Request::now(ChannelId(0), Ticks(100)))
        .unwrap();
    let mut edges = run(&mut s, Instant(0), Instant(300));
    assert_eq!(
        edges,
        [
            ev(0, 0, PinAction::On),
            ev(
                0,
                45,
                PinAction::HoldStart {
                    duty: HoldDuty(20_000)
                }
            ),
            ev(0, 200, PinAction::Off),
            ev(0, 260, PinAction::On),
        ]
    );
    // The supply rose: the firmware lowers the duty for later hold edges.
    s.set_hold_duty(ChannelId(0), HoldDuty(15_000)).unwrap();
    assert_eq!(
        s.set_hold_duty(ChannelId(0), HoldDuty(30_001)),
        Err(ScheduleError::DutyAboveCeiling)
    );
    edges = run(&mut s, Instant(300), Instant(1000));
    assert_eq!(
        edges,
        [
            ev(0, 305, PinAction::Off),
            ev(0, 365, PinAction::On),
            ev(
                0,
                410,
                PinAction::HoldStart {
                    duty: HoldDuty(15_000)
                }
            ),
            ev(0, 465, PinAction::Off),
        ]
    );
    let mut plain = sched::<1>(1, 0);
    assert_eq!(
        plain.set_hold_duty(ChannelId(0), HoldDuty(1)),
        Err(ScheduleError::NoHoldPhase)
    );
    assert_eq!(
        plain.set_hold_duty(ChannelId(3), HoldDuty(1)),
        Err(ScheduleError::UnknownChannel)
    );
}

#[test]
fn stop_never_cuts_below_the_minimum_on_time() {
    let mut s = sched::<1>(1, 0);
    s.submit(Instant(0), Request::now(ChannelId(0), Ticks(500)))
        .unwrap();
    s.submit(Instant(0), Request::now(ChannelId(0), Ticks(500)))
        .unwrap();
    run(&mut s, Instant(0), Instant(10));
    let st = s.stop(Instant(10), ChannelId(0)).unwrap();
    assert_eq!(
        st,
        Stopping::Ending {
            off_at: Instant(40),
            deferred: Some(DelayReason::MinOnTime),
            cancelled: 1
        }
    );
    // The next pulse counts its off-time from the actual off edge at 40.
    let next = s
        .submit(Instant(10), Request::now(ChannelId(0), Ticks(40)))
        .unwrap();
    assert_eq!(next.start(), Instant(100));
    let edges = run(&mut s, Instant(10), Instant(1000));
    assert_eq!(
        edges,
        [
            ev(0, 40, PinAction::Off),
            ev(0, 100, PinAction::On),
            ev(0, 140, PinAction::Off)
        ]
    );
    // Past the minimum on-time: off at once. Nothing running: only the queue is dropped.
    s.submit(Instant(1000), Request::now(ChannelId(0), Ticks(500)))
        .unwrap();
    run(&mut s, Instant(1000), Instant(1000));
    assert_eq!(
        s.stop(Instant(1100), ChannelId(0)).unwrap(),
        Stopping::Ending {
            off_at: Instant(1100),
            deferred: None,
            cancelled: 0
        }
    );
    run(&mut s, Instant(1100), Instant(1100));
    s.submit(Instant(1100), Request::now(ChannelId(0), Ticks(50)))
        .unwrap();
    assert_eq!(
        s.stop(Instant(1100), ChannelId(0)).unwrap(),
        Stopping::NotRunning { cancelled: 1 }
    );
    assert_eq!(s.pending(), 0);
    assert_eq!(
        s.stop(Instant(1100), ChannelId(1)),
        Err(ScheduleError::UnknownChannel)
    );
}

#[test]
fn stop_in_the_pull_in_phase_drops_the_hold_edge() {
    let l = valve()
        .with_hold(HoldPhase::new(Ticks(50), HoldDuty(20_000)).unwrap())
        .unwrap();
    let mut s: Scheduler<1, 4> = Scheduler::new([l], 1, Instant(0)).unwrap();
    s.submit(Instant(0), Request::now(ChannelId(0), Ticks(300)))
        .unwrap();
    run(&mut s, Instant(0), Instant(0));
    s.stop(Instant(42), ChannelId(0)).unwrap();
    let edges = run(&mut s, Instant(42), Instant(1000));
    assert_eq!(edges, [ev(0, 42, PinAction::Off)]);
}

/// Every refusal leaves the scheduler exactly as it was, and what was queued still happens.
#[test]
fn every_refusal_leaves_the_state_unchanged() {
    let limits = valve()
        .with_max_on(Ticks(1000))
        .unwrap()
        .with_clamp_heat(
            ThermalBucket::new(10_000, Ticks(5_000))
                .unwrap()
                .with_per_pulse(100)
                .with_rates(EnergyRate::from_uj_per_tick(4), EnergyRate::ZERO),
        )
        .unwrap();
    let mut s: Scheduler<2, 3> = Scheduler::new([limits; 2], 1, Instant(u32::MAX - 20)).unwrap();
    let now = Instant(u32::MAX - 20);
    s.submit(now, Request::now(ChannelId(0), Ticks(100)))
        .unwrap();
    s.submit(now, Request::now(ChannelId(1), Ticks(100)))
        .unwrap();
    let snapshot = s.clone();
    let ch = ChannelId(0);
    let cases: [(Instant, Request, Refusal); 10] = [
        (
            now,
            Request::now(ChannelId(2), Ticks(100)),
            Refusal::UnknownChannel,
        ),
        (now, Request::now(ch, Ticks(0)), Refusal::ZeroDuration),
        (
            now,
            Request::now(ch, Ticks(39)),
            Refusal::BelowMinOn { min_on: Ticks(40) },
        ),
        (
            now,
            Request::now(ch, Ticks(1001)),
            Refusal::AboveMaxOn {
                max_on: Ticks(1000),
            },
        ),
        (
            now,
            Request::at(ch, Ticks(100), Instant(now.0 - 1)),
            Refusal::StartPassed,
        ),
        (
            now,
            Request::at(ch, Ticks(100), now.after(Ticks((1 << 31) - 50))),
            Refusal::BeyondHorizon,
        ),
        (
            Instant(now.0 - 1),
            Request::now(ch, Ticks(100)),
            Refusal::TimeWentBackwards,
        ),
        (
            now,
            Request::now(ch, Ticks(100)).within(Ticks(10)),
            Refusal::TooLate {
                earliest: now.after(Ticks(160)),
                reason: DelayReason::ChannelBusy,
            },
        ),
        (
            now,
            // Channel 1's first pulse was staggered to +25 by the inrush cap: busy until +125.
            Request::now(ChannelId(1), Ticks(100)).within(Ticks(0)),
            Refusal::TooLate {
                earliest: now.after(Ticks(185)),
                reason: DelayReason::ChannelBusy,
            },
        ),
        (
            now,
            Request::at(ch, Ticks(100), now.after(Ticks(1 << 31))),
            Refusal::StartPassed,
        ),
    ];
    for (at, req, want) in cases {
        assert_eq!(s.submit(at, req), Err(want), "{req:?}");
        assert_eq!(s, snapshot, "{req:?} changed the state");
    }
    // Queue full (3 slots).
    s.submit(now, Request::now(ChannelId(1), Ticks(100)))
        .unwrap();
    let full = s.clone();
    assert_eq!(
        s.submit(now, Request::now(ChannelId(0), Ticks(100))),
        Err(Refusal::QueueFull)
    );
    assert_eq!(s, full);
    // Poll and stop with time going backwards.
    let mut out = Edges::new();
    assert_eq!(
        s.poll(Instant(now.0 - 1), &mut out),
        Err(ScheduleError::TimeWentBackwards)
    );
    assert_eq!(
        s.stop(Instant(now.0 - 1), ChannelId(0)),
        Err(ScheduleError::TimeWentBackwards)
    );
    assert_eq!(s, full);
    assert!(out.is_empty());
    // Nothing lost: all three admitted pulses come out, across the timer wrap.
    let edges = run(&mut s, now, now.after(Ticks(10_000)));
    let ons = edges.iter().filter(|e| e.action == PinAction::On).count();
    let offs = edges.iter().filter(|e| e.action == PinAction::Off).count();
    assert_eq!((ons, offs), (3, 3));
    assert!(
        edges.iter().any(|e| e.at.0 < 1000),
        "no edge after the wrap"
    );
}

#[test]
fn a_pulse_too_big_for_its_bucket_is_refused() {
    // 1000 µJ bucket, 20 µJ per tick: 40 ticks pour 800 µJ (fits), 60 ticks pour 1200 µJ.
    let b = ThermalBucket::new(1_000, Ticks(100_000))
        .unwrap()
        .with_rates(EnergyRate::from_uj_per_tick(20), EnergyRate::ZERO);
    let l = valve().with_coil_heat(b).unwrap();
    let mut s: Scheduler<1, 4> = Scheduler::new([l], 1, Instant(0)).unwrap();
    let snap = s.clone();
    assert_eq!(
        s.submit(Instant(0), Request::now(ChannelId(0), Ticks(60))),
        Err(Refusal::ThermalBudget)
    );
    assert_eq!(s, snap);
    assert!(s
        .submit(Instant(0), Request::now(ChannelId(0), Ticks(40)))
        .is_ok());
}

#[test]
fn output_full_keeps_the_rest_for_the_next_poll() {
    let mut s = sched::<3>(3, 0);
    for c in 0..3 {
        s.submit(Instant(0), Request::now(ChannelId(c), Ticks(40)))
            .unwrap();
    }
    let mut small: heapless::Vec<PinEvent, 2> = heapless::Vec::new();
    let w = s.poll(Instant(0), &mut small).unwrap();
    assert_eq!(w.cause, WakeCause::OutputFull);
    assert_eq!(w.at, Instant(0));
    assert_eq!(small.len(), 2);
    small.clear();
    let w = s.poll(Instant(0), &mut small).unwrap();
    assert_eq!(small.len(), 1);
    assert_eq!(small[0].channel, ChannelId(2));
    assert_eq!(w.at, Instant(40));
}

#[test]
fn clamp_heat_limits_the_repetition_rate_to_its_rating() {
    // A clamp rated P = 0.1 W with τ = 2 s, taking E = 2 mJ per pulse, ticks of 1 ms. Fact of the
    // trade (common practice, no source): the average clamp power E·f must stay at or below the
    // rating, so over a long burst f ≤ P/E = 50 Hz, i.e. a period of at least 20 ticks. The
    // first-order bucket allows a burst at first and settles to a period of τ·ln(C/(C−E)) ≥ E/P.
    let rate = crate::time::TickRate::new(1000).unwrap();
    let b = ThermalBucket::from_rating(
        crate::units::Watts::new(0.1),
        crate::units::Seconds::new(2.0),
        rate,
    )
    .unwrap()
    .with_per_pulse(2_000);
    let l = ChannelLimits::new(Ticks(5), Ticks(5))
        .unwrap()
        .with_clamp_heat(b)
        .unwrap();
    let mut s: Scheduler<1, 4> = Scheduler::new([l], 1, Instant(0)).unwrap();
    let mut now = Instant(0);
    let mut starts = Vec::new();
    let mut thermal_delays = 0;
    while starts.len() < 3000 {
        match s.submit(now, Request::now(ChannelId(0), Ticks(5))) {
            Ok(a) => {
                if let Admission::Delayed {
                    reason: DelayReason::Thermal,
                    ..
                } = a
                {
                    thermal_delays += 1;
                }
                starts.push(a.start().0 as u64);
            }
            Err(Refusal::QueueFull) => {
                now = s.next_wake().at;
                let mut out = Edges::new();
                s.poll(now, &mut out).unwrap();
            }
            Err(e) => panic!("{e}"),
        }
    }
    assert!(thermal_delays > 2000);
    // The burst: 100 pulses' worth of capacity (0.2 J / 2 mJ) go out at the off-time pace.
    assert!(starts[60] - starts[0] == 600);
    // Steady state over the last 1000 pulses: at or below the rated rate, and within 1 % of the
    // exact first-order model's period τ·ln(C/(C−E)) = 2000·ln(200/198) ≈ 20.10 ticks.
    let span = (starts[2999] - starts[1999]) as f64 / 1000.0;
    let exact = 2000.0 * (200.0f64 / 198.0).ln();
    assert!(span >= 20.0, "period {span} ticks is above the rated rate");
    assert!(
        span >= exact * 0.999,
        "period {span} ticks beats the exact model"
    );
    assert!(span <= exact * 1.01, "period {span} ticks: too pessimistic");
}

#[test]
fn coil_heat_lets_an_economised_hold_run_long() {
    // Winding rated 2 W continuous, τ = 60 s; full drive pours 6 W, the hold phase 1.5 W.
    // Common practice, no source: an economiser exists because full drive is not rated for
    // continuous duty while the held current is. A pulse holding for 10 τ must be admitted, and
    // the same length at full drive must not.
    let rate = crate::time::TickRate::new(1000).unwrap();
    let full = EnergyRate::from_watts(crate::units::Watts::new(6.0), rate).unwrap();
    let held = EnergyRate::from_watts(crate::units::Watts::new(1.5), rate).unwrap();
    let b = ThermalBucket::from_rating(
        crate::units::Watts::new(2.0),
        crate::units::Seconds::new(60.0),
        rate,
    )
    .unwrap();
    let with_hold = valve()
        .with_hold(HoldPhase::new(Ticks(50), HoldDuty(16_384)).unwrap())
        .unwrap()
        .with_coil_heat(b.with_rates(full, held))
        .unwrap();
    let without = valve().with_coil_heat(b.with_rates(full, full)).unwrap();
    let mut s: Scheduler<2, 4> = Scheduler::new([with_hold, without], 2, Instant(0)).unwrap();
    assert!(s
        .submit(Instant(0), Request::now(ChannelId(0), Ticks(600_000)))
        .is_ok());
    assert_eq!(
        s.submit(Instant(0), Request::now(ChannelId(1), Ticks(600_000))),
        Err(Refusal::ThermalBudget)
    );
    // Full drive for 19 s (114 J of the 120 J bucket) fits once…
    assert!(s
        .submit(Instant(0), Request::now(ChannelId(1), Ticks(19_000)))
        .is_ok());
    // …and the next one waits for the winding to cool.
    let again = s
        .submit(Instant(0), Request::now(ChannelId(1), Ticks(19_000)))
        .unwrap();
    assert!(matches!(
        again,
        Admission::Delayed {
            reason: DelayReason::Thermal,
            ..
        }
    ));
    assert!(s.heat(ChannelId(1)).unwrap()[1] <= 120_000_000);
}

#[test]
fn limits_from_a_design_round_toward_safety() {
    use crate::physics::circuit::tests::valve;
    use crate::physics::circuit::{SupplyRange, TemperatureRange};
    use crate::physics::clamp::Clamp;
    use crate::units::{Celsius, Seconds, Volts, Watts};
    // The invented greenhouse valve of the circuit tests (180 Ω at 20 °C, 0.30 H / 0.45 H,
    // must-operate 16.8 V) with a zener clamp, 24 V ±10 %, winding −25…70 °C, ticks of 10 µs.
    let circuit = valve(Clamp::diode_zener(Volts::new(0.8), Volts::new(30.0)).unwrap());
    let rate = crate::time::TickRate::new(100_000).unwrap();
    let mut design = DriverDesignAlias::new(
        circuit,
        SupplyRange::with_tolerance(Volts::new(24.0), 0.1).unwrap(),
        TemperatureRange::new(Celsius::new(-25.0), Celsius::new(70.0)).unwrap(),
        rate,
    );
    design.operate_allowance = Seconds::from_millis(5.0);
    let heat = HeatRatings {
        clamp: Some(HeatRating {
            power: Watts::new(0.5),
            time_constant: Seconds::new(10.0),
        }),
        coil: Some(HeatRating {
            power: Watts::new(3.0),
            time_constant: Seconds::new(120.0),
        }),
    };
    let plan = HoldPlan {
        current: crate::units::Amps::from_milli(60.0),
        frequency: crate::units::Hertz::new(2_000.0),
    };
    let l = ChannelLimits::from_design(&design, &heat, Some(plan)).unwrap();
    // Reference: the RL rise from rest, i(t) = I∞(1 − e^(−t/τ)), so t_pull = τ·ln(I∞/(I∞ − I_p))
    // (textbook first-order circuit, from memory), worked in f64 at the hot, low-supply corner:
    // R = 180·(1 + 0.00393·50) + 0.5 + 0.4 + 0.1 Ω, V = 21.6 V, I_p = 16.8 V / 180 Ω.
    let r: f64 = 180.0 * (1.0 + 0.003_93 * 50.0) + 1.0;
    let i_inf = 21.6 / r;
    let i_p = 16.8 / 180.0;
    let t_pull = 0.30 / r * (i_inf / (i_inf - i_p)).ln();
    let min_on_s = l.min_on().0 as f64 / 100_000.0;
    assert!(min_on_s >= t_pull + 0.005, "{min_on_s} < {t_pull} + 5 ms");
    assert!(min_on_s < t_pull + 0.005 + 2.0e-5);
    assert!(l.inrush_window().0 as f64 / 1.0e5 >= t_pull);
    assert_eq!(l.hold().unwrap().after(), l.min_on());
    // Hold duty: the average voltage across the coil over a PWM period equals the resistive drop
    // (volt-second balance, textbook, from memory): D·V − (1 − D)·V_clamp ≈ I_h·R, so at the hot,
    // low-supply corner D ≈ (I_h·R + V_c)/(V + V_c). Rounded up, the ceiling must cover it.
    let d_ref = (0.060 * r + 30.0) / (21.6 + 30.0);
    let ceiling = l.hold().unwrap().ceiling().fraction() as f64;
    assert!(
        ceiling >= d_ref * 0.995 && ceiling < d_ref * 1.02,
        "{ceiling} vs {d_ref}"
    );
    // Clamp bucket: capacity P·τ = 5 J (rounded down), τ in ticks rounded up.
    let c = l.clamp_heat().unwrap();
    assert!(c.capacity_uj() <= 5_000_000 && c.capacity_uj() > 4_999_000);
    assert!(c.time_constant().0 >= 1_000_000);
    // Clamp energy per pulse ≥ ½·L·I₀² minus the winding's share; here just: positive and at most
    // the stored energy at the coldest, highest-supply corner (I₀ = 26.4 V / R_cold).
    let r_cold: f64 = 180.0 * (1.0 - 0.003_93 * 45.0) + 1.0;
    let stored = 0.5 * 0.45 * (26.4 / r_cold) * (26.4 / r_cold) * 1.0e6;
    assert!(c.per_pulse_uj() > 0 && (c.per_pulse_uj() as f64) <= stored + 1.0);
    // Winding bucket: full-drive rate ≥ V·I at that corner, per 10 µs tick, in 1/65536 µJ.
    let w = l.coil_heat().unwrap();
    let p_max = 26.4 * 26.4 / r_cold;
    assert!(w.on_rate().0 as f64 >= p_max * 10.0 * 65_536.0 * 0.999_99);
    assert!(w.hold_rate() < w.on_rate());
}

use crate::design::DriverDesign as DriverDesignAlias;

#[test]
fn resync_recovers_after_calls_too_far_apart() {
    let mut s = sched::<1>(1, 0);
    s.submit(Instant(0), Request::now(ChannelId(0), Ticks(50)))
        .unwrap();
    run(&mut s, Instant(0), Instant(0));
    let late = Instant(3_000_000_000);
    let mut out = Edges::new();
    assert_eq!(
        s.poll(late, &mut out),
        Err(ScheduleError::TimeWentBackwards)
    );
    s.resync(late);
    // No time is taken to have passed: the pulse in flight still has its 50 ticks to run.
    let w = s.poll(late, &mut out).unwrap();
    assert!(out.is_empty());
    assert_eq!(w.at, late.after(Ticks(50)));
}
