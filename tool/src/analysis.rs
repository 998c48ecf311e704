//! Everything the outputs show, computed once: figures at the nominal point and both worst
//! corners, tick budget, pass/warn/fail checks, time-to-threshold bands, clamp comparison, hold
//! and drive figures.

use coilwise::diagnosis::{Conditions, Expected, Probe, ThresholdBand};
use coilwise::physics::drive::{check_bipolar, check_mosfet, BaseDrive, GateDrive};
use coilwise::physics::off_time::OffTimeLimit;
use coilwise::{
    Amps, Armature, BipolarCheck, Celsius, Clamp, Figures, Hertz, Hold, KelvinPerWatt, Limit,
    MosfetCheck, Ohms, OperatingPoint, SelfHeating, Switch, Volts, COMMON_OVERDRIVE,
};

use crate::error::{ErrorClass, ToolError};
use crate::quantity::eng;
use crate::spec::{core_error, Spec};

/// E12 mantissas.
pub const E12: [f64; 12] = [1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2];
/// E24 mantissas.
pub const E24: [f64; 24] = [
    1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6,
    6.2, 6.8, 7.5, 8.2, 9.1,
];

/// The largest value of an E series not above `x` (x > 0).
pub fn e_series_down(x: f64, series: &[f64]) -> f64 {
    if !(x.is_finite() && x > 0.0) {
        return 0.0;
    }
    let decade = 10f64.powf(x.log10().floor());
    let m = x / decade;
    match series.iter().rev().find(|&&s| s <= m * (1.0 + 1e-9)) {
        Some(&s) => s * decade,
        None => series.last().copied().unwrap_or(1.0) * decade / 10.0,
    }
}

/// f32 → f64 by its shortest decimal form, so that 0.15f32 prints as 0.15, not 0.15000000596….
pub fn wide(x: f32) -> f64 {
    let s = x.to_string();
    s.parse().unwrap_or(x as f64)
}

/// Check outcome.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Status {
    /// Within limits with the stated headroom.
    Pass,
    /// Within the hard limit but short of the recommended headroom.
    Warn,
    /// Outside the limit.
    Fail,
    /// Not a pass/fail figure, or not enough inputs to check.
    Info,
}

impl Status {
    /// Lower-case word used in the report and JSON.
    pub fn word(self) -> &'static str {
        match self {
            Status::Pass => "pass",
            Status::Warn => "warn",
            Status::Fail => "fail",
            Status::Info => "info",
        }
    }
}

/// One pass / warn / fail check.
#[derive(Clone, Debug, PartialEq)]
pub struct Check {
    /// Stable identifier (JSON).
    pub id: &'static str,
    /// What is checked.
    pub title: &'static str,
    /// Outcome.
    pub status: Status,
    /// The figure checked, with unit.
    pub value: String,
    /// The limit it is checked against, with unit.
    pub limit: String,
    /// Headroom as a fraction (positive: inside the limit), when it applies.
    pub margin: Option<f64>,
    /// Rule and remarks.
    pub note: String,
}

/// Expected time for the coil current to reach a threshold, over all tolerance corners.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Band {
    /// Threshold, A.
    pub threshold: f64,
    /// Earliest crossing over the corners, s (`None`: reached at no corner).
    pub earliest: Option<f64>,
    /// Latest crossing, s (`None`: not reached at one or more corners).
    pub latest: Option<f64>,
    /// Earliest in ticks, rounded down.
    pub earliest_ticks: Option<u32>,
    /// Latest in ticks, rounded up.
    pub latest_ticks: Option<u32>,
    /// How many corners never reach the threshold.
    pub unreachable_corners: usize,
}

/// Where the bands come from.
pub const BAND_SOURCE: &str = "diagnosis-module";
/// The same, in words.
pub const BAND_SOURCE_TEXT: &str = "from the core's diagnosis module (ThresholdBand): the hull over all 32 tolerance corners (supply, winding temperature, resistance, inductance, sense), in measured terms (current read through the sense resistor at its nominal value); for a threshold some corner never reaches, the tool counts those corners and gives the earliest crossing of the rest";

/// One clamp in the comparison.
#[derive(Clone, Debug, PartialEq)]
pub struct ClampRow {
    /// Label with values ("zener 16 V + diode").
    pub label: String,
    /// Kind word as in `clamp.kind`.
    pub kind: &'static str,
    /// Whether this is the clamp in the design file.
    pub fitted: bool,
    /// The clamp.
    pub clamp: Clamp,
    /// Figures at the release corner, or why there are none.
    pub figures: Result<Figures, String>,
    /// Switch-voltage check of this clamp.
    pub status: Status,
}

/// The hold PWM at one operating point (from the core) and the clamp's share while holding.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct HoldPoint {
    /// Duty, valley, peak, ripple, average current and winding power of the periodic hold.
    pub hold: Hold,
    /// Average clamp power while holding, W (the core's `Hold::clamp_power`); `None` for a
    /// clamp without a first-order freewheel loop.
    pub clamp_power: Option<f64>,
}

