//! End-to-end tests of what the reports say: the TVS-across-coil clamp kind, cautions wherever
//! stress is shown, the `keys` table, JSON number form, the hold economiser without a clamp, and
//! the labels of the report's figures.

mod common;

use common::{run, stderr, stdout};

const VALVE: &str = "examples/greenhouse-valve.toml";

/// The valve example with its zener + diode replaced by one bidirectional TVS across the coil.
const TVS: [&str; 8] = [
    "--set",
    "clamp.kind=tvs-across-coil",
    "--set",
    "clamp.diode_drop=",
    "--set",
    "clamp.zener=33 V",
    "--set",
    "clamp.standoff=28 V",
];

fn with(args: &[&str], extra: &[&str]) -> Vec<String> {
    args.iter().chain(extra).map(|s| s.to_string()).collect()
}

fn run_s(args: &[String]) -> std::process::Output {
    let v: Vec<&str> = args.iter().map(String::as_str).collect();
    run(&v)
}

/// The SVG `plot` writes for the valve with `extra` arguments.
fn plot(extra: &[&str]) -> String {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("p.svg");
    let args = with(&["plot", VALVE, "-o", out.to_str().unwrap()], extra);
    let o = run_s(&args);
    assert!(o.status.success(), "{}", stderr(&o));
    std::fs::read_to_string(out).unwrap()
}

#[test]
fn tvs_across_the_coil_is_a_clamp_kind_of_its_own() {
    let o = run_s(&with(&["report", VALVE], &TVS));
    assert!(o.status.success(), "{}", stderr(&o));
    let text = stdout(&o);
    assert!(
        text.contains("clamp TVS 33.00 V across coil (standoff 28.00 V)"),
        "{text}"
    );
    // Kirchhoff at t = 0+ (textbook, from memory): the switch sees the highest supply plus the
    // clamping voltage, 26.4 V + 33 V.
    let row = text
        .lines()
        .find(|l| l.starts_with("peak switch voltage "))
        .unwrap();
    assert!(row.contains("59.40 V"), "{row}");
    // JSON, compare and plot carry it too.
    let j = run_s(&with(&["report", VALVE, "--json"], &TVS));
    let v: serde_json::Value = serde_json::from_slice(&j.stdout).unwrap();
    assert_eq!(v["clamp_comparison"][0]["kind"], "tvs-across-coil");
    assert_eq!(v["clamp_comparison"][0]["fitted"], true);
    let c = run_s(&with(&["compare", VALVE], &TVS));
    assert!(stdout(&c).contains("TVS 33.00 V across coil"));
    let svg = plot(&TVS);
    assert!(svg.contains("TVS 33.00 V across coil"), "{svg}");
}

#[test]
fn tvs_across_the_coil_below_the_drive_voltage_is_refused_at_its_standoff() {
    // A TVS conducts above its standoff (common practice, no source): at 26.4 V supply a 26 V
    // standoff straight across the coil would conduct while the switch is on.
    let mut args = with(&["report", VALVE], &TVS);
    args.extend(["--set".to_string(), "clamp.standoff=26 V".to_string()]);
    let o = run_s(&args);
    assert!(!o.status.success());
    let err = stderr(&o);
    assert!(err.contains("error[impossible]"), "{err}");
    assert!(err.contains("clamp.standoff"), "{err}");
    assert!(err.contains("conducts"), "{err}");
    // Standoff at or above the clamping voltage: the part is inverted.
    let mut args = with(&["report", VALVE], &TVS);
    args.extend(["--set".to_string(), "clamp.standoff=40 V".to_string()]);
    let o = run_s(&args);
    assert!(!o.status.success());
    assert!(stderr(&o).contains("clamp.standoff"), "{}", stderr(&o));
    // The standoff key does not apply to another clamp kind.
    let o = run(&["report", VALVE, "--set", "clamp.standoff=28 V"]);
    assert!(!o.status.success());
    assert!(stderr(&o).contains("does not apply"), "{}", stderr(&o));
}

