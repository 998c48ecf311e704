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
//! inconsistent. After calibrating, the meter checks itself on a probe of a different, known
//! length (300 `nop`s) and on a stack probe of known depth, and fails if either is off.
//!
//! **Stack.** In a separate run of the same call, the free RAM below the stack pointer (down to
//! the end of `.bss`/`.uninit`) is first painted with [`PAINT`]; afterwards the lowest overwritten
//! word gives the call's stack depth. The empty call's depth is subtracted. (Separate, because
//! the SysTick stamps would themselves dirty the stack just below the caller.) Painting sees
//! written words only: a slot a function reserves but never writes is not counted, so the figure
//! can be a few words below the frame sizes in the disassembly.

use core::arch::asm;
use core::hint::black_box;
use core::sync::atomic::{AtomicU32, Ordering};

use crate::ticks::SysTickClock;

/// Instructions in the calibration block.
pub const REF_INSNS: u32 = 1024;

/// Instructions in the self-check probe (a different count from the calibration block).
pub const PROBE_INSNS: u32 = 300;

/// Depth of the self-check stack probe, bytes (a multiple of 4, at most 508 for Thumb-1).
pub const PROBE_STACK: u32 = 256;

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
    /// The [`PROBE_INSNS`]-instruction probe measured this many instructions instead.
    InstructionProbe(u32),
    /// The [`PROBE_STACK`]-byte stack probe measured this many bytes instead.
    StackProbe(u32),
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
        m.self_check()?;
        Ok(m)
    }

    /// Checks the calibrated meter against two facts that do not come from it: a block of
    /// [`PROBE_INSNS`] `nop`s executes exactly that many instructions, and a probe that stores
    /// one word [`PROBE_STACK`] bytes below its stack pointer is that deep (plus at most the
    /// probe's own register save, 32 bytes).
    fn self_check(&mut self) -> Result<(), CalibrationError> {
        let insns = self
            .cost(&mut || {
                // SAFETY: nops only.
                unsafe {
                    asm!(
                        ".rept {n}",
                        "nop",
                        ".endr",
                        n = const PROBE_INSNS,
                        options(nomem, nostack, preserves_flags)
                    )
                }
            })
            .insns;
        if insns != PROBE_INSNS {
            return Err(CalibrationError::InstructionProbe(insns));
        }
        let stack = self
            .cost(&mut || {
                // SAFETY: moves SP down inside free stack, stores one word there, restores SP.
                unsafe {
                    asm!(
                        "sub sp, #{d}",
                        "str {z}, [sp]",
                        "add sp, #{d}",
                        d = const PROBE_STACK,
                        z = in(reg) 0u32,
                    )
                }
            })
            .stack_bytes;
        if !(PROBE_STACK..=PROBE_STACK + 32).contains(&stack) {
            return Err(CalibrationError::StackProbe(stack));
        }
        Ok(())
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
///
/// Runs with interrupts masked: an exception taken inside the call (a SysTick wrap) would push
/// its frame (32 bytes, 104 with FPU context on the M4F) onto the measured stack. A wrap that
/// falls inside stays pending and is counted when interrupts are unmasked again.
#[inline(never)]
fn stack_depth(f: &mut dyn FnMut()) -> u32 {
    let was_enabled = cortex_m::register::primask::read().is_active();
    cortex_m::interrupt::disable();
    let top = paint_free_stack();
    black_box(&mut *f)();
    let depth = top.saturating_sub(lowest_dirty_word());
    if was_enabled {
        // SAFETY: restores the interrupt mask found on entry; no critical section is open here.
        unsafe { cortex_m::interrupt::enable() };
    }
    depth
}

/// Stack high-water mark of the whole run so far, in bytes below the initial stack pointer:
/// scans RAM painted by the last [`Meter`] measurement (or by [`paint_free_stack`]), and takes
/// the larger of that and the mark kept by [`restart_high_water`].
pub fn stack_peak_bytes() -> u32 {
    stack_high_water_since_paint().max(EARLIER_PEAK.load(Ordering::Relaxed))
}

/// Stack high-water mark since the last painting, in bytes below the initial stack pointer
/// (frames live at the time of that painting count in full).
pub fn stack_high_water_since_paint() -> u32 {
    stack_top().saturating_sub(lowest_dirty_word())
}

/// High-water mark kept from before the last [`restart_high_water`].
static EARLIER_PEAK: AtomicU32 = AtomicU32::new(0);

/// Keeps the high-water mark so far (for [`stack_peak_bytes`]) and paints the free RAM again, so
/// that [`stack_high_water_since_paint`] measures from the present depth on (the example
/// firmware does this once its simulated plant is built: the plant is not part of the
/// application's start-up). Plain load and store: called from the main thread only.
pub fn restart_high_water() {
    let so_far = stack_peak_bytes();
    EARLIER_PEAK.store(so_far, Ordering::Relaxed);
    paint_free_stack();
}

/// Lowest stack pointer seen on entry to a method of the hardware seam ([`note_seam_sp`]);
/// `u32::MAX` until the first call.
static SEAM_SP: AtomicU32 = AtomicU32::new(u32::MAX);

/// Records the current stack pointer if it is the lowest seen so far at the hardware seam.
///
/// Called first in every method of a board's seam implementation (`src/board/`), inlined there,
/// so that the stack pointer read is the caller's: the frames of the application (and of the
/// embedded-hal default methods it uses) are all below it, the board's own work is not. Plain
/// load and store (thumbv6m has no atomic read-modify-write): the firmware calls the seam from
/// its main loop only.
#[inline(always)]
pub fn note_seam_sp() {
    let sp: u32;
    // SAFETY: copies the stack pointer into a register; touches neither memory nor flags.
    unsafe { asm!("mov {}, sp", out(reg) sp, options(nomem, nostack, preserves_flags)) };
    if sp < SEAM_SP.load(Ordering::Relaxed) {
        SEAM_SP.store(sp, Ordering::Relaxed);
    }
}

/// Stack the application used above the hardware seam, in bytes below the initial stack
/// pointer: the deepest point at which it called into the board ([`note_seam_sp`]). `None` when
/// no seam method has been called.
///
/// A lower bound of what the application needs on a real board: the seam method's own frame on
/// that board comes on top, and stack that the application uses only between seam calls (a
/// calculation that calls no seam method, logging) is not seen here.
pub fn stack_app_bytes() -> Option<u32> {
    let sp = SEAM_SP.load(Ordering::Relaxed);
    (sp != u32::MAX).then(|| stack_top().saturating_sub(sp))
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
