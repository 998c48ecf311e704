//! A monotonic tick source.
//!
//! The application and the core count time in integer ticks. [`TickSource`] is the seam; a
//! real board implements it on a free-running timer. [`SysTickClock`] implements it on the
//! Cortex-M SysTick at the core clock, extended past its 24 bits by counting wraps in the
//! SysTick exception.
//!
//! Under QEMU with a fixed `-icount shift=N` (as `qemu-run.sh` runs it), virtual time advances by
//! exactly 2^N ns per instruction, so SysTick readings are instruction-exact and repeat from run
//! to run. They are not wall-clock time of a real part.

use core::cell::Cell;

use coilwise::{Instant, TickRate};

use cortex_m::peripheral::syst::SystClkSource;
use cortex_m::peripheral::{SCB, SYST};
use cortex_m_rt::exception;
use critical_section::Mutex;

pub use coilwise_driver::TickSource;

/// SysTick reload value: the full 24-bit range.
const RELOAD: u32 = 0x00FF_FFFF;

static WRAPS: Mutex<Cell<u32>> = Mutex::new(Cell::new(0));

#[exception]
fn SysTick() {
    critical_section::with(|cs| {
        let w = WRAPS.borrow(cs);
        w.set(w.get().wrapping_add(1));
    });
}

/// [`TickSource`] on SysTick at the core clock (`COILWISE_CORE_HZ` from `build.rs`: 25 MHz on
/// mps2-an386, 16 MHz on microbit).
///
/// Owns the SYST peripheral. Reading takes a short critical section (about 20 instructions).
pub struct SysTickClock {
    _syst: SYST,
}

impl SysTickClock {
    /// Core clock of the board model this build targets, in Hz.
    pub const CORE_HZ: u32 = parse_u32(env!("COILWISE_CORE_HZ"));

    /// Starts SysTick free-running at the core clock with its exception enabled, and waits for
    /// the first non-zero reading (QEMU reports 0 until the counter has been loaded).
    pub fn start(mut syst: SYST) -> Self {
        syst.disable_counter();
        syst.set_clock_source(SystClkSource::Core);
        syst.set_reload(RELOAD);
        syst.clear_current();
        syst.enable_interrupt();
        syst.enable_counter();
        while SYST::get_current() == 0 {}
        Self { _syst: syst }
    }
}

impl SysTickClock {
    /// The count widened to 64 bits (core clock cycles since [`SysTickClock::start`]; does not
    /// wrap in any realistic run).
    pub fn now_wide(&self) -> u64 {
        critical_section::with(|cs| {
            let mut wraps = WRAPS.borrow(cs).get();
            let mut current = SYST::get_current();
            // A wrap that happened after interrupts were masked is visible only as a pending
            // SysTick exception: count it, and re-read so the value belongs to the new period.
            if SCB::is_pendst_pending() {
                wraps = wraps.wrapping_add(1);
                current = SYST::get_current();
            }
            u64::from(wraps) * u64::from(RELOAD + 1) + u64::from(RELOAD - current)
        })
    }
}

impl TickSource for SysTickClock {
    fn rate(&self) -> TickRate {
        // CORE_HZ is a non-zero build constant on every supported board.
        TickRate::new(Self::CORE_HZ).unwrap_or_else(|_| crate::exit(crate::status::CHECK_FAILED))
    }

    fn now(&self) -> Instant {
        // Truncation to the wrapping 32-bit counter is the intent.
        Instant(self.now_wide() as u32)
    }
}

/// `const` decimal parser for the build-script constants (digits only; anything else gives 0).
const fn parse_u32(s: &str) -> u32 {
    let b = s.as_bytes();
    let mut i = 0;
    let mut v: u32 = 0;
    while i < b.len() {
        let d = b[i];
        if d < b'0' || d > b'9' {
            return 0;
        }
        v = v * 10 + (d - b'0') as u32;
        i += 1;
    }
    v
}
