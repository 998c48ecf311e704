//! The small firmwares `src/bin/min_comparator.rs` and `src/bin/min_fit.rs`: how a part with
//! 16–64 KiB of flash uses the core without the driver and without computing its design on the
//! device. They measure what the core costs such a firmware (`cargo xtask cost`:
//! `core_flash_min_bytes`, `core_flash_fit_bytes`).
//!
//! - Timing: the tick constants the design tool emits ([`emitted`], generated from
//!   `examples/greenhouse-valve.toml`) become the scheduler's [`ChannelLimits`] and the
//!   comparator's [`ThresholdBand`] — no physics on the device for either.
//! - The verdicts need an [`Expected`] (the design's healthy bands): the tool emits them too
//!   (`--healthy-bands`, [`emitted::HEALTHY_BANDS`]) and [`Expected::from_figures`] rebuilds them
//!   at start-up with a few comparisons. No design and no physics on the device.
//!
//! Every value is invented for the demo (the greenhouse zone valve of the example design file).

use coilwise::diagnosis::verdict::{judge_threshold, judge_trace};
use coilwise::diagnosis::{
    BandFigures, Criteria, Expected, Finding, FitOptions, Sampling, Span, ThresholdBand,
    ThresholdReading,
};
use coilwise::schedule::{
    Admission, ChannelId, ChannelLimits, DelayReason, EdgeBuffer, PinAction, Request, Scheduler,
};
use coilwise::{Amps, Instant, Seconds, Ticks};
use core::hint::black_box;

/// The valve's firmware constants exactly as `cargo run -p coilwise-tool -- constants
/// examples/greenhouse-valve.toml --healthy-bands` prints them (regenerate, do not edit).
#[rustfmt::skip]
pub mod emitted;

/// Seconds of `ticks` at the emitted tick rate.
fn seconds(ticks: u32) -> Seconds {
    Seconds::new(ticks as f32 / emitted::TICK_HZ as f32)
}

/// The comparator band of the first emitted threshold (40 mA), from its tick figures.
pub fn band() -> ThresholdBand {
    let b = emitted::RISE_BANDS[0];
    ThresholdBand {
        threshold: Amps::new(b.threshold_ua as f32 * 1e-6),
        time: Span {
            min: seconds(b.earliest_ticks),
            max: seconds(b.latest_ticks),
        },
    }
}

/// The valve channel's scheduler limits from the emitted ticks: minimum on-time, safe minimum
/// off-time, and the pull-in time as its inrush window.
pub fn limits() -> Option<ChannelLimits> {
    ChannelLimits::new(Ticks(emitted::MIN_ON_TICKS), Ticks(emitted::MIN_OFF_TICKS))
        .and_then(|l| l.with_inrush_window(Ticks(emitted::PULL_IN_TICKS)))
        .ok()
}

/// The healthy bands of the valve, from the emitted figures (field for field).
pub fn expected() -> Option<Expected> {
    let h = black_box(emitted::HEALTHY_BANDS);
    Expected::from_figures(&BandFigures {
        final_current_a: h.final_current_a,
        tau_s: h.tau_s,
        slope_a_per_s: h.slope_a_per_s,
        loop_ohms: h.loop_ohms,
        inductance_h: h.inductance_h,
        sensed_drive_v: h.sensed_drive_v,
        movement_by_s: h.movement_by_s,
        pull_in_reading_a: h.pull_in_reading_a,
        operate_allowance_s: h.operate_allowance_s,
        external_ohms: h.external_ohms,
        coil_ohms: h.coil_ohms,
        coil_reference_celsius: h.coil_reference_celsius,
        coil_alpha_per_kelvin: h.coil_alpha_per_kelvin,
        coil_inductance_h: h.coil_inductance_h,
        coil_must_volts: h.coil_must_volts,
    })
    .ok()
}

