//! No input makes the tool panic or print a non-number: every quantity key of both examples is
//! set to extreme values (zero, negative, tiny, huge), and whatever is accepted must produce a
//! report, JSON, constants and a waveform without NaN or infinity.

mod common;

use coilwise_tool::plot::{self, Corner};
use coilwise_tool::quantity::Dim;
use coilwise_tool::schema::{Kind, KEYS};
use coilwise_tool::{analysis::Analysis, constants, json, load_str, report};

fn unit(d: Dim) -> &'static str {
    match d {
        Dim::Number => "",
        d => d.unit_hint(),
    }
}

/// Figure keys the schema documents as numbers, never null.
const ALWAYS_NUMBERS: &[&str] = &[
    "final_current_a",
    "tau_on_s",
    "tau_off_s",
    "pull_in_margin",
    "release_time_s",
    "time_to_zero_s",
    "min_off_time_s",
    "stored_energy_j",
    "clamp_energy_j",
    "winding_energy_j",
    "supply_energy_j",
    "peak_switch_voltage_v",
];

#[test]
fn extreme_values_never_panic_or_print_nan() {
    let mut accepted = 0;
    let mut rejected = 0;
    let snubber: Vec<String> = [
        "clamp.kind=snubber",
        "clamp.diode_drop=",
        "clamp.resistance=220 ohm",
        "clamp.capacitance=47 uF",
    ]
    .map(String::from)
    .to_vec();
    let bases: [(&str, Vec<String>); 3] = [
        ("greenhouse-valve.toml", Vec::new()),
        ("greenhouse-pump-relay.toml", Vec::new()),
        ("greenhouse-pump-relay.toml", snubber),
    ];
    for (name, base) in &bases {
        let name = *name;
        let text = common::example(name);
        for spec in KEYS {
            let Kind::Quantity(dim) = spec.kind else {
                continue;
            };
            for value in ["0", "-1", "1e-30", "1e-9", "1e9", "1e30", "3.4e38"] {
                let mut set = base.clone();
                set.push(format!("{}={value} {}", spec.key, unit(dim)));
                let Ok(s) = load_str(name, &text, &set) else {
                    rejected += 1;
                    continue;
                };
                let Ok(a) = Analysis::new(&s) else {
                    rejected += 1;
                    continue;
                };
                accepted += 1;
                let r = report::render_report(&a);
                let j = json::render(&a);
                for out in [&r, &j] {
                    let words = out.split(|c: char| !c.is_ascii_alphanumeric());
                    for w in words {
                        assert!(
                            !matches!(w, "NaN" | "nan" | "inf" | "Infinity"),
                            "{set:?}: `{w}` in output"
                        );
                    }
                }
                // serde_json writes a NaN as null: the always-present figures must be numbers.
                let v: serde_json::Value = serde_json::from_str(&j).unwrap();
                for key in ALWAYS_NUMBERS {
                    assert!(v[key].is_number(), "{set:?}: {key} = {}", v[key]);
                    assert!(v["worst"][key].is_number(), "{set:?}: worst {key}");
                }
                let _ = constants::render(&a, None, true);
                if let Ok(c) = plot::cycle(&a, Corner::Release, None) {
                    for t in &c.traces {
                        assert!(
                            t.samples
                                .iter()
                                .all(|s| s.0.is_finite() && s.1.is_finite() && s.2.is_finite()),
                            "{set:?}: non-finite sample"
                        );
                    }
                }
            }
        }
    }
    // Both outcomes happen: the sweep is neither all rejected nor all accepted.
    assert!(
        accepted > 50 && rejected > 50,
        "{accepted} accepted, {rejected} rejected"
    );
}