/// Why there is no hold PWM at a point.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum HoldProblem {
    /// The hold current is at or above what the supply can drive: not even 100 % duty holds it.
    CannotHold,
    /// The PWM is too slow: the current falls to zero in every off-interval.
    Discontinuous,
    /// The fitted clamp (RC snubber) has no first-order freewheel loop for the hold model.
    NotFirstOrder,
    /// Another error from the core.
    Other(coilwise::Error),
}

impl HoldProblem {
    /// A sentence for reports.
    pub fn describe(&self) -> String {
        match self {
            HoldProblem::CannotHold => {
                "cannot hold: the current is out of reach even at 100 % duty".to_string()
            }
            HoldProblem::Discontinuous => {
                "PWM too slow: the current falls to zero in every off-interval".to_string()
            }
            HoldProblem::NotFirstOrder => "not modelled for an RC snubber".to_string(),
            HoldProblem::Other(e) => e.to_string(),
        }
    }
}

/// The hold PWM at one point, or why there is none.
pub type HoldOutcome = Result<HoldPoint, HoldProblem>;

/// Hold phase at the three evaluated points.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct HoldFigures {
    /// Nominal point.
    pub nominal: HoldOutcome,
    /// Pull-in corner: lowest supply, hottest coil, so the highest duty.
    pub pull_in: HoldOutcome,
    /// Release corner: highest supply, coldest coil, so the lowest duty and largest ripple.
    pub release: HoldOutcome,
}

impl HoldFigures {
    /// The three points with their names.
    pub fn points(&self) -> [(&'static str, &HoldOutcome); 3] {
        [
            ("nominal", &self.nominal),
            ("pull_in", &self.pull_in),
            ("release", &self.release),
        ]
    }
}

/// The switch drive check from the core.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum DriveCheck {
    /// Bipolar saturation at minimum gain.
    Bipolar(BipolarCheck),
    /// MOSFET gate voltage and conduction loss.
    Mosfet(MosfetCheck),
}

/// Self-heated winding temperature (from the core) and the duty it was computed at.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SelfHeatingCheck {
    /// Hottest ambient, °C.
    pub ambient: f64,
    /// Thermal resistance, K/W.
    pub r_th: f64,
    /// Full-voltage duty used: the planned `on_time × repetition`, or 1 without a plan.
    pub duty: f64,
    /// The equilibrium, or the core's reason (overtemperature).
    pub outcome: Result<SelfHeating, coilwise::Error>,
}

/// Firmware tick counts (each rounded toward safety).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct TickCounts {
    /// Minimum on-time, rounded up; `None` when the coil never pulls in at the pull-in corner.
    pub min_on: Option<u32>,
    /// Safe minimum off-time, rounded up.
    pub min_off: u32,
    /// Worst pull-in time, rounded up.
    pub pull_in: Option<u32>,
    /// Worst release time to drop-out, rounded up.
    pub release: u32,
}

/// Everything computed for one design.
#[derive(Clone, Debug)]
pub struct Analysis<'a> {
    /// The design.
    pub spec: &'a Spec,
    /// At the nominal point.
    pub nominal: Figures,
    /// At the pull-in corner.
    pub pull_in: Figures,
    /// At the release corner.
    pub release: Figures,
    /// Minimum on-time (worst pull-in + operate allowance), s.
    pub min_on_time: Option<f64>,
    /// Safe minimum off-time over nominal and release corner, s.
    pub min_off_time: f64,
    /// Which requirement set the off-time.
    pub off_time_limit: OffTimeLimit,
    /// The same in ticks.
    pub ticks: TickCounts,
    /// Checks, in report order.
    pub checks: Vec<Check>,
    /// Time-to-threshold bands, one per threshold.
    pub bands: Vec<Band>,
    /// Clamp comparison rows.
    pub comparison: Vec<ClampRow>,
    /// Hold phase, when configured.
    pub hold: Option<HoldFigures>,
    /// Switch drive check, when its inputs are given.
    pub drive: Option<DriveCheck>,
    /// Switch conduction loss at the release corner's current while on, W.
    pub conduction_loss: f64,
    /// The same averaged over the planned duty, W.
    pub conduction_loss_planned: Option<f64>,
    /// Coil dissipation when on continuously: nominal and release corner, W.
    pub coil_power: (f64, f64),
    /// Coil dissipation averaged over the planned duty: nominal and release corner, W.
    pub coil_power_planned: Option<(f64, f64)>,
    /// Self-heated winding temperature, when ambient and thermal resistance are given.
    pub self_heating: Option<SelfHeatingCheck>,
    /// What a healthy coil shows on the sense input (core diagnosis module).
    pub expected: Result<Expected, coilwise::Error>,
    /// The diagnostic pulse (core diagnosis module).
    pub probe: Result<Probe, coilwise::Error>,
}

/// Pull-in current, A.
pub fn pull_in_current(spec: &Spec) -> f64 {
    wide(spec.design.circuit.coil().pull_in_current().value())
}

/// Drop-out current, A.
pub fn drop_out_current(spec: &Spec) -> f64 {
    wide(spec.design.circuit.coil().drop_out_current().value())
}

