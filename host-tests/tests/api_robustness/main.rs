//! Public-API robustness of the core: random calls into every public constructor and computation
//! with inputs that include NaN, ±∞, ±0, subnormals, f32::MAX and random sample buffers.
//!
//! Asserted for every call: no panic; no NaN or ∞ anywhere inside an `Ok` (or inside a verdict,
//! whose estimates are documented finite or `None`); the documented contracts — hold duty
//! 0 < D < 1 with ripple ≥ 0, times and energies ≥ 0, ticks rounded toward safety, and
//! `tick_budget()` refusing exactly what `budget()` refuses (and agreeing with it otherwise).
//!
//! Seeded and replayable: `COILWISE_API_SEED` (default 11) and `COILWISE_API_CALLS` (default
//! 100 000 here; CI runs 10⁷ in release mode). A failure re-runs the failing iteration with
//! every call and its inputs printed, then panics naming seed, iteration and the violation.
//!
//! The one place an ∞ is documented inside an `Ok`: [`Sampling::full_scale`] = ∞ for "no
//! saturation level". Its constructors are checked field by field instead of by the text scan.

use coilwise::diagnosis::{
    detect_movement, fit_rise, judge_actuation, judge_rise, judge_steady, judge_threshold,
    judge_trace, Conditions, Criteria, Expected, FitOptions, Movement, MovementCriteria, Probe,
    Sampling, SupplyReading, ThresholdBand, ThresholdReading,
};
use coilwise::physics::drive::{
    base_current, conduction_loss, recommended_base_resistor, saturation_loss,
};
use coilwise::physics::heating::{coil_dissipation, temperature_by_resistance};
use coilwise::physics::off_time::{min_off_time, OffTimeNeeds};
use coilwise::physics::rc_node::{inrush_peak, slew_rate, slew_time};
use coilwise::physics::repetition::{clamp_average_power, max_repetition_rate, min_period};
use coilwise::schedule::{
    ChannelId, ChannelLimits, EdgeBuffer, EnergyRate, HeatRating, HeatRatings, HoldDuty, HoldPhase,
    HoldPlan, Request, Scheduler, ThermalBucket,
};
use coilwise::*;
use std::collections::BTreeMap;
use std::fmt::Debug;
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::sync::Mutex;

mod build;
mod diagnosis;
mod input;
mod physics;

use build::*;
use diagnosis::*;
use input::*;
use physics::*;

type Family = fn(&mut Gen) -> Result<(), String>;

const FAMILIES: [(&str, Family); 7] = [
    ("time", fam_time),
    ("coil", fam_coil),
    ("circuit", fam_circuit),
    ("parts", fam_parts),
    ("design", fam_design),
    ("diagnosis", fam_diagnosis),
    ("schedule", fam_schedule),
];

fn env_u64(name: &str, default: u64) -> u64 {
    std::env::var(name)
        .ok()
        .and_then(|v| v.trim().parse().ok())
        .unwrap_or(default)
}

#[test]
fn random_calls_into_every_public_api() {
    let seed = env_u64("COILWISE_API_SEED", 11);
    let target = env_u64("COILWISE_API_CALLS", 100_000);
    let mut g = Gen {
        rng: Rng(seed),
        calls: 0,
        verbose: false,
    };
    let started = std::time::Instant::now();
    let mut per_family = [0u64; FAMILIES.len()];
    let mut iteration = 0u64;
    while g.calls < target {
        let state = g.rng;
        let (name, family) = FAMILIES[(iteration % FAMILIES.len() as u64) as usize];
        let before = g.calls;
        let outcome = catch_unwind(AssertUnwindSafe(|| family(&mut g)));
        per_family[(iteration % FAMILIES.len() as u64) as usize] += g.calls - before;
        let failure = match outcome {
            Ok(Ok(())) => None,
            Ok(Err(msg)) => Some(msg),
            Err(_) => Some("panicked (message above)".to_string()),
        };
        if let Some(msg) = failure {
            eprintln!("replaying seed {seed} iteration {iteration} ({name}) with its inputs:");
            let mut replay = Gen {
                rng: state,
                calls: 0,
                verbose: true,
            };
            let _ = catch_unwind(AssertUnwindSafe(|| family(&mut replay)));
            panic!("seed {seed} iteration {iteration} family {name}: {msg}");
        }
        iteration += 1;
    }
    let tally = TALLY.lock().map(|t| t.clone()).unwrap_or_default();
    for (name, [good, bad]) in &tally {
        eprintln!("  {name:<40} ok {good:>9}  err {bad:>9}");
    }
    // The accepted paths are reached, not only the refusals (checked for the main results).
    if target >= 20_000 {
        for name in [
            "DriverDesign::budget",
            "DriverDesign::figures",
            "Circuit::release",
            "Release::energy",
            "Circuit::self_heating",
            "Expected::new",
            "fit_rise(u16)",
            "detect_movement(f32)",
            "Probe::new",
            "min_off_time",
        ] {
            let n = tally.get(name).map_or(0, |t| t[0]);
            assert!(n > 0, "{name} never returned Ok in {target} calls");
        }
    }
    eprintln!(
        "{} calls ({} iterations, seed {seed}) in {:.1} s; per family: {:?}",
        g.calls,
        iteration,
        started.elapsed().as_secs_f64(),
        FAMILIES
            .iter()
            .map(|f| f.0)
            .zip(per_family)
            .collect::<Vec<_>>()
    );
}
