//! The pass / warn / fail checks, in report order.

use coilwise::{Clamp, Limit, Switch, COMMON_OVERDRIVE};

use super::compare::voltage_status;
use super::{
    drop_out_current, pull_in_current, wide, Analysis, Check, DriveCheck, HoldPoint, HoldProblem,
    Status,
};
use crate::quantity::eng;

impl Analysis<'_> {
    pub(super) fn make_checks(&self) -> Vec<Check> {
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
                                "pass at or below half the rating; highest repetition rate the clamp rating allows {}",
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
                            "highest repetition rate the clamp rating allows {}; give timing.on_time and timing.repetition to check",
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
            // The lowest current of the ripple must stay above drop-out: the lowest valley the
            // core computed, never the requested hold current in its place.
            let valley = points
                .iter()
                .map(|p| wide(p.hold.valley.value()))
                .reduce(f64::min);
            let note = "pass at 1.5x drop-out current or more; the datasheet's hold rating takes precedence".to_string();
            out.push(match valley {
                Some(valley) => {
                    let m = valley / i_drop - 1.0;
                    Check {
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
                        note,
                    }
                }
                None => Check {
                    id: "hold_current",
                    title: "hold current (ripple valley) above drop-out",
                    status: Status::Info,
                    value: "no hold computed".to_string(),
                    limit: format!("drop-out {}", eng(i_drop, "A")),
                    margin: None,
                    note,
                },
            });
            // No clamp: every PWM off-interval ends in avalanche of the switch.
            if unclamped {
                let power = points.iter().filter_map(|p| p.clamp_power).reduce(f64::max);
                out.push(Check {
                    id: "hold_avalanche",
                    title: "switch avalanche while holding (no clamp)",
                    status: Status::Fail,
                    value: match power {
                        Some(p) => format!("average {}", eng(p, "W")),
                        None => "not computed".to_string(),
                    },
                    limit: "no repetitive avalanche".to_string(),
                    margin: None,
                    note: format!(
                        "no clamp: the switch avalanches in every PWM off-interval at {} (repetitive avalanche); a single-pulse rating (switch.avalanche_energy) does not cover it and few switches are rated for it: fit a clamp before using a hold economiser",
                        eng(hold.pwm_frequency, "Hz")
                    ),
                });
            }
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

fn graded(margin: f64, warn_below: f64) -> Status {
    if margin < 0.0 {
        Status::Fail
    } else if margin < warn_below {
        Status::Warn
    } else {
        Status::Pass
    }
}