fn figures_error(spec: &Spec, err: coilwise::Error, corner: &str) -> ToolError {
    use coilwise::Param;
    let key = match err {
        coilwise::Error::Invalid { param, .. } => match param {
            Param::ClampVoltage => Some("clamp.zener"),
            Param::BreakdownVoltage => Some("switch.breakdown"),
            Param::Temperature | Param::TemperatureRange => Some("temperature.max"),
            Param::Supply => Some("supply.min"),
            Param::Current => Some("timing.residual_current"),
            Param::Time => Some("timing.release_allowance"),
            Param::PowerRating => Some("clamp.power_rating"),
            Param::Frequency => Some("timing.repetition"),
            _ => None,
        },
        coilwise::Error::OutsideModel(coilwise::Limit::NoHeadroom) => Some("switch.saturation"),
        coilwise::Error::OutsideModel(coilwise::Limit::SnubberUnderdamped) => {
            Some("clamp.capacitance")
        }
        coilwise::Error::TickOverflow => Some("timing.tick_rate"),
        // A snubber's figures leave the f32 range only through its own R and C (the other
        // clamps' figures are bounded by the validated supply, coil and clamp values).
        coilwise::Error::OutsideModel(_) if spec.clamp_kind == "snubber" => {
            Some("clamp.capacitance")
        }
        _ => None,
    };
    let mut message = format!("at the {corner}: {err}");
    if key == Some("clamp.capacitance")
        && matches!(err, coilwise::Error::OutsideModel(l) if l != coilwise::Limit::SnubberUnderdamped)
    {
        message.push_str(" (the snubber's clamp.resistance and clamp.capacitance together)");
    }
    match key {
        Some(k @ "clamp.capacitance")
            if matches!(
                err,
                coilwise::Error::OutsideModel(coilwise::Limit::SnubberUnderdamped)
            ) =>
        {
            spec
            .inputs
            .error(k, ErrorClass::Impossible, message)
            .hint("the snubber must be at least critically damped, (R_winding + R_s)^2 >= 4 L / C: use a larger capacitor or resistor")
        }
        Some(k) => spec.inputs.error(k, ErrorClass::Impossible, message),
        // No single key to blame: name the file.
        None => ToolError::new(ErrorClass::Impossible, message).at(
            Some(crate::error::Place::File {
                path: spec.inputs.path().to_string(),
                line: 1,
                column: 1,
            }),
            None,
        ),
    }
}

fn band(spec: &Spec, threshold: f64) -> Result<Band, ToolError> {
    let d = &spec.design;
    let mut earliest: Option<f64> = None;
    let mut latest: Option<f64> = Some(0.0);
    let mut unreachable = 0;
    match ThresholdBand::new(d, &Conditions::default(), Amps::new(threshold as f32)) {
        Ok(b) => {
            earliest = Some(wide(b.time.min.value()));
            latest = Some(wide(b.time.max.value()));
        }
        // Some corner never reaches the threshold: the diagnosis module gives no band; count the
        // corners and keep the earliest crossing of the others, in the same measured terms.
        Err(coilwise::Error::Unreachable { .. }) => unreachable_scan(
            spec,
            threshold,
            &mut earliest,
            &mut latest,
            &mut unreachable,
        )?,
        Err(e) => return Err(figures_error(spec, e, "diagnosis band")),
    }
    band_ticks(spec, threshold, earliest, latest, unreachable)
}

fn unreachable_scan(
    spec: &Spec,
    threshold: f64,
    earliest: &mut Option<f64>,
    latest: &mut Option<f64>,
    unreachable: &mut usize,
) -> Result<(), ToolError> {
    let d = &spec.design;
    let mut k = 0;
    while let Some(op) = d.corner(k) {
        k += 1;
        let rise = d
            .circuit
            .energize(&op, Armature::Released, Amps::new(0.0))
            .map_err(|e| figures_error(spec, e, "a tolerance corner"))?;
        // Measured terms: firmware converts the sense voltage with the nominal sense resistance,
        // so a sense resistor k_s times its nominal value reads k_s times the true current.
        let measured =
            coilwise::FirstOrder::new(0.0, op.sense_factor * rise.asymptote(), rise.tau())
                .map_err(|e| figures_error(spec, e, "a tolerance corner"))?;
        match measured.time_to(threshold as f32) {
            Ok(t) => {
                let t = wide(t.value());
                *earliest = Some(earliest.map_or(t, |e| e.min(t)));
                *latest = latest.map(|l| l.max(t));
            }
            Err(coilwise::Error::Unreachable { .. }) => {
                *unreachable += 1;
                *latest = None;
            }
            Err(e) => return Err(figures_error(spec, e, "a tolerance corner")),
        }
    }
    if earliest.is_none() {
        *latest = None;
    }
    Ok(())
}

fn band_ticks(
    spec: &Spec,
    threshold: f64,
    earliest: Option<f64>,
    latest: Option<f64>,
    unreachable: usize,
) -> Result<Band, ToolError> {
    let rate = spec.design.tick_rate;
    let tick_err = |e| figures_error(spec, e, "diagnosis band");
    let earliest_ticks = match earliest {
        Some(t) => Some(
            rate.ticks_at_most(coilwise::Seconds::new(t as f32))
                .map_err(tick_err)?
                .0,
        ),
        None => None,
    };
    let latest_ticks = match latest {
        Some(t) => Some(
            rate.ticks_at_least(coilwise::Seconds::new(t as f32))
                .map_err(tick_err)?
                .0,
        ),
        None => None,
    };
    Ok(Band {
        threshold,
        earliest,
        latest,
        earliest_ticks,
        latest_ticks,
        unreachable_corners: unreachable,
    })
}