/// Two 80 ms pulses on one channel: the first starts now; the second, asked while the first
/// runs, is delayed (channel busy) to the first's end plus the safe minimum off-time; polling
/// gives the on and off edges at their ticks.
pub fn scheduler_round() -> bool {
    let Some(lim) = limits() else { return false };
    let Ok(mut s) = Scheduler::<1, 4>::new([lim], 1, Instant(0)) else {
        return false;
    };
    let pulse = Ticks(black_box(80_000));
    let first = s.submit(Instant(0), Request::now(ChannelId(0), pulse));
    let second = s.submit(Instant(10), Request::now(ChannelId(0), pulse));
    let ready = Instant(80_000 + emitted::MIN_OFF_TICKS);
    let mut edges: EdgeBuffer<4> = EdgeBuffer::new();
    let on = s.poll(Instant(black_box(10)), &mut edges).is_ok()
        && matches!(edges.first(), Some(e) if e.action == PinAction::On && e.at == Instant(0));
    edges.clear();
    let off = s.poll(Instant(black_box(80_000)), &mut edges).is_ok()
        && matches!(edges.first(), Some(e) if e.action == PinAction::Off && e.at == Instant(80_000));
    let ok = first == Ok(Admission::Accepted { start: Instant(0) })
        && second
            == Ok(Admission::Delayed {
                reason: DelayReason::ChannelBusy,
                until: ready,
            })
        && on
        && off;
    defmt::info!(
        "scheduler: first {}, second {}, edges on {=bool} off {=bool}",
        first,
        second,
        on,
        off
    );
    ok
}

/// The comparator verdict on three readings: a crossing inside the band (healthy), one far too
/// early (a short), and none within twice the band's end (open circuit).
pub fn comparator_round(expected: &Expected) -> bool {
    let band = band();
    let c = Criteria::default();
    let judge = |r: ThresholdReading| judge_threshold(black_box(r), &band, None, expected, &c);
    let inside = seconds((band_ticks().0 + band_ticks().1) / 2);
    let healthy = judge(ThresholdReading::Crossed(inside)).finding;
    let early = judge(ThresholdReading::Crossed(seconds(band_ticks().0 / 4))).finding;
    let never = judge(ThresholdReading::NotCrossed {
        waited: seconds(2 * band_ticks().1),
    })
    .finding;
    defmt::info!("comparator: {} / {} / {}", healthy, early, never);
    healthy == Finding::Healthy
        && matches!(early, Finding::ShortCircuit | Finding::ShortedTurns)
        && never == Finding::OpenCircuit
}

/// Earliest and latest crossing ticks of the first emitted band.
fn band_ticks() -> (u32, u32) {
    let b = emitted::RISE_BANDS[0];
    (b.earliest_ticks, b.latest_ticks)
}

/// Amperes per converter count of the sampled rise: a 12-bit converter over 0.25 A.
const AMPS_PER_COUNT: f32 = 0.25 / 4096.0;

/// The fit + verdict on a 64-sample rise of the valve at 24 V, 20 °C (closed form of the
/// nominal coil, 100 µs apart, ±0.45 count of fixed dither): healthy.
pub fn fit_round(expected: &Expected) -> bool {
    let period = Seconds::from_micros(100.0);
    let Ok(sampling) = Sampling::new(period, AMPS_PER_COUNT)
        .and_then(|s| s.with_first_sample(period))
        .and_then(|s| s.with_full_scale(4095.0))
        .and_then(|s| s.with_noise(0.6))
    else {
        return false;
    };
    let r_on = 160.0 + 0.5 + 0.4 + 0.05;
    let (i_inf, tau) = (24.0f32 / r_on, 0.35f32 / r_on);
    let mut trace = [0u16; 64];
    for (k, c) in trace.iter_mut().enumerate() {
        let t = (k as f32 + 1.0) * 1e-4;
        let dither = [0.3f32, -0.4, 0.1, -0.2, 0.45][k % 5];
        *c = libm::roundf(i_inf * (1.0 - libm::expf(-t / tau)) / AMPS_PER_COUNT + dither) as u16;
    }
    let v = judge_trace(
        black_box(&trace[..]),
        &sampling,
        expected,
        &Criteria::default(),
        &FitOptions::default(),
    );
    defmt::info!("fit: {}", v.finding);
    v.finding == Finding::Healthy
}
