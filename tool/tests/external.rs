//! Report numbers checked against sources outside the project. Each check names its source.

mod common;

use common::{run, stderr, stdout};
use serde_json::Value;

/// A minimal design at one fixed point (no tolerances, no spread of supply or temperature), so
/// that the closed-form circuit of each check is exactly what is evaluated. The values are
/// invented round numbers, chosen so the closed forms are easy to follow.
fn one_point_design(coil: &str, supply: f64, clamp: &str, switch_breakdown: f64) -> String {
    format!(
        r#"
[design]
name = "one-point check design (invented round numbers)"

[coil]
{coil}

[supply]
nominal = "{supply} V"
min = "{supply} V"
max = "{supply} V"

[temperature]
min = "20 degC"
max = "20 degC"

[switch]
kind = "mosfet"
on_resistance = "0 ohm"
breakdown = "{switch_breakdown} V"

[clamp]
{clamp}

[timing]
tick_rate = "1 MHz"
"#
    )
}

fn report_json(text: &str, extra: &[&str]) -> Value {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("design.toml");
    std::fs::write(&path, text).unwrap();
    let mut args = vec!["report", path.to_str().unwrap(), "--json"];
    args.extend_from_slice(extra);
    let o = run(&args);
    assert!(o.status.success(), "{}", stderr(&o));
    serde_json::from_str(&stdout(&o)).unwrap()
}

fn close(actual: f64, expected: f64, rel: f64, what: &str) {
    assert!(
        (actual - expected).abs() <= rel * expected.abs(),
        "{what}: {actual} vs expected {expected}"
    );
}

#[test]
fn rl_step_response_matches_its_closed_form() {
    // RL step response i(t) = I∞·(1 − e^(−t/τ)) (textbook, from memory), on an invented
    // round-number coil: 10 V across 10 Ω and 0.1 H gives I∞ = 1 A,
    // τ = L/R = 10 ms, the current reaches half its final value after τ·ln 2 = 6.931 ms, and the
    // energy stored at 1 A is ½·L·I² = 0.05 J.
    let coil = r#"resistance = "10 ohm"
inductance = "0.1 H"
must_operate = "5 V"
must_release = "1 V""#;
    let v = report_json(
        &one_point_design(coil, 10.0, "kind = \"diode\"\ndiode_drop = \"0.7 V\"", 60.0),
        &[],
    );
    close(v["final_current_a"].as_f64().unwrap(), 1.0, 1e-6, "I∞");
    close(v["tau_on_s"].as_f64().unwrap(), 0.010, 1e-6, "τ");
    close(
        v["pull_in_time_s"].as_f64().unwrap(),
        0.006_931_47,
        1e-5,
        "t(½ I∞)",
    );
    close(v["stored_energy_j"].as_f64().unwrap(), 0.05, 1e-6, "½LI²");
    // Conservation of energy (first law of thermodynamics; textbook, from memory): with a diode
    // clamp every joule stored ends in the diode or the winding.
    let split = v["clamp_energy_j"].as_f64().unwrap() + v["winding_energy_j"].as_f64().unwrap();
    close(split, 0.05, 1e-4, "clamp + winding");
}

#[test]
fn free_decay_matches_its_closed_form() {
    // RL natural response (textbook, from memory), invented round-number coil: with an ideal
    // freewheel path the current
    // decays as I₀·e^(−t/τ), so it falls from 1 A to 0.1 A in τ·ln 10 = 23.03 ms (τ = 10 ms).
    // A 1 µV diode drop stands in for the ideal diode (it shifts the time by about
    // (V_F/R)/(0.1 A)/ln 10 ≈ 4e-7 relative).
    let coil = r#"resistance = "10 ohm"
inductance = "0.1 H"
must_operate = "5 V"
must_release = "1 V""#;
    let v = report_json(
        &one_point_design(coil, 10.0, "kind = \"diode\"\ndiode_drop = \"1 uV\"", 60.0),
        &[],
    );
    close(
        v["release_time_s"].as_f64().unwrap(),
        0.010 * 10f64.ln(),
        2e-4,
        "t(0.1 A)",
    );
    close(v["tau_off_s"].as_f64().unwrap(), 0.010, 1e-6, "τ off");
}