/// The comparison set: the fitted clamp, a plain diode, zeners, resistors, and no clamp.
fn comparison_clamps(spec: &Spec, release: &Figures) -> Vec<(String, &'static str, Clamp)> {
    let d = &spec.design;
    let vf = spec.compare_diode_drop;
    let v_max = d.supply.max().value() as f64;
    let v_br = d.circuit.switch().breakdown().value() as f64;
    let headroom = (v_br - v_max - vf).max(0.0);
    let zeners = spec.compare_zener.clone().unwrap_or_else(|| {
        let mut z: Vec<f64> = [0.25, 0.5, 0.75]
            .iter()
            .map(|k| e_series_down(k * headroom, &E24))
            .filter(|&v| v > 0.0)
            .collect();
        z.dedup();
        z
    });
    let i0 = release.final_current.value() as f64;
    let resistors = spec.compare_resistor.clone().unwrap_or_else(|| {
        let mut r: Vec<f64> = [1.0 / 3.0, 2.0 / 3.0]
            .iter()
            .map(|k| e_series_down(k * headroom / i0, &E12))
            .filter(|&v| v > 0.0)
            .collect();
        r.dedup();
        r
    });
    let vf32 = Volts::new(vf as f32);
    let mut out = vec![(
        format!("diode ({})", eng(vf, "V")),
        "diode",
        Clamp::Diode { forward: vf32 },
    )];
    for z in zeners {
        out.push((
            format!("zener {} + diode", eng(z, "V")),
            "zener",
            Clamp::DiodeZener {
                forward: vf32,
                clamp_voltage: Volts::new((z + vf) as f32),
            },
        ));
    }
    for r in resistors {
        out.push((
            format!("resistor {} + diode", eng(r, "Ω")),
            "resistor",
            Clamp::DiodeResistor {
                forward: vf32,
                resistance: Ohms::new(r as f32),
            },
        ));
    }
    out.push((
        "none (switch avalanches)".to_string(),
        "none",
        Clamp::Unclamped,
    ));
    out
}

fn label_of(spec: &Spec) -> String {
    match *spec.design.circuit.clamp() {
        Clamp::Diode { forward } => format!("diode ({})", eng(wide(forward.value()), "V")),
        Clamp::DiodeZener {
            forward,
            clamp_voltage,
        } => format!(
            "zener {} + diode",
            eng(wide(clamp_voltage.value()) - wide(forward.value()), "V")
        ),
        Clamp::DiodeResistor { resistance, .. } => {
            format!("resistor {} + diode", eng(wide(resistance.value()), "Ω"))
        }
        Clamp::AcrossSwitch { clamp_voltage } => {
            format!(
                "zener {} across switch",
                eng(wide(clamp_voltage.value()), "V")
            )
        }
        Clamp::RcSnubber {
            resistance,
            capacitance,
        } => format!(
            "RC snubber {} + {}",
            eng(wide(resistance.value()), "Ω"),
            eng(wide(capacitance.value()), "F")
        ),
        _ => "none (switch avalanches)".to_string(),
    }
}

/// Fitted clamp's label, for the report.
pub fn fitted_label(spec: &Spec) -> String {
    label_of(spec)
}

/// Switch-voltage status: pass below 80 % of breakdown, warn up to breakdown, fail at or above;
/// an avalanching switch passes only as a warning within its avalanche rating.
fn voltage_status(peak: f64, breakdown: f64, avalanche: bool, within_rating: bool) -> Status {
    if avalanche {
        if within_rating {
            Status::Warn
        } else {
            Status::Fail
        }
    } else if peak >= breakdown {
        Status::Fail
    } else if peak > 0.8 * breakdown {
        Status::Warn
    } else {
        Status::Pass
    }
}

fn graded(margin: f64, warn_below: f64) -> Status {
    if margin < 0.0 {
        Status::Fail
    } else if margin < warn_below {
        Status::Warn
    } else {
        Status::Pass
    }
}

