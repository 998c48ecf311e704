//! End-to-end tests of the `coilwise` binary: success paths, every error class, exit codes, and
//! that nothing is written half-way.

mod common;

use common::{edit, example, line_of, run, stderr, stdout};
use std::path::Path;

const VALVE: &str = "examples/greenhouse-valve.toml";
const RELAY: &str = "examples/greenhouse-pump-relay.toml";

#[test]
fn report_prints_every_section_for_both_examples() {
    for design in [VALVE, RELAY] {
        let o = run(&["report", design]);
        assert!(o.status.success(), "{}", stderr(&o));
        let text = stdout(&o);
        for heading in [
            "OPERATING POINTS",
            "TIMING, ENERGY AND STRESS",
            "FIRMWARE BUDGET",
            "CHECKS",
            "DIAGNOSIS: WHAT A HEALTHY COIL SHOWS",
            "time to threshold",
            "diagnostic pulse",
            "CLAMP COMPARISON",
            "CAUTIONS",
            "RESULT:",
        ] {
            assert!(text.contains(heading), "{design}: no {heading}");
        }
        assert!(text.contains("datasheet"), "cautions defer to datasheets");
        assert!(text.contains("local electrical codes"));
        assert!(text.contains("licensed practice"));
        assert!(stderr(&o).is_empty());
    }
}

#[test]
fn report_has_a_unit_on_every_number_in_the_figures_table() {
    let text = stdout(&run(&["report", VALVE]));
    let start = text.find("TIMING, ENERGY AND STRESS").unwrap();
    let end = text.find("FIRMWARE BUDGET").unwrap();
    let units = ["A", "s", "V", "J", "W", "Hz", "%"];
    for line in text[start..end].lines().skip(3) {
        let cols: Vec<&str> = line.split("  ").filter(|c| !c.trim().is_empty()).collect();
        // Columns 1 and 2 hold the nominal and worst values.
        for cell in cols.iter().skip(1).take(2) {
            let cell = cell.trim();
            if cell == "-" {
                continue;
            }
            let unit = cell.rsplit(' ').next().unwrap();
            assert!(
                units.iter().any(|u| unit.ends_with(u)),
                "no unit in `{cell}` of `{line}`"
            );
        }
    }
}

