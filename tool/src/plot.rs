//! Waveforms of one on/off cycle, one trace per clamp option, as SVG (drawn with `plotters`).

use coilwise::{Amps, Armature, OperatingPoint, Seconds, Switch};
use plotters::prelude::*;

use crate::analysis::{self, wide, Analysis};
use crate::error::{ErrorClass, ToolError};
use crate::escape::xml_text;

/// Which operating point to draw.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Corner {
    /// Nominal point.
    Nominal,
    /// Pull-in corner.
    PullIn,
    /// Release corner.
    Release,
}

/// One waveform: time (s), coil current (A), switch voltage (V).
#[derive(Clone, Debug, PartialEq)]
pub struct Trace {
    /// Clamp label.
    pub label: String,
    /// Samples `(t, i, v)`.
    pub samples: Vec<(f64, f64, f64)>,
}

/// The cycle: on for `on_time`, then off until the slowest clamp has reached zero current.
#[derive(Clone, Debug, PartialEq)]
pub struct Cycle {
    /// Length of the on-phase, s.
    pub on_time: f64,
    /// End of the plotted window, s.
    pub end: f64,
    /// Pull-in current, A.
    pub pull_in: f64,
    /// Drop-out current, A.
    pub drop_out: f64,
    /// Switch breakdown, V.
    pub breakdown: f64,
    /// Supply at this point, V.
    pub supply: f64,
    /// Traces, fitted clamp first.
    pub traces: Vec<Trace>,
    /// Where it is drawn, in words.
    pub point: String,
}

const SAMPLES: usize = 400;

/// Computes the cycle at `corner`. `on_time` defaults to five switch-on time constants (the
/// current is then within 0.7 % of its final value) or 1.5 times the pull-in time, whichever is
/// longer.
pub fn cycle(a: &Analysis<'_>, corner: Corner, on_time: Option<f64>) -> Result<Cycle, ToolError> {
    let d = &a.spec.design;
    let (op, f, name): (OperatingPoint, _, &str) = match corner {
        Corner::Nominal => (d.nominal_point(), &a.nominal, "nominal point"),
        Corner::PullIn => (d.pull_in_corner(), &a.pull_in, "pull-in corner"),
        Corner::Release => (d.release_corner(), &a.release, "release corner"),
    };
    let err = |e: coilwise::Error| {
        ToolError::new(
            ErrorClass::Impossible,
            format!("cannot draw the {name}: {e}"),
        )
    };
    let tau_on = wide(f.tau_on.value());
    let t_pull = f.pull_in_time.map_or(0.0, |t| wide(t.value()));
    let on = match on_time {
        Some(t) if t > 0.0 && t.is_finite() => t,
        Some(t) => {
            return Err(ToolError::new(
                ErrorClass::Usage,
                format!("--on-time must be a positive time, got {t} s"),
            ))
        }
        None => (5.0 * tau_on).max(1.5 * t_pull),
    };
    let rise = d
        .circuit
        .energize(&op, Armature::Released, Amps::new(0.0))
        .map_err(err)?;
    let i_off = rise.value_at(Seconds::new(on as f32)).map_err(err)? as f64;
    let supply = wide(op.supply.value());
    let breakdown = wide(d.circuit.switch().breakdown().value());

    let mut releases = Vec::new();
    for row in &a.comparison {
        if row.figures.is_err() {
            continue;
        }
        let Ok(c) = d.circuit.with_clamp(row.clamp) else {
            continue;
        };
        let rel = c.release(&op, Amps::new(i_off as f32)).map_err(err)?;
        let t0 = wide(rel.time_to_zero().map_err(err)?.value());
        releases.push((row.label.clone(), rel, t0));
    }
    let slowest = releases.iter().map(|r| r.2).fold(0.0, f64::max);
    let end = on + (slowest * 1.15).max(0.25 * on);

    let on_voltage = |i: f64| match *d.circuit.switch() {
        Switch::Mosfet { on_resistance, .. } => i * on_resistance.value() as f64,
        Switch::Bipolar { saturation, .. } => saturation.value() as f64,
    };
    let mut traces = Vec::new();
    for (label, rel, t0) in releases {
        let mut samples = Vec::with_capacity(2 * SAMPLES + 4);
        for k in 0..=SAMPLES {
            let t = on * k as f64 / SAMPLES as f64;
            let i = rise.value_at(Seconds::new(t as f32)).map_err(err)? as f64;
            samples.push((t, i, on_voltage(i)));
        }
        // Off-phase: dense until zero current, then one point at rest.
        for k in 0..=SAMPLES {
            let dt = t0 * k as f64 / SAMPLES as f64;
            let i = wide(
                rel.current_at(Seconds::new(dt as f32))
                    .map_err(err)?
                    .value(),
            );
            // Across the switch (core): supply plus the clamp's reverse coil voltage while the
            // current flows, the supply once it is zero.
            let v = if k < SAMPLES {
                wide(
                    rel.switch_voltage_at(Seconds::new(dt as f32))
                        .map_err(err)?
                        .value(),
                )
            } else {
                supply
            };
            samples.push((on + dt, i, v));
        }
        samples.push((end, 0.0, supply));
        traces.push(Trace { label, samples });
    }
    Ok(Cycle {
        on_time: on,
        end,
        pull_in: analysis::pull_in_current(a.spec),
        drop_out: analysis::drop_out_current(a.spec),
        breakdown,
        supply,
        traces,
        point: format!(
            "{name}: {:.2} V supply, {:.1} °C winding",
            supply,
            op.temperature.value()
        ),
    })
}

