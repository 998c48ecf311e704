//! The time seam: a monotonic, wrapping tick counter.

use coilwise::{Instant, TickRate};

/// A free-running, monotonic tick counter in the core's time base.
///
/// `now()` never goes backwards except by wrapping at 2^32; compare readings with
/// [`Instant::since`] / [`Instant::is_at_or_after`], which are wrap-safe for instants less than
/// 2^31 ticks apart. The driver, the scheduler and the diagnosis take their times in these ticks.
/// A real board implements it on a free-running 32-bit timer (or a 16/24-bit one extended by
/// counting its wraps).
pub trait TickSource {
    /// Tick rate (ticks per second). Constant for the lifetime of the source.
    fn rate(&self) -> TickRate;
    /// The current count, wrapping at 2^32.
    fn now(&self) -> Instant;
}
