//! The emitted firmware constants compile as `no_std` Rust, use no floating point, and agree
//! with the report's times (rounded up to whole ticks).

mod common;

use common::{run, rustc_check, stderr, stdout};

fn snippet(args: &[&str]) -> String {
    let o = run(args);
    assert!(o.status.success(), "{}", stderr(&o));
    stdout(&o)
}

fn compile(lib: &str) {
    if let Err(e) = rustc_check(lib) {
        panic!("emitted constants do not compile:\n{e}\n--- source ---\n{lib}");
    }
}

const CHECKS: &str = r#"
const _: () = assert!(MIN_ON_TICKS >= PULL_IN_TICKS);
const _: () = assert!(MIN_OFF_TICKS >= RELEASE_TICKS);
const _: () = assert!(PULL_IN_CURRENT_UA > DROP_OUT_CURRENT_UA);
const _: () = assert!(FINAL_CURRENT_MIN_UA <= FINAL_CURRENT_MAX_UA);
// The diagnostic pulse stays below pull-in at the fastest corner, so it is shorter than the
// slowest pull-in.
const _: () = assert!(PROBE_TICKS < PULL_IN_TICKS);
const _: () = {
    let mut i = 0;
    while i < RISE_BANDS.len() {
        assert!(RISE_BANDS[i].earliest_ticks <= RISE_BANDS[i].latest_ticks);
        assert!(RISE_BANDS[i].threshold_ua < PULL_IN_CURRENT_UA);
        i += 1;
    }
};
/// Integer-only use, as firmware would: ticks to wait after a pulse of `on` ticks.
pub fn next_start(now: u32, on: u32) -> u32 {
    now.wrapping_add(if on < MIN_ON_TICKS { MIN_ON_TICKS } else { on })
        .wrapping_add(MIN_OFF_TICKS)
}
"#;

#[test]
fn constants_compile_without_std_or_float() {
    for design in [
        "examples/greenhouse-valve.toml",
        "examples/greenhouse-pump-relay.toml",
    ] {
        let s = snippet(&["constants", design]);
        assert!(!s.contains("f32") && !s.contains("f64"), "float in:\n{s}");
        compile(&format!("#![no_std]\n{s}\n{CHECKS}"));
        let m = snippet(&[
            "constants",
            design,
            "--module",
            "coil",
            "--tick-rate",
            "32768 Hz",
        ]);
        assert!(m.contains("pub const TICK_HZ: u32 = 32_768;"));
        compile(&format!("#![no_std]\n{m}\nuse coil::*;\n{CHECKS}"));
    }
}

/// The healthy bands, when asked for, are the core's own f32 figures: they compile with the rest
/// and read back to exactly the bands `Expected::new` computes for the design (reference: the
/// core itself, through `Expected::figures`; f32 `{:?}` printing round-trips by definition of
/// Rust's shortest representation).
#[test]
fn healthy_bands_read_back_exactly() {
    for design in [
        "examples/greenhouse-valve.toml",
        "examples/greenhouse-pump-relay.toml",
    ] {
        let s = snippet(&["constants", design, "--healthy-bands"]);
        compile(&format!("#![no_std]\n{s}\n{CHECKS}"));
        let spec = coilwise_tool::load(design_path(design).as_str(), &[]).unwrap();
        let a = coilwise_tool::analysis::Analysis::new(&spec).unwrap();
        let f = a.expected.as_ref().unwrap().figures();
        let body = s
            .split("pub const HEALTHY_BANDS: HealthyBands = HealthyBands {")
            .nth(1)
            .and_then(|r| r.split("};").next())
            .expect("HEALTHY_BANDS in the output");
        let numbers: Vec<f32> = body
            .split(|c: char| !(c.is_ascii_digit() || c == '.' || c == '-' || c == 'e'))
            .filter(|w| !w.is_empty() && w.chars().any(|c| c.is_ascii_digit()))
            .map(|w| w.parse().unwrap())
            .collect();
        let want = [
            f.final_current_a.as_slice(),
            &f.tau_s,
            &f.slope_a_per_s,
            &f.loop_ohms,
            &f.inductance_h,
            &f.sensed_drive_v,
            &[f.movement_by_s],
            &[f.pull_in_reading_a],
            &[f.operate_allowance_s],
            &[f.external_ohms],
            &[f.coil_ohms],
            &[f.coil_reference_celsius],
            &[f.coil_alpha_per_kelvin],
            &f.coil_inductance_h,
            &f.coil_must_volts,
        ]
        .concat();
        assert_eq!(numbers, want, "{design}");
        let back = coilwise::diagnosis::Expected::from_figures(&f).unwrap();
        assert_eq!(&back, a.expected.as_ref().unwrap());
    }
}

fn design_path(design: &str) -> String {
    common::root().join(design).display().to_string()
}

#[test]
fn tick_counts_round_the_report_times_up() {
    let json = snippet(&["report", "examples/greenhouse-pump-relay.toml", "--json"]);
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    let hz = v["ticks"]["tick_rate_hz"].as_f64().unwrap();
    let s = snippet(&["constants", "examples/greenhouse-pump-relay.toml"]);
    let get = |name: &str| -> f64 {
        let line = s
            .lines()
            .find(|l| l.starts_with(&format!("pub const {name}:")))
            .unwrap();
        line.rsplit('=')
            .next()
            .unwrap()
            .trim()
            .trim_end_matches(';')
            .replace('_', "")
            .parse()
            .unwrap()
    };
    for (name, seconds) in [
        ("MIN_ON_TICKS", v["min_on_time_s"].as_f64().unwrap()),
        (
            "MIN_OFF_TICKS",
            v["worst"]["min_off_time_s"].as_f64().unwrap(),
        ),
        (
            "PULL_IN_TICKS",
            v["worst"]["pull_in_time_s"].as_f64().unwrap(),
        ),
        (
            "RELEASE_TICKS",
            v["worst"]["release_time_s"].as_f64().unwrap(),
        ),
    ] {
        let ticks = get(name);
        // Never shorter than the time, and less than one tick (plus f32 rounding) longer.
        assert!(ticks / hz >= seconds * (1.0 - 1e-6), "{name}");
        assert!(ticks / hz < seconds + 1.0 / hz + 1e-6, "{name}");
    }
}

#[test]
fn bad_module_name_is_refused() {
    let o = run(&[
        "constants",
        "examples/greenhouse-valve.toml",
        "--module",
        "Not-Valid",
    ]);
    assert_eq!(o.status.code(), Some(1));
    assert!(stderr(&o).starts_with("error[usage]"));
}

/// The example firmware's minimal firmwares (firmware-example/src/minimal/) carry the constants
/// of the example valve exactly as this tool emits them; this keeps that copy current.
#[test]
fn the_minimal_firmwares_copy_is_what_the_tool_emits() {
    let emitted = snippet(&[
        "constants",
        "examples/greenhouse-valve.toml",
        "--healthy-bands",
    ]);
    let path = common::root().join("firmware-example/src/minimal/emitted.rs");
    let copy = std::fs::read_to_string(&path).expect("the minimal firmwares' constants file");
    assert_eq!(
        copy, emitted,
        "regenerate: cargo run -p coilwise-tool -- constants examples/greenhouse-valve.toml > {}",
        "firmware-example/src/minimal/emitted.rs"
    );
}
