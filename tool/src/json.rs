//! Machine output (`--json`): the schema documented in `docs/json-output.md`.
//!
//! SI units, plain numbers; `null` where a figure does not exist (a coil that never pulls in has
//! no pull-in time). The nominal figures sit at the top level, the worst case of each in `worst`.

use serde::Serialize;

use crate::analysis::{self, wide, Analysis, BAND_SOURCE};
use crate::report::CAUTIONS;
use coilwise::{Figures, OperatingPoint};

/// Schema identifier.
pub const SCHEMA: &str = "coilwise-report";
/// Schema version; bumped on any incompatible change.
pub const SCHEMA_VERSION: u32 = 1;

/// The figures that appear both at the top level (nominal) and in `worst`.
#[derive(Debug, Serialize)]
pub struct FigureSet {
    /// Final on-state current, A.
    pub final_current_a: f64,
    /// Switch-on time constant (armature released), s.
    pub tau_on_s: f64,
    /// Switch-off time constant (armature operated, clamp loop), s.
    pub tau_off_s: f64,
    /// Electrical pull-in time, s; null: never pulls in.
    pub pull_in_time_s: Option<f64>,
    /// `I∞ / I_pull − 1`.
    pub pull_in_margin: f64,
    /// Switch-off to drop-out current, s.
    pub release_time_s: f64,
    /// Switch-off to zero current, s.
    pub time_to_zero_s: f64,
    /// Safe minimum off-time, s.
    pub min_off_time_s: f64,
    /// ½·L·I², J.
    pub stored_energy_j: f64,
    /// Energy into the clamp (the switch when unclamped), J.
    pub clamp_energy_j: f64,
    /// Energy into winding and wiring, J.
    pub winding_energy_j: f64,
    /// Energy drawn from the supply during the release, J.
    pub supply_energy_j: f64,
    /// Peak voltage across the switch, V.
    pub peak_switch_voltage_v: f64,
    /// Clamp average power at the planned rate, W; null without a planned rate.
    pub clamp_power_w: Option<f64>,
    /// Highest repetition rate for the clamp rating, Hz; null without a rating.
    pub max_repetition_hz: Option<f64>,
    /// Highest repetition rate the design allows: the lower of `1 / (t_on,min + t_off,min)` and
    /// `max_repetition_hz`, Hz; null where neither exists.
    pub repetition_limit_hz: Option<f64>,
    /// What sets `repetition_limit_hz`: `"cycle"` (the shortest legal cycle) or
    /// `"clamp_rating"`; null with it.
    pub repetition_limit_by: Option<&'static str>,
}

impl FigureSet {
    fn from(f: &Figures, min_off: f64) -> Self {
        FigureSet {
            final_current_a: wide(f.final_current.value()),
            tau_on_s: wide(f.tau_on.value()),
            tau_off_s: wide(f.tau_off.value()),
            pull_in_time_s: f.pull_in_time.map(|t| wide(t.value())),
            pull_in_margin: wide(f.pull_in_margin),
            release_time_s: wide(f.release_time.value()),
            time_to_zero_s: wide(f.time_to_zero.value()),
            min_off_time_s: min_off,
            stored_energy_j: wide(f.energy.stored.value()),
            clamp_energy_j: wide(f.energy.clamp.value()),
            winding_energy_j: wide(f.energy.winding.value()),
            supply_energy_j: wide(f.energy.supply.value()),
            peak_switch_voltage_v: wide(f.peak_switch_voltage.value()),
            clamp_power_w: f.clamp_power.map(|w| wide(w.value())),
            max_repetition_hz: f.max_repetition.map(|h| wide(h.value())),
            repetition_limit_hz: None,
            repetition_limit_by: None,
        }
    }

    /// Sets the repetition limit from [`Analysis::max_repetition`].
    fn with_limit(mut self, limit: Option<analysis::RepetitionLimit>) -> Self {
        self.repetition_limit_hz = limit.map(|(hz, _)| hz);
        self.repetition_limit_by = limit.map(|(_, by)| match by {
            analysis::RateLimit::Timing => "cycle",
            analysis::RateLimit::ClampRating => "clamp_rating",
        });
        self
    }
}

