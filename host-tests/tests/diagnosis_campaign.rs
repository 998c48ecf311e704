//! Field campaign of the start-up diagnostic pulse, seeded and reproducible, on the simulator's
//! physics (coupled eddy loop, shorted turns as a coupled bridged section, saturation, residual
//! current, converter offset/gain/noise with clipping, sampling-start latency): none of it is
//! the closed form the estimator assumes.
//!
//! Two invented coils (a slow 24 V valve, τ ≈ 1.6 ms, and a fast 12 V relay, τ ≈ 0.25 ms), parts
//! drawn across supply ±10 %, winding −20…85 °C, R ±7 %, L ±15 %, sense ±1 %; each phenomenon
//! alone and all together; healthy coils and faults (faults with all phenomena on). Three modes:
//!
//! - A: the design's ranges only;
//! - B: supply measured (±1 %) and a winding window from a board reading up to ±4 K off (±5 K);
//! - C: a baseline learned at commissioning (4 pulses, at a random temperature and supply, each
//!   judged healthy against B-mode bands first), compared with copper-α correction from the board
//!   reading, supply measured.
//!
//! Two more tests on the same coils, all phenomena on: `sensor_fault_campaign` (a failed
//! current sensor on a healthy coil: stuck, noisy, dropouts, gain; three modes) and
//! `full_rise_resistance` (mode B on a capture of a few τ instead of the probe's window: series
//! resistance +20 % / +50 % and healthy coils).
//!
//! Size: `COILWISE_CAMPAIGN=N` coils per row (default 12, which CI runs in debug); the fit's
//! arithmetic: `COILWISE_FIT_PATH=float` or `counts` (unset: the default, float on the host). The
//! full size:
//! `COILWISE_CAMPAIGN=2000 cargo test --release -p coilwise-host-tests --test diagnosis_campaign
//! -- --nocapture`.

mod campaign;

use std::time::Instant;

use campaign::{
    print_matrix, Channel, CoilSpec, FullRise, Phenomenon, Row, SensorFault, Truth, PHENOMENA,
    RELAY, SENSOR_FAULTS, VALVE,
};
use coilwise_host_tests::Prng;

fn size() -> usize {
    std::env::var("COILWISE_CAMPAIGN")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(12)
}

const FAULTS: [Truth; 8] = [
    Truth::Open,
    Truth::Short,
    Truth::ShortedTurns(0.10),
    Truth::ShortedTurns(0.25),
    Truth::ShortedTurns(0.50),
    Truth::SeriesR(0.20),
    Truth::SeriesR(0.50),
    Truth::SupplyLow,
];

const MODES: [&str; 3] = [
    "A. design ranges only",
    "B. supply and winding temperature known",
    "C. learned baseline, board temperature and supply read",
];

/// The coil declarations every campaign runs, with their printed names: each invented coil with
/// the default (solid-core) declaration, then each declared laminated.
fn declarations() -> [(String, Channel); 4] {
    let laminated = |spec: CoilSpec| {
        (
            format!("{} declared laminated", spec.name),
            Channel::laminated(spec),
        )
    };
    [
        (VALVE.name.to_string(), Channel::new(VALVE)),
        (RELAY.name.to_string(), Channel::new(RELAY)),
        laminated(VALVE),
        laminated(RELAY),
    ]
}

