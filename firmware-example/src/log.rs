//! What the example logs, for a person to read: the designs, the commissioning, and every event
//! of the driver, with figures at the digits they carry (a duty to 0.1 %, a current to 0.1 mA, a
//! time constant to 0.01 ms) rather than at f32's eight.

use coilwise::diagnosis::{Estimates, Finding, Verdict};
use coilwise::Instant;
use coilwise_driver::words;
use coilwise_driver::{
    ComparatorReading, Crossing, Event, EventKind, ProbePurpose, Refused, SenseSetup, Source,
};

use crate::scenario::{rail_name, ChannelSpec, HOLD_HZ, INRUSH_CAP};

/// A value printed with a fixed number of decimals (0…3), rounded to nearest; non-finite values
/// print as `-`.
#[derive(Clone, Copy, Debug)]
pub struct Fixed(pub f32, pub u8);

impl defmt::Format for Fixed {
    fn format(&self, f: defmt::Formatter<'_>) {
        let Fixed(x, d) = *self;
        if !x.is_finite() {
            defmt::write!(f, "-");
            return;
        }
        let scale = [1.0f32, 10.0, 100.0, 1000.0][usize::from(d.min(3))];
        let m = libm::roundf(x.abs() * scale);
        let sign = if x < 0.0 && m > 0.0 { "-" } else { "" };
        let m = if m < 4.0e9 { m as u32 } else { u32::MAX };
        let s = scale as u32;
        match d {
            0 => defmt::write!(f, "{=str}{=u32}", sign, m),
            1 => defmt::write!(f, "{=str}{=u32}.{=u32}", sign, m / s, m % s),
            2 => defmt::write!(f, "{=str}{=u32}.{=u32:02}", sign, m / s, m % s),
            _ => defmt::write!(f, "{=str}{=u32}.{=u32:03}", sign, m / s, m % s),
        }
    }
}

/// Milliseconds and microseconds since `t0`, for the log.
fn stamp(t0: Instant, t: Instant) -> (u32, u32) {
    let us = t.since(t0).max(0) as u32;
    (us / 1000, us % 1000)
}

/// The scheduler limits and the diagnosis set-up of every channel.
#[inline(never)]
pub fn design(specs: &[ChannelSpec], queue: usize) {
    defmt::info!(
        "design: {=usize} channels, scheduler ticks of 1 us, queue {=usize}, at most {=u8} coil(s) pulling in at once",
        specs.len(),
        queue,
        INRUSH_CAP
    );
    for (i, s) in specs.iter().enumerate() {
        let Ok(c) = s.config() else { continue };
        let l = &c.limits;
        defmt::info!(
            "  ch{=usize} {=str}: min on {=u32} us (worst pull-in {=u32} us + operate allowance), min off {=u32} us",
            i,
            s.name,
            l.min_on().get(),
            l.inrush_window().get(),
            l.min_off().get()
        );
        match l.hold() {
            Some(h) => defmt::info!(
                "      hold PWM from {=u32} us at {} % duty ({=u32} Hz)",
                h.after().get(),
                Fixed(h.duty().fraction() * 100.0, 1),
                HOLD_HZ as u32
            ),
            None => defmt::info!("      no economiser: full drive for the whole pulse"),
        }
        if let Some(b) = l.coil_heat() {
            defmt::info!(
                "      winding heat budget {=u32} mJ, thermal time constant {=u32} ms",
                b.capacity_uj() / 1000,
                b.time_constant().get() / 1000
            );
        }
        if let Some(d) = c.diagnosis {
            let e = &d.expected;
            defmt::info!(
                "      healthy bands: I_inf {}..{} mA, tau {}..{} ms; diagnostic pulse {=u32} us (below {} mA)",
                Fixed(e.final_current.min.value() * 1e3, 1),
                Fixed(e.final_current.max.value() * 1e3, 1),
                Fixed(e.tau.min.value() * 1e3, 2),
                Fixed(e.tau.max.value() * 1e3, 2),
                d.probe.length.get(),
                Fixed(d.probe.limit.value() * 1e3, 1)
            );
        }
    }
}