/// An operating point.
#[derive(Debug, Serialize)]
pub struct Point {
    /// Supply, V.
    pub supply_v: f64,
    /// Winding temperature, °C.
    pub winding_temperature_c: f64,
    /// Multiplier on the winding resistance.
    pub resistance_factor: f64,
    /// Multiplier on the inductance.
    pub inductance_factor: f64,
    /// Multiplier on the sense resistor.
    pub sense_factor: f64,
}

impl From<&OperatingPoint> for Point {
    fn from(p: &OperatingPoint) -> Self {
        Point {
            supply_v: wide(p.supply.value()),
            winding_temperature_c: wide(p.temperature.value()),
            resistance_factor: wide(p.resistance_factor),
            inductance_factor: wide(p.inductance_factor),
            sense_factor: wide(p.sense_factor),
        }
    }
}

/// The three evaluated points.
#[derive(Debug, Serialize)]
pub struct Corners {
    /// Nominal point.
    pub nominal: Point,
    /// Pull-in corner.
    pub pull_in: Point,
    /// Release corner.
    pub release: Point,
}

/// Tick counts.
#[derive(Debug, Serialize)]
pub struct Ticks {
    /// Timer rate, Hz.
    pub tick_rate_hz: u32,
    /// Minimum on-time, ticks (rounded up); null: never pulls in.
    pub min_on: Option<u32>,
    /// Safe minimum off-time, ticks (rounded up).
    pub min_off: u32,
    /// Worst pull-in, ticks (rounded up); null: never pulls in.
    pub pull_in: Option<u32>,
    /// Worst release to drop-out, ticks (rounded up).
    pub release: u32,
}

/// One check.
#[derive(Debug, Serialize)]
pub struct CheckOut {
    /// Stable id.
    pub id: &'static str,
    /// "pass" | "warn" | "fail" | "info".
    pub status: &'static str,
    /// Headroom fraction; null when it does not apply.
    pub margin: Option<f64>,
    /// What was checked.
    pub title: &'static str,
    /// Value, in words with unit.
    pub value: String,
    /// Limit, in words with unit.
    pub limit: String,
    /// Rule and remarks.
    pub note: String,
}

/// One time-to-threshold band.
#[derive(Debug, Serialize)]
pub struct BandOut {
    /// Threshold, A.
    pub threshold_a: f64,
    /// Earliest crossing, s; null: reached at no corner.
    pub earliest_s: Option<f64>,
    /// Latest crossing, s; null: not reached at one or more corners.
    pub latest_s: Option<f64>,
    /// Earliest, ticks rounded down.
    pub earliest_ticks: Option<u32>,
    /// Latest, ticks rounded up.
    pub latest_ticks: Option<u32>,
    /// Corners (of 32) at which the threshold is never reached.
    pub unreachable_corners: usize,
}

/// One compared clamp.
#[derive(Debug, Serialize)]
pub struct ClampOut {
    /// Label.
    pub label: String,
    /// Kind, as in `clamp.kind`.
    pub kind: &'static str,
    /// Whether this is the fitted clamp.
    pub fitted: bool,
    /// Release time, s (null: not evaluated).
    pub release_time_s: Option<f64>,
    /// Time to zero, s.
    pub time_to_zero_s: Option<f64>,
    /// Peak switch voltage, V.
    pub peak_switch_voltage_v: Option<f64>,
    /// Clamp energy, J.
    pub clamp_energy_j: Option<f64>,
    /// Winding energy, J.
    pub winding_energy_j: Option<f64>,
    /// Switch-voltage status.
    pub status: &'static str,
    /// Why not evaluated, if so.
    pub error: Option<String>,
}

/// Hold figures at one point.
#[derive(Debug, Serialize)]
pub struct HoldOut {
    /// Point name: "nominal", "pull_in" or "release".
    pub point: &'static str,
    /// PWM duty fraction; null when there is no hold here (see `error`).
    pub duty: Option<f64>,
    /// Lowest current of the periodic ripple, A.
    pub valley_a: Option<f64>,
    /// Highest current, A.
    pub peak_a: Option<f64>,
    /// Peak-to-peak ripple, A.
    pub ripple_a: Option<f64>,
    /// Time-average current, A.
    pub average_a: Option<f64>,
    /// Winding power, W.
    pub coil_power_w: Option<f64>,
    /// Clamp power while holding (core `Hold::clamp_power`), W.
    pub clamp_power_w: Option<f64>,
    /// Why there is no hold here, else null.
    pub error: Option<String>,
}

