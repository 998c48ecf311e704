//! Judging a full actuation: the coil from the rise before the armature moved, and the movement.

use super::rise::judge_trace_fault;
use super::{at_most, judge_trace, Criteria, Finding, Undetermined, Verdict};
use crate::diagnosis::armature::{detect_movement, Movement};
use crate::diagnosis::band::Expected;
use crate::diagnosis::fit::{FitOptions, TraceFault};
use crate::diagnosis::sample::{Sample, Sampling};

/// Judges a full actuation trace: finds the armature's dip ([`detect_movement`]), judges the coil
/// from the rise before the movement (up to `pre_movement_fraction` of the peak; when that fits
/// badly because the armature was already moving, once more on 60 % of it; failing that, a coil
/// fault found from the first 8 samples alone, else [`Undetermined::MovementTooEarly`]), and
/// reports [`Finding::ArmatureStuck`] when no dip was seen
/// although the current passed pull-in (measured, high sense corner) and the operate allowance has
/// run out, or the trace outlasts [`Expected::movement_by`].
///
/// A coil fault found in the rise takes precedence over the movement. Never panics.
pub fn judge_actuation<S: Sample>(
    samples: &[S],
    sampling: &Sampling,
    expected: &Expected,
    criteria: &Criteria,
    options: &FitOptions,
) -> Verdict {
    let movement = match detect_movement(samples, sampling, &criteria.movement) {
        Ok(m) => m,
        Err(f) => return judge_trace_fault(f, sampling, expected, criteria),
    };
    let prefix = |fraction: f32, peak: f32| {
        let limit = fraction * peak;
        let end = samples
            .iter()
            .position(|s| !at_most(sampling.amps(s.to_f32()), limit))
            .unwrap_or(samples.len());
        &samples[..end]
    };
    let mut v = match movement {
        Movement::Moved { peak, .. } => {
            // The rise before the dip, up to a fraction of the peak; if the armature was already
            // moving within it (residuals far above noise), once more on 60 % of that window.
            let f = criteria.pre_movement_fraction;
            let first = judge_trace(
                prefix(f, peak.value()),
                sampling,
                expected,
                criteria,
                options,
            );
            // A window that does not fit (noise-like or smooth misfit) because the armature was
            // already moving in it: try the shorter one.
            if misfit(&first.finding) {
                let second = judge_trace(
                    prefix(0.6 * f, peak.value()),
                    sampling,
                    expected,
                    criteria,
                    options,
                );
                match second.finding {
                    f if misfit(&f) || f == Finding::CannotTell(Undetermined::TooFewSamples) => {
                        // Last resort: the slope alone from the first samples, before the
                        // armature has travelled far. Only an inductance fault is taken from it.
                        let head = &samples[..samples.len().min(EARLY_SAMPLES)];
                        let early = judge_trace(head, sampling, expected, criteria, options);
                        if early.finding.is_coil_fault() {
                            early
                        } else {
                            Verdict::new(
                                Finding::CannotTell(Undetermined::MovementTooEarly),
                                second.estimates,
                            )
                        }
                    }
                    _ => second,
                }
            } else {
                first
            }
        }
        Movement::NotSeen { .. } => judge_trace(samples, sampling, expected, criteria, options),
    };
    v.estimates.movement = Some(movement);
    if let Movement::NotSeen { by } = movement {
        if v.finding == Finding::Healthy {
            let crossed = samples
                .iter()
                .position(|s| sampling.amps(s.to_f32()) >= expected.pull_in_reading.value())
                .map(|k| sampling.time_of(k).value() + expected.operate_allowance.value());
            let due = match (crossed, expected.movement_by) {
                (Some(a), Some(b)) => Some(a.min(b.value())),
                (Some(a), None) => Some(a),
                (None, b) => b.map(|b| b.value()),
            };
            if let Some(due) = due {
                if by.value() >= due {
                    v.finding = Finding::ArmatureStuck;
                }
            }
        }
    }
    v
}

/// Whether a finding says the window did not fit the rise model.
fn misfit(f: &Finding) -> bool {
    matches!(
        f,
        Finding::SensorImplausible(TraceFault::PoorFit) | Finding::ShapeUnexplained
    )
}

/// Samples of the slope-only last resort of [`judge_actuation`].
const EARLY_SAMPLES: usize = crate::diagnosis::fit::MIN_SAMPLES + 2;