/// The self-check vectors (the same deterministic values the driver checks at commissioning).
#[inline(never)]
pub fn vectors() {
    defmt::info!("commissioning 1/3: core calculations against reference values");
    for v in coilwise_driver::selfcheck::compute().iter() {
        if v.holds() {
            defmt::info!("  ok   {=str}: {=f32} [{=str}]", v.what, v.got, v.source);
        } else {
            defmt::error!(
                "  FAIL {=str}: {=f32}, expected {=f32} +- {=f32} [{=str}]",
                v.what,
                v.got,
                v.want,
                v.tolerance,
                v.source
            );
        }
    }
}

/// The converter zero and comparator of one channel.
#[inline(never)]
pub fn sense_setup(i: usize, name: &str, s: &SenseSetup) {
    match (s.trip_counts, s.band) {
        (Some(t), Some(b)) => defmt::info!(
            "  ch{=usize} {=str}: zero {} counts; comparator at {=u16} counts = {} mA, healthy crossing {}..{} ms",
            i,
            name,
            Fixed(s.zero_counts, 2),
            t,
            Fixed(s.trip_level.value() * 1e3, 1),
            Fixed(b.time.min.value() * 1e3, 2),
            Fixed(b.time.max.value() * 1e3, 2)
        ),
        _ => defmt::warn!(
            "  ch{=usize} {=str}: zero {} counts; no comparator band",
            i,
            name,
            Fixed(s.zero_counts, 2)
        ),
    }
}

/// The estimates of a verdict: the fit's figures; the winding temperature (from the resistance
/// by the copper law) only beside a healthy finding — a faulty coil's resistance says nothing
/// of its temperature.
fn estimates(f: &Finding, e: &Estimates) {
    match (e.final_current, e.tau, e.resistance, e.inductance) {
        (Some(a), Some(t), Some(r), Some(l)) => match e.temperature {
            Some(c) if *f == Finding::Healthy => defmt::info!(
                "      estimates: I_inf {} mA, tau {} ms, R {} ohm, L {} mH, winding {} C",
                Fixed(a.value() * 1e3, 1),
                Fixed(t.value() * 1e3, 2),
                Fixed(r.value(), 1),
                Fixed(l.value() * 1e3, 0),
                Fixed(c.value(), 0)
            ),
            _ => defmt::info!(
                "      estimates: I_inf {} mA, tau {} ms, R {} ohm, L {} mH",
                Fixed(a.value() * 1e3, 1),
                Fixed(t.value() * 1e3, 2),
                Fixed(r.value(), 1),
                Fixed(l.value() * 1e3, 0)
            ),
        },
        _ => defmt::info!("      no estimates from this trace"),
    }
    if let Some(q) = e.quality {
        defmt::info!(
            "      fit: {=u32} samples, residual {} x noise, sd(slope) {} %, sd(tau) {} %",
            q.samples,
            Fixed(q.noise_ratio, 2),
            Fixed(q.rel_sd_slope * 100.0, 2),
            Fixed(q.rel_sd_tau * 100.0, 2)
        );
    }
}

