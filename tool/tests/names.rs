//! Names, notes and paths from the user cannot break out of their place in any output format:
//! Rust source (`constants`), SVG (`plot`), JSON (`--json`); `--module` refuses keywords.

mod common;

use common::{run, rustc_check, stderr, stdout};

const VALVE: &str = "examples/greenhouse-valve.toml";

/// Every C0 control, DEL, a C1 control, U+FFFE / U+FFFF (outside the `Char` production of XML
/// 1.0, W3C Recommendation §2.2), the line and paragraph separators, a right-to-left override
/// (refused in comments by rustc's `text_direction_codepoint_in_comment` lint), and the
/// characters each format quotes.
fn hostile() -> String {
    let mut s = String::from("zone <valve> & \"quoted\" 'single' \\ */ ");
    s.extend((1u32..0x20).filter_map(char::from_u32));
    s.push_str("\u{7f}\u{85}\u{9b}\u{fffe}\u{ffff}\u{2028}\u{2029}\u{202e}\u{2066}end");
    s
}

#[test]
fn a_name_with_a_newline_cannot_add_code_to_the_constants() {
    let injected = "valve\npub const INJECTED: u32 = 1;\n// ";
    let set = format!("design.name={injected}");
    let o = run(&["constants", VALVE, "--set", &set]);
    assert!(o.status.success(), "{}", stderr(&o));
    let s = stdout(&o);
    // The test below fails to compile if INJECTED exists (a duplicate definition).
    let probe = format!("#![no_std]\n{s}\npub const INJECTED: u32 = 2;\n");
    rustc_check(&probe).unwrap_or_else(|e| panic!("{e}\n--- source ---\n{probe}"));
    assert_eq!(s.lines().filter(|l| l.contains("INJECTED")).count(), 1);

    // Every other hostile character as well, with the snippet in a module.
    let set = format!("design.name={}", hostile());
    let o = run(&["constants", VALVE, "--set", &set, "--module", "coil"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let s = stdout(&o);
    rustc_check(&format!("#![no_std]\n{s}")).unwrap_or_else(|e| panic!("{e}\n--- source ---\n{s}"));
    assert!(s.contains("end"), "the name is kept, escaped");
}

#[cfg(unix)]
#[test]
fn a_design_path_with_a_newline_cannot_add_code_either() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("x\npub const FROM_PATH: u32 = 1;\n.toml");
    std::fs::copy(common::root().join(VALVE), &path).unwrap();
    let o = run(&["constants", path.to_str().unwrap()]);
    assert!(o.status.success(), "{}", stderr(&o));
    let s = stdout(&o);
    let probe = format!("#![no_std]\n{s}\npub const FROM_PATH: u32 = 2;\n");
    rustc_check(&probe).unwrap_or_else(|e| panic!("{e}\n--- source ---\n{probe}"));
}

#[test]
fn keywords_and_non_identifiers_are_refused_as_module_names() {
    // Strict and reserved keywords (The Rust Reference, "Keywords"), `_`, and non-identifiers.
    for m in [
        "fn", "type", "self", "crate", "super", "mod", "_", "Self", "struct", "gen", "async",
        "r#fn", "2nd", "a-b", "Coil",
    ] {
        let o = run(&["constants", VALVE, "--module", m]);
        let err = stderr(&o);
        assert_eq!(o.status.code(), Some(1), "--module {m}: {err}");
        assert!(err.starts_with("error[usage]: --module"), "{m}: {err}");
    }
    // A lower-case identifier that is only a weak keyword compiles as a module name.
    let o = run(&["constants", VALVE, "--module", "union"]);
    assert!(o.status.success(), "{}", stderr(&o));
    rustc_check(&format!("#![no_std]\n{}", stdout(&o))).unwrap();
}

#[test]
fn the_plot_is_well_formed_xml_whatever_the_name_holds() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("cycle.svg");
    let set = format!("design.name={}", hostile());
    let o = run(&["plot", VALVE, "--set", &set, "-o", out.to_str().unwrap()]);
    assert!(o.status.success(), "{}", stderr(&o));
    let svg = std::fs::read_to_string(&out).unwrap();
    // roxmltree (a general-purpose XML 1.0 parser) is the judge of well-formedness.
    let doc = roxmltree::Document::parse(&svg).unwrap_or_else(|e| panic!("not XML: {e}"));
    let title = doc
        .descendants()
        .filter(|n| n.has_tag_name("text"))
        .filter_map(|n| n.text())
        .find(|t| t.contains("zone <valve> & \"quoted\""))
        .expect("the title, markup characters intact");
    assert!(
        title.contains('\u{fffd}') && title.trim_end().ends_with("end"),
        "{title}"
    );
}

