//! On-device coil diagnosis from the measured current rise.
//!
//! - [`band`]: the bands a healthy coil stays in, over the tolerance corners;
//! - [`figures`]: the bands as stored figures, rebuilt without the design on the device;
//! - [`baseline`]: a coil's learned signature, its byte record, and verdicts against it;
//! - [`sample`]: sampled traces, their scale, a fixed buffer;
//! - [`fit`]: the one-pass + refined estimate of slope, τ and I∞ from samples;
//! - [`armature`]: the current dip of a moving armature;
//! - [`probe`]: the diagnostic pulse that checks a coil without actuating it;
//! - [`verdict`]: healthy / a named fault / cannot tell, with the estimates.
//!
//! Results are engineering estimates. A verdict of "healthy" means the measured rise is consistent
//! with the design's tolerance bands, not that the coil, its contacts or its wiring are safe; follow
//! the component datasheets, local electrical codes and licensed practice.

pub mod armature;
pub mod band;
pub mod baseline;
pub mod figures;
pub mod fit;
pub mod probe;
pub mod sample;
pub mod verdict;

pub use armature::{detect_movement, Movement, MovementCriteria};
pub use band::{Conditions, Expected, Span, SupplyReading, ThresholdBand};
pub use baseline::{judge_baseline, Baseline, LearnError, Learning, RecordError};
pub use figures::BandFigures;
pub use fit::{
    fit_response, fit_rise, FitOptions, FitPath, FitQuality, ResponseFit, RiseFit, Shape,
    TraceFault, MAX_COUNT_WINDOW,
};
pub use probe::Probe;
pub use sample::{Sample, SampleBuffer, Sampling};
pub use verdict::{
    judge_actuation, judge_response, judge_rise, judge_steady, judge_threshold, judge_trace,
    Criteria, Estimates, Finding, ThresholdReading, Undetermined, Verdict,
};
