//! The waveform plot is well-formed SVG with one trace per clamp, labelled axes with units and
//! threshold lines.

mod common;

use common::{run, stderr, stdout};

fn plot(design: &str, extra: &[&str]) -> (String, Vec<String>) {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("cycle.svg");
    let mut args = vec!["plot", design, "-o", out.to_str().unwrap()];
    args.extend_from_slice(extra);
    let o = run(&args);
    assert!(o.status.success(), "{}", stderr(&o));
    let svg = std::fs::read_to_string(&out).unwrap();
    // The traces are the compared clamps that could be evaluated.
    let rows = run(&["compare", design, "--json"]);
    let rows: serde_json::Value = serde_json::from_str(&stdout(&rows)).unwrap();
    let labels = rows["clamp_comparison"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|r| r["error"].is_null())
        .map(|r| r["label"].as_str().unwrap().to_string())
        .collect();
    (svg, labels)
}

fn texts(doc: &roxmltree::Document<'_>) -> Vec<String> {
    doc.descendants()
        .filter(|n| n.has_tag_name("text"))
        .filter_map(|n| n.text())
        .map(|t| t.trim().to_string())
        .collect()
}

#[test]
fn svg_is_well_formed_with_a_trace_per_clamp() {
    for design in [
        "examples/greenhouse-valve.toml",
        "examples/greenhouse-pump-relay.toml",
    ] {
        let (svg, labels) = plot(design, &[]);
        let doc = roxmltree::Document::parse(&svg).expect("well-formed XML");
        let root = doc.root_element();
        assert!(root.has_tag_name("svg"));
        assert_eq!(root.attribute("width"), Some("900"));
        let texts = texts(&doc);
        assert!(labels.len() >= 5, "{labels:?}");
        for label in &labels {
            // Once in each chart's legend.
            let n = texts.iter().filter(|t| t.contains(label.as_str())).count();
            assert_eq!(n, 2, "legend entries for `{label}`");
        }
        for needle in [
            "coil current (mA)",
            "switch voltage (V)",
            "time after switch-on (ms)",
            "pull-in ",
            "drop-out ",
            "switch breakdown ",
        ] {
            assert!(
                texts.iter().any(|t| t.contains(needle)),
                "{design}: no `{needle}` in {texts:?}"
            );
        }
        // Trace lines are drawn 2 px wide: one current and one voltage line per clamp, plus the
        // legend swatches (one per clamp per chart).
        let wide_lines = doc
            .descendants()
            .filter(|n| n.has_tag_name("polyline") || n.has_tag_name("path"))
            .filter(|n| n.attribute("stroke-width") == Some("2"))
            .count();
        assert!(
            wide_lines >= 2 * labels.len(),
            "{wide_lines} lines for {} clamps",
            labels.len()
        );
        // Each trace has its own colour.
        let mut colours: Vec<&str> = doc
            .descendants()
            .filter(|n| n.has_tag_name("polyline"))
            .filter(|n| n.attribute("stroke-width") == Some("2"))
            .filter_map(|n| n.attribute("stroke"))
            .collect();
        colours.sort_unstable();
        colours.dedup();
        assert!(colours.len() >= labels.len(), "{colours:?}");
    }
}

#[test]
fn plot_options_change_the_picture() {
    let (nominal, _) = plot("examples/greenhouse-valve.toml", &[]);
    let (release, _) = plot("examples/greenhouse-valve.toml", &["--corner", "release"]);
    assert_ne!(nominal, release);
    assert!(release.contains("release corner: 26.40 V supply"));
    let (short, _) = plot("examples/greenhouse-valve.toml", &["--on-time", "500 us"]);
    let doc = roxmltree::Document::parse(&short).unwrap();
    // Only 0.5 ms on: the plain diode still releases over milliseconds, so the axis is in ms.
    assert!(texts(&doc).iter().any(|t| t.contains("(ms)")));
}
