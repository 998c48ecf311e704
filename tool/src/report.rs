//! The terminal report: aligned tables, a unit on every number.

use std::fmt::Write as _;

use coilwise::physics::off_time::OffTimeLimit;
use coilwise::{Figures, OperatingPoint};

use crate::analysis::{self, wide, Analysis, ClampRow, Status, BAND_SOURCE_TEXT};
use crate::quantity::{eng, percent};
use crate::table::render;

pub use crate::cautions::CAUTIONS;

fn s(x: f32, unit: &str) -> String {
    eng(wide(x), unit)
}

fn point_row(name: &str, op: &OperatingPoint) -> Vec<String> {
    vec![
        name.to_string(),
        s(op.supply.value(), "V"),
        format!("{:.1} °C", op.temperature.value()),
        percent(wide(op.resistance_factor) - 1.0),
        percent(wide(op.inductance_factor) - 1.0),
        percent(wide(op.sense_factor) - 1.0),
    ]
}

fn opt_time(t: Option<coilwise::Seconds>) -> String {
    t.map_or("never".to_string(), |t| s(t.value(), "s"))
}

fn limit_word(l: OffTimeLimit) -> &'static str {
    match l {
        OffTimeLimit::Release => "release + mechanical allowance",
        OffTimeLimit::Residual => "decay to residual current",
        OffTimeLimit::ClampThermal => "clamp power rating",
    }
}

fn figures_table(a: &Analysis<'_>) -> String {
    let n: &Figures = &a.nominal;
    let p: &Figures = &a.pull_in;
    let r: &Figures = &a.release;
    let mut rows = vec![vec![
        "figure".to_string(),
        "nominal".to_string(),
        "worst".to_string(),
        "worst is at".to_string(),
    ]];
    let mut row = |name: &str, nominal: String, worst: String, at: &str| {
        rows.push(vec![name.to_string(), nominal, worst, at.to_string()]);
    };
    row(
        "final current",
        s(n.final_current.value(), "A"),
        s(r.final_current.value(), "A"),
        "release corner (highest)",
    );
    row(
        "pull-in final current",
        s(n.final_current.value(), "A"),
        s(p.final_current.value(), "A"),
        "pull-in corner (lowest)",
    );
    row(
        "time constant, switch-on",
        s(n.tau_on.value(), "s"),
        eng(a.tau_on_max, "s"),
        "largest of the 32 corners",
    );
    row(
        "pull-in time (electrical)",
        opt_time(n.pull_in_time),
        opt_time(p.pull_in_time),
        "pull-in corner",
    );
    row(
        "pull-in margin",
        percent(wide(n.pull_in_margin)),
        percent(wide(p.pull_in_margin)),
        "pull-in corner",
    );
    row(
        "minimum on-time",
        "-".to_string(),
        a.min_on_time.map_or("never".to_string(), |t| eng(t, "s")),
        "pull-in + operate allowance",
    );
    row(
        "time constant, switch-off",
        s(n.tau_off.value(), "s"),
        s(r.tau_off.value(), "s"),
        "release corner",
    );
    row(
        "release time (to drop-out)",
        s(n.release_time.value(), "s"),
        s(r.release_time.value(), "s"),
        "release corner",
    );
    row(
        "time to zero current",
        s(n.time_to_zero.value(), "s"),
        s(r.time_to_zero.value(), "s"),
        "release corner",
    );
    row(
        "safe minimum off-time",
        s(n.off_time.required.value(), "s"),
        eng(a.min_off_time, "s"),
        limit_word(a.off_time_limit),
    );
    row(
        "stored energy",
        s(n.energy.stored.value(), "J"),
        s(r.energy.stored.value(), "J"),
        "release corner",
    );
    let unclamped = matches!(a.spec.design.circuit.clamp(), coilwise::Clamp::Unclamped);
    row(
        if unclamped {
            "avalanche energy (switch)"
        } else {
            "clamp energy"
        },
        s(n.energy.clamp.value(), "J"),
        s(r.energy.clamp.value(), "J"),
        "release corner",
    );
    row(
        "winding energy",
        s(n.energy.winding.value(), "J"),
        s(r.energy.winding.value(), "J"),
        "release corner",
    );
    if r.energy.supply.value() > 0.0 {
        row(
            "energy from supply",
            s(n.energy.supply.value(), "J"),
            s(r.energy.supply.value(), "J"),
            "release corner",
        );
    }
    row(
        "peak switch voltage",
        s(n.peak_switch_voltage.value(), "V"),
        s(r.peak_switch_voltage.value(), "V"),
        "release corner",
    );
    row(
        "peak switch-node voltage",
        s(n.peak_node_voltage.value(), "V"),
        s(r.peak_node_voltage.value(), "V"),
        "release corner (to ground)",
    );
    row(
        if unclamped {
            "avalanche power (switch)"
        } else {
            "clamp average power"
        },
        n.clamp_power.map_or("-".to_string(), |w| s(w.value(), "W")),
        r.clamp_power.map_or("-".to_string(), |w| s(w.value(), "W")),
        "release corner, planned rate",
    );
    let (nominal_rate, worst_rate) = a.max_repetition();
    let rate_text =
        |r: Option<(f64, analysis::RateLimit)>| r.map_or("-".to_string(), |(f, _)| eng(f, "Hz"));
    let which = match worst_rate {
        Some((_, analysis::RateLimit::Timing)) => "lowest: 1 / (min on-time + safe min off-time)",
        Some((_, analysis::RateLimit::ClampRating)) => "lowest: clamp power rating",
        None => "never pulls in, no clamp.power_rating",
    };
    row(
        "maximum repetition rate",
        rate_text(nominal_rate),
        rate_text(worst_rate),
        which,
    );
    row(
        "coil dissipation, on",
        eng(a.coil_power.0, "W"),
        eng(a.coil_power.1, "W"),
        "release corner (highest)",
    );
    if let Some((pn, pw)) = a.coil_power_planned {
        row(
            "coil dissipation, planned duty",
            eng(pn, "W"),
            eng(pw, "W"),
            "release corner, no hold economiser",
        );
    }
    row(
        "switch conduction loss, on",
        "-".to_string(),
        eng(a.conduction_loss, "W"),
        "release corner current",
    );
    if let Some(p) = a.conduction_loss_planned {
        row(
            "switch conduction loss, planned",
            "-".to_string(),
            eng(p, "W"),
            "release corner, planned duty",
        );
    }
    render(&rows, &[false, true, true, false])
}