#[test]
fn field_campaign() {
    let n = size();
    let started = Instant::now();
    let mut failures: Vec<String> = Vec::new();
    let mut missed: Vec<String> = Vec::new();
    for (ci, (name, ch)) in declarations().iter().enumerate() {
        let mut rng = Prng::new(0xF1E1_D000 + ci as u64);
        let mut rows: [Vec<(String, Row)>; 3] = Default::default();
        let mut cases: Vec<(Phenomenon, Truth)> =
            PHENOMENA.iter().map(|&p| (p, Truth::Healthy)).collect();
        cases.extend(FAULTS.iter().map(|&t| (Phenomenon::All, t)));
        for &(ph, truth) in &cases {
            let mut r: [Row; 3] = Default::default();
            for _ in 0..n {
                let v = ch.verdicts(ph, truth, &mut rng);
                for m in 0..3 {
                    r[m].add(truth, &v[m]);
                }
            }
            for m in 0..3 {
                rows[m].push((format!("{} / {}", ph.label(), truth.label()), r[m].clone()));
            }
        }
        println!(
            "\n=== {}: probe {:.1} us, {} samples every {} ns ===",
            name,
            ch.probe.duration.value() * 1e6,
            campaign::SAMPLES,
            ch.period_ns
        );
        for m in 0..3 {
            print_matrix(MODES[m], &rows[m]);
        }
        // Targets of the issue, per mode. Those met at full size (docs/diagnosis.md §9) are
        // asserted; a miss is recorded with its number, never asserted away.
        for m in 0..3 {
            let mode = &MODES[m][..1];
            let find = |label: &str| {
                rows[m]
                    .iter()
                    .find(|(l, _)| l == label)
                    .map(|(_, r)| r.clone())
                    .unwrap()
            };
            for ph in PHENOMENA {
                let r = find(&format!("{} / healthy", ph.label()));
                let fa = r.false_alarms();
                let line = format!(
                    "{} {mode} {}: false alarms {fa}/{} ({:.2} %), no verdict {:.2} %",
                    name,
                    ph.label(),
                    r.total,
                    100.0 * r.rate(fa),
                    100.0 * r.rate(r.cannot_tell())
                );
                let met = fa as f64 <= 0.001 * r.total as f64 && r.rate(r.cannot_tell()) <= 0.02;
                // Met at full size for every phenomenon alone and all together, in every mode
                // (docs/diagnosis.md §9): asserted.
                if met {
                    println!("met: {line}");
                } else {
                    failures.push(line);
                }
            }
            let short = find("all together / short");
            let isolated = short.counts[2] + short.counts[3];
            let line = format!(
                "{} {mode} short: {isolated}/{} isolated (short or shorted turns)",
                name, short.total
            );
            if isolated == short.total {
                println!("met: {line}");
            } else {
                failures.push(line);
            }
            let mut target = |t: Truth, goal: f64, assert_it: bool| {
                let r = find(&format!("all together / {}", t.label()));
                let rate = r.rate(r.right);
                let line = format!(
                    "{} {mode} {}: {:.2} % named (goal {:.0} %)",
                    name,
                    t.label(),
                    100.0 * rate,
                    100.0 * goal
                );
                if rate >= goal {
                    println!("met: {line}");
                } else if assert_it {
                    failures.push(line);
                } else {
                    missed.push(line);
                }
            };
            target(Truth::Open, 1.0, true);
            // A dead short is named "short" only when the trace excludes heavy shorted turns
            // (Criteria::turns_floor): reaching full scale one sample late on the fast relay
            // does not, and it is named shorted turns. Asserted: every short is isolated (named
            // short or shorted turns); the naming is a target, printed.
            target(Truth::Short, 1.0, false);
            target(Truth::ShortedTurns(0.25), 0.99, false);
            target(Truth::ShortedTurns(0.50), 0.99, false);
            if m == 1 {
                target(Truth::SeriesR(0.50), 0.99, false);
            }
            if m == 2 {
                target(Truth::SeriesR(0.20), 0.99, false);
                target(Truth::ShortedTurns(0.10), 0.95, false);
            }
            if m > 0 {
                target(Truth::SupplyLow, 0.99, true);
            }
        }
    }
    println!("\nTargets missed (numbers measured, reasons in docs/diagnosis.md):");
    for m in &missed {
        println!("MISSED: {m}");
    }
    println!(
        "{n} coils per row, 4 coil declarations x 15 rows x 5 pulses, in {:.1} s",
        started.elapsed().as_secs_f64()
    );
    assert!(failures.is_empty(), "{failures:#?}");
}

/// Sensor faults on healthy coils, all phenomena on, in every mode and declaration: the trace is
/// one no coil current produces. Asserted: never healthy, never a coil fault (open, short,
/// shorted turns, high R, supply, L high), except "open" for a sensor stuck at 0 (a dead sensor
/// and an open winding give the same all-zero trace; see `Truth::right`), for a sensor stuck
/// mid-scale, stuck at 0 and 40 counts noisy; never a coil fault for every dropout row (a single
/// dropout in the first or last sample can read healthy: measured and printed), and a gain fault
/// is a coil's or supply's signature, not a trace fault (printed); docs/diagnosis.md §9.
#[test]
fn sensor_fault_campaign() {
    let n = size();
    let started = Instant::now();
    let mut failures: Vec<String> = Vec::new();
    let mut missed: Vec<String> = Vec::new();
    for (ci, (name, ch)) in declarations().iter().enumerate() {
        let mut rng = Prng::new(0x5E25_0000 + ci as u64);
        let mut rows: [Vec<(String, Row)>; 3] = Default::default();
        for s in SENSOR_FAULTS {
            let truth = Truth::Sensor(s);
            let mut r: [Row; 3] = Default::default();
            for _ in 0..n {
                let v = ch.verdicts(Phenomenon::All, truth, &mut rng);
                for m in 0..3 {
                    r[m].add(truth, &v[m]);
                }
            }
            for m in 0..3 {
                let healthy = r[m].counts[0];
                let allowed_open = if s == SensorFault::StuckZero {
                    r[m].counts[1]
                } else {
                    0
                };
                let coil = r[m].coil_faults() - allowed_open;
                let line = format!(
                    "{name} {} {}: healthy {healthy}, coil fault {coil} of {}, right {:.2} %",
                    &MODES[m][..1],
                    s.label(),
                    r[m].total,
                    100.0 * r[m].rate(r[m].right)
                );
                match s {
                    _ if healthy == 0 && coil == 0 => println!("met: {line}"),
                    // Never a coil fault: asserted. Healthy on 1–2 of 2 000 coils: a 0 in the
                    // first sample only, which the free-level fit leaves out with the head, or a
                    // full-scale reading in the last sample only, which ends the window like a
                    // converter that saturates there (nothing after it can fall back); the coil
                    // itself is healthy (docs/diagnosis.md §9): printed.
                    SensorFault::Dropouts
                    | SensorFault::DropoutsTop
                    | SensorFault::DropoutsZero
                        if coil == 0 =>
                    {
                        missed.push(line)
                    }
                    // Not a trace fault at all: a gain k gives exactly the trace of the supply
                    // times k, or (supply measured) of a coil with R/k and L/k and the same τ.
                    // No check on the current alone can see it (docs/diagnosis.md §9); printed.
                    SensorFault::Gain(_) => println!("indistinguishable: {line}"),
                    _ => failures.push(line),
                }
                rows[m].push((format!("all together / {}", s.label()), r[m].clone()));
            }
        }
        println!("\n=== {name}: sensor faults ===");
        for m in 0..3 {
            print_matrix(MODES[m], &rows[m]);
        }
    }
    println!("\nSensor targets missed (numbers measured, reasons in docs/diagnosis.md):");
    for m in &missed {
        println!("MISSED: {m}");
    }
    println!(
        "{n} coils per row, 4 coil declarations x {} rows x 5 pulses, in {:.1} s",
        SENSOR_FAULTS.len(),
        started.elapsed().as_secs_f64()
    );
    assert!(failures.is_empty(), "{failures:#?}");
}