#[test]
fn json_carries_the_name_exactly() {
    let name = hostile();
    let set = format!("design.name={name}");
    let notes = format!("design.notes={name}");
    let o = run(&["report", VALVE, "--json", "--set", &set, "--set", &notes]);
    assert!(o.status.success(), "{}", stderr(&o));
    let v: serde_json::Value = serde_json::from_str(&stdout(&o)).expect("valid JSON");
    assert_eq!(v["name"].as_str(), Some(name.as_str()));
    // RFC 8259 §7: control characters are escaped, never raw.
    assert!(!stdout(&o).chars().any(|c| (c as u32) < 0x20 && c != '\n'));
}

#[test]
fn the_text_report_keeps_the_name_on_its_line() {
    let set = format!("design.name={}", hostile());
    for cmd in ["report", "compare"] {
        let o = run(&[cmd, VALVE, "--set", &set]);
        assert!(o.status.success(), "{}", stderr(&o));
        let s = stdout(&o);
        let first = s.lines().next().unwrap();
        assert!(
            first.contains("zone <valve>") && first.ends_with("end"),
            "{first}"
        );
        assert!(
            !s.contains('\u{1b}') && !s.contains('\r'),
            "raw control characters"
        );
    }
}

/// A bidirectional-text override (U+202E) in the name reorders the rest of its line on a
/// terminal that renders bidi text, and U+2028 / U+2029 are line ends to some viewers; the
/// constants escape them (rustc lints them in comments) but the text report and the error
/// echo passed them raw. Now both escape them like control characters.
#[test]
fn the_text_report_and_error_echo_escape_bidi_controls_and_line_separators() {
    let name = "zone\u{202E}evlav\u{2028}two\u{2029}three\u{2066}iso\u{2069}";
    let set = format!("design.name={name}");
    for cmd in ["report", "compare"] {
        let o = run(&[cmd, VALVE, "--set", &set]);
        assert!(o.status.success(), "{}", stderr(&o));
        let s = stdout(&o);
        let first = s.lines().next().unwrap();
        assert!(first.contains("zone\\u{202e}evlav\\u{2028}two"), "{first}");
        for c in ['\u{202E}', '\u{2028}', '\u{2029}', '\u{2066}', '\u{2069}'] {
            assert!(!s.contains(c), "{cmd}: raw U+{:04X}", c as u32);
        }
    }
    let o = run(&["report", VALVE, "--set", &format!("coil.resistance={name}")]);
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(1), "{err}");
    assert!(err.contains("zone\\u{202e}evlav"), "{err}");
    assert!(
        !err.contains('\u{202E}') && !err.contains('\u{2028}'),
        "{err}"
    );
}

/// A file name with a line feed or an escape sequence reached standard error raw in every
/// message that names the file: "cannot read `no<LF>such<ESC>[31m.toml`", the `FILE:LINE:COL`
/// of a value error, and a `-o` path that cannot be written. Every error message is now
/// escaped as it is printed.
#[test]
fn paths_in_error_messages_are_escaped() {
    let dir = tempfile::tempdir().unwrap();
    let odd = dir.path().join("no\nsuch\u{1b}[31m.toml");
    let check = |o: std::process::Output| {
        let err = stderr(&o);
        assert_eq!(o.status.code(), Some(1), "{err}");
        assert!(!err.contains('\u{1b}'), "raw ESC: {err:?}");
        // One message line and its hint line at most: the file name adds none.
        assert!(err.lines().count() <= 2, "{err:?}");
        assert!(err.contains("no\\nsuch\\u{1b}[31m.toml"), "{err:?}");
    };
    check(run(&["report", odd.to_str().unwrap()]));
    let mut design = std::fs::read_to_string(common::root().join(VALVE)).unwrap();
    design = design.replace("\"160 ohm\"", "\"160 V\"");
    std::fs::write(&odd, design).unwrap();
    check(run(&["report", odd.to_str().unwrap()]));
    let out = dir.path().join("no\nsuch\u{1b}[31m.toml").join("x.txt");
    check(run(&["report", VALVE, "-o", out.to_str().unwrap()]));
}