impl<'a> Analysis<'a> {
    /// Computes everything for `spec`.
    ///
    /// # Errors
    /// A combination the model cannot evaluate (reported at the key most likely to blame), or a
    /// time that does not fit the 32-bit tick counter.
    pub fn new(spec: &'a Spec) -> Result<Self, ToolError> {
        let d = &spec.design;
        let nominal = d
            .figures(&d.nominal_point())
            .map_err(|e| figures_error(spec, e, "nominal point"))?;
        let pull_in = d
            .figures(&d.pull_in_corner())
            .map_err(|e| figures_error(spec, e, "pull-in corner"))?;
        let release = d
            .figures(&d.release_corner())
            .map_err(|e| figures_error(spec, e, "release corner"))?;

        let operate = wide(d.operate_allowance.value());
        let min_on_time = pull_in.pull_in_time.map(|t| wide(t.value()) + operate);
        let (mut min_off, off_time_limit) =
            if release.off_time.required >= nominal.off_time.required {
                (release.off_time.required, release.off_time.limit)
            } else {
                (nominal.off_time.required, nominal.off_time.limit)
            };
        let mut release_worst = release.release_time;
        // The core's budget is authoritative (for the RC snubber it searches every corner); it
        // refuses a coil that never pulls in, and then the same search is done here.
        match d.budget() {
            Ok(b) => {
                min_off = b.min_off_time;
                release_worst = b.release_time;
            }
            Err(_) if d.circuit.clamp().kind() == coilwise::ClampKind::RcSnubber => {
                let mut k = 0;
                while let Some(op) = d.corner(k) {
                    k += 1;
                    let f = d
                        .figures(&op)
                        .map_err(|e| figures_error(spec, e, "a tolerance corner"))?;
                    if f.off_time.required > min_off {
                        min_off = f.off_time.required;
                    }
                    if f.release_time > release_worst {
                        release_worst = f.release_time;
                    }
                }
            }
            Err(_) => {}
        }
        let min_off_time = wide(min_off.value());
        let rate = d.tick_rate;
        let up = |t: f64| -> Result<u32, ToolError> {
            rate.ticks_at_least(coilwise::Seconds::new(t as f32))
                .map(|t| t.0)
                .map_err(|e| match e {
                    coilwise::Error::TickOverflow => spec.inputs.error(
                        "timing.tick_rate",
                        ErrorClass::Impossible,
                        format!(
                            "{} does not fit the tick counter at {} Hz (at most 2^31 - 1 ticks, {}); use a slower tick",
                            eng(t, "s"),
                            rate.hz(),
                            eng(i32::MAX as f64 / rate.hz() as f64, "s")
                        ),
                    ),
                    other => figures_error(spec, other, "tick conversion"),
                })
        };
        let ticks = TickCounts {
            min_on: min_on_time.map(up).transpose()?,
            min_off: up(min_off_time)?,
            pull_in: pull_in
                .pull_in_time
                .map(|t| up(wide(t.value())))
                .transpose()?,
            release: up(wide(release_worst.value()))?,
        };

        let bands = spec
            .thresholds
            .iter()
            .map(|&t| band(spec, t))
            .collect::<Result<Vec<_>, _>>()?;

        let fitted_clamp = *d.circuit.clamp();
        let avalanche_rating = spec.avalanche_energy;
        let v_br = wide(d.circuit.switch().breakdown().value());
        let row_status = |clamp: &Clamp, f: &Figures| {
            let avalanche = matches!(clamp, Clamp::Unclamped);
            let e = wide(f.energy.clamp.value());
            voltage_status(
                wide(f.peak_switch_voltage.value()),
                v_br,
                avalanche,
                avalanche_rating.is_some_and(|r| e <= r),
            )
        };
        let mut comparison = vec![ClampRow {
            label: label_of(spec),
            kind: spec.clamp_kind,
            fitted: true,
            clamp: fitted_clamp,
            figures: Ok(release),
            status: row_status(&fitted_clamp, &release),
        }];
        for (label, kind, clamp) in comparison_clamps(spec, &release) {
            if clamp == fitted_clamp || label == comparison[0].label {
                continue;
            }
            let mut alt = *d;
            let figures = match d.circuit.with_clamp(clamp) {
                Ok(c) => {
                    alt.circuit = c;
                    alt.figures(&alt.release_corner())
                        .map_err(|e| e.to_string())
                }
                Err(e) => Err(e.to_string()),
            };
            let status = match &figures {
                Ok(f) => row_status(&clamp, f),
                Err(_) => Status::Info,
            };
            comparison.push(ClampRow {
                label,
                kind,
                fitted: false,
                clamp,
                figures,
                status,
            });
        }

        let c = &d.circuit;
        let hold = spec.hold.map(|h| {
            let at = |op: &OperatingPoint| -> HoldOutcome {
                let held = c
                    .hold(
                        op,
                        Amps::new(h.current as f32),
                        Hertz::new(h.pwm_frequency as f32),
                    )
                    .map_err(|e| match e {
                        coilwise::Error::Unreachable { .. } => HoldProblem::CannotHold,
                        coilwise::Error::OutsideModel(Limit::DiscontinuousConduction) => {
                            HoldProblem::Discontinuous
                        }
                        coilwise::Error::OutsideModel(Limit::NotFirstOrder) => {
                            HoldProblem::NotFirstOrder
                        }
                        other => HoldProblem::Other(other),
                    })?;
                Ok(HoldPoint {
                    hold: held,
                    clamp_power: Some(wide(held.clamp_power.value())),
                })
            };
            HoldFigures {
                nominal: at(&d.nominal_point()),
                pull_in: at(&d.pull_in_corner()),
                release: at(&d.release_corner()),
            }
        });
        let i_max = release.final_current;
        let drive = match (*c.switch(), spec.base_drive, spec.gate_drive) {
            (Switch::Bipolar { .. }, Some(b), _) => Some(DriveCheck::Bipolar(
                check_bipolar(
                    i_max,
                    &BaseDrive {
                        drive: Volts::new(b.drive_voltage as f32),
                        base_emitter: Volts::new(b.base_emitter as f32),
                        base_resistor: Ohms::new(b.base_resistor as f32),
                        min_gain: b.min_gain as f32,
                    },
                    COMMON_OVERDRIVE,
                )
                .map_err(|e| core_error(&spec.inputs, "switch.base_resistor", e))?,
            )),
            (Switch::Mosfet { on_resistance, .. }, _, Some(g)) => Some(DriveCheck::Mosfet(
                check_mosfet(
                    i_max,
                    1.0,
                    &GateDrive {
                        gate_voltage: Volts::new(g.applied as f32),
                        rated_gate_voltage: Volts::new(g.rated as f32),
                        on_resistance,
                    },
                )
                .map_err(|e| core_error(&spec.inputs, "switch.gate_voltage", e))?,
            )),
            _ => None,
        };
        let planned_duty = spec.planned.map(|(on, rate)| (on * rate) as f32);
        let rc = d.release_corner();
        let nc = d.nominal_point();
        let watts = |r: Result<coilwise::Watts, coilwise::Error>, what: &str| {
            r.map(|w| wide(w.value()))
                .map_err(|e| figures_error(spec, e, what))
        };
        let conduction_loss = watts(c.switch_loss(&rc, 1.0), "switch loss")?;
        let conduction_loss_planned = planned_duty
            .map(|duty| watts(c.switch_loss(&rc, duty), "switch loss"))
            .transpose()?;
        let coil_power = (
            watts(c.coil_dissipation(&nc, 1.0), "coil dissipation")?,
            watts(c.coil_dissipation(&rc, 1.0), "coil dissipation")?,
        );
        let coil_power_planned = planned_duty
            .map(|duty| -> Result<(f64, f64), ToolError> {
                Ok((
                    watts(c.coil_dissipation(&nc, duty), "coil dissipation")?,
                    watts(c.coil_dissipation(&rc, duty), "coil dissipation")?,
                ))
            })
            .transpose()?;
        let self_heating = spec.self_heating.map(|sh| {
            let duty = planned_duty.unwrap_or(1.0);
            SelfHeatingCheck {
                ambient: sh.ambient,
                r_th: sh.r_th,
                duty: wide(duty),
                outcome: c.self_heating(
                    &rc,
                    Celsius::new(sh.ambient as f32),
                    KelvinPerWatt::new(sh.r_th as f32),
                    duty,
                ),
            }
        });

        let expected = Expected::new(d, &Conditions::default());
        let probe = Probe::new(d, spec.probe_fraction as f32);

        let mut a = Analysis {
            spec,
            nominal,
            pull_in,
            release,
            min_on_time,
            min_off_time,
            off_time_limit,
            ticks,
            checks: Vec::new(),
            bands,
            comparison,
            hold,
            drive,
            conduction_loss,
            conduction_loss_planned,
            coil_power,
            coil_power_planned,
            self_heating,
            expected,
            probe,
        };
        a.checks = a.make_checks();
        Ok(a)
    }