#[test]
fn json_is_valid_and_carries_the_required_keys() {
    let o = run(&["report", VALVE, "--json"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let v: serde_json::Value = serde_json::from_str(&stdout(&o)).unwrap();
    for key in [
        "final_current_a",
        "tau_on_s",
        "pull_in_time_s",
        "release_time_s",
        "time_to_zero_s",
        "min_off_time_s",
        "stored_energy_j",
        "clamp_energy_j",
        "winding_energy_j",
        "peak_switch_voltage_v",
        "clamp_power_w",
        "max_repetition_hz",
    ] {
        assert!(v[key].is_number(), "nominal {key}");
        assert!(v["worst"][key].is_number(), "worst {key}");
    }
    // The worst corner is worse than nominal where it should be.
    let n = |k: &str| v[k].as_f64().unwrap();
    let w = |k: &str| v["worst"][k].as_f64().unwrap();
    assert!(w("pull_in_time_s") > n("pull_in_time_s"));
    assert!(w("release_time_s") > n("release_time_s"));
    assert!(w("stored_energy_j") > n("stored_energy_j"));
    assert!(w("peak_switch_voltage_v") > n("peak_switch_voltage_v"));
    assert!(w("max_repetition_hz") < n("max_repetition_hz"));
}

#[test]
fn compare_plot_constants_and_keys_succeed() {
    let dir = tempfile::tempdir().unwrap();
    let o = run(&["compare", VALVE]);
    assert!(o.status.success());
    assert!(stdout(&o).contains("zener 18.00 V + diode (fitted)"));
    let o = run(&["compare", RELAY, "--json"]);
    let doc: serde_json::Value = serde_json::from_str(&stdout(&o)).unwrap();
    assert!(doc["clamp_comparison"].as_array().unwrap().len() >= 5);

    let svg = dir.path().join("cycle.svg");
    let o = run(&[
        "plot",
        VALVE,
        "-o",
        svg.to_str().unwrap(),
        "--corner",
        "release",
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(std::fs::read_to_string(&svg).unwrap().starts_with("<svg"));

    let rs = dir.path().join("valve.rs");
    let o = run(&[
        "constants",
        VALVE,
        "-o",
        rs.to_str().unwrap(),
        "--module",
        "zone_valve",
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(std::fs::read_to_string(&rs)
        .unwrap()
        .contains("pub mod zone_valve"));

    let o = run(&["keys"]);
    assert!(stdout(&o).contains("coil.must_operate"));
    // No temporary files are left behind.
    let names: Vec<String> = std::fs::read_dir(dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    assert_eq!(names.len(), 2, "{names:?}");
}

#[test]
fn every_clamp_kind_reports() {
    let kinds: [&[&str]; 5] = [
        &["clamp.kind=diode", "clamp.zener="],
        &[
            "clamp.kind=resistor",
            "clamp.zener=",
            "clamp.resistance=68 ohm",
        ],
        &[
            "clamp.kind=switch-zener",
            "clamp.diode_drop=",
            "clamp.zener=47 V",
        ],
        &[
            "clamp.kind=snubber",
            "clamp.diode_drop=",
            "clamp.zener=",
            "clamp.resistance=150 ohm",
            "clamp.capacitance=47 uF",
        ],
        &[
            "clamp.kind=none",
            "clamp.diode_drop=",
            "clamp.zener=",
            "clamp.power_rating=",
        ],
    ];
    for sets in kinds {
        let mut args = vec!["report", VALVE];
        for s in sets {
            args.push("--set");
            args.push(s);
        }
        let o = run(&args);
        assert!(o.status.success(), "{sets:?}: {}", stderr(&o));
        assert!(stdout(&o).contains("(fitted)"), "{sets:?}");
    }
}

#[test]
fn overrides_change_the_result() {
    let base = stdout(&run(&["report", VALVE, "--json"]));
    let o = run(&["report", VALVE, "--json", "--set", "supply.max=28 V"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let a: serde_json::Value = serde_json::from_str(&base).unwrap();
    let b: serde_json::Value = serde_json::from_str(&stdout(&o)).unwrap();
    let peak = |v: &serde_json::Value| v["worst"]["peak_switch_voltage_v"].as_f64().unwrap();
    // Zener clamp: the switch sees supply + zener + diode, so +1.6 V supply is +1.6 V peak.
    assert!((peak(&b) - peak(&a) - 1.6).abs() < 1e-4);
}

#[test]
fn strict_fails_when_a_check_fails() {
    let o = run(&["report", VALVE, "--strict"]);
    assert_eq!(o.status.code(), Some(0));
    // At 14 V the hot coil never reaches its pull-in current.
    let o = run(&["report", VALVE, "--strict", "--set", "supply.min=14 V"]);
    assert_eq!(o.status.code(), Some(3));
    assert!(stdout(&o).contains("FAIL"));
    // Without --strict the same design still reports, with exit 0.
    let o = run(&["report", VALVE, "--set", "supply.min=14 V"]);
    assert_eq!(o.status.code(), Some(0));
    // Constants are refused for a coil that never pulls in.
    let o = run(&["constants", VALVE, "--set", "supply.min=14 V"]);
    assert_eq!(o.status.code(), Some(1));
    assert!(stderr(&o).contains("never pulls in"));
}

/// Writes `text` to a temporary design file, runs `report` on it, and checks the error.
fn expect_error(text: &str, class: &str, line: Option<usize>, key: &str, words: &str) {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("bad.toml");
    std::fs::write(&path, text).unwrap();
    let out = dir.path().join("out.json");
    std::fs::write(&out, "previous contents").unwrap();
    let o = run(&[
        "report",
        path.to_str().unwrap(),
        "--json",
        "-o",
        out.to_str().unwrap(),
    ]);
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(1), "{err}");
    assert!(err.starts_with(&format!("error[{class}]: ")), "{err}");
    assert!(err.contains("bad.toml"), "{err}");
    if let Some(line) = line {
        assert!(
            err.contains(&format!("bad.toml:{line}:")),
            "line {line}: {err}"
        );
    }
    assert!(err.contains(key), "key {key}: {err}");
    assert!(err.contains(words), "`{words}`: {err}");
    assert!(stdout(&o).is_empty());
    // Nothing written: the old output is untouched and no temporary file is left.
    assert_eq!(std::fs::read_to_string(&out).unwrap(), "previous contents");
    assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 2);
}

#[test]
fn syntax_error() {
    let v = example("greenhouse-valve.toml");
    let bad = edit(&v, "resistance = \"160 ohm\"", "resistance = \"160 ohm");
    expect_error(
        &bad,
        "syntax",
        Some(line_of(&v, "resistance = \"160")),
        "",
        "TOML",
    );
}

#[test]
fn unknown_key_and_section() {
    let v = example("greenhouse-valve.toml");
    let bad = edit(&v, "must_release =", "must_relase =");
    expect_error(
        &bad,
        "unknown-key",
        Some(line_of(&v, "must_release")),
        "coil.must_relase",
        "did you mean `coil.must_release`",
    );
    let bad = edit(&v, "[wiring]", "[wires]");
    expect_error(
        &bad,
        "unknown-key",
        Some(line_of(&v, "[wiring]")),
        "wires",
        "not part",
    );
}

#[test]
fn missing_key() {
    let v = example("greenhouse-valve.toml");
    let bad = edit(&v, "must_operate = \"14.4 V\"\n", "");
    // Reported at the [coil] header, where the key belongs.
    expect_error(
        &bad,
        "missing-key",
        Some(line_of(&v, "[coil]")),
        "coil.must_operate",
        "missing",
    );
    let bad = edit(&v, "on_resistance = \"50 mohm\"\n", "");
    expect_error(&bad, "missing-key", None, "switch.on_resistance", "MOSFET");
    let bad = edit(&v, "repetition = \"0.1 Hz\"\n", "");
    expect_error(&bad, "missing-key", None, "timing.repetition", "goes with");
}

#[test]
fn missing_unit() {
    let v = example("greenhouse-valve.toml");
    let line = line_of(&v, "resistance = \"160");
    let bad = edit(&v, "resistance = \"160 ohm\"", "resistance = 160");
    expect_error(
        &bad,
        "missing-unit",
        Some(line),
        "coil.resistance",
        "no unit",
    );
    let bad = edit(&v, "resistance = \"160 ohm\"", "resistance = \"160\"");
    expect_error(
        &bad,
        "missing-unit",
        Some(line),
        "coil.resistance",
        "no unit",
    );
}

#[test]
fn wrong_unit() {
    let v = example("greenhouse-valve.toml");
    let bad = edit(&v, "resistance = \"160 ohm\"", "resistance = \"160 V\"");
    // The column points at the value, after `resistance = `.
    let line = line_of(&v, "resistance = \"160");
    expect_error(&bad, "wrong-unit", None, "coil.resistance", "a voltage");
    let o = {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("bad.toml");
        std::fs::write(&p, &bad).unwrap();
        run(&["report", p.to_str().unwrap()])
    };
    assert!(
        stderr(&o).contains(&format!("bad.toml:{line}:14:")),
        "{}",
        stderr(&o)
    );
    let bad = edit(&v, "max = \"85 degC\"", "max = \"85 C\"");
    expect_error(&bad, "wrong-unit", None, "temperature.max", "degC");
}

#[test]
fn bad_value() {
    let v = example("greenhouse-valve.toml");
    let bad = edit(&v, "kind = \"mosfet\"", "kind = \"igbt\"");
    expect_error(&bad, "bad-value", None, "switch.kind", "mosfet, bipolar");
    let bad = edit(
        &v,
        "thresholds = [\"40 mA\", \"75 mA\"]",
        "thresholds = \"40 mA\"",
    );
    expect_error(&bad, "bad-value", None, "diagnosis.thresholds", "array");
}

#[test]
fn impossible_combinations() {
    let v = example("greenhouse-valve.toml");
    let cases = [
        (
            "must_release = \"2.4 V\"",
            "must_release = \"15 V\"",
            "coil.must_release",
            "below the must-operate",
        ),
        (
            "breakdown = \"60 V\"",
            "breakdown = \"25 V\"",
            "switch.breakdown",
            "would conduct while off",
        ),
        (
            "min = \"21.6 V\"",
            "min = \"25 V\"",
            "supply.min",
            "above the nominal",
        ),
        (
            "on_time = \"4 s\"",
            "on_time = \"12 s\"",
            "timing.on_time",
            "does not fit its period",
        ),
        (
            "on_resistance = \"50 mohm\"",
            "on_resistance = \"50 mohm\"\nsaturation = \"0.2 V\"",
            "switch.saturation",
            "applies to a bipolar switch",
        ),
        (
            "kind = \"zener\"",
            "kind = \"switch-zener\"",
            "clamp.diode_drop",
            "does not apply",
        ),
        (
            "resistance_tolerance = \"7 %\"",
            "resistance_tolerance = \"95 %\"",
            "coil.resistance_tolerance",
            "between 0 % and 90 %",
        ),
    ];
    for (from, to, key, words) in cases {
        expect_error(&edit(&v, from, to), "impossible", None, key, words);
    }
    // A snubber that would ring, and a snubber without its capacitor.
    let snub = edit(
        &v,
        "kind = \"zener\"\ndiode_drop = \"0.8 V\"\nzener = \"18 V\"",
        "kind = \"snubber\"\nresistance = \"150 ohm\"\ncapacitance = \"100 nF\"",
    );
    expect_error(
        &snub,
        "impossible",
        None,
        "clamp.capacitance",
        "underdamped",
    );
    let snub = edit(&snub, "capacitance = \"100 nF\"\n", "");
    expect_error(&snub, "missing-key", None, "clamp.capacitance", "snubber");
    // Self-heating keys come in pairs; an ambient above the hottest winding is impossible.
    let heat = edit(&v, "thermal_resistance = \"12 K/W\"\n", "");
    expect_error(
        &heat,
        "missing-key",
        None,
        "coil.thermal_resistance",
        "goes with",
    );
    let heat = edit(&v, "ambient = \"50 degC\"", "ambient = \"90 degC\"");
    expect_error(
        &heat,
        "impossible",
        None,
        "temperature.ambient",
        "never cooler",
    );
    // A time that does not fit the 32-bit tick counter.
    let slow = edit(
        &v,
        "release_allowance = \"20 ms\"",
        "release_allowance = \"3 s\"",
    );
    let bad = edit(&slow, "tick_rate = \"1 MHz\"", "tick_rate = \"1 GHz\"");
    expect_error(
        &bad,
        "impossible",
        None,
        "timing.tick_rate",
        "does not fit the tick counter",
    );
}

#[test]
fn io_and_usage_errors() {
    let o = run(&["report", "no/such/design.toml"]);
    assert_eq!(o.status.code(), Some(1));
    let err = stderr(&o);
    assert!(err.starts_with("error[io]: "), "{err}");
    assert!(err.contains("no/such/design.toml"));

    let o = run(&["report", VALVE, "--set", "supply.min"]);
    assert_eq!(o.status.code(), Some(1));
    assert!(stderr(&o).starts_with("error[usage]: command line `--set supply.min`"));

    let o = run(&["report", VALVE, "--set", "coil.resistance=160 V"]);
    assert!(stderr(&o).starts_with("error[wrong-unit]: command line"));

    let o = run(&["plot", VALVE, "-o", "/tmp/x.svg", "--on-time", "20"]);
    assert_eq!(o.status.code(), Some(1));
    assert!(stderr(&o).starts_with("error[usage]"));

    // An override without a key is a usage error, not an unknown key "".
    let o = run(&["report", VALVE, "--set", "=x"]);
    assert_eq!(o.status.code(), Some(1));
    assert!(
        stderr(&o).starts_with("error[usage]: command line `--set =x`: an override needs a key"),
        "{}",
        stderr(&o)
    );

    // A negative value is a value (refused for what it is), not a flag the parser rejects.
    let o = run(&["plot", VALVE, "-o", "/tmp/x.svg", "--on-time", "-1 s"]);
    assert_eq!(o.status.code(), Some(1));
    assert!(
        stderr(&o).starts_with("error[usage]: --on-time must be a positive time"),
        "{}",
        stderr(&o)
    );
    let o = run(&["constants", VALVE, "--tick-rate", "-5 Hz"]);
    assert_eq!(o.status.code(), Some(1));
    assert!(stderr(&o).contains("timing.tick_rate: -5 Hz is not a whole number of ticks"));

    // An unknown flag is rejected by the argument parser with status 2.
    let o = run(&["report", VALVE, "--frobnicate"]);
    assert_eq!(o.status.code(), Some(2));

    // An output into a directory that does not exist is an I/O error, and names the file.
    let o = run(&["report", VALVE, "-o", "no/such/dir/out.txt"]);
    assert_eq!(o.status.code(), Some(1));
    assert!(stderr(&o).contains("no/such/dir/out.txt"));
    assert!(!Path::new("no/such/dir").exists());
}

#[test]
fn non_finite_toml_numbers_are_rejected_at_their_key() {
    // TOML has `nan` and `inf` literals; a plain-number key must not let them through (they would
    // surface later as an error blamed on another key, or as NaN in the output).
    let r = example("greenhouse-pump-relay.toml");
    for literal in ["nan", "inf", "-inf", "+nan"] {
        let bad = edit(&r, "min_gain = 100", &format!("min_gain = {literal}"));
        expect_error(
            &bad,
            "bad-value",
            Some(line_of(&r, "min_gain")),
            "switch.min_gain",
            "finite",
        );
    }
}

#[test]
fn values_outside_the_computable_range_are_rejected_at_their_key() {
    // The core computes in f32: a value whose quotients or products leave its range must be
    // refused where it is written, not surface later as an error blamed on another key
    // (1e-40 ohm was reported as `timing.residual_current`, a key the file does not have).
    let v = example("greenhouse-valve.toml");
    let at = line_of(&v, "resistance = \"160 ohm\"");
    for value in ["1e-40 ohm", "1e-20 ohm", "1e20 ohm", "-1e30 ohm"] {
        let bad = edit(
            &v,
            "resistance = \"160 ohm\"",
            &format!("resistance = \"{value}\""),
        );
        expect_error(&bad, "bad-value", Some(at), "coil.resistance", "range");
    }
    let r = example("greenhouse-pump-relay.toml");
    let bad = edit(&r, "min_gain = 100", "min_gain = 1e30");
    expect_error(
        &bad,
        "bad-value",
        Some(line_of(&r, "min_gain")),
        "switch.min_gain",
        "range",
    );
}

#[test]
fn drive_values_the_core_refuses_are_blamed_on_their_own_key() {
    // A negative base-emitter voltage was reported at switch.base_resistor, a zero rated gate
    // voltage at switch.gate_voltage.
    let r = example("greenhouse-pump-relay.toml");
    let bad = edit(&r, "base_emitter = \"0.7 V\"", "base_emitter = \"-1 V\"");
    expect_error(
        &bad,
        "impossible",
        Some(line_of(&r, "base_emitter")),
        "switch.base_emitter",
        "negative",
    );
    let v = example("greenhouse-valve.toml");
    let bad = edit(
        &v,
        "rated_gate_voltage = \"4.5 V\"",
        "rated_gate_voltage = \"0 V\"",
    );
    expect_error(
        &bad,
        "impossible",
        Some(line_of(&v, "rated_gate_voltage")),
        "switch.rated_gate_voltage",
        "greater than zero",
    );
}

#[test]
fn messages_print_values_in_engineering_notation() {
    // A 1 nV nominal supply was echoed as "(0.000000001 V)", a 1 GV one as "(1000000000 V)".
    let v = example("greenhouse-valve.toml");
    let bad = edit(&v, "nominal = \"24 V\"", "nominal = \"1 nV\"");
    expect_error(
        &bad,
        "impossible",
        Some(line_of(&v, "min = \"21.6 V\"")),
        "supply.min",
        "lowest supply (21.60 V) is above the nominal (1.000 nV)",
    );
    let bad = edit(&v, "max = \"26.4 V\"", "max = \"1 GV\"");
    expect_error(
        &bad,
        "impossible",
        Some(line_of(&v, "breakdown")),
        "switch.breakdown",
        "a breakdown voltage of 60.00 V is not above the highest supply (1.000 GV)",
    );
}
