//! Firmware constants: the timing budget and diagnosis bands as integer ticks in a Rust source
//! snippet, so firmware without an FPU needs no float at run time.

use std::fmt::Write as _;

use crate::analysis::{self, Analysis};
use crate::error::{ErrorClass, ToolError};
use crate::escape;
use crate::quantity::eng;

fn micro(x: f64) -> Result<u32, ToolError> {
    let v = (x * 1e6).round();
    if !(0.0..=u32::MAX as f64).contains(&v) {
        return Err(ToolError::new(
            ErrorClass::Impossible,
            format!("{x} A does not fit a u32 count of microamperes"),
        ));
    }
    Ok(v as u32)
}

/// The fields of `coilwise::diagnosis::BandFigures`, in order: name, unit, meaning.
const BAND_FIELDS: [(&str, &str, &str); 15] = [
    (
        "final_current_a",
        "[f32; 2]",
        "Final current in measured terms, A (min, max).",
    ),
    (
        "tau_s",
        "[f32; 2]",
        "Time constant with the armature released, s (min, max).",
    ),
    (
        "slope_a_per_s",
        "[f32; 2]",
        "Initial slope, A/s (min, max).",
    ),
    (
        "loop_ohms",
        "[f32; 2]",
        "On-loop resistance, ohm (min, max).",
    ),
    (
        "inductance_h",
        "[f32; 2]",
        "Inductance with the armature released, H (min, max).",
    ),
    (
        "sensed_drive_v",
        "[f32; 2]",
        "Drive voltage as the current reading scales it, V (min, max).",
    ),
    (
        "movement_by_s",
        "f32",
        "Latest time to armature movement, s (negative: some corner never pulls in).",
    ),
    (
        "pull_in_reading_a",
        "f32",
        "Pull-in current in measured terms at the high sense corner, A.",
    ),
    (
        "operate_allowance_s",
        "f32",
        "Mechanical operate allowance, s.",
    ),
    (
        "external_ohms",
        "f32",
        "On-loop resistance outside the winding, ohm.",
    ),
    (
        "coil_ohms",
        "f32",
        "Winding resistance at the reference temperature, ohm.",
    ),
    (
        "coil_reference_celsius",
        "f32",
        "Reference temperature, degC.",
    ),
    (
        "coil_alpha_per_kelvin",
        "f32",
        "Temperature coefficient of the winding, 1/K.",
    ),
    (
        "coil_inductance_h",
        "[f32; 2]",
        "Inductance released, operated, H.",
    ),
    (
        "coil_must_volts",
        "[f32; 2]",
        "Must-operate, must-release voltage at the reference temperature, V.",
    ),
];

/// The healthy bands of the verdicts as `HEALTHY_BANDS`: the core's f32 figures printed so that
/// they read back exactly, with the field names of `coilwise::diagnosis::BandFigures`.
fn healthy_bands(b: &mut String, f: &coilwise::diagnosis::BandFigures) {
    let pair = |v: [f32; 2]| format!("[{:?}, {:?}]", v[0], v[1]);
    let one = |v: f32| format!("{v:?}");
    let values = [
        pair(f.final_current_a),
        pair(f.tau_s),
        pair(f.slope_a_per_s),
        pair(f.loop_ohms),
        pair(f.inductance_h),
        pair(f.sensed_drive_v),
        one(f.movement_by_s),
        one(f.pull_in_reading_a),
        one(f.operate_allowance_s),
        one(f.external_ohms),
        one(f.coil_ohms),
        one(f.coil_reference_celsius),
        one(f.coil_alpha_per_kelvin),
        pair(f.coil_inductance_h),
        pair(f.coil_must_volts),
    ];
    let _ = writeln!(
        b,
        "\n/// Healthy bands of the rise verdicts over the design's supply and temperature ranges: the\n/// core's f32 figures, printed to read back exactly. Field for field\n/// `coilwise::diagnosis::BandFigures`, for `Expected::from_figures` (no design physics on the\n/// device)."
    );
    let _ = writeln!(b, "#[derive(Clone, Copy, Debug, PartialEq)]");
    let _ = writeln!(b, "pub struct HealthyBands {{");
    for (name, ty, doc) in BAND_FIELDS {
        let _ = writeln!(b, "    /// {doc}");
        let _ = writeln!(b, "    pub {name}: {ty},");
    }
    let _ = writeln!(b, "}}");
    let _ = writeln!(b, "\n/// The healthy bands of this design.");
    let _ = writeln!(b, "pub const HEALTHY_BANDS: HealthyBands = HealthyBands {{");
    for ((name, _, _), v) in BAND_FIELDS.iter().zip(values) {
        let _ = writeln!(b, "    {name}: {v},");
    }
    let _ = writeln!(b, "}};");
}

