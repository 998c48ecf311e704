//! The defmt log of the port (read over RTT with the debug probe on the bench).

use coilwise::diagnosis::Verdict;
use coilwise_driver::selfcheck::Vector;
use coilwise_driver::{words, Event, EventKind};

/// The commissioning self-check vectors, one line each.
pub fn vectors(v: &[Vector]) {
    for x in v {
        defmt::info!(
            "self-check {=str}: got {=f32}, want {=f32} +/- {=f32} ({=str}) {=str}",
            x.what,
            x.got,
            x.want,
            x.tolerance,
            x.source,
            if x.holds() { "ok" } else { "FAILED" }
        );
    }
}

/// One driver event, with findings, delays and refusals in words. `last` is the channel's
/// latest verdict ([`coilwise_driver::Driver::last_verdict`]): a `Judged` event carries the
/// finding alone, its estimates are taken from `last` when it holds the same finding (else
/// they are logged as not kept).
pub fn event(e: &Event, last: Option<&Verdict>) {
    let (t, ch) = (e.at.0, e.channel);
    match &e.kind {
        EventKind::Judged {
            source,
            finding,
            comparator,
            ..
        } => {
            match last.filter(|v| v.finding == *finding) {
                Some(v) => defmt::info!(
                    "t={=u32} us ch{=u8} {} judged: {=str} (R {=?} ohm, L {=?} H, tau {=?} s)",
                    t,
                    ch,
                    source,
                    words::finding(finding),
                    v.estimates.resistance.map(|r| r.value()),
                    v.estimates.inductance.map(|l| l.value()),
                    v.estimates.tau.map(|x| x.value())
                ),
                None => defmt::info!(
                    "t={=u32} us ch{=u8} {} judged: {=str} (estimates not kept)",
                    t,
                    ch,
                    source,
                    words::finding(finding)
                ),
            }
            if let Some(c) = comparator {
                defmt::info!(
                    "t={=u32} us ch{=u8} comparator {}: {=str}",
                    t,
                    ch,
                    c.crossing,
                    words::finding(&c.finding)
                );
            }
        }
        EventKind::Delayed { reason, start } => defmt::info!(
            "t={=u32} us ch{=u8} delayed to {=u32} us: {=str}",
            t,
            ch,
            start.0,
            words::delay(reason)
        ),
        EventKind::HardwareFault(kind) => {
            defmt::error!(
                "t={=u32} us ch{=u8} HARDWARE FAULT {}: channel out of service",
                t,
                ch,
                kind
            )
        }
        EventKind::Isolated { finding, .. } => defmt::warn!(
            "t={=u32} us ch{=u8} ISOLATED: {=str}",
            t,
            ch,
            words::finding(finding)
        ),
        EventKind::Lost { count } => {
            defmt::warn!("t={=u32} us: {=u32} events lost (queue full)", t, count)
        }
        other => defmt::info!("t={=u32} us ch{=u8} {}", t, ch, other),
    }
}
