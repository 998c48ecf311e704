//! Deterministic cost measurement on the target: instructions per call and stack per call.
//!
//! **Instructions.** Under QEMU with a fixed `-icount shift=N`, every guest instruction advances
//! virtual time by 2^N ns, so SysTick deltas are proportional to instructions executed. The
//! meter calibrates itself instead of assuming a clock or a shift:
//! 1. `t_empty` — ticks around an empty call through the same harness (stamps + indirect call);
//! 2. `t_ref` — ticks around a block of exactly [`REF_INSNS`] `nop`s through the same harness;
//! 3. a call costing `t` ticks executed `(t − t_empty) · REF_INSNS / (t_ref − t_empty)`
//!    instructions of its own (rounded to nearest).
//!
//! Counts include everything the call executes (callees, a SysTick wrap exception if one falls
//! inside — about a dozen instructions every 2^24 ticks). Without `-icount` the numbers follow
//! host time and mean nothing; the cost binary refuses to report when calibration is
//! inconsistent.
//!
//! **Stack.** In a separate run of the same call, the free RAM below the stack pointer (down to
//! the end of `.bss`/`.uninit`) is first painted with [`PAINT`]; afterwards the lowest overwritten
//! word gives the call's stack depth. The empty call's depth is subtracted. (Separate, because
//! the SysTick stamps would themselves dirty the stack just below the caller.)

use core::arch::asm;
use core::hint::black_box;

use crate::ticks::SysTickClock;

/// Instructions in the calibration block.
pub const REF_INSNS: u32 = 1024;

/// Stack paint pattern.
pub const PAINT: u32 = 0xC01C_0DE5;

extern "C" {
    /// End of `.bss` and `.uninit` (start of free RAM), from cortex-m-rt's `link.x`.
    static mut __sheap: u32;
}

/// Cost of one measured call.
#[derive(Clone, Copy, Debug, PartialEq, Eq, defmt::Format)]
pub struct Cost {
    /// Instructions executed by the call itself (harness overhead subtracted).
    pub insns: u32,
    /// Deepest stack use of the call in bytes (harness overhead subtracted).
    pub stack_bytes: u32,
}

/// Why the meter could not be calibrated.
#[derive(Clone, Copy, Debug, PartialEq, Eq, defmt::Format)]
pub enum CalibrationError {
    /// The reference block did not take more ticks than the empty call (SysTick not counting
    /// instructions: QEMU without `-icount`, or the clock stopped).
    NoTickResolution,
    /// Two runs of the same call differed by more than one tick (time not tied to
    /// instructions).
    NotRepeatable,
}

/// Self-calibrating instruction and stack meter on a [`SysTickClock`].
pub struct Meter {
    clock: SysTickClock,
    empty_ticks: u64,
    ref_ticks: u64,
    empty_stack: u32,
}

impl Meter {
    /// Calibrates against an empty call and the [`REF_INSNS`]-instruction reference block.
    pub fn calibrate(clock: SysTickClock) -> Result<Self, CalibrationError> {
        let mut m = Self {
            clock,
            empty_ticks: 0,
            ref_ticks: 0,
            empty_stack: 0,
        };
        let mut empty = || {};
        // The reference closure's body is the nop block and a return; the empty one's is the
        // return alone, so the two differ by exactly REF_INSNS instructions.
        let mut reference = || {
            // SAFETY: nops only.
            unsafe {
                asm!(
                    ".rept {n}",
                    "nop",
                    ".endr",
                    n = const REF_INSNS,
                    options(nomem, nostack, preserves_flags)
                )
            }
        };
        let _ = m.ticks(&mut empty); // warm-up
        let e1 = m.ticks(&mut empty);
        let e2 = m.ticks(&mut empty);
        let r1 = m.ticks(&mut reference);
        let r2 = m.ticks(&mut reference);
        if r1 <= e1 {
            return Err(CalibrationError::NoTickResolution);
        }
        // Ticks per instruction need not be whole (25.6 at 25 MHz and shift 10), so the same
        // instructions can read one tick more or less depending on where the counter stood.
        if e1.abs_diff(e2) > 1 || r1.abs_diff(r2) > 1 {
            return Err(CalibrationError::NotRepeatable);
        }
        m.empty_ticks = (e1 + e2) / 2;
        m.ref_ticks = (r1 + r2) / 2 - m.empty_ticks;
        m.empty_stack = stack_depth(&mut empty);
        Ok(m)
    }