/// Emits the snippet. `module`, when given, wraps it in `pub mod NAME { … }`; `healthy` adds
/// the verdicts' healthy bands as f32 figures (`HEALTHY_BANDS`), for a firmware that judges
/// rises without computing its design (everything else is integer).
///
/// # Errors
/// A design whose coil never pulls in at the pull-in corner (firmware must not rely on it), a
/// module name that is not a lower-case Rust identifier or is a keyword, or a value that does not fit a `u32`.
pub fn render(a: &Analysis<'_>, module: Option<&str>, healthy: bool) -> Result<String, ToolError> {
    let spec = a.spec;
    let (Some(min_on), Some(pull_in)) = (a.ticks.min_on, a.ticks.pull_in) else {
        return Err(spec.inputs.error(
            "coil.must_operate",
            ErrorClass::Impossible,
            "the coil never pulls in at the pull-in corner (lowest supply, hottest winding): no on-time is safe, so no constants are emitted",
        ));
    };
    if let Some(m) = module {
        escape::rust_module_name(m).map_err(|why| {
            ToolError::new(
                ErrorClass::Usage,
                format!("--module `{}` {why}", escape::echo(m, 64)),
            )
            .hint("name the module like `coil_budget`")
        })?;
    }
    let hz = spec.design.tick_rate.hz();
    let t = |ticks: u32| eng(ticks as f64 / hz as f64, "s");
    let p = &a.pull_in.point;
    let r = &a.release.point;
    let mut b = String::new();
    let _ = writeln!(
        b,
        "// Firmware constants for \"{}\".",
        escape::rust_comment(&spec.name)
    );
    let _ = writeln!(
        b,
        "// Generated by coilwise {} from {}; regenerate instead of editing.",
        env!("CARGO_PKG_VERSION"),
        escape::rust_comment(spec.inputs.path())
    );
    let _ = writeln!(
        b,
        "// Engineering estimates: confirm on the bench and against the coil and switch datasheets."
    );
    let _ = writeln!(
        b,
        "// Pull-in corner: {:.2} V, {:.1} degC; release corner: {:.2} V, {:.1} degC.",
        p.supply.value(),
        p.temperature.value(),
        r.supply.value(),
        r.temperature.value()
    );
    let mut c = |doc: String, name: &str, ty: &str, value: String| {
        let _ = writeln!(b, "\n/// {doc}");
        let _ = writeln!(b, "pub const {name}: {ty} = {value};");
    };
    let grouped = |v: u64| {
        let s = v.to_string();
        let mut out = String::new();
        for (n, ch) in s.chars().enumerate() {
            if n > 0 && (s.len() - n).is_multiple_of(3) {
                out.push('_');
            }
            out.push(ch);
        }
        out
    };
    c(
        "Timer tick rate the counts below assume, ticks per second.".into(),
        "TICK_HZ",
        "u32",
        grouped(hz as u64),
    );
    c(
        format!(
            "Minimum on-time: worst-corner pull-in plus operate allowance, rounded up ({}).",
            t(min_on)
        ),
        "MIN_ON_TICKS",
        "u32",
        grouped(min_on as u64),
    );
    c(
        format!(
            "Safe minimum off-time before the next pulse, rounded up ({}).",
            t(a.ticks.min_off)
        ),
        "MIN_OFF_TICKS",
        "u32",
        grouped(a.ticks.min_off as u64),
    );
    c(
        format!(
            "Electrical pull-in time at the pull-in corner, rounded up ({}).",
            t(pull_in)
        ),
        "PULL_IN_TICKS",
        "u32",
        grouped(pull_in as u64),
    );
    c(
        format!(
            "Electrical release time to drop-out at the release corner, rounded up ({}).",
            t(a.ticks.release)
        ),
        "RELEASE_TICKS",
        "u32",
        grouped(a.ticks.release as u64),
    );
    let i_pull = analysis::pull_in_current(spec);
    let i_drop = analysis::drop_out_current(spec);
    c(
        format!("Pull-in current, microamperes ({}).", eng(i_pull, "A")),
        "PULL_IN_CURRENT_UA",
        "u32",
        grouped(micro(i_pull)? as u64),
    );
    c(
        format!("Drop-out current, microamperes ({}).", eng(i_drop, "A")),
        "DROP_OUT_CURRENT_UA",
        "u32",
        grouped(micro(i_drop)? as u64),
    );
    if let (Some(h), Some(hold)) = (a.hold, spec.hold) {
        if let Ok(p) = h.pull_in {
            let permille = (f64::from(p.hold.duty) * 1000.0).ceil().clamp(0.0, 1000.0) as u32;
            c(
                format!(
                    "Hold PWM duty at the pull-in corner for {}, per mille, rounded up.",
                    eng(hold.current, "A")
                ),
                "HOLD_DUTY_PER_MILLE",
                "u16",
                permille.to_string(),
            );
        }
        let period = (hz as f64 / hold.pwm_frequency).floor();
        if period >= 1.0 && period <= u32::MAX as f64 {
            c(
                format!(
                    "Hold PWM period at {}, ticks (rounded down).",
                    eng(hold.pwm_frequency, "Hz")
                ),
                "HOLD_PWM_PERIOD_TICKS",
                "u32",
                grouped(period as u64),
            );
        }
    }
    if let Ok(e) = &a.expected {
        let lo = (f64::from(e.final_current.min.value()) * 1e6).floor();
        let hi = (f64::from(e.final_current.max.value()) * 1e6).ceil();
        if lo >= 0.0 && hi <= u32::MAX as f64 {
            c(
                "Lowest final current a healthy coil reads through the sense resistor, microamperes (rounded down).".into(),
                "FINAL_CURRENT_MIN_UA",
                "u32",
                grouped(lo as u64),
            );
            c(
                "Highest final current a healthy coil reads, microamperes (rounded up).".into(),
                "FINAL_CURRENT_MAX_UA",
                "u32",
                grouped(hi as u64),
            );
        }
    }
    if let Ok(p) = &a.probe {
        c(
            format!(
                "Longest diagnostic pulse that keeps the current below {:.0} % of pull-in at every corner, ticks (rounded down).",
                spec.probe_fraction * 100.0
            ),
            "PROBE_TICKS",
            "u32",
            grouped(p.length.0 as u64),
        );
    }
    if healthy {
        let e = a.expected.as_ref().map_err(|e| {
            ToolError::new(
                ErrorClass::Impossible,
                format!("the healthy bands cannot be computed for this design: {e}"),
            )
        })?;
        healthy_bands(&mut b, &e.figures());
    }
    let _ = writeln!(
        b,
        "\n/// Expected time from switch-on for the coil current to reach a threshold, over all\n/// tolerance corners (earliest rounded down, latest rounded up). Outside the band: fault."
    );
    let _ = writeln!(b, "#[derive(Clone, Copy, Debug, PartialEq, Eq)]");
    let _ = writeln!(b, "pub struct RiseBand {{");
    let _ = writeln!(b, "    /// Threshold, microamperes.");
    let _ = writeln!(b, "    pub threshold_ua: u32,");
    let _ = writeln!(b, "    /// Earliest healthy crossing, ticks.");
    let _ = writeln!(b, "    pub earliest_ticks: u32,");
    let _ = writeln!(b, "    /// Latest healthy crossing, ticks.");
    let _ = writeln!(b, "    pub latest_ticks: u32,");
    let _ = writeln!(b, "}}");
    let bands: Vec<_> = a
        .bands
        .iter()
        .filter_map(|band| match (band.earliest_ticks, band.latest_ticks) {
            (Some(e), Some(l)) => Some((band.threshold, e, l)),
            _ => None,
        })
        .collect();
    let _ = writeln!(
        b,
        "\n/// Time-to-threshold bands ({}; thresholds not reached at every corner are left out).",
        analysis::BAND_SOURCE
    );
    let _ = writeln!(b, "pub const RISE_BANDS: [RiseBand; {}] = [", bands.len());
    for (thr, e, l) in bands {
        let _ = writeln!(
            b,
            "    RiseBand {{ threshold_ua: {}, earliest_ticks: {}, latest_ticks: {} }},",
            grouped(micro(thr)? as u64),
            grouped(e as u64),
            grouped(l as u64)
        );
    }
    let _ = writeln!(b, "];");

    Ok(match module {
        Some(m) => {
            let mut out = String::new();
            let _ = writeln!(out, "/// Coil timing constants generated by coilwise.");
            let _ = writeln!(out, "pub mod {m} {{");
            for line in b.lines() {
                if line.is_empty() {
                    out.push('\n');
                } else {
                    let _ = writeln!(out, "    {line}");
                }
            }
            out.push_str("}\n");
            out
        }
        None => b,
    })
}
