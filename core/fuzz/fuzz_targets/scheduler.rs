//! Fuzz the scheduler with measured timer instants: any `now` (wrapping, jumping, going
//! backwards), any requests, stops and hold-duty changes on channels with any limits.
//! Invariant: no panic; a refused call changes nothing; the edges of one poll are in time order
//! and, while the run spans less than 2³¹ ticks (where instants compare exactly), never in the
//! future; pending pulses never exceed the queue.
#![no_main]

use coilwise::schedule::{
    ChannelId, ChannelLimits, EdgeBuffer, HoldDuty, HoldPhase, Request, Scheduler,
};
use coilwise::{Instant, Ticks};
use libfuzzer_sys::fuzz_target;

mod common;
use common::Bytes;

const QUEUE: usize = 6;

fuzz_target!(|data: &[u8]| {
    let mut b = Bytes(data);
    let mut limits = [ChannelLimits::new(Ticks(10), Ticks(10)).unwrap(); 2];
    for l in limits.iter_mut() {
        let Ok(mut c) = ChannelLimits::new(Ticks(b.u32() % 4096), Ticks(b.u32() % 4096)) else {
            continue;
        };
        let flags = b.u8();
        if flags & 1 != 0 {
            c = c.with_max_on(Ticks(b.u32() % 65536)).unwrap_or(c);
        }
        if flags & 2 != 0 {
            c = c.with_inrush_window(Ticks(b.u32() % 4096)).unwrap_or(c);
        }
        if flags & 4 != 0 {
            let duty = HoldDuty(b.u32() as u16);
            if let Ok(h) = HoldPhase::new(Ticks(b.u32() % 4096), duty) {
                c = c.with_hold(h).unwrap_or(c);
            }
        }
        *l = c;
    }
    let mut now = Instant(b.u32());
    let Ok(mut s) = Scheduler::<2, QUEUE>::new(limits, b.u8() % 3, now) else {
        return;
    };
    let mut edges = EdgeBuffer::<3>::new();
    // Ticks the scheduler's own clock has advanced since the start (each accepted `now` moves
    // it by less than 2³¹). While it stays below 2³¹, wrap-safe differences of instants are exact.
    let mut elapsed = 0u64;
    let mut seen = s.now();
    while !b.0.is_empty() {
        let op = b.u8();
        now = match op >> 5 {
            0 => Instant(b.u32()),
            1 => now.after(Ticks(b.u32())),
            _ => now.after(Ticks(b.u8() as u32 * 64)),
        };
        let ch = ChannelId(op & 3);
        match (op >> 2) & 7 {
            0..=2 => {
                let dur = Ticks(b.u32() % 20_000);
                let req = if op & 16 != 0 {
                    Request::at(ch, dur, now.after(Ticks(b.u32() % 8192)))
                        .within(Ticks(b.u32() % 8192))
                } else {
                    Request::now(ch, dur)
                };
                let before = s.clone();
                if s.submit(now, req).is_err() {
                    assert_eq!(s, before, "a refused submit changed the scheduler");
                }
            }
            3..=5 => {
                edges.clear();
                let before = s.clone();
                match s.poll(now, &mut edges) {
                    Ok(wake) => {
                        elapsed += s.now().0.wrapping_sub(seen.0) as u64;
                        seen = s.now();
                        let exact = elapsed < 1 << 31;
                        for w in edges.windows(2).filter(|_| exact) {
                            assert!(w[1].at.since(w[0].at) >= 0, "{edges:?}");
                        }
                        for e in edges.iter().filter(|_| exact) {
                            assert!(now.since(e.at) >= 0, "edge in the future {e:?} at {now:?}");
                        }
                        let _ = wake;
                    }
                    Err(_) => assert_eq!(s, before, "a refused poll changed the scheduler"),
                }
            }
            6 => {
                let before = s.clone();
                if s.stop(now, ch).is_err() {
                    assert_eq!(s, before, "a refused stop changed the scheduler");
                }
            }
            _ => {
                let _ = s.set_hold_duty(ch, HoldDuty(b.u32() as u16));
                let _ = (s.heat(ch), s.next_wake());
            }
        }
        elapsed += s.now().0.wrapping_sub(seen.0) as u64;
        seen = s.now();
        assert!(s.pending() <= QUEUE);
    }
});