    /// SysTick ticks per [`REF_INSNS`] instructions (about 26 214 at 25 MHz and shift 10).
    pub fn ticks_per_ref_block(&self) -> u64 {
        self.ref_ticks
    }

    /// Ticks of an empty call through the harness (subtracted from every measurement).
    pub fn overhead_ticks(&self) -> u64 {
        self.empty_ticks
    }

    /// Measures `f`: runs it twice, once on painted stack for its depth, once between two
    /// SysTick stamps for its instruction count. `f` must do the same work both times; use
    /// [`Meter::cost_after`] when state has to be reset first.
    pub fn cost(&mut self, f: &mut dyn FnMut()) -> Cost {
        self.cost_after(&mut || {}, f)
    }

    /// Like [`Meter::cost`], with `setup` run (unmeasured) before each of the two runs of `f`.
    pub fn cost_after(&mut self, setup: &mut dyn FnMut(), f: &mut dyn FnMut()) -> Cost {
        setup();
        let depth = stack_depth(f);
        setup();
        let t = self.ticks(f);
        let own = t.saturating_sub(self.empty_ticks);
        let half = self.ref_ticks / 2;
        let insns = (own * u64::from(REF_INSNS) + half) / self.ref_ticks.max(1);
        Cost {
            insns: u32::try_from(insns).unwrap_or(u32::MAX),
            stack_bytes: depth.saturating_sub(self.empty_stack),
        }
    }

    /// SysTick ticks around one indirect call of `f`.
    #[inline(never)]
    fn ticks(&mut self, f: &mut dyn FnMut()) -> u64 {
        let t0 = self.clock.now_wide();
        black_box(&mut *f)();
        let t1 = self.clock.now_wide();
        t1.wrapping_sub(t0)
    }
}

/// Bytes of stack below the caller's frame that one indirect call of `f` touched.
#[inline(never)]
fn stack_depth(f: &mut dyn FnMut()) -> u32 {
    let top = paint_free_stack();
    black_box(&mut *f)();
    top.saturating_sub(lowest_dirty_word())
}

/// Stack high-water mark of the whole run so far, in bytes below the initial stack pointer:
/// scans RAM painted by the last [`Meter`] measurement (or by [`paint_free_stack`]).
pub fn stack_peak_bytes() -> u32 {
    stack_top().saturating_sub(lowest_dirty_word())
}

/// Initial stack pointer (top of RAM), from the vector table.
fn stack_top() -> u32 {
    extern "C" {
        static _stack_start: u32;
    }
    // Only the symbol's address is taken; it is never read.
    core::ptr::addr_of!(_stack_start) as u32
}

/// Paints every word from the end of `.bss`/`.uninit` up to (excluding) the current stack
/// pointer with [`PAINT`], and returns that stack pointer.
///
/// Written in assembly so that no stack is used while the region just below SP is written.
#[inline(never)]
pub fn paint_free_stack() -> u32 {
    // SAFETY: `__sheap` is the end of statically allocated RAM (cortex-m-rt) and nothing lives
    // between it and the stack pointer: there is no heap. The loop touches only that range and
    // uses no stack.
    unsafe {
        let mut p = core::ptr::addr_of_mut!(__sheap) as u32;
        let sp: u32;
        asm!(
            "mov {sp}, sp",
            "2:",
            "cmp {p}, {sp}",
            "bhs 3f",
            "str {v}, [{p}]",
            "adds {p}, {p}, #4",
            "b 2b",
            "3:",
            p = inout(reg) p,
            sp = out(reg) sp,
            v = in(reg) PAINT,
            options(nostack),
        );
        let _ = p;
        sp
    }
}

/// Address of the lowest word above the end of `.bss`/`.uninit` that no longer holds [`PAINT`].
pub fn lowest_dirty_word() -> u32 {
    // SAFETY: reads words of free RAM between `__sheap` and the top of the stack, all mapped.
    unsafe {
        let mut p = core::ptr::addr_of!(__sheap) as u32;
        let top = stack_top();
        while p < top && core::ptr::read_volatile(p as *const u32) == PAINT {
            p += 4;
        }
        p
    }
}