fn draw_err<E: std::fmt::Debug>(e: E) -> ToolError {
    ToolError::new(ErrorClass::Io, format!("drawing failed: {e:?}"))
}

/// Time axis scale: (factor, unit) so that the axis reads in ms or µs.
fn time_scale(end: f64) -> (f64, &'static str) {
    if end >= 1e-3 {
        (1e3, "ms")
    } else {
        (1e6, "µs")
    }
}

/// Height of the strip under the panels that carries the cautions, px.
const CAUTION_STRIP: u32 = 130;
/// Characters per caution line at 11 px sans-serif across 900 px.
const CAUTION_WIDTH: usize = 150;

/// Renders the cycle as an SVG document (900 × 850 px): the two panels, then the cautions.
/// Every text passes through [`xml_text`], so the document is well-formed XML whatever `title`
/// holds.
pub fn svg(c: &Cycle, title: &str) -> Result<String, ToolError> {
    let mut out = String::new();
    {
        let canvas =
            SVGBackend::with_string(&mut out, (900, 720 + CAUTION_STRIP)).into_drawing_area();
        canvas.fill(&WHITE).map_err(draw_err)?;
        let (root, strip) = canvas.split_vertically(720);
        draw_cautions(&strip)?;
        let root = root
            .titled(&xml_text(title), ("sans-serif", 20))
            .map_err(draw_err)?;
        let (upper, lower) = root.split_vertically(340);
        let (k, unit) = time_scale(c.end);
        let x_end = c.end * k;
        let i_max = c
            .traces
            .iter()
            .flat_map(|t| t.samples.iter().map(|s| s.1))
            .fold(c.pull_in, f64::max)
            * 1.15e3;
        let v_max = c
            .traces
            .iter()
            .flat_map(|t| t.samples.iter().map(|s| s.2))
            .fold(c.breakdown, f64::max)
            * 1.12;
        let x_desc = format!("time after switch-on ({unit})");
        let eng = crate::quantity::eng;
        panel(
            &upper,
            &Panel {
                caption: format!("Coil current ({})", c.point),
                x_desc: &x_desc,
                y_desc: "coil current (mA)",
                x_end,
                y_max: i_max,
            },
            &c.traces,
            |s| (s.0 * k, s.1 * 1e3),
            &[
                (
                    c.pull_in * 1e3,
                    format!("pull-in {}", eng(c.pull_in, "A")),
                    RGBColor(200, 0, 0),
                ),
                (
                    c.drop_out * 1e3,
                    format!("drop-out {}", eng(c.drop_out, "A")),
                    RGBColor(0, 120, 0),
                ),
            ],
        )?;
        panel(
            &lower,
            &Panel {
                caption: "Voltage across the switch".to_string(),
                x_desc: &x_desc,
                y_desc: "switch voltage (V)",
                x_end,
                y_max: v_max,
            },
            &c.traces,
            |s| (s.0 * k, s.2),
            &[(
                c.breakdown,
                format!("switch breakdown {}", eng(c.breakdown, "V")),
                RGBColor(200, 0, 0),
            )],
        )?;
        root.present().map_err(draw_err)?;
    }
    Ok(out)
}