#[test]
fn keys_shows_an_example_fit_for_each_key_and_one_need_per_key() {
    let o = run(&["keys"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let text = stdout(&o);
    let row = |key: &str| -> String {
        text.lines()
            .find(|l| l.split_whitespace().next() == Some(key))
            .unwrap_or_else(|| panic!("no row {key}"))
            .to_string()
    };
    // Typical values of the trade (common practice, no source): a silicon clamp diode drops
    // well under a volt, a MOSFET's on-resistance is milliohms, a firmware pulse repeats slowly.
    assert!(
        row("clamp.diode_drop").contains("\"0.8 V\""),
        "{}",
        row("clamp.diode_drop")
    );
    assert!(row("switch.on_resistance").contains("\"50 mohm\""));
    assert!(row("timing.repetition").contains("\"0.1 Hz\""));
    assert!(!text.contains("\"24 V\"  ") || row("supply.nominal").contains("\"24 V\""));
    for l in text.lines().skip(2) {
        // No row says both optional and required.
        assert!(
            !(l.contains("optional") && l.contains("required")),
            "contradictory need: {l}"
        );
    }
    assert!(row("switch.on_resistance").contains("required if switch.kind = \"mosfet\""));
    assert!(row("clamp.standoff").contains("required if clamp.kind = \"tvs-across-coil\""));
    // The hint for a badly typed value uses the key's own example.
    let o = run(&["report", VALVE, "--set", "clamp.diode_drop=fast"]);
    assert!(!o.status.success());
    assert!(!stderr(&o).contains("\"24 V\""), "{}", stderr(&o));
}

/// The valve example without a clamp (its hold economiser kept).
const NO_CLAMP: [&str; 10] = [
    "--set",
    "clamp.kind=none",
    "--set",
    "clamp.diode_drop=",
    "--set",
    "clamp.zener=",
    "--set",
    "clamp.power_rating=",
    "--set",
    "switch.avalanche_energy=50 mJ",
];

#[test]
fn a_hold_economiser_without_a_clamp_fails_with_a_repetitive_avalanche_caution() {
    let o = run_s(&with(&["report", VALVE], &NO_CLAMP));
    let text = stdout(&o);
    assert!(o.status.success(), "{}", stderr(&o));
    let row = text
        .lines()
        .find(|l| l.starts_with("switch avalanche while holding"))
        .unwrap_or_else(|| panic!("no hold avalanche check:\n{text}"));
    assert!(row.contains("FAIL"), "{row}");
    assert!(text.contains("repetitive avalanche"), "{text}");
    assert!(
        !text.contains("freewheeling through the fitted clamp"),
        "{text}"
    );
    assert!(text.contains("NO CLAMP: the switch avalanches in every off-interval"));
    assert!(text.contains("RESULT: FAIL"));
    // --strict turns the failure into exit status 3 (docs/tool.md).
    let strict = with(&["report", VALVE, "--strict"], &NO_CLAMP);
    assert_eq!(run_s(&strict).status.code(), Some(3));
}

#[test]
fn a_huge_breakdown_voltage_gives_no_silently_wrong_hold_figures() {
    let mut args = with(&["report", VALVE], &NO_CLAMP);
    args.extend(["--set".to_string(), "switch.breakdown=1 GV".to_string()]);
    let o = run_s(&args);
    let text = stdout(&o);
    let hold: Vec<&str> = text
        .lines()
        .skip_while(|l| !l.starts_with("HOLD ECONOMISER"))
        .take(6)
        .collect();
    // The duty of a hold PWM is below 100 % by definition; the core refuses instead of 100 %.
    assert!(!hold.iter().any(|l| l.contains("100.0 %")), "{hold:?}");
    // The valley check prints a computed valley or says there is none, never the request.
    let valley = text
        .lines()
        .find(|l| l.starts_with("hold current (ripple valley)"))
        .unwrap();
    assert!(!valley.contains("valley 60.00 mA"), "{valley}");
    assert!(valley.contains("no hold computed"), "{valley}");
}

/// What every output with stress figures must say (the brief's safety section).
const CAUTION_NEEDLES: [&str; 5] = [
    "engineering estimates",
    "datasheet",
    "local electrical codes",
    "licensed practice",
    "hundreds of volts",
];

#[test]
fn compare_and_plot_carry_the_cautions() {
    let text = stdout(&run(&["compare", VALVE]));
    assert!(text.contains("CAUTIONS"), "{text}");
    for n in CAUTION_NEEDLES {
        assert!(text.contains(n), "compare: no `{n}`");
    }
    let o = run(&["compare", VALVE, "--json"]);
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let cautions = v["cautions"].as_array().expect("cautions array").clone();
    let joined: Vec<String> = cautions
        .iter()
        .map(|c| c.as_str().unwrap().to_string())
        .collect();
    for n in CAUTION_NEEDLES {
        assert!(joined.join(" ").contains(n), "compare --json: no `{n}`");
    }
    assert!(v["clamp_comparison"]
        .as_array()
        .is_some_and(|a| !a.is_empty()));
    // The SVG: every text element, joined, holds every caution.
    let svg = plot(&[]);
    let doc = roxmltree::Document::parse(&svg).unwrap();
    let words: Vec<&str> = doc
        .descendants()
        .filter(|n| n.has_tag_name("text"))
        .filter_map(|n| n.text())
        .flat_map(str::split_whitespace)
        .collect();
    let all = words.join(" ");
    assert!(all.contains("CAUTIONS"));
    for c in coilwise_tool::cautions::CAUTIONS {
        let c: Vec<&str> = c.split_whitespace().collect();
        assert!(all.contains(&c.join(" ")), "plot: caution missing: {c:?}");
    }
}

/// Every non-integer number in a JSON tree, with its path.
fn floats(v: &serde_json::Value, path: &str, out: &mut Vec<(String, f64)>) {
    match v {
        serde_json::Value::Number(n) if n.is_f64() => {
            out.push((path.to_string(), n.as_f64().unwrap()))
        }
        serde_json::Value::Array(a) => {
            for (i, x) in a.iter().enumerate() {
                floats(x, &format!("{path}[{i}]"), out);
            }
        }
        serde_json::Value::Object(m) => {
            for (k, x) in m {
                floats(x, &format!("{path}.{k}"), out);
            }
        }
        _ => {}
    }
}

#[test]
fn json_numbers_are_printed_at_f32_precision() {
    let o = run(&["report", VALVE, "--json"]);
    let text = stdout(&o);
    let v: serde_json::Value = serde_json::from_str(&text).unwrap();
    // 26.4 V highest supply + 18 V zener + 0.8 V diode (Kirchhoff, textbook, from memory).
    assert_eq!(v["worst"]["peak_switch_voltage_v"], 45.2, "{}", v["worst"]);
    // 14.4 V must-operate / 160 ohm (Ohm's law).
    assert_eq!(v["pull_in_current_a"], 0.09);
    assert!(!text.contains("45.199997") && !text.contains("0.089999996"));
    let mut all = Vec::new();
    floats(&v, "", &mut all);
    assert!(all.len() > 50);
    for (path, x) in all {
        // f32 carries at most 9 significant digits; the output never shows more (the f64
        // artefacts of a margin computed from f32 figures showed 17).
        let s = format!("{x:e}");
        let digits = s
            .split('e')
            .next()
            .unwrap()
            .chars()
            .filter(char::is_ascii_digit)
            .count();
        assert!(digits <= 9, "{path} = {x} ({s})");
    }
}

/// The figures-table row that starts with `name`, split at runs of two or more spaces.
fn figure_row(text: &str, name: &str) -> Vec<String> {
    let line = text
        .lines()
        .find(|l| l.starts_with(name))
        .unwrap_or_else(|| panic!("no row {name}"));
    line.split("  ")
        .map(str::trim)
        .filter(|c| !c.is_empty())
        .map(str::to_string)
        .collect()
}

#[test]
fn the_switch_on_time_constant_worst_is_the_largest_corner() {
    let text = stdout(&run(&["report", VALVE]));
    let row = figure_row(&text, "time constant, switch-on");
    // Hand calculation, coldest winding (-20 degC), resistance -7 %, inductance +15 %, sense
    // -1 %: R_w = 160 x 0.93 x (1 + 0.00393 x (-40)) = 125.41 ohm (copper coefficient 0.00393 /K,
    // the annealed-copper standard IEC 60028), R_on = 125.41 + 0.4 + 0.495 + 0.05 = 126.36 ohm,
    // tau = 0.35 H x 1.15 / 126.36 ohm = 3.186 ms. The pull-in corner's (hot) is only 1.7 ms.
    assert_eq!(row[2], "3.186 ms", "{row:?}");
    assert!(row[3].contains("largest"), "{row:?}");
    let v: serde_json::Value =
        serde_json::from_slice(&run(&["report", VALVE, "--json"]).stdout).unwrap();
    let worst = v["worst"]["tau_on_s"].as_f64().unwrap();
    assert!((worst - 3.1855e-3).abs() < 1e-6, "{worst}");
    assert!(worst >= v["tau_on_s"].as_f64().unwrap());
}

#[test]
fn the_maximum_repetition_rate_includes_the_timing_cap() {
    // The relay example has no clamp.power_rating: the timing limit still exists.
    let text = stdout(&run(&["report", "examples/greenhouse-pump-relay.toml"]));
    let row = figure_row(&text, "maximum repetition rate");
    assert_ne!(row[2], "-", "{row:?}");
    assert!(
        row[3].contains("min on-time + safe min off-time"),
        "{row:?}"
    );
    // 1 / (minimum on-time + safe minimum off-time), from the same report.
    let on = figure_row(&text, "minimum on-time");
    let off = figure_row(&text, "safe minimum off-time");
    let ms = |c: &str| c.trim_end_matches(" ms").parse::<f64>().unwrap();
    let hz = row[2].trim_end_matches(" Hz").parse::<f64>().unwrap();
    let expect = 1e3 / (ms(&on[2]) + ms(&off[2]));
    assert!((hz - expect).abs() < 2e-3 * expect, "{hz} vs {expect}");
    // With a rating below that, the clamp rating sets it and the row says so.
    let text = stdout(&run(&[
        "report",
        "examples/greenhouse-pump-relay.toml",
        "--set",
        "clamp.power_rating=1 mW",
    ]));
    let row = figure_row(&text, "maximum repetition rate");
    assert!(row[3].contains("clamp power rating"), "{row:?}");
}

#[test]
fn the_no_clamp_energy_is_labelled_as_the_switchs() {
    let text = stdout(&run(&["compare", VALVE]));
    let none = text.lines().find(|l| l.starts_with("none")).unwrap();
    assert!(none.contains("(switch)"), "{none}");
    let text = stdout(&run_s(&with(&["report", VALVE], &NO_CLAMP)));
    assert!(text
        .lines()
        .any(|l| l.starts_with("avalanche energy (switch)")));
    assert!(!text.lines().any(|l| l.starts_with("clamp energy")));
    assert!(text
        .lines()
        .any(|l| l.starts_with("avalanche power (switch)")));
    assert!(!text.lines().any(|l| l.starts_with("clamp average power")));
    // The release-corner note names every tolerance the corner takes, inductance included.
    let note = text
        .lines()
        .find(|l| l.trim_start().starts_with("release corner:"))
        .unwrap();
    assert!(note.contains("highest L"), "{note}");
}

/// The TVS straight across the coil sees the drive voltage while the switch is on: the highest
/// supply minus the bipolar saturation voltage (Kirchhoff's voltage law, textbook, from memory).
/// For the pump relay (13.2 V highest supply, 0.25 V saturation) that is 12.95 V. The refusal
/// said "must be above the supply voltage" and its hint "up to 13.20 V" (the supply), though a
/// 13 V standoff, below the supply, is accepted and right.
#[test]
fn the_tvs_standoff_refusal_gives_the_drive_voltage_it_was_checked_against() {
    let relay = "examples/greenhouse-pump-relay.toml";
    let tvs = |standoff: &str| {
        run(&[
            "report",
            relay,
            "--set",
            "clamp.kind=tvs-across-coil",
            "--set",
            "clamp.diode_drop=",
            "--set",
            "clamp.zener=20 V",
            "--set",
            &format!("clamp.standoff={standoff}"),
        ])
    };
    let o = tvs("12.9 V");
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(1), "{err}");
    assert!(err.contains("clamp.standoff"), "{err}");
    assert!(err.contains("12.95 V"), "the drive voltage: {err}");
    assert!(!err.contains("must be above the supply voltage"), "{err}");
    let o = tvs("13 V");
    assert!(o.status.success(), "{}", stderr(&o));
    // The MOSFET valve: no saturation drop, the drive is the highest supply, 26.4 V.
    let mut args = with(&["report", VALVE], &TVS);
    args.extend(["--set".to_string(), "clamp.standoff=26 V".to_string()]);
    let err = stderr(&run_s(&args));
    assert!(err.contains("26.40 V"), "{err}");
}

/// A TVS's standoff V_RWM lies below its clamping voltage on every datasheet (common practice,
/// no source). A standoff at or above `clamp.zener` was refused as "TVS standoff voltage has its
/// bounds the wrong way round", with a hint to docs that give no range.
#[test]
fn a_tvs_standoff_at_or_above_its_clamping_voltage_says_so() {
    for standoff in ["33 V", "40 V"] {
        let mut args = with(&["report", VALVE], &TVS);
        args.extend(["--set".to_string(), format!("clamp.standoff={standoff}")]);
        let o = run_s(&args);
        let err = stderr(&o);
        assert_eq!(o.status.code(), Some(1), "{err}");
        assert!(err.contains("clamp.standoff"), "{err}");
        assert!(err.contains("below clamp.zener (33.00 V)"), "{err}");
        assert!(!err.contains("wrong way round"), "{err}");
    }
}

/// The report's "maximum repetition rate" is the lower of the shortest legal cycle's
/// 1 / (t_on,min + t_off,min) and the clamp rating's P / E; JSON only had `max_repetition_hz`,
/// the clamp-rating limit (71.5 Hz for the valve, against a cycle limit of 23.3 Hz), and null
/// without a rating: a program reading it would pulse faster than the coil can release.
#[test]
fn json_carries_the_repetition_limit_the_report_shows() {
    let j = |extra: &[&str]| -> serde_json::Value {
        let o = run_s(&with(&["report", VALVE, "--json"], extra));
        assert!(o.status.success(), "{}", stderr(&o));
        serde_json::from_slice(&o.stdout).unwrap()
    };
    let v = j(&[]);
    let w = &v["worst"];
    let cycle =
        1.0 / (v["min_on_time_s"].as_f64().unwrap() + w["min_off_time_s"].as_f64().unwrap());
    let limit = w["repetition_limit_hz"].as_f64().unwrap();
    assert!((limit - cycle).abs() <= 1e-6 * cycle, "{limit} vs {cycle}");
    assert_eq!(w["repetition_limit_by"], "cycle");
    assert!(limit < w["max_repetition_hz"].as_f64().unwrap());
    // The text report's row shows the same figure.
    let text = stdout(&run(&["report", VALVE]));
    let row = text
        .lines()
        .find(|l| l.starts_with("maximum repetition rate"))
        .unwrap();
    assert!(row.contains("23.26 Hz"), "{row}");
    assert!((limit - 23.26).abs() < 0.005, "{limit}");
    // Without a clamp rating the cycle still limits.
    let v = j(&["--set", "clamp.power_rating="]);
    assert!(v["worst"]["max_repetition_hz"].is_null());
    assert!((v["worst"]["repetition_limit_hz"].as_f64().unwrap() - limit).abs() < 1e-6 * limit);
    // A tiny clamp rating sets it instead: 1 mW over 6.99 mJ is 0.143 Hz.
    let v = j(&["--set", "clamp.power_rating=1 mW"]);
    assert_eq!(v["worst"]["repetition_limit_by"], "clamp_rating");
    assert_eq!(
        v["worst"]["repetition_limit_hz"],
        v["worst"]["max_repetition_hz"]
    );
}

/// Without a clamp there is no clamp element to rate: `clamp.power_rating` with
/// `clamp.kind = "none"` was silently ignored (no check, no repetition limit from it), though
/// docs/design-file.md says a key that does not apply to the chosen kind is refused.
#[test]
fn a_clamp_power_rating_without_a_clamp_is_refused() {
    let o = run(&[
        "report",
        VALVE,
        "--set",
        "clamp.kind=none",
        "--set",
        "clamp.diode_drop=",
        "--set",
        "clamp.zener=",
    ]);
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(1), "{err}");
    assert!(err.contains("clamp.power_rating"), "{err}");
    assert!(
        err.contains("does not apply to clamp.kind = \"none\""),
        "{err}"
    );
    let o = run_s(&with(&["report", VALVE], &NO_CLAMP));
    assert!(o.status.success(), "{}", stderr(&o));
}