/// Resistance faults on a full-rise capture (a few τ, as the driver judges a real pulse's rise),
/// mode B, all phenomena on, default and laminated declarations. The probe cannot name them
/// (docs/diagnosis.md §9); this shows what a longer window does. Asserted: false alarms on the
/// healthy rows ≤ 0.1 % for every phenomenon alone (the target for every verdict on a
/// healthy coil); with all phenomena together it is missed at full size (measured, printed).
/// Detection is printed.
#[test]
fn full_rise_resistance() {
    let n = size();
    let started = Instant::now();
    let mut failures: Vec<String> = Vec::new();
    let mut missed: Vec<String> = Vec::new();
    let mut cases: Vec<(Phenomenon, Truth)> =
        PHENOMENA.iter().map(|&p| (p, Truth::Healthy)).collect();
    cases.push((Phenomenon::All, Truth::SeriesR(0.20)));
    cases.push((Phenomenon::All, Truth::SeriesR(0.50)));
    for (ci, (name, base)) in declarations().into_iter().enumerate() {
        let fr = FullRise::new(base);
        let mut rng = Prng::new(0xF0_11E5_0000 + ci as u64);
        let mut rows: Vec<(String, Row)> = Vec::new();
        for &(ph, truth) in &cases {
            let mut r = Row::default();
            for _ in 0..n {
                r.add(truth, &fr.verdict_b(ph, truth, &mut rng));
            }
            let line = format!(
                "{name} B full rise {} / {}: named {:.2} %, false alarms {}/{}, no verdict {:.2} %",
                ph.label(),
                truth.label(),
                100.0 * r.rate(r.right),
                r.false_alarms(),
                r.total,
                100.0 * r.rate(r.cannot_tell())
            );
            let alarms =
                truth == Truth::Healthy && r.false_alarms() as f64 > 0.001 * r.total as f64;
            if !alarms {
                println!("measured: {line}");
            } else if ph == Phenomenon::All {
                // Measured miss at full size (docs/diagnosis.md §9): with every phenomenon on,
                // a few healthy rises are named shorted turns or sensor; printed, not asserted.
                missed.push(line);
            } else {
                failures.push(line);
            }
            rows.push((format!("{} / {}", ph.label(), truth.label()), r));
        }
        println!(
            "\n=== {name}: full rise, {} samples every {} ns ({:.1} ms, {} tau nominal), full scale {:.3} A ===",
            campaign::SAMPLES,
            fr.ch.period_ns,
            fr.ch.period_ns as f64 * campaign::SAMPLES as f64 * 1e-6,
            campaign::SPAN_TAU,
            fr.ch.spec.full_scale
        );
        print_matrix(MODES[1], &rows);
    }
    println!("\nFull-rise targets missed (numbers measured, reasons in docs/diagnosis.md):");
    for m in &missed {
        println!("MISSED: {m}");
    }
    println!(
        "{n} coils per row, 4 coil declarations x 9 rows x 1 pulse, in {:.1} s",
        started.elapsed().as_secs_f64()
    );
    assert!(failures.is_empty(), "{failures:#?}");
}
