//! Golden-file tests of the report and the firmware constants for the example designs.
//!
//! The golden files live in `tool/tests/snapshots/`. After an intended change of the output,
//! re-create them with `COILWISE_BLESS=1 cargo test -p coilwise-tool --test snapshots` and review
//! the diff before committing.

mod common;

use common::{root, run, stderr, stdout};

fn check(name: &str, actual: &str) {
    let path = root().join("tool/tests/snapshots").join(name);
    if std::env::var_os("COILWISE_BLESS").is_some() {
        std::fs::write(&path, actual).unwrap();
        return;
    }
    let expected = std::fs::read_to_string(&path).unwrap_or_else(|_| {
        panic!(
            "no snapshot {}; run with COILWISE_BLESS=1 to create it",
            path.display()
        )
    });
    if expected != actual {
        let first = expected
            .lines()
            .zip(actual.lines())
            .position(|(a, b)| a != b)
            .unwrap_or(expected.lines().count().min(actual.lines().count()));
        panic!(
            "{name} differs from its snapshot at line {}:\n  expected: {:?}\n  actual:   {:?}\n(COILWISE_BLESS=1 re-creates it)",
            first + 1,
            expected.lines().nth(first),
            actual.lines().nth(first)
        );
    }
}

fn output(args: &[&str]) -> String {
    let o = run(args);
    assert!(o.status.success(), "{}", stderr(&o));
    stdout(&o)
}

#[test]
fn valve_with_a_tvs_across_the_coil_report() {
    check(
        "greenhouse-valve-tvs.report.txt",
        &output(&[
            "report",
            "examples/greenhouse-valve.toml",
            "--set",
            "clamp.kind=tvs-across-coil",
            "--set",
            "clamp.diode_drop=",
            "--set",
            "clamp.zener=33 V",
            "--set",
            "clamp.standoff=28 V",
        ]),
    );
}

#[test]
fn valve_report() {
    check(
        "greenhouse-valve.report.txt",
        &output(&["report", "examples/greenhouse-valve.toml"]),
    );
}

#[test]
fn pump_relay_report() {
    check(
        "greenhouse-pump-relay.report.txt",
        &output(&["report", "examples/greenhouse-pump-relay.toml"]),
    );
}

#[test]
fn valve_constants() {
    check(
        "greenhouse-valve.constants.rs.txt",
        &output(&["constants", "examples/greenhouse-valve.toml"]),
    );
}

#[test]
fn pump_relay_constants() {
    check(
        "greenhouse-pump-relay.constants.rs.txt",
        &output(&["constants", "examples/greenhouse-pump-relay.toml"]),
    );
}