/// Keys that come in pairs or as alternatives were listed by `keys` as plain "optional"
/// (`coil.inductance` and `coil.inductance_released` both "optional", as if a coil needed no
/// inductance), where docs/design-file.md says "one of the two forms" / "with ...". Their need
/// column now says when they are required.
#[test]
fn keys_says_when_paired_and_alternative_keys_are_required() {
    let o = run(&["keys"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let text = stdout(&o);
    let row = |key: &str| -> String {
        text.lines()
            .find(|l| l.split_whitespace().next() == Some(key))
            .unwrap_or_else(|| panic!("no row for {key}"))
            .to_string()
    };
    for (key, needs) in [
        (
            "coil.inductance",
            "required unless coil.inductance_released",
        ),
        (
            "coil.inductance_released",
            "required unless coil.inductance",
        ),
        (
            "coil.inductance_operated",
            "required unless coil.inductance",
        ),
        ("supply.min", "required unless supply.tolerance"),
        ("supply.max", "required unless supply.tolerance"),
        ("supply.tolerance", "required unless supply.min"),
        (
            "coil.thermal_resistance",
            "required if temperature.ambient is given",
        ),
        (
            "temperature.ambient",
            "required if coil.thermal_resistance is given",
        ),
        (
            "switch.rated_gate_voltage",
            "required if switch.gate_voltage is given",
        ),
        (
            "switch.gate_voltage",
            "required if switch.rated_gate_voltage is given",
        ),
        // The base-drive check takes all three (docs/design-file.md, [switch]).
        (
            "switch.drive_voltage",
            "required if switch.base_resistor or switch.min_gain",
        ),
        (
            "switch.base_resistor",
            "required if switch.drive_voltage or switch.min_gain",
        ),
        (
            "switch.min_gain",
            "required if switch.drive_voltage or switch.base_resistor",
        ),
    ] {
        let r = row(key);
        assert!(r.contains(needs), "{key}: {r}");
        assert!(!r.contains(" optional "), "{key}: {r}");
    }
}