#[test]
fn plain_diode_holds_the_switch_at_supply_plus_one_drop() {
    // Common practice, no source: with a freewheel diode across the coil the switch sees the
    // supply plus one diode drop; with diode + zener, supply + zener + diode drop.
    let v: Value = serde_json::from_str(&stdout(&run(&[
        "report",
        "examples/greenhouse-pump-relay.toml",
        "--json",
    ])))
    .unwrap();
    close(
        v["worst"]["peak_switch_voltage_v"].as_f64().unwrap(),
        13.2 + 0.75,
        1e-6,
        "relay",
    );
    close(
        v["peak_switch_voltage_v"].as_f64().unwrap(),
        12.0 + 0.75,
        1e-6,
        "relay nominal",
    );
    // The same number in the terminal report.
    let text = stdout(&run(&["report", "examples/greenhouse-pump-relay.toml"]));
    let line = text
        .lines()
        .find(|l| l.starts_with("peak switch voltage"))
        .unwrap();
    assert!(
        line.contains("12.75 V") && line.contains("13.95 V"),
        "{line}"
    );

    let v: Value = serde_json::from_str(&stdout(&run(&[
        "report",
        "examples/greenhouse-valve.toml",
        "--json",
    ])))
    .unwrap();
    close(
        v["worst"]["peak_switch_voltage_v"].as_f64().unwrap(),
        26.4 + 18.0 + 0.8,
        1e-6,
        "valve",
    );
}

#[test]
fn hot_copper_resistance_follows_the_annealed_copper_standard() {
    // IEC 60028 (annealed copper standard): α20 = 0.00393 /K, so a winding of
    // 10 Ω at 20 °C has 10·(1 + 0.00393·65) = 12.5545 Ω at 85 °C; at 10 V it carries 0.79653 A.
    let coil = r#"resistance = "10 ohm"
inductance = "0.1 H"
must_operate = "5 V"
must_release = "1 V""#;
    let text = one_point_design(coil, 10.0, "kind = \"diode\"\ndiode_drop = \"0.7 V\"", 60.0)
        .replace(
            "min = \"20 degC\"\nmax = \"20 degC\"",
            "min = \"85 degC\"\nmax = \"85 degC\"",
        );
    let v = report_json(&text, &[]);
    close(
        v["final_current_a"].as_f64().unwrap(),
        10.0 / 12.5545,
        1e-5,
        "I at 85 °C",
    );
}

#[test]
fn unclamped_switch_energy_approaches_the_uis_formula() {
    // E_AS (single-pulse unclamped inductive switching, JEDEC JESD24 family; from memory): a lossless inductor
    // switched off from I into a switch that avalanches at V_BR from a supply V_DD delivers
    // E = ½·L·I²·V_BR/(V_BR − V_DD). Here 0.1 H, 1 A, V_BR = 100 V, V_DD = 2 V: 51.02 mJ. The
    // 2 Ω winding takes about R·I/(2·(V_BR − V_DD)) ≈ 1 % of it (first-order estimate from the
    // same energy balance, no source), so allow 2 %.
    let coil = r#"resistance = "2 ohm"
inductance = "0.1 H"
must_operate = "1 V"
must_release = "0.2 V""#;
    let v = report_json(&one_point_design(coil, 2.0, "kind = \"none\"", 100.0), &[]);
    let e = v["clamp_energy_j"].as_f64().unwrap();
    let uis = 0.5 * 0.1 * 1.0 * 100.0 / 98.0;
    assert!(e < uis && e > 0.98 * uis, "{e} vs {uis}");
    close(
        v["peak_switch_voltage_v"].as_f64().unwrap(),
        100.0,
        1e-6,
        "avalanche voltage",
    );
}
