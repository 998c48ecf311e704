//! The `--json` output against its documented schema (`docs/json-output.md`):
//!
//! 1. it deserialises into a mirror of the documented schema that rejects unknown keys, and
//!    serialising that back gives the same JSON value (round trip, nothing lost or added);
//! 2. the set of key paths in the output equals the key index in the documentation.

mod common;

use std::collections::BTreeSet;

use common::{root, run, stderr, stdout};
use serde::{Deserialize, Serialize};
use serde_json::Value;

#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct Figures {
    final_current_a: f64,
    tau_on_s: f64,
    tau_off_s: f64,
    pull_in_time_s: Option<f64>,
    pull_in_margin: f64,
    release_time_s: f64,
    time_to_zero_s: f64,
    min_off_time_s: f64,
    stored_energy_j: f64,
    clamp_energy_j: f64,
    winding_energy_j: f64,
    supply_energy_j: f64,
    peak_switch_voltage_v: f64,
    clamp_power_w: Option<f64>,
    max_repetition_hz: Option<f64>,
    repetition_limit_hz: Option<f64>,
    repetition_limit_by: Option<String>,
}

#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct Point {
    supply_v: f64,
    winding_temperature_c: f64,
    resistance_factor: f64,
    inductance_factor: f64,
    sense_factor: f64,
}

#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct Corners {
    nominal: Point,
    pull_in: Point,
    release: Point,
}

#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct Ticks {
    tick_rate_hz: u32,
    min_on: Option<u32>,
    min_off: u32,
    pull_in: Option<u32>,
    release: u32,
}

#[derive(Debug, Serialize, Deserialize, PartialEq)]
#[serde(rename_all = "lowercase")]
enum Status {
    Pass,
    Warn,
    Fail,
    Info,
}

#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct Check {
    id: String,
    status: Status,
    margin: Option<f64>,
    title: String,
    value: String,
    limit: String,
    note: String,
}

#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct Band {
    threshold_a: f64,
    earliest_s: Option<f64>,
    latest_s: Option<f64>,
    earliest_ticks: Option<u32>,
    latest_ticks: Option<u32>,
    unreachable_corners: u32,
}

#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct Expected {
    final_current_min_a: Option<f64>,
    final_current_max_a: Option<f64>,
    tau_min_s: Option<f64>,
    tau_max_s: Option<f64>,
    slope_min_a_per_s: Option<f64>,
    slope_max_a_per_s: Option<f64>,
    loop_resistance_min_ohm: Option<f64>,
    loop_resistance_max_ohm: Option<f64>,
    inductance_min_h: Option<f64>,
    inductance_max_h: Option<f64>,
    movement_by_s: Option<f64>,
    error: Option<String>,
}

#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct ProbeOut {
    fraction: f64,
    limit_a: Option<f64>,
    length_ticks: Option<u32>,
    duration_s: Option<f64>,
    error: Option<String>,
}

#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct ClampRow {
    label: String,
    kind: String,
    fitted: bool,
    release_time_s: Option<f64>,
    time_to_zero_s: Option<f64>,
    peak_switch_voltage_v: Option<f64>,
    clamp_energy_j: Option<f64>,
    winding_energy_j: Option<f64>,
    status: Status,
    error: Option<String>,
}

#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct Hold {
    point: String,
    duty: Option<f64>,
    valley_a: Option<f64>,
    peak_a: Option<f64>,
    ripple_a: Option<f64>,
    average_a: Option<f64>,
    coil_power_w: Option<f64>,
    clamp_power_w: Option<f64>,
    error: Option<String>,
}

#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct SelfHeating {
    ambient_c: f64,
    thermal_resistance_k_per_w: f64,
    duty: f64,
    winding_temperature_c: Option<f64>,
    power_w: Option<f64>,
    error: Option<String>,
}

