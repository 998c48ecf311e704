//! Fuzz the free-level estimator, its verdict, the learned baseline and its byte record: any
//! sampling (with a converter floor), any samples, any learning pulses, any record bytes.
//! Invariants: no panic; every figure of a fit and of its shape finite; a decoded record
//! re-encodes to the same bytes; a verdict's estimates finite. Both arithmetics of the
//! refinement (`FitPath::Float` and `FitPath::Counts`, the integer pass on the `u16` counts):
//! each keeps those invariants, and a trace fault found by the checks (anything but
//! `NoConvergence`, which a window at a decision edge may reach on one path and not the other)
//! is the same fault on both.
#![no_main]

use coilwise::diagnosis::{
    fit_response, judge_baseline, judge_response, Baseline, Conditions, Criteria, Expected,
    FitOptions, FitPath, Learning, ResponseFit, Sampling, TraceFault,
};
use coilwise::{Celsius, Seconds};
use libfuzzer_sys::fuzz_target;

mod common;
use common::{check, design, Bytes};

fn check_fit(f: &ResponseFit) {
    let r = &f.rise;
    let q = r.quality;
    let s = f.shape;
    for x in [
        r.slope,
        r.tau.value(),
        r.final_current.value(),
        q.noise_ratio,
        q.rel_sd_slope,
        q.rel_sd_tau,
        q.rel_sd_final,
        q.correlation,
        q.rise_covered,
        q.rms_residual.value(),
        q.peak.value(),
        s.initial_current.value(),
        s.head_deficit.value(),
        s.head_sigmas,
        s.durbin_watson.unwrap_or(0.0),
    ] {
        assert!(x.is_finite(), "non-finite figure in {f:?}");
    }
    assert!(r.tau.value() > 0.0 && r.final_current.value() > 0.0, "{f:?}");
    assert!((-1.0..=1.0).contains(&q.correlation));
    // The window kept has at least the fit's minimum and at least as many samples as were left out.
    assert!(q.samples >= 6 && s.skipped <= q.samples, "{f:?}");
}

fuzz_target!(|data: &[u8]| {
    let mut b = Bytes(data);
    let mode = b.u8();
    // A record first: decode any 40 bytes (or fewer), never a panic; a good one round-trips.
    let mut rec = [0u8; 40];
    for x in rec.iter_mut() {
        *x = b.u8();
    }
    let len = (mode as usize) % 41;
    if let Ok(base) = Baseline::decode(&rec[..len]) {
        assert_eq!(base.encode()[..], rec[..], "decode/encode not inverse");
    }
    let Ok(mut sampling) = Sampling::new(Seconds::new(b.mostly(1e-5)), b.mostly(1e-4)) else {
        return;
    };
    if mode & 1 != 0 {
        if let Ok(s) = sampling.with_floor(b.mostly(4.0)) {
            sampling = s;
        }
    }
    if mode & 2 != 0 {
        if let Ok(s) = sampling.with_noise(b.mostly(2.0)) {
            sampling = s;
        }
    }
    if mode & 4 != 0 {
        if let Ok(s) = sampling.with_first_sample(Seconds::new(b.mostly(1e-5))) {
            sampling = s;
        }
    }
    let options = FitOptions::default().with_refinements(b.u8() % 8);
    let d = design();
    let expected = Expected::new(&d, &Conditions::default()).unwrap();
    let criteria = Criteria::default();
    let board = (mode & 8 != 0).then(|| Celsius::new(b.mostly(40.0)));
    let samples: Vec<u16> = b
        .0
        .chunks_exact(2)
        .map(|c| u16::from_le_bytes([c[0], c[1]]))
        .collect();
    let float = fit_response(&samples, &sampling, &options.with_path(FitPath::Float));
    let counts = fit_response(&samples, &sampling, &options.with_path(FitPath::Counts));
    match (&float, &counts) {
        (Ok(a), Ok(b)) => {
            check_fit(a);
            check_fit(b);
            check(&judge_response(b, &expected, &criteria));
        }
        (Ok(a), Err(e)) | (Err(e), Ok(a)) => {
            check_fit(a);
            assert_eq!(*e, TraceFault::NoConvergence, "{float:?} / {counts:?}");
        }
        // The checks run before either refinement: a fault they find is the same fault on both.
        (Err(x), Err(y)) => assert_eq!(
            core::mem::discriminant(x),
            core::mem::discriminant(y),
            "{x:?} / {y:?}"
        ),
    }
    let Ok(fit) = fit_response(&samples, &sampling, &options) else {
        return;
    };
    check_fit(&fit);
    check(&judge_response(&fit, &expected, &criteria));
    // Learn from this pulse (and a scaled copy of it), then judge it against what was learned.
    let mut learn = Learning::new();
    learn.add(&fit, &expected, board, &criteria);
    learn.add(&fit, &expected, board, &criteria);
    if let Ok(base) = learn.finish(2) {
        assert_eq!(Baseline::decode(&base.encode()), Ok(base));
        check(&judge_baseline(&fit, &base, &expected, board, &criteria));
    }
});