/// The cautions of [`crate::cautions::CAUTIONS`], word-wrapped, in the strip under the panels.
fn draw_cautions<DB: DrawingBackend>(
    strip: &DrawingArea<DB, plotters::coord::Shift>,
) -> Result<(), ToolError> {
    let style = ("sans-serif", 11).into_font().color(&BLACK);
    let mut y = 4;
    strip
        .draw(&Text::new(
            "CAUTIONS",
            (12, y),
            ("sans-serif", 12).into_font().color(&BLACK),
        ))
        .map_err(draw_err)?;
    y += 15;
    for caution in crate::cautions::CAUTIONS {
        for (n, line) in wrap(caution, CAUTION_WIDTH).iter().enumerate() {
            let text = if n == 0 {
                format!("- {line}")
            } else {
                format!("  {line}")
            };
            strip
                .draw(&Text::new(text, (12, y), style.clone()))
                .map_err(draw_err)?;
            y += 13;
        }
    }
    Ok(())
}

/// Greedy word wrap at `width` characters.
fn wrap(text: &str, width: usize) -> Vec<String> {
    let mut lines = vec![String::new()];
    for word in text.split_whitespace() {
        let last = lines.last_mut().expect("never empty");
        if !last.is_empty() && last.chars().count() + 1 + word.chars().count() > width {
            lines.push(word.to_string());
        } else {
            if !last.is_empty() {
                last.push(' ');
            }
            last.push_str(word);
        }
    }
    lines
}

/// Axis texts and ranges of one panel.
struct Panel<'a> {
    caption: String,
    x_desc: &'a str,
    y_desc: &'a str,
    x_end: f64,
    y_max: f64,
}

/// Draws one panel: a line per trace (`pick` maps a sample to plot coordinates), a dashed
/// horizontal line per `(level, label, colour)`, and the legend.
fn panel<DB: DrawingBackend>(
    area: &DrawingArea<DB, plotters::coord::Shift>,
    p: &Panel<'_>,
    traces: &[Trace],
    pick: impl Fn(&(f64, f64, f64)) -> (f64, f64),
    levels: &[(f64, String, RGBColor)],
) -> Result<(), ToolError> {
    let mut chart = ChartBuilder::on(area)
        .caption(xml_text(&p.caption), ("sans-serif", 15))
        .margin(12)
        .x_label_area_size(38)
        .y_label_area_size(64)
        .build_cartesian_2d(0f64..p.x_end, 0f64..p.y_max)
        .map_err(draw_err)?;
    chart
        .configure_mesh()
        .x_desc(xml_text(p.x_desc))
        .y_desc(xml_text(p.y_desc))
        .draw()
        .map_err(draw_err)?;
    for (n, t) in traces.iter().enumerate() {
        let col = Palette99::pick(n).to_rgba();
        chart
            .draw_series(LineSeries::new(
                t.samples.iter().map(&pick),
                col.stroke_width(2),
            ))
            .map_err(draw_err)?
            .label(xml_text(&t.label))
            .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 18, y)], col.stroke_width(2)));
    }
    for (level, label, col) in levels {
        let col = *col;
        chart
            .draw_series(DashedLineSeries::new(
                [(0.0, *level), (p.x_end, *level)],
                6,
                4,
                col.stroke_width(1),
            ))
            .map_err(draw_err)?
            .label(xml_text(label))
            .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 18, y)], col.stroke_width(1)));
    }
    chart
        .configure_series_labels()
        .position(SeriesLabelPosition::UpperRight)
        .background_style(WHITE.mix(0.85))
        .border_style(BLACK)
        .label_font(("sans-serif", 12))
        .draw()
        .map_err(draw_err)?;
    Ok(())
}
