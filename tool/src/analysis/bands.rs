//! Time-to-threshold bands over the tolerance corners, for diagnosis.

use coilwise::diagnosis::{Conditions, ThresholdBand};
use coilwise::{Amps, Armature};

use super::{figures_error, wide, Band};
use crate::error::ToolError;
use crate::spec::Spec;

pub(super) fn band(spec: &Spec, threshold: f64) -> Result<Band, ToolError> {
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