/// What a healthy coil shows on the sense input (measured terms), over all 32 corners.
#[derive(Debug, Serialize)]
pub struct ExpectedOut {
    /// Final current as read, A.
    pub final_current_min_a: Option<f64>,
    /// Final current as read, A.
    pub final_current_max_a: Option<f64>,
    /// Time constant, s.
    pub tau_min_s: Option<f64>,
    /// Time constant, s.
    pub tau_max_s: Option<f64>,
    /// Initial slope, A/s.
    pub slope_min_a_per_s: Option<f64>,
    /// Initial slope, A/s.
    pub slope_max_a_per_s: Option<f64>,
    /// On-loop resistance, Ω.
    pub loop_resistance_min_ohm: Option<f64>,
    /// On-loop resistance, Ω.
    pub loop_resistance_max_ohm: Option<f64>,
    /// Inductance, armature released, H.
    pub inductance_min_h: Option<f64>,
    /// Inductance, armature released, H.
    pub inductance_max_h: Option<f64>,
    /// Latest time the armature has moved by, s; null: some corner never pulls in.
    pub movement_by_s: Option<f64>,
    /// Why there are no bands, else null.
    pub error: Option<String>,
}

/// The diagnostic pulse.
#[derive(Debug, Serialize)]
pub struct ProbeOut {
    /// Fraction of the pull-in current the pulse stays below.
    pub fraction: f64,
    /// That current, A.
    pub limit_a: Option<f64>,
    /// Longest pulse, ticks (rounded down).
    pub length_ticks: Option<u32>,
    /// The same, s.
    pub duration_s: Option<f64>,
    /// Why there is no pulse, else null.
    pub error: Option<String>,
}

/// Self-heating steady state.
#[derive(Debug, Serialize)]
pub struct SelfHeatingOut {
    /// Ambient, °C.
    pub ambient_c: f64,
    /// Thermal resistance winding to ambient, K/W.
    pub thermal_resistance_k_per_w: f64,
    /// Full-voltage duty used.
    pub duty: f64,
    /// Winding temperature at equilibrium, °C; null: overheats or not computed (see `error`).
    pub winding_temperature_c: Option<f64>,
    /// Winding power at equilibrium, W.
    pub power_w: Option<f64>,
    /// Why there is no equilibrium, else null.
    pub error: Option<String>,
}

/// The whole document.
#[derive(Debug, Serialize)]
pub struct Report {
    /// Always [`SCHEMA`].
    pub schema: &'static str,
    /// Always [`SCHEMA_VERSION`].
    pub schema_version: u32,
    /// `design.name`.
    pub name: String,
    /// Design file as given.
    pub design_file: String,
    /// Nominal figures.
    #[serde(flatten)]
    pub nominal: FigureSet,
    /// Worst figures (see docs for the corner of each key).
    pub worst: FigureSet,
    /// Pull-in current, A.
    pub pull_in_current_a: f64,
    /// Drop-out current, A.
    pub drop_out_current_a: f64,
    /// Minimum on-time, s; null: never pulls in.
    pub min_on_time_s: Option<f64>,
    /// Evaluated points.
    pub corners: Corners,
    /// Firmware tick counts.
    pub ticks: Ticks,
    /// Checks.
    pub checks: Vec<CheckOut>,
    /// "pass" | "warn" | "fail": the worst check status.
    pub result: &'static str,
    /// Source of the bands.
    pub rise_band_source: &'static str,
    /// Time-to-threshold bands.
    pub rise_bands: Vec<BandOut>,
    /// Expected sense-input figures of a healthy coil.
    pub expected: ExpectedOut,
    /// Diagnostic pulse.
    pub probe: ProbeOut,
    /// Clamp comparison at the release corner.
    pub clamp_comparison: Vec<ClampOut>,
    /// Hold figures (empty without a hold section).
    pub hold: Vec<HoldOut>,
    /// Coil dissipation when on, nominal and worst, W.
    pub coil_power_w: [f64; 2],
    /// Coil dissipation averaged over the planned duty, nominal and worst, W; null without a plan.
    pub coil_power_planned_w: Option<[f64; 2]>,
    /// Switch conduction loss at the worst current while on, W.
    pub conduction_loss_w: f64,
    /// The same averaged over the planned duty, W; null without a plan.
    pub conduction_loss_planned_w: Option<f64>,
    /// Self-heated winding; null without `temperature.ambient` and `coil.thermal_resistance`.
    pub self_heating: Option<SelfHeatingOut>,
    /// Safety cautions.
    pub cautions: Vec<&'static str>,
}