/// The documented top level. (`serde(flatten)` does not combine with `deny_unknown_fields`, so
/// the nominal figure keys are spelled out here.)
#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct Report {
    schema: String,
    schema_version: u32,
    name: String,
    design_file: String,
    final_current_a: f64,
    tau_on_s: f64,
    tau_off_s: f64,
    pull_in_time_s: Option<f64>,
    pull_in_margin: f64,
    release_time_s: f64,
    time_to_zero_s: f64,
    min_off_time_s: f64,
    stored_energy_j: f64,
    clamp_energy_j: f64,
    winding_energy_j: f64,
    supply_energy_j: f64,
    peak_switch_voltage_v: f64,
    clamp_power_w: Option<f64>,
    max_repetition_hz: Option<f64>,
    repetition_limit_hz: Option<f64>,
    repetition_limit_by: Option<String>,
    worst: Figures,
    pull_in_current_a: f64,
    drop_out_current_a: f64,
    min_on_time_s: Option<f64>,
    corners: Corners,
    ticks: Ticks,
    checks: Vec<Check>,
    result: Status,
    rise_band_source: String,
    rise_bands: Vec<Band>,
    expected: Expected,
    probe: ProbeOut,
    clamp_comparison: Vec<ClampRow>,
    hold: Vec<Hold>,
    coil_power_w: [f64; 2],
    coil_power_planned_w: Option<[f64; 2]>,
    conduction_loss_w: f64,
    conduction_loss_planned_w: Option<f64>,
    self_heating: Option<SelfHeating>,
    cautions: Vec<String>,
}

const CHECK_IDS: &[&str] = &[
    "pull_in",
    "on_time",
    "off_time",
    "switch_voltage",
    "avalanche",
    "clamp_power",
    "drive",
    "hold_duty",
    "hold_clamp_power",
    "hold_current",
    "hold_avalanche",
    "self_heating",
    "rise_band",
];

fn json_of(args: &[&str]) -> Value {
    let o = run(args);
    assert!(o.status.success(), "{}", stderr(&o));
    serde_json::from_str(&stdout(&o)).expect("valid JSON")
}

fn paths(v: &Value, prefix: &str, out: &mut BTreeSet<String>) {
    match v {
        Value::Object(map) => {
            for (k, v) in map {
                let p = if prefix.is_empty() {
                    k.clone()
                } else {
                    format!("{prefix}.{k}")
                };
                if v.is_object() || v.is_array() {
                    paths(v, &p, out);
                } else {
                    out.insert(p);
                }
            }
        }
        Value::Array(items) => {
            // An empty array contributes no path: its element keys come from another design.
            let p = format!("{prefix}[]");
            for item in items {
                if item.is_object() {
                    paths(item, &p, out);
                } else {
                    out.insert(p.clone());
                }
            }
        }
        _ => {
            out.insert(prefix.to_string());
        }
    }
}

fn documented_paths() -> BTreeSet<String> {
    let doc = std::fs::read_to_string(root().join("docs/json-output.md")).unwrap();
    let index = doc
        .split("## Key index")
        .nth(1)
        .expect("docs/json-output.md has a key index");
    let block = index
        .split("```text")
        .nth(1)
        .and_then(|b| b.split("```").next())
        .expect("key index block");
    block
        .lines()
        .map(str::trim)
        .filter(|l| !l.is_empty())
        .map(str::to_string)
        .collect()
}

