//! Everything the outputs show, computed once: figures at the nominal point and both worst
//! corners, tick budget, pass/warn/fail checks, time-to-threshold bands, clamp comparison, hold
//! and drive figures.
//!
//! Split by concern: [`types`] (what the outputs read), [`bands`] (time-to-threshold bands),
//! [`compare`] (the clamp comparison and clamp labels), [`checks`] (pass / warn / fail rules);
//! this file computes the figures once.

mod bands;
mod checks;
mod compare;
mod types;

pub use compare::{e_series_down, fitted_label, E12, E24};
pub use types::*;

use coilwise::diagnosis::{Conditions, Expected, Probe};
use coilwise::physics::drive::{check_bipolar, check_mosfet, BaseDrive, GateDrive};
use coilwise::physics::off_time::OffTimeLimit;
use coilwise::{
    Amps, Armature, Celsius, Figures, Hertz, KelvinPerWatt, Limit, Ohms, OperatingPoint, Switch,
    Volts, COMMON_OVERDRIVE,
};

use crate::error::{ErrorClass, ToolError};
use crate::quantity::eng;
use crate::spec::{core_error, Spec};

/// f32 → f64 by its shortest decimal form, so that 0.15f32 prints as 0.15, not 0.15000000596….
pub fn wide(x: f32) -> f64 {
    let s = x.to_string();
    s.parse().unwrap_or(x as f64)
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
    /// Largest switch-on time constant `L_released / R_on` over the 32 tolerance corners, s.
    pub tau_on_max: f64,
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

pub(crate) fn figures_error(spec: &Spec, err: coilwise::Error, corner: &str) -> ToolError {
    use coilwise::Param;
    let key = match err {
        coilwise::Error::Invalid { param, .. } => match param {
            Param::ClampVoltage => Some("clamp.zener"),
            Param::StandoffVoltage => Some("clamp.standoff"),
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
        Some(k @ "clamp.standoff") => {
            // What the core compared the standoff with: the coil voltage at switch-on at the
            // highest supply, V_supply - V_CE(sat) (no current yet, so no resistive drop).
            let supply = wide(spec.design.supply.max().value());
            let saturation = match spec.design.circuit.switch() {
                coilwise::Switch::Bipolar { saturation, .. } => wide(saturation.value()),
                coilwise::Switch::Mosfet { .. } => 0.0,
            };
            // Only a TVS across the coil has a standoff (the core refuses no other at it).
            let standoff = match spec.design.circuit.clamp() {
                coilwise::Clamp::TvsAcrossCoil { standoff, .. } => {
                    format!(" {}", eng(wide(standoff.value()), "V"))
                }
                _ => String::new(),
            };
            let drive = if saturation > 0.0 {
                format!(
                    "{} (highest supply {} minus saturation {})",
                    eng(supply - saturation, "V"),
                    eng(supply, "V"),
                    eng(saturation, "V")
                )
            } else {
                format!("{} (the highest supply)", eng(supply, "V"))
            };
            spec.inputs
                .error(
                    k,
                    ErrorClass::Impossible,
                    format!(
                        "at the {corner}: the TVS across the coil sees {drive} while the switch is on, at or above its standoff{standoff}: it conducts then"
                    ),
                )
                .hint("choose a TVS whose standoff is above that voltage, or a zener behind a diode (clamp.kind = \"zener\")")
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

/// The core's figures at `point`, an error placed at its key. An overflow that goes away without
/// the clamp rating is the rating's own figure, `P_rating / E_clamp` (the highest repetition
/// rate): a clamp energy per switch-off so small (a coil current of 1e-21 A) that the ratio
/// leaves f32. Blamed on `clamp.power_rating` (it was placed at the file's first line, no key).
fn figures_at(
    spec: &Spec,
    point: &coilwise::OperatingPoint,
    corner: &str,
) -> Result<coilwise::Figures, ToolError> {
    let d = &spec.design;
    let err = match d.figures(point) {
        Ok(f) => return Ok(f),
        Err(e) => e,
    };
    if let (coilwise::Error::OutsideModel(coilwise::Limit::Overflow), Some(rating)) =
        (err, d.clamp_rating)
    {
        let mut unrated = *d;
        unrated.clamp_rating = None;
        if let Ok(f) = unrated.figures(point) {
            return Err(spec
                .inputs
                .error(
                    "clamp.power_rating",
                    ErrorClass::Impossible,
                    format!(
                        "at the {corner}: the clamp takes {} per switch-off, so little that the highest repetition rate the rating allows ({} / energy) leaves the 32-bit range",
                        eng(wide(f.energy.clamp.value()), "J"),
                        eng(wide(rating.value()), "W")
                    ),
                )
                .hint("the coil current is vanishingly small at this point: check supply and coil.resistance, or leave out clamp.power_rating"));
        }
    }
    Err(figures_error(spec, err, corner))
}

impl<'a> Analysis<'a> {
    /// Computes everything for `spec`.
    ///
    /// # Errors
    /// A combination the model cannot evaluate (reported at the key most likely to blame), or a
    /// time that does not fit the 32-bit tick counter.
    pub fn new(spec: &'a Spec) -> Result<Self, ToolError> {
        let d = &spec.design;
        let nominal = figures_at(spec, &d.nominal_point(), "nominal point")?;
        let pull_in = figures_at(spec, &d.pull_in_corner(), "pull-in corner")?;
        let release = figures_at(spec, &d.release_corner(), "release corner")?;

        let operate = wide(d.operate_allowance.value());
        let mut tau_on_max = wide(pull_in.tau_on.value()).max(wide(nominal.tau_on.value()));
        let mut k = 0;
        while let Some(op) = d.corner(k) {
            k += 1;
            let rise = d
                .circuit
                .energize(&op, Armature::Released, Amps::new(0.0))
                .map_err(|e| figures_error(spec, e, "a tolerance corner"))?;
            tau_on_max = tau_on_max.max(wide(rise.tau().value()));
        }
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
            .map(|&t| bands::band(spec, t))
            .collect::<Result<Vec<_>, _>>()?;

        let comparison = compare::comparison(spec, &release);

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
                        coilwise::Error::OutsideModel(Limit::Resolution) => {
                            HoldProblem::OffIntervalTooShort
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
            tau_on_max,
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

    /// Maximum repetition rate at the nominal point and the worst case, with the limit that sets
    /// it: the lower of `1 / (t_on,min + t_off,min)` (the shortest legal cycle) and the clamp's
    /// `P_rating / E_clamp` (the core's figure; the release corner's is the lower). `None` where
    /// neither exists (no pull-in and no rating).
    pub fn max_repetition(&self) -> (Option<RepetitionLimit>, Option<RepetitionLimit>) {
        let operate = wide(self.spec.design.operate_allowance.value());
        let pick = |timing: Option<f64>, clamp: Option<coilwise::Hertz>| {
            let timing = timing
                .filter(|t| *t > 0.0)
                .map(|t| (1.0 / t, RateLimit::Timing));
            let clamp = clamp.map(|h| (wide(h.value()), RateLimit::ClampRating));
            match (timing, clamp) {
                (Some(t), Some(c)) => Some(if c.0 < t.0 { c } else { t }),
                (t, c) => t.or(c),
            }
        };
        let n = &self.nominal;
        let nominal_cycle = n
            .pull_in_time
            .map(|t| wide(t.value()) + operate + wide(n.off_time.required.value()));
        let worst_cycle = self.min_on_time.map(|t| t + self.min_off_time);
        (
            pick(nominal_cycle, n.max_repetition),
            pick(worst_cycle, self.release.max_repetition),
        )
    }

    /// Whether any check failed.
    pub fn any_failed(&self) -> bool {
        self.checks.iter().any(|c| c.status == Status::Fail)
    }
}