fn checks_table(a: &Analysis<'_>) -> String {
    let mut rows = vec![vec![
        "check".to_string(),
        "status".to_string(),
        "value".to_string(),
        "limit".to_string(),
        "margin".to_string(),
    ]];
    for c in &a.checks {
        rows.push(vec![
            c.title.to_string(),
            c.status.word().to_uppercase(),
            c.value.clone(),
            c.limit.clone(),
            c.margin.map_or("-".to_string(), percent),
        ]);
    }
    let mut out = render(&rows, &[false, false, false, false, true]);
    out.push('\n');
    let mut seen: Vec<(&str, &str)> = Vec::new();
    for c in &a.checks {
        if seen.contains(&(c.title, c.note.as_str())) {
            continue;
        }
        seen.push((c.title, c.note.as_str()));
        let _ = writeln!(out, "  {}: {}", c.title, c.note);
    }
    out
}

/// The clamp comparison table alone (also used by `coilwise compare`).
pub fn comparison_table(a: &Analysis<'_>) -> String {
    let r = &a.release.point;
    let mut out = format!(
        "All at the release corner ({}, {:.1} °C winding), switching off {}.\n\n",
        s(r.supply.value(), "V"),
        r.temperature.value(),
        s(a.release.final_current.value(), "A"),
    );
    let mut rows = vec![vec![
        "clamp".to_string(),
        "release".to_string(),
        "to zero".to_string(),
        "peak switch V".to_string(),
        "clamp energy".to_string(),
        "winding energy".to_string(),
        "switch V".to_string(),
    ]];
    let mut notes = Vec::new();
    for row in &a.comparison {
        rows.push(comparison_row(row, &mut notes));
    }
    out.push_str(&render(
        &rows,
        &[false, true, true, true, true, true, false],
    ));
    for n in notes {
        let _ = writeln!(out, "  {n}");
    }
    out
}

fn comparison_row(row: &ClampRow, notes: &mut Vec<String>) -> Vec<String> {
    let label = if row.fitted {
        format!("{} (fitted)", row.label)
    } else {
        row.label.clone()
    };
    match &row.figures {
        Ok(f) => vec![
            label,
            s(f.release_time.value(), "s"),
            s(f.time_to_zero.value(), "s"),
            s(f.peak_switch_voltage.value(), "V"),
            if matches!(row.clamp, coilwise::Clamp::Unclamped) {
                // No clamp: the energy goes into the switch's avalanche.
                format!("{} (switch)", s(f.energy.clamp.value(), "J"))
            } else {
                s(f.energy.clamp.value(), "J")
            },
            s(f.energy.winding.value(), "J"),
            row.status.word().to_uppercase(),
        ],
        Err(e) => {
            notes.push(format!("{}: not evaluated: {e}", row.label));
            vec![
                label,
                "-".into(),
                "-".into(),
                "-".into(),
                "-".into(),
                "-".into(),
                "n/a".into(),
            ]
        }
    }
}

/// What `coilwise compare` prints: a title, the comparison table and the cautions.
pub fn render_comparison(a: &Analysis<'_>) -> String {
    format!(
        "coilwise clamp comparison: {}\n\n{}\n{}",
        crate::escape::text_line(&a.spec.name),
        comparison_table(a),
        crate::cautions::text_section()
    )
}