#[allow(clippy::too_many_arguments)]
fn verdict(
    t0: Instant,
    now: Instant,
    e: &Event,
    name: &str,
    source: Source,
    (purpose, baseline): (Option<ProbePurpose>, bool),
    pulse: u32,
    finding: Finding,
    last: Option<&Verdict>,
    cmp: Option<ComparatorReading>,
    band_ms: (f32, f32),
) {
    let (ms, us) = stamp(t0, now);
    let (oms, ous) = stamp(t0, e.at);
    let what = match (source, purpose, baseline) {
        (Source::Rise, _, _) => "rise",
        (_, Some(ProbePurpose::SupplyCheck), false) => "supply re-check pulse",
        (_, Some(ProbePurpose::SupplyCheck), true) => "supply re-check pulse vs its baseline",
        (_, Some(ProbePurpose::Reenable), false) => "re-enable pulse",
        (_, Some(ProbePurpose::Reenable), true) => "re-enable pulse vs its baseline",
        (_, _, true) => "diagnostic pulse vs its learnt baseline",
        _ => "diagnostic pulse",
    };
    let bad = !(finding == Finding::Healthy || matches!(finding, Finding::CannotTell(_)));
    let f = words::finding(&finding);
    match (bad, pulse) {
        (true, 0) => defmt::error!(
            "t={=u32}.{=u32:03} ms  ch{=u8} {=str} {=str} (on at t={=u32}.{=u32:03} ms): {=str}",
            ms, us, e.channel, name, what, oms, ous, f
        ),
        (false, 0) => defmt::info!(
            "t={=u32}.{=u32:03} ms  ch{=u8} {=str} {=str} (on at t={=u32}.{=u32:03} ms): {=str}",
            ms, us, e.channel, name, what, oms, ous, f
        ),
        (true, _) => defmt::error!(
            "t={=u32}.{=u32:03} ms  ch{=u8} {=str} {=str} of pulse {=u32} (on at t={=u32}.{=u32:03} ms): {=str}",
            ms, us, e.channel, name, what, pulse, oms, ous, f
        ),
        (false, _) => defmt::info!(
            "t={=u32}.{=u32:03} ms  ch{=u8} {=str} {=str} of pulse {=u32} (on at t={=u32}.{=u32:03} ms): {=str}",
            ms, us, e.channel, name, what, pulse, oms, ous, f
        ),
    }
    match last {
        Some(v) if v.finding == finding => estimates(&finding, &v.estimates),
        _ => defmt::info!("      (estimates overwritten by a later measurement)"),
    }
    if let Some(c) = cmp {
        match c.crossing {
            Crossing::After(t) => defmt::info!(
                "      comparator: crossed after {=u32} us (healthy {}..{} ms): {=str}",
                t.get(),
                Fixed(band_ms.0, 2),
                Fixed(band_ms.1, 2),
                words::finding(&c.finding)
            ),
            Crossing::NotYet => defmt::info!(
                "      comparator: never crossed (healthy {}..{} ms): {=str}",
                Fixed(band_ms.0, 2),
                Fixed(band_ms.1, 2),
                words::finding(&c.finding)
            ),
        }
    }
}

/// A refusal in words, with its figures.
fn refused(t0: Instant, r: &Refused) {
    match r {
        Refused::Schedule(s @ coilwise::schedule::Refusal::TooLate { earliest, reason }) => {
            let (ms, us) = stamp(t0, *earliest);
            defmt::warn!(
                "  refused: {=str}: earliest t={=u32}.{=u32:03} ms ({=str})",
                words::refusal(s),
                ms,
                us,
                words::delay(reason)
            );
        }
        Refused::Schedule(s @ coilwise::schedule::Refusal::BelowMinOn { min_on }) => defmt::warn!(
            "  refused: {=str} ({=u32} us)",
            words::refusal(s),
            min_on.get()
        ),
        Refused::Schedule(s) => defmt::warn!("  refused: {=str}", words::refusal(s)),
        Refused::Isolated(f) => {
            defmt::warn!("  refused: channel isolated ({=str})", words::finding(f))
        }
        Refused::Faulted(_) => defmt::warn!("  refused: channel out of service (hardware error)"),
        Refused::SupplyLow => defmt::warn!("  refused: supply still low"),
        Refused::NotCommissioned => defmt::warn!("  refused: not commissioned"),
        Refused::Busy => defmt::warn!("  refused: channel busy (held pulse or supply re-check)"),
        _ => defmt::warn!("  refused"),
    }
}

