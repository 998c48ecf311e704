//! The defmt log of the port (read over RTT with the debug probe on the bench).

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

/// One driver event, with findings, delays and refusals in words.
pub fn event(e: &Event) {
    let (t, ch) = (e.at.0, e.channel);
    match &e.kind {
        EventKind::Judged {
            source,
            verdict,
            comparator,
            ..
        } => {
            let est = &verdict.estimates;
            defmt::info!(
                "t={=u32} us ch{=u8} {} judged: {=str} (R {=?} ohm, L {=?} H, tau {=?} s)",
                t,
                ch,
                source,
                words::finding(&verdict.finding),
                est.resistance.map(|r| r.value()),
                est.inductance.map(|l| l.value()),
                est.tau.map(|x| x.value())
            );
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