/// Builds the JSON document.
pub fn build(a: &Analysis<'_>) -> Report {
    let n = &a.nominal;
    let (nominal_limit, worst_limit) = a.max_repetition();
    let mut worst = FigureSet::from(&a.release, a.min_off_time).with_limit(worst_limit);
    let p = FigureSet::from(&a.pull_in, a.min_off_time);
    worst.tau_on_s = a.tau_on_max;
    worst.pull_in_time_s = p.pull_in_time_s;
    worst.pull_in_margin = p.pull_in_margin;
    let status_rank = |s: &str| match s {
        "fail" => 3,
        "warn" => 2,
        "pass" => 1,
        _ => 0,
    };
    let result = a
        .checks
        .iter()
        .map(|c| c.status.word())
        .max_by_key(|s| status_rank(s))
        .filter(|s| *s != "info")
        .unwrap_or("pass");
    let hold = match a.hold {
        Some(h) => h
            .points()
            .into_iter()
            .map(|(point, outcome)| match outcome {
                Ok(p) => HoldOut {
                    point,
                    duty: Some(wide(p.hold.duty)),
                    valley_a: Some(wide(p.hold.valley.value())),
                    peak_a: Some(wide(p.hold.peak.value())),
                    ripple_a: Some(wide(p.hold.ripple.value())),
                    average_a: Some(wide(p.hold.average.value())),
                    coil_power_w: Some(wide(p.hold.winding_power.value())),
                    clamp_power_w: p.clamp_power,
                    error: None,
                },
                Err(e) => HoldOut {
                    point,
                    duty: None,
                    valley_a: None,
                    peak_a: None,
                    ripple_a: None,
                    average_a: None,
                    coil_power_w: None,
                    clamp_power_w: None,
                    error: Some(e.describe()),
                },
            })
            .collect(),
        None => Vec::new(),
    };
    let e = a.expected.as_ref().ok();
    let expected = ExpectedOut {
        final_current_min_a: e.map(|e| wide(e.final_current.min.value())),
        final_current_max_a: e.map(|e| wide(e.final_current.max.value())),
        tau_min_s: e.map(|e| wide(e.tau.min.value())),
        tau_max_s: e.map(|e| wide(e.tau.max.value())),
        slope_min_a_per_s: e.map(|e| wide(e.slope.min)),
        slope_max_a_per_s: e.map(|e| wide(e.slope.max)),
        loop_resistance_min_ohm: e.map(|e| wide(e.loop_resistance.min.value())),
        loop_resistance_max_ohm: e.map(|e| wide(e.loop_resistance.max.value())),
        inductance_min_h: e.map(|e| wide(e.inductance.min.value())),
        inductance_max_h: e.map(|e| wide(e.inductance.max.value())),
        movement_by_s: e.and_then(|e| e.movement_by.map(|t| wide(t.value()))),
        error: a.expected.as_ref().err().map(|e| e.to_string()),
    };
    let p = a.probe.as_ref().ok();
    let probe = ProbeOut {
        fraction: a.spec.probe_fraction,
        limit_a: p.map(|p| wide(p.limit.value())),
        length_ticks: p.map(|p| p.length.0),
        duration_s: p.map(|p| wide(p.duration.value())),
        error: a.probe.as_ref().err().map(|e| e.to_string()),
    };
    let self_heating = a.self_heating.map(|sh| SelfHeatingOut {
        ambient_c: sh.ambient,
        thermal_resistance_k_per_w: sh.r_th,
        duty: sh.duty,
        winding_temperature_c: sh
            .outcome
            .as_ref()
            .ok()
            .map(|e| wide(e.temperature.value())),
        power_w: sh.outcome.as_ref().ok().map(|e| wide(e.power.value())),
        error: sh.outcome.as_ref().err().map(|e| e.to_string()),
    });
    Report {
        schema: SCHEMA,
        schema_version: SCHEMA_VERSION,
        name: a.spec.name.clone(),
        design_file: a.spec.inputs.path().to_string(),
        nominal: FigureSet::from(n, wide(n.off_time.required.value())).with_limit(nominal_limit),
        worst,
        pull_in_current_a: analysis::pull_in_current(a.spec),
        drop_out_current_a: analysis::drop_out_current(a.spec),
        min_on_time_s: a.min_on_time,
        corners: Corners {
            nominal: (&n.point).into(),
            pull_in: (&a.pull_in.point).into(),
            release: (&a.release.point).into(),
        },
        ticks: Ticks {
            tick_rate_hz: a.spec.design.tick_rate.hz(),
            min_on: a.ticks.min_on,
            min_off: a.ticks.min_off,
            pull_in: a.ticks.pull_in,
            release: a.ticks.release,
        },
        checks: a
            .checks
            .iter()
            .map(|c| CheckOut {
                id: c.id,
                status: c.status.word(),
                margin: c.margin.filter(|m| m.is_finite()),
                title: c.title,
                value: c.value.clone(),
                limit: c.limit.clone(),
                note: c.note.clone(),
            })
            .collect(),
        result,
        rise_band_source: BAND_SOURCE,
        expected,
        probe,
        rise_bands: a
            .bands
            .iter()
            .map(|b| BandOut {
                threshold_a: b.threshold,
                earliest_s: b.earliest,
                latest_s: b.latest,
                earliest_ticks: b.earliest_ticks,
                latest_ticks: b.latest_ticks,
                unreachable_corners: b.unreachable_corners,
            })
            .collect(),
        clamp_comparison: a
            .comparison
            .iter()
            .map(|r| {
                let f = r.figures.as_ref().ok();
                ClampOut {
                    label: r.label.clone(),
                    kind: r.kind,
                    fitted: r.fitted,
                    release_time_s: f.map(|f| wide(f.release_time.value())),
                    time_to_zero_s: f.map(|f| wide(f.time_to_zero.value())),
                    peak_switch_voltage_v: f.map(|f| wide(f.peak_switch_voltage.value())),
                    clamp_energy_j: f.map(|f| wide(f.energy.clamp.value())),
                    winding_energy_j: f.map(|f| wide(f.energy.winding.value())),
                    status: r.status.word(),
                    error: r.figures.as_ref().err().cloned(),
                }
            })
            .collect(),
        hold,
        coil_power_w: [a.coil_power.0, a.coil_power.1],
        coil_power_planned_w: a.coil_power_planned.map(|(n, w)| [n, w]),
        conduction_loss_w: a.conduction_loss,
        conduction_loss_planned_w: a.conduction_loss_planned,
        self_heating,
        cautions: CAUTIONS.to_vec(),
    }
}