    /// Whether any check failed.
    pub fn any_failed(&self) -> bool {
        self.checks.iter().any(|c| c.status == Status::Fail)
    }

    fn make_checks(&self) -> Vec<Check> {
        let spec = self.spec;
        let d = &spec.design;
        let mut out = Vec::new();
        let i_pull = pull_in_current(spec);
        let i_drop = drop_out_current(spec);

        // Pull-in at the pull-in corner.
        let m = wide(self.pull_in.pull_in_margin);
        out.push(Check {
            id: "pull_in",
            title: "pull-in at the pull-in corner",
            status: if m <= 0.0 {
                Status::Fail
            } else {
                graded(m, 0.10)
            },
            value: format!(
                "final current {}",
                eng(wide(self.pull_in.final_current.value()), "A")
            ),
            limit: format!("pull-in current {}", eng(i_pull, "A")),
            margin: Some(m),
            note: if m <= 0.0 {
                "the coil never pulls in at the lowest supply and hottest winding".to_string()
            } else {
                "pass at 10 % or more current than pull-in needs".to_string()
            },
        });

        // Planned pulse and off-time.
        if let Some((on, rate)) = spec.planned {
            let (status, margin, note) = match self.min_on_time {
                Some(min_on) => {
                    let m = on / min_on - 1.0;
                    (
                        graded(m, 0.2),
                        Some(m),
                        "pass at 20 % or more above the minimum on-time".to_string(),
                    )
                }
                None => (
                    Status::Fail,
                    None,
                    "the coil never pulls in at the pull-in corner".to_string(),
                ),
            };
            out.push(Check {
                id: "on_time",
                title: "planned pulse against minimum on-time",
                status,
                value: format!("pulse {}", eng(on, "s")),
                limit: match self.min_on_time {
                    Some(t) => format!("minimum on-time {}", eng(t, "s")),
                    None => "no pull-in".to_string(),
                },
                margin,
                note,
            });
            let off = 1.0 / rate - on;
            let m = off / self.min_off_time - 1.0;
            out.push(Check {
                id: "off_time",
                title: "planned off-time against safe minimum off-time",
                status: graded(m, 0.2),
                value: format!("off-time {}", eng(off, "s")),
                limit: format!("safe minimum {}", eng(self.min_off_time, "s")),
                margin: Some(m),
                note: "pass at 20 % or more above the safe minimum off-time".to_string(),
            });
        } else {
            out.push(Check {
                id: "off_time",
                title: "planned off-time against safe minimum off-time",
                status: Status::Info,
                value: "no planned pulse".to_string(),
                limit: format!("safe minimum {}", eng(self.min_off_time, "s")),
                margin: None,
                note: "give timing.on_time and timing.repetition to check".to_string(),
            });
        }

        // Switch voltage.
        let v_br = wide(d.circuit.switch().breakdown().value());
        let peak = wide(self.release.peak_switch_voltage.value());
        let unclamped = matches!(d.circuit.clamp(), Clamp::Unclamped);
        let e_clamp = wide(self.release.energy.clamp.value());
        let within = spec.avalanche_energy.is_some_and(|r| e_clamp <= r);
        out.push(Check {
            id: "switch_voltage",
            title: "peak switch voltage against breakdown",
            status: voltage_status(peak, v_br, unclamped, within),
            value: format!("peak {}", eng(peak, "V")),
            limit: format!("breakdown {}", eng(v_br, "V")),
            margin: Some(1.0 - peak / v_br),
            note: if unclamped {
                "no clamp: the switch avalanches on every switch-off".to_string()
            } else {
                "pass at or below 80 % of breakdown (usual derating)".to_string()
            },
        });
        if unclamped {
            let (status, limit, margin) = match spec.avalanche_energy {
                Some(r) => (
                    if e_clamp <= r {
                        Status::Warn
                    } else {
                        Status::Fail
                    },
                    format!("rating {}", eng(r, "J")),
                    Some(1.0 - e_clamp / r),
                ),
                None => (Status::Fail, "no switch.avalanche_energy".to_string(), None),
            };
            out.push(Check {
                id: "avalanche",
                title: "avalanche energy per switch-off",
                status,
                value: format!("energy {}", eng(e_clamp, "J")),
                limit,
                margin,
                note: "repetitive avalanche is a last resort: fit a clamp".to_string(),
            });
        }

        // Clamp power.
        if !unclamped {
            let max_rep = self.release.max_repetition.map(|h| wide(h.value()));
            let (status, value, limit, margin, note) =
                match (spec.design.clamp_rating, self.release.clamp_power) {
                    (Some(rating), Some(p)) => {
                        let rating = wide(rating.value());
                        let p = wide(p.value());
                        let m = 1.0 - p / rating;
                        (
                            graded(m, 0.5),
                            format!("average {}", eng(p, "W")),
                            format!("rating {}", eng(rating, "W")),
                            Some(m),
                            format!(
                                "pass at or below half the rating; highest repetition rate {}",
                                max_rep.map_or("unlimited".to_string(), |f| eng(f, "Hz"))
                            ),
                        )
                    }
                    (Some(rating), None) => (
                        Status::Info,
                        format!("{} per pulse", eng(e_clamp, "J")),
                        format!("rating {}", eng(wide(rating.value()), "W")),
                        None,
                        format!(
                            "highest repetition rate {}; give timing.on_time and timing.repetition to check",
                            max_rep.map_or("unlimited".to_string(), |f| eng(f, "Hz"))
                        ),
                    ),
                    (None, p) => (
                        Status::Info,
                        match p {
                            Some(p) => format!("average {}", eng(wide(p.value()), "W")),
                            None => format!("{} per pulse", eng(e_clamp, "J")),
                        },
                        "no clamp.power_rating".to_string(),
                        None,
                        "give clamp.power_rating to check".to_string(),
                    ),
                };
            out.push(Check {
                id: "clamp_power",
                title: "clamp average power against its rating",
                status,
                value,
                limit,
                margin,
                note,
            });
        }

        // Drive.
        match self.drive {
            Some(DriveCheck::Bipolar(b)) => {
                let overdrive = wide(b.overdrive);
                out.push(Check {
                    id: "drive",
                    title: "bipolar switch saturated at minimum gain",
                    status: if b.saturated {
                        Status::Pass
                    } else if overdrive >= 1.0 {
                        Status::Warn
                    } else {
                        Status::Fail
                    },
                    value: format!(
                        "base {} (forced gain {:.1}, overdrive {:.2}x)",
                        eng(wide(b.base_current.value()), "A"),
                        b.forced_gain,
                        overdrive
                    ),
                    limit: format!("{COMMON_OVERDRIVE:.0}x overdrive"),
                    margin: Some(wide(b.margin)),
                    note: format!(
                        "at the highest collector current; pass at {COMMON_OVERDRIVE:.0}x overdrive or more, fail below 1x; base resistor for exactly {COMMON_OVERDRIVE:.0}x: {}",
                        eng(wide(b.recommended_base_resistor.value()), "Ω")
                    ),
                });
            }
            Some(DriveCheck::Mosfet(m)) => {
                let (applied, rated) = spec
                    .gate_drive
                    .map_or((0.0, 1.0), |g| (g.applied, g.rated));
                out.push(Check {
                    id: "drive",
                    title: "MOSFET gate drive against the on-resistance rating",
                    status: if m.enhanced {
                        Status::Pass
                    } else {
                        Status::Fail
                    },
                    value: format!("gate {}", eng(applied, "V")),
                    limit: format!("on-resistance rated at {}", eng(rated, "V")),
                    margin: Some(applied / rated - 1.0),
                    note: "below the rated gate voltage the on-resistance is not guaranteed"
                        .to_string(),
                });
            }
            None => out.push(Check {
                id: "drive",
                title: "switch drive",
                status: Status::Info,
                value: "not given".to_string(),
                limit: "-".to_string(),
                margin: None,
                note: match d.circuit.switch() {
                    Switch::Bipolar { .. } => "give switch.drive_voltage, switch.base_resistor and switch.min_gain to check saturation".to_string(),
                    Switch::Mosfet { .. } => "give switch.gate_voltage and switch.rated_gate_voltage to check enhancement".to_string(),
                },
            }),
        }

        // Hold.
        if let (Some(h), Some(hold)) = (self.hold, spec.hold) {
            let (status, value, margin, note) = match h.pull_in {
                Ok(p) => {
                    let duty = wide(p.hold.duty);
                    (
                        if duty > 0.9 {
                            Status::Warn
                        } else {
                            Status::Pass
                        },
                        format!("duty {:.1} %", duty * 100.0),
                        Some(1.0 - duty),
                        "pass at or below 90 % duty".to_string(),
                    )
                }
                Err(HoldProblem::NotFirstOrder) => (
                    Status::Info,
                    "not modelled".to_string(),
                    None,
                    HoldProblem::NotFirstOrder.describe(),
                ),
                Err(problem) => (
                    Status::Fail,
                    "no hold".to_string(),
                    None,
                    problem.describe(),
                ),
            };
            out.push(Check {
                id: "hold_duty",
                title: "hold duty at the pull-in corner",
                status,
                value,
                limit: "100 %".to_string(),
                margin,
                note,
            });
            let points: Vec<HoldPoint> = h
                .points()
                .iter()
                .filter_map(|(_, o)| o.as_ref().ok().copied())
                .collect();
            if let Some(rating) = spec.design.clamp_rating {
                let worst = points
                    .iter()
                    .filter_map(|p| p.clamp_power)
                    .fold(None, |acc: Option<f64>, p| {
                        Some(acc.map_or(p, |a| a.max(p)))
                    });
                if let Some(p) = worst {
                    let rating = wide(rating.value());
                    let m = 1.0 - p / rating;
                    out.push(Check {
                        id: "hold_clamp_power",
                        title: "clamp power while holding against its rating",
                        status: graded(m, 0.5),
                        value: format!("average {}", eng(p, "W")),
                        limit: format!("rating {}", eng(rating, "W")),
                        margin: Some(m),
                        note: "the clamp carries the coil current in every PWM off-interval; pass at or below half the rating".to_string(),
                    });
                }
            }
            // The lowest current of the ripple must stay above drop-out.
            let valley = points
                .iter()
                .map(|p| wide(p.hold.valley.value()))
                .fold(hold.current, f64::min);
            let m = valley / i_drop - 1.0;
            out.push(Check {
                id: "hold_current",
                title: "hold current (ripple valley) above drop-out",
                status: if m <= 0.0 {
                    Status::Fail
                } else {
                    graded(m, 0.5)
                },
                value: format!("valley {}", eng(valley, "A")),
                limit: format!("drop-out {}", eng(i_drop, "A")),
                margin: Some(m),
                note: "pass at 1.5x drop-out current or more; the datasheet's hold rating takes precedence".to_string(),
            });
        }

        // Self-heating.
        if let Some(sh) = self.self_heating {
            let t_max = wide(d.temperature.max().value());
            let (status, value, margin, note) = match sh.outcome {
                Ok(eq) => {
                    let t = wide(eq.temperature.value());
                    let room = (t_max - sh.ambient).max(1e-9);
                    let m = (t_max - t) / room;
                    (
                        graded(m, 0.1),
                        format!("winding {:.1} °C ({})", t, eng(wide(eq.power.value()), "W")),
                        Some(m),
                        format!(
                            "steady state at {:.1} °C ambient, {} K/W, {:.1} % full-voltage duty (a hold economiser, if fitted, runs cooler); pass with 10 % of the allowed rise to spare",
                            sh.ambient,
                            sh.r_th,
                            sh.duty * 100.0
                        ),
                    )
                }
                Err(coilwise::Error::OutsideModel(Limit::Overtemperature)) => (
                    Status::Fail,
                    "overheats".to_string(),
                    None,
                    "the winding settles above the copper model's range: it burns out".to_string(),
                ),
                Err(e) => (
                    Status::Info,
                    "not computed".to_string(),
                    None,
                    e.to_string(),
                ),
            };
            out.push(Check {
                id: "self_heating",
                title: "self-heated winding against temperature.max",
                status,
                value,
                limit: format!("temperature.max {t_max:.1} °C"),
                margin,
                note,
            });
        }

        // Diagnosis bands.
        for b in &self.bands {
            let reached = b.unreachable_corners == 0;
            out.push(Check {
                id: "rise_band",
                title: "threshold reached at every corner",
                status: if reached { Status::Pass } else { Status::Warn },
                value: format!("threshold {}", eng(b.threshold, "A")),
                limit: format!("{} of 32 corners never reach it", b.unreachable_corners),
                margin: None,
                note: "a threshold the coil never reaches cannot tell a healthy coil from a fault"
                    .to_string(),
            });
        }
        out
    }
}