/// The full report.
pub fn render_report(a: &Analysis<'_>) -> String {
    let spec = a.spec;
    let d = &spec.design;
    let mut out = String::new();
    let line = crate::escape::text_line;
    let _ = writeln!(out, "coilwise report: {}", line(&spec.name));
    let _ = writeln!(out, "design file: {}", line(spec.inputs.path()));
    if let Some(n) = &spec.notes {
        let _ = writeln!(out, "notes: {}", line(n));
    }
    let coil = d.circuit.coil();
    let _ = writeln!(
        out,
        "coil {} at {:.1} °C, L {} released / {} operated; pull-in {} ({} must-operate), drop-out {} ({} must-release)",
        s(coil.resistance_ref().value(), "Ω"),
        coil.reference_temperature().value(),
        s(coil.inductance(coilwise::Armature::Released).value(), "H"),
        s(coil.inductance(coilwise::Armature::Operated).value(), "H"),
        eng(analysis::pull_in_current(spec), "A"),
        s(coil.must_operate().value(), "V"),
        eng(analysis::drop_out_current(spec), "A"),
        s(coil.must_release().value(), "V"),
    );
    let _ = writeln!(
        out,
        "switch {} ({}-side, breakdown {}), clamp {}",
        spec.switch_kind,
        if d.circuit.topology() == coilwise::Topology::HighSide {
            "high"
        } else {
            "low"
        },
        s(d.circuit.switch().breakdown().value(), "V"),
        analysis::fitted_label(spec),
    );

    out.push_str("\nOPERATING POINTS\n");
    let rows = vec![
        vec![
            "point".to_string(),
            "supply".to_string(),
            "winding".to_string(),
            "R".to_string(),
            "L".to_string(),
            "sense".to_string(),
        ],
        point_row("nominal", &a.nominal.point),
        point_row("pull-in corner", &a.pull_in.point),
        point_row("release corner", &a.release.point),
    ];
    out.push_str(&render(&rows, &[false, true, true, true, true, true]));
    out.push_str(
        "  pull-in corner: lowest supply, hottest winding, highest R and L: slowest pull-in.\n",
    );
    out.push_str("  release corner: highest supply, coldest winding, lowest R, highest L: most current, stored energy and voltage at switch-off, longest release.\n");

    out.push_str("\nTIMING, ENERGY AND STRESS\n");
    out.push_str(&figures_table(a));

    let _ = writeln!(
        out,
        "\nFIRMWARE BUDGET (tick rate {} Hz, each count rounded up)",
        d.tick_rate.hz()
    );
    let hz = d.tick_rate.hz() as f64;
    let tick_row = |name: &str, t: Option<u32>| -> Vec<String> {
        vec![
            name.to_string(),
            t.map_or("never".to_string(), |t| t.to_string()),
            t.map_or("-".to_string(), |t| eng(t as f64 / hz, "s")),
        ]
    };
    let rows = vec![
        vec![
            "constant".to_string(),
            "ticks".to_string(),
            "time".to_string(),
        ],
        tick_row("minimum on-time", a.ticks.min_on),
        tick_row("safe minimum off-time", Some(a.ticks.min_off)),
        tick_row("worst pull-in", a.ticks.pull_in),
        tick_row("worst release", Some(a.ticks.release)),
    ];
    out.push_str(&render(&rows, &[false, true, true]));

    out.push_str("\nCHECKS\n");
    out.push_str(&checks_table(a));

    if let (Some(h), Some(hold)) = (a.hold, spec.hold) {
        let unclamped = matches!(spec.design.circuit.clamp(), coilwise::Clamp::Unclamped);
        let _ = writeln!(
            out,
            "\nHOLD ECONOMISER ({} at {} PWM, {})",
            eng(hold.current, "A"),
            eng(hold.pwm_frequency, "Hz"),
            if unclamped {
                "NO CLAMP: the switch avalanches in every off-interval"
            } else {
                "freewheeling through the fitted clamp"
            }
        );
        let mut rows = vec![vec![
            "point".to_string(),
            "duty".to_string(),
            "valley".to_string(),
            "peak".to_string(),
            "ripple p-p".to_string(),
            "coil power".to_string(),
            "clamp power".to_string(),
        ]];
        let mut problems = Vec::new();
        for (name, outcome) in h.points() {
            let name = match name {
                "pull_in" => "pull-in corner",
                "release" => "release corner",
                other => other,
            };
            match outcome {
                Ok(p) => rows.push(vec![
                    name.to_string(),
                    format!("{:.1} %", wide(p.hold.duty) * 100.0),
                    s(p.hold.valley.value(), "A"),
                    s(p.hold.peak.value(), "A"),
                    s(p.hold.ripple.value(), "A"),
                    s(p.hold.winding_power.value(), "W"),
                    p.clamp_power.map_or("-".to_string(), |w| eng(w, "W")),
                ]),
                Err(e) => {
                    rows.push(vec![
                        name.to_string(),
                        "-".into(),
                        "-".into(),
                        "-".into(),
                        "-".into(),
                        "-".into(),
                        "-".into(),
                    ]);
                    problems.push(format!("  {name}: {}", e.describe()));
                }
            }
        }
        out.push_str(&render(&rows, &[false, true, true, true, true, true, true]));
        for p in problems {
            let _ = writeln!(out, "{p}");
        }
        out.push_str("  exact periodic steady state of the PWM (core); clamp power: the clamp carries the coil current in every off phase, (1 - duty) x (V x mean off-phase current + R_clamp x mean square).\n");
    }

    out.push_str("\nDIAGNOSIS: WHAT A HEALTHY COIL SHOWS ON THE SENSE INPUT (all 32 corners)\n");
    match &a.expected {
        Ok(e) => {
            let span = |name: &str, lo: f32, hi: f32, unit: &str| {
                vec![name.to_string(), s(lo, unit), s(hi, unit)]
            };
            let rows = vec![
                vec!["figure".to_string(), "min".to_string(), "max".to_string()],
                span(
                    "final current (as read)",
                    e.final_current.min.value(),
                    e.final_current.max.value(),
                    "A",
                ),
                span("time constant", e.tau.min.value(), e.tau.max.value(), "s"),
                span("initial slope", e.slope.min, e.slope.max, "A/s"),
                span(
                    "on-loop resistance",
                    e.loop_resistance.min.value(),
                    e.loop_resistance.max.value(),
                    "Ω",
                ),
                span(
                    "inductance (released)",
                    e.inductance.min.value(),
                    e.inductance.max.value(),
                    "H",
                ),
            ];
            out.push_str(&render(&rows, &[false, true, true]));
            match e.movement_by {
                Some(t) => {
                    let _ = writeln!(
                        out,
                        "  armature movement expected by {} after switch-on (slowest pull-in + operate allowance).",
                        s(t.value(), "s")
                    );
                }
                None => out.push_str(
                    "  some corner never pulls in: a missing armature movement proves nothing.\n",
                ),
            }
        }
        Err(e) => {
            let _ = writeln!(out, "  no expected bands: {e}");
        }
    }
    out.push('\n');
    let mut rows = vec![vec![
        "time to threshold".to_string(),
        "earliest".to_string(),
        "latest".to_string(),
        "earliest ticks".to_string(),
        "latest ticks".to_string(),
    ]];
    for b in &a.bands {
        rows.push(vec![
            eng(b.threshold, "A"),
            b.earliest.map_or("never".to_string(), |t| eng(t, "s")),
            b.latest.map_or("never".to_string(), |t| eng(t, "s")),
            b.earliest_ticks.map_or("-".to_string(), |t| t.to_string()),
            b.latest_ticks.map_or("-".to_string(), |t| t.to_string()),
        ]);
    }
    out.push_str(&render(&rows, &[true, true, true, true, true]));
    let _ = writeln!(out, "  {BAND_SOURCE_TEXT}.");
    out.push_str("  Earlier than the band: shorted turns or a short; later or never: open or high-resistance wiring, low supply.\n");
    match &a.probe {
        Ok(p) => {
            let _ = writeln!(
                out,
                "  diagnostic pulse: at most {} ticks ({}) keeps the current below {} ({:.0} % of pull-in) at every corner.",
                p.length.0,
                s(p.duration.value(), "s"),
                s(p.limit.value(), "A"),
                spec.probe_fraction * 100.0
            );
        }
        Err(e) => {
            let _ = writeln!(out, "  diagnostic pulse: none: {e}.");
        }
    }

    out.push_str("\nCLAMP COMPARISON\n");
    out.push_str(&comparison_table(a));

    out.push('\n');
    out.push_str(&crate::cautions::text_section());
    let worst = a
        .checks
        .iter()
        .map(|c| c.status)
        .fold(Status::Info, |acc, s| match (acc, s) {
            (Status::Fail, _) | (_, Status::Fail) => Status::Fail,
            (Status::Warn, _) | (_, Status::Warn) => Status::Warn,
            (Status::Pass, _) | (_, Status::Pass) => Status::Pass,
            _ => Status::Info,
        });
    let count = |st: Status| a.checks.iter().filter(|c| c.status == st).count();
    let _ = writeln!(
        out,
        "\nRESULT: {} ({} pass, {} warn, {} fail, {} info)",
        worst.word().to_uppercase(),
        count(Status::Pass),
        count(Status::Warn),
        count(Status::Fail),
        count(Status::Info)
    );
    out
}