/// What `coilwise compare --json` prints: the comparison rows and the cautions.
#[derive(Debug, Serialize)]
pub struct Comparison {
    /// Schema identifier, the same as the full report's.
    pub schema: &'static str,
    /// The rows, as in [`Report::clamp_comparison`].
    pub clamp_comparison: Vec<ClampOut>,
    /// Safety cautions (the same as the full report's).
    pub cautions: Vec<&'static str>,
}

/// The `compare --json` text, pretty-printed, with a trailing newline.
pub fn render_comparison(a: &Analysis<'_>) -> String {
    let doc = Comparison {
        schema: SCHEMA,
        clamp_comparison: build(a).clamp_comparison,
        cautions: CAUTIONS.to_vec(),
    };
    pretty(&doc)
}

/// `doc` as pretty JSON with its numbers at f32 precision ([`crate::numbers::tidy`]) and a
/// trailing newline.
fn pretty(doc: &impl Serialize) -> String {
    let mut s = serde_json::to_value(doc)
        .map(|mut v| {
            crate::numbers::tidy(&mut v);
            v
        })
        .and_then(|v| serde_json::to_string_pretty(&v))
        .unwrap_or_else(|e| format!("{{\"schema\":\"{SCHEMA}\",\"error\":\"{e}\"}}"));
    s.push('\n');
    s
}

/// The JSON text, pretty-printed, with a trailing newline.
pub fn render(a: &Analysis<'_>) -> String {
    pretty(&build(a))
}
