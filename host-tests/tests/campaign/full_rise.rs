//! A full-rise capture: the same coil and phenomena as the diagnostic pulse, sampled over a few
//! time constants instead of the probe's 30 %-of-rise window, and judged as the driver judges the
//! rise of a real pulse (the free-level fit and `judge_trace` on the whole capture). The
//! armature is held (the campaign's coils do not move), so the capture is the coil's own rise.

use coilwise::diagnosis::{judge_trace, Sampling};
use coilwise::{Amps, Finding, Seconds};
use coilwise_host_tests::Prng;

use super::{
    draw_moment, draw_part, Channel, CoilSpec, Phenomenon, Truth, ALPHA, RDS, SAMPLES, SENSE,
    WIRING,
};

/// Time constants the capture spans, at the coil's nominal values (20 °C): 2.0…4.8 τ over the
/// tolerance box and −20…85 °C.
pub const SPAN_TAU: f64 = 3.0;

/// A channel sampling the full rise.
pub struct FullRise {
    pub ch: Channel,
}

impl FullRise {
    /// `base`: a probe channel (its coil, design, criteria and eddy range are kept). The rise's
    /// converter is ranged for the largest steady current (supply +10 % into the coldest, lowest
    /// winding, with 5 % headroom), as a channel that senses its working pulses must be; the
    /// probe's converter is ranged for the probe's current only.
    pub fn new(base: Channel) -> Self {
        let c = base.spec;
        let rest = WIRING + SENSE + RDS;
        let r_on_nominal = c.r_ref + rest;
        let tau = c.l / r_on_nominal;
        let period_ns = (SPAN_TAU * tau / SAMPLES as f64 * 1e9).floor() as u64;
        let r_cold = c.r_ref * 0.93 * (1.0 + ALPHA * (-20.0 - 20.0)) + rest;
        let full_scale = 1.05 * 1.1 * c.volts / r_cold;
        let spec = CoilSpec { full_scale, ..c };
        let dt = Seconds::new(period_ns as f32 * 1e-9);
        let top = (full_scale * 4095.0 / 4096.0) as f32;
        let sampling = Sampling::adc(dt, 12, Amps::new(top))
            .unwrap()
            .with_noise(2.0)
            .unwrap();
        FullRise {
            ch: Channel {
                spec,
                period_ns,
                sampling,
                ..base
            },
        }
    }

    /// Mode B (supply measured, winding window from the board reading): one coil, one rise.
    pub fn verdict_b(&self, ph: Phenomenon, truth: Truth, rng: &mut Prng) -> Finding {
        let ch = &self.ch;
        let part = draw_part(rng, ph, ch.eddy_max);
        let now = draw_moment(rng, &ch.spec, ph);
        let lat = matches!(ph, Phenomenon::Latency | Phenomenon::All);
        let counts = ch.pulse(&part, &now, truth, lat, rng);
        let (e, _) = ch.knowledge(&now, truth, rng);
        judge_trace(
            &counts,
            &ch.sampling,
            &e,
            &ch.criteria,
            &super::fit_options(),
        )
        .finding
    }
}
