//! Helpers shared by the scenario tests: run the driver on the rig, collect its events.
#![allow(dead_code)]

use coilwise::{Instant, Ticks};
use coilwise_driver::{Event, EventKind, TickSource};

use super::{RigDriverE, SimClock};

/// Milliseconds → the rig's instants (1 µs ticks from power-up).
pub fn ms(t: u32) -> Instant {
    Instant(t * 1000)
}

/// Milliseconds → ticks.
pub fn ticks_ms(t: u32) -> Ticks {
    Ticks(t * 1000)
}

/// Services the driver at every instant it asks for until `until`, collecting its events.
pub fn run_until<const E: usize>(
    drv: &mut RigDriverE<E>,
    clock: &mut SimClock,
    until: Instant,
    log: &mut Vec<Event>,
) {
    loop {
        let now = clock.now();
        let next = drv.service(now).expect("service");
        while let Some(e) = drv.pop_event() {
            log.push(e);
        }
        if now.is_at_or_after(until) {
            break;
        }
        let to = if next.since(until) < 0 { next } else { until };
        clock.wait_until(to);
    }
}

/// The events of `log` on channel `ch`.
pub fn on_channel(log: &[Event], ch: u8) -> Vec<EventKind> {
    log.iter()
        .filter(|e| e.channel == ch)
        .map(|e| e.kind)
        .collect()
}