/// Logs one driver event. `specs` gives the channel names and rails, `bands` the comparator
/// band of each channel in ms.
#[inline(never)]
pub fn event(
    t0: Instant,
    now: Instant,
    e: &Event,
    last: Option<&Verdict>,
    specs: &[&'static str],
    bands: &[(f32, f32)],
) {
    let i = usize::from(e.channel);
    let name = specs.get(i).copied().unwrap_or("?");
    let (ms, us) = stamp(t0, now);
    match &e.kind {
        EventKind::Judged {
            source,
            purpose,
            pulse,
            finding,
            comparator,
            baseline,
        } => verdict(
            t0,
            now,
            e,
            name,
            *source,
            (*purpose, *baseline),
            *pulse,
            *finding,
            last,
            *comparator,
            bands.get(i).copied().unwrap_or((0.0, 0.0)),
        ),
        EventKind::Accepted { start } => {
            let (ms, us) = stamp(t0, *start);
            defmt::info!("  accepted: on at t={=u32}.{=u32:03} ms", ms, us);
        }
        EventKind::Delayed { reason, start } => {
            let (ms, us) = stamp(t0, *start);
            defmt::warn!(
                "  delayed to t={=u32}.{=u32:03} ms: {=str}",
                ms,
                us,
                words::delay(reason)
            );
        }
        EventKind::Refused(r) => refused(t0, r),
        EventKind::Isolated {
            off_at,
            dropped,
            ..
        } => match off_at {
            Some(off) => {
                let (oms, ous) = stamp(t0, *off);
                defmt::error!(
                    "t={=u32}.{=u32:03} ms  ch{=usize} {=str} ISOLATED: its pulse ends at t={=u32}.{=u32:03} ms, {=u8} queued pulse(s) dropped",
                    ms, us, i, name, oms, ous, dropped
                );
            }
            None => defmt::error!(
                "t={=u32}.{=u32:03} ms  ch{=usize} {=str} ISOLATED: not driven again; {=u8} queued pulse(s) dropped",
                ms, us, i, name, dropped
            ),
        },
        EventKind::HardwareFault(k) => defmt::error!(
            "t={=u32}.{=u32:03} ms  ch{=usize} {=str} out of service: {=str}",
            ms, us, i, name, words::error_kind(k)
        ),
        EventKind::SupplyLow { group } => defmt::warn!(
            "t={=u32}.{=u32:03} ms  {=str} flagged LOW: the coil is not blamed; new pulses on this rail wait for a diagnostic pulse to find the supply back in range",
            ms, us, rail_name(*group)
        ),
        EventKind::SupplyRecovered { group } => defmt::info!(
            "t={=u32}.{=u32:03} ms  {=str} back in range",
            ms, us, rail_name(*group)
        ),
        EventKind::Reenabled => defmt::info!(
            "t={=u32}.{=u32:03} ms  ch{=usize} {=str} back in service",
            ms, us, i, name
        ),
        EventKind::Commissioned { in_service } => defmt::info!(
            "t={=u32}.{=u32:03} ms  commissioning done: {=u8} of {=usize} channels in service",
            ms, us, in_service, specs.len()
        ),
        EventKind::Lost { count } => defmt::error!(
            "t={=u32}.{=u32:03} ms  {=u32} driver event(s) lost (queue full)",
            ms, us, count
        ),
        EventKind::BaselineLearned { pulses } => defmt::info!(
            "t={=u32}.{=u32:03} ms  ch{=usize} {=str} baseline learnt from {=u8} healthy diagnostic pulses (each judged against the design bands first)",
            ms, us, i, name, pulses
        ),
        EventKind::BaselineNotLearned(why) => defmt::warn!(
            "t={=u32}.{=u32:03} ms  ch{=usize} {=str} no baseline learnt: {=str}; judged against the design bands",
            ms, us, i, name, words::learn_error(why)
        ),
        EventKind::BaselineRejected(why) => defmt::warn!(
            "t={=u32}.{=u32:03} ms  ch{=usize} {=str} stored baseline refused: {=str}; it learns afresh",
            ms, us, i, name, words::baseline_error(why)
        ),
        _ => defmt::info!("t={=u32}.{=u32:03} ms  ch{=usize} other event", ms, us, i),
    }
}