/// Designs covering every optional part of the schema: hold, bands, nulls.
fn variants() -> Vec<Vec<&'static str>> {
    vec![
        vec!["report", "examples/greenhouse-valve.toml", "--json"],
        vec!["report", "examples/greenhouse-pump-relay.toml", "--json"],
        // Never pulls in: pull-in times and on-time ticks become null.
        vec![
            "report",
            "examples/greenhouse-valve.toml",
            "--json",
            "--set",
            "supply.min=14 V",
        ],
        // No clamp: avalanche check and supply energy.
        vec![
            "report",
            "examples/greenhouse-pump-relay.toml",
            "--json",
            "--set",
            "clamp.kind=none",
            "--set",
            "clamp.diode_drop=",
        ],
        // RC snubber: second-order release; a hold it cannot model reports an error per point.
        vec![
            "report",
            "examples/greenhouse-valve.toml",
            "--json",
            "--set",
            "clamp.kind=snubber",
            "--set",
            "clamp.diode_drop=",
            "--set",
            "clamp.zener=",
            "--set",
            "clamp.resistance=150 ohm",
            "--set",
            "clamp.capacitance=47 uF",
        ],
        // Bidirectional TVS across the coil: its own clamp kind.
        vec![
            "report",
            "examples/greenhouse-valve.toml",
            "--json",
            "--set",
            "clamp.kind=tvs-across-coil",
            "--set",
            "clamp.diode_drop=",
            "--set",
            "clamp.zener=33 V",
            "--set",
            "clamp.standoff=28 V",
        ],
    ]
}

#[test]
fn output_round_trips_through_the_documented_schema() {
    for args in variants() {
        let v = json_of(&args);
        let typed: Report = serde_json::from_value(v.clone())
            .unwrap_or_else(|e| panic!("{args:?} does not match the schema: {e}"));
        assert_eq!(typed.schema, "coilwise-report");
        assert_eq!(typed.schema_version, 1);
        for c in &typed.checks {
            assert!(
                CHECK_IDS.contains(&c.id.as_str()),
                "undocumented id {}",
                c.id
            );
        }
        let back = serde_json::to_value(&typed).unwrap();
        assert_eq!(back, v, "{args:?}: round trip changed the document");
    }
}

#[test]
fn key_paths_match_the_documented_index() {
    let documented = documented_paths();
    let mut seen = BTreeSet::new();
    // The valve has a hold section; together they cover every path.
    for args in variants().into_iter().take(2) {
        paths(&json_of(&args), "", &mut seen);
    }
    // A nullable object or array that is null in some design shows up as a bare leaf; its
    // documented inner paths are what count.
    seen.retain(|p| {
        !documented
            .iter()
            .any(|d| d.starts_with(&format!("{p}.")) || d.starts_with(&format!("{p}[]")))
    });
    let undocumented: Vec<_> = seen.difference(&documented).collect();
    let absent: Vec<_> = documented.difference(&seen).collect();
    assert!(
        undocumented.is_empty(),
        "in output, not in docs: {undocumented:?}"
    );
    assert!(absent.is_empty(), "in docs, not in output: {absent:?}");
}

#[test]
fn nulls_appear_where_documented() {
    let v = json_of(&variants()[2]);
    assert!(v["worst"]["pull_in_time_s"].is_null());
    assert!(v["min_on_time_s"].is_null());
    assert!(v["ticks"]["min_on"].is_null());
    assert_eq!(v["result"], "fail");
    let snubber = json_of(&variants()[4]);
    assert!(snubber["hold"][0]["duty"].is_null());
    assert!(snubber["hold"][0]["error"].is_string());
    let relay = json_of(&variants()[1]);
    // No clamp.power_rating: no maximum repetition rate.
    assert!(relay["max_repetition_hz"].is_null());
    assert_eq!(relay["hold"], Value::Array(vec![]));
    assert!(relay["self_heating"].is_null());
}

#[test]
fn compare_json_rows_match_the_report_rows() {
    let doc = json_of(&["compare", "examples/greenhouse-valve.toml", "--json"]);
    let report = json_of(&["report", "examples/greenhouse-valve.toml", "--json"]);
    assert_eq!(doc["clamp_comparison"], report["clamp_comparison"]);
    assert_eq!(doc["cautions"], report["cautions"]);
    assert_eq!(doc["schema"], report["schema"]);
    let keys: Vec<&String> = doc.as_object().unwrap().keys().collect();
    assert_eq!(keys, ["cautions", "clamp_comparison", "schema"]);
    let typed: Vec<ClampRow> = serde_json::from_value(doc["clamp_comparison"].clone()).unwrap();
    assert_eq!(typed.iter().filter(|r| r.fitted).count(), 1);
}
