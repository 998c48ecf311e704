//! The rise capture: the RP2040's ADC free-running into its FIFO, drained by one DMA channel into
//! the capturing channel's buffer, started by the switch-on edge.
//!
//! - [`Engine::prepare`] (called from `CurrentSense::arm`) sets the ADC input and its pacing
//!   divider, clears the FIFO and its overflow flag, and starts a DMA transfer of the planned
//!   length paced by the ADC's DREQ. The ADC stays paused, so nothing moves yet.
//! - [`Engine::start`] (called by the drive in the same critical section as the gate edge) sets
//!   `CS.START_MANY`: the first conversion follows within the measured start lead.
//! - When the DMA has moved the last sample, its completion interrupt (`DMA_IRQ_0`,
//!   [`Engine::finish`]) pauses the ADC, reads the FIFO overflow flag, drains the FIFO and
//!   hands the buffer back to the channel. `CurrentSense::samples` polls the same path, so a
//!   held-off interrupt cannot lose a capture.
//!
//! Sample timing ([`coilwise_rp2040_arith::adc`]): a period of `P` µs is divider
//! `INT = 48·P − 1` (P = 2…1365 µs), exact in TIMER ticks. Sample `j` of the ADC stream is taken
//! `(lead + j)·P` after the edge, where `lead` (0 or 1 period) is measured once at start-up by
//! [`Engine::measure_lead`]; a plan whose first sample is later than that discards the leading
//! samples in the buffer (at most `MAX_LEAD`).
//!
//! One ADC serves every channel: while one channel's capture is armed or running, another
//! channel's `arm` answers `Busy`.

use core::sync::atomic::{compiler_fence, Ordering};

use coilwise::Ticks;
use rp2040_hal as hal;

use hal::adc::{Adc, AdcFifo, AdcPin, DmaReadTarget};
use hal::dma::{single_buffer, Channel as DmaChannel, SingleChannel, WriteTarget, CH0};
use hal::gpio::{DynPinId, FunctionNull, Pin, PullNone};

use crate::seam::SenseErrorKind;

use coilwise_rp2040_arith::adc::{decode, div_int, lead_from_delay, PACING_SAMPLES};
pub use coilwise_rp2040_arith::adc::{Timing, ADC_HZ, CAPACITY, MAX_SAMPLES, MIN_PERIOD};

/// A sense input of the ADC (GPIO26…29 with its digital input and output disabled).
pub type SensePin = AdcPin<Pin<DynPinId, FunctionNull, PullNone>>;
/// One channel's DMA buffer.
pub type Buffer = &'static mut [u16; CAPACITY];

/// The front `len` words of a channel buffer as a DMA write target.
pub struct Window {
    buf: Buffer,
    len: usize,
}

// SAFETY: the address and count handed to the DMA lie inside `buf` (the count is clamped to
// CAPACITY, the buffer's length), `buf` is a `'static` exclusive borrow, and the window owns it
// for as long as the transfer holds the window: no one else can touch the memory while the DMA
// writes it.
unsafe impl WriteTarget for Window {
    type TransmittedWord = u16;

    fn tx_treq() -> Option<u8> {
        None
    }

    fn tx_address_count(&mut self) -> (u32, u32) {
        (self.buf.as_mut_ptr() as u32, self.len.min(CAPACITY) as u32)
    }

    fn tx_increment(&self) -> bool {
        true
    }
}

type Dma = DmaChannel<CH0>;
type Running = single_buffer::Transfer<Dma, DmaReadTarget<u16>, Window>;

/// What became of one channel's capture.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Slot {
    /// Nothing armed (or the armed edge came and went without a plan).
    Idle,
    /// Prepared; waiting for the channel's switch-on edge.
    Armed(Timing),
    /// Converting since the edge.
    Running(Timing),
    /// Complete; `over`: the FIFO overflowed (samples may be lost).
    Done {
        /// The capture's timing.
        timing: Timing,
        /// FIFO overflow seen when the capture was stopped.
        over: bool,
    },
}

/// The ADC, its DMA channel, the sense inputs and each channel's capture state.
pub struct Engine<const N: usize> {
    adc: Option<&'static mut Adc>,
    fifo: Option<AdcFifo<'static, u16>>,
    dma: Option<Dma>,
    running: Option<Running>,
    /// Channel whose capture holds the ADC (armed or running).
    owner: Option<usize>,
    pins: [SensePin; N],
    bufs: [Option<Buffer>; N],
    slots: [Slot; N],
    /// Periods from `START_MANY` to the first conversion (measured, 0 or 1).
    lead: u32,
}

impl<const N: usize> Engine<N> {
    /// The engine over an enabled ADC, DMA channel 0 and one sense input and buffer per channel.
    pub fn new(adc: &'static mut Adc, dma: Dma, pins: [SensePin; N], bufs: [Buffer; N]) -> Self {
        Self {
            adc: Some(adc),
            fifo: None,
            dma: Some(dma),
            running: None,
            owner: None,
            pins,
            bufs: bufs.map(Some),
            slots: [Slot::Idle; N],
            lead: 1,
        }
    }

    /// Measures how long the ADC takes from `START_MANY` to its first result, with a 100 µs
    /// pacing period on channel 0's input, and keeps the lead (whole periods before the first
    /// conversion starts: 0 when the first result comes within one conversion time, else 1).
    /// `now` reads the 1 MHz TIMER. Takes ≈ 0.1–0.2 ms; returns the measured delay in ticks
    /// (`None` if no result came within 1 ms: the ADC clock is not running, and the lead stays
    /// the conservative 1).
    pub fn measure_lead(&mut self, now: impl Fn() -> u32) -> Option<u32> {
        let int = div_int(Ticks(100)).ok()?;
        let adc = self.adc.take()?;
        let mut fifo = adc
            .build_fifo()
            .clock_divider(int, 0)
            .set_channel(&mut self.pins[0])
            .start_paused();
        fifo.clear();
        let t0 = now();
        fifo.resume();
        let mut waited = None;
        while now().wrapping_sub(t0) < 1_000 {
            if fifo.len() > 0 {
                waited = Some(now().wrapping_sub(t0));
                break;
            }
        }
        fifo.pause();
        self.adc = Some(fifo.stop());
        if let Some(w) = waited {
            self.lead = lead_from_delay(w, 100);
        }
        waited
    }

    /// Times [`PACING_SAMPLES`] conversions of channel 0's input at the shortest period
    /// (2 µs), read from the FIFO as they come: the ticks from the first result to the
    /// `PACING_SAMPLES`-th after it (`None` if the FIFO overflowed or the results stopped
    /// within 10 ms). Takes ≈ 0.8 ms; call before the interrupts run.
    pub fn measure_pacing(&mut self, now: impl Fn() -> u32) -> Option<u32> {
        let int = div_int(Ticks(MIN_PERIOD)).ok()?;
        let adc = self.adc.take()?;
        let mut fifo = adc
            .build_fifo()
            .clock_divider(int, 0)
            .set_channel(&mut self.pins[0])
            .start_paused();
        fifo.clear();
        let _ = fifo.is_over();
        let start = now();
        fifo.resume();
        let mut first = None;
        let mut counted = 0;
        let mut end = start;
        while now().wrapping_sub(start) < 10_000 && counted < PACING_SAMPLES {
            if fifo.len() > 0 {
                let _ = fifo.read();
                match first {
                    None => first = Some(now()),
                    Some(_) => {
                        counted += 1;
                        end = now();
                    }
                }
            }
        }
        fifo.pause();
        let over = fifo.is_over();
        self.adc = Some(fifo.stop());
        match first {
            Some(t0) if !over && counted == PACING_SAMPLES => Some(end.wrapping_sub(t0)),
            _ => None,
        }
    }

    /// One conversion of channel `ch`'s input now (blocking, 2 µs), 12-bit counts.
    /// `Busy` while a capture holds the ADC.
    pub fn convert_now(&mut self, ch: usize) -> Result<u16, SenseErrorKind> {
        self.finish();
        if self.owner.is_some() {
            return Err(SenseErrorKind::Busy);
        }
        let adc = self.adc.as_mut().ok_or(SenseErrorKind::Busy)?;
        let pin = self.pins.get_mut(ch).ok_or(SenseErrorKind::Other)?;
        adc.read(pin).map_err(|_| SenseErrorKind::Other)
    }

    /// Prepares channel `ch`'s capture for its next switch-on edge (see the module doc);
    /// `samples = 0` disarms. `Busy` while another channel's capture holds the ADC, or this
    /// channel's previous capture is still running.
    pub fn prepare(
        &mut self,
        ch: usize,
        first: Ticks,
        period: Ticks,
        samples: usize,
    ) -> Result<(), SenseErrorKind> {
        if ch >= N {
            return Err(SenseErrorKind::Other);
        }
        // A capture whose DMA completed while interrupts were masked is stopped first.
        self.finish();
        let timing = if samples == 0 {
            None
        } else {
            Some(Timing::plan(first, period, samples, self.lead)?)
        };
        match self.owner {
            // Disarming needs no ADC: only this channel's slot changes.
            Some(o) if o != ch && timing.is_none() => {
                self.slots[ch] = Slot::Idle;
                return Ok(());
            }
            Some(o) if o != ch => return Err(SenseErrorKind::Busy),
            Some(_) if matches!(self.slots[ch], Slot::Running(_)) => {
                return Err(SenseErrorKind::Busy)
            }
            Some(_) => self.release()?,
            None => {}
        }
        self.slots[ch] = Slot::Idle;
        let Some(timing) = timing else {
            return Ok(());
        };
        let (adc, mut dma, buf) = match (self.adc.take(), self.dma.take(), self.bufs[ch].take()) {
            (Some(a), Some(d), Some(b)) => (a, d, b),
            // Cannot happen while no capture owns the engine; put back what was there.
            (a, d, b) => {
                (self.adc, self.dma, self.bufs[ch]) = (a, d, b);
                return Err(SenseErrorKind::Other);
            }
        };
        let mut fifo = adc
            .build_fifo()
            .clock_divider(timing.div_int, 0)
            .set_channel(&mut self.pins[ch])
            .enable_dma()
            .start_paused();
        fifo.clear();
        let _ = fifo.is_over(); // clears a stale overflow flag
        dma.enable_irq0();
        let window = Window {
            buf,
            len: timing.transfer_len(),
        };
        self.running =
            Some(single_buffer::Config::new(dma, fifo.dma_read_target(), window).start());
        self.fifo = Some(fifo);
        self.owner = Some(ch);
        self.slots[ch] = Slot::Armed(timing);
        Ok(())
    }

    /// Undoes a prepared capture that has not started: aborts the DMA and frees the ADC.
    fn release(&mut self) -> Result<(), SenseErrorKind> {
        let (ch, run, fifo) = match (self.owner.take(), self.running.take(), self.fifo.take()) {
            (Some(c), Some(r), Some(f)) => (c, r, f),
            (c, r, f) => {
                (self.owner, self.running, self.fifo) = (c, r, f);
                return Err(SenseErrorKind::Other);
            }
        };
        let (dma, _, window) = run.abort();
        self.dma = Some(dma);
        self.bufs[ch] = Some(window.buf);
        self.adc = Some(fifo.stop());
        self.slots[ch] = Slot::Idle;
        Ok(())
    }

    /// Channel `ch` switched on: starts its armed capture (sets `START_MANY`). Called by the
    /// drive inside the critical section that makes the gate edge. A channel that was not armed
    /// forgets its last capture (the latest switch-on started none).
    pub fn start(&mut self, ch: usize) {
        match self.slots.get(ch).copied() {
            Some(Slot::Armed(t)) if self.owner == Some(ch) => {
                if let Some(f) = self.fifo.as_mut() {
                    f.resume();
                    self.slots[ch] = Slot::Running(t);
                }
            }
            Some(Slot::Done { .. }) => self.slots[ch] = Slot::Idle,
            _ => {}
        }
    }

    /// Stops a capture whose DMA transfer has completed (from `DMA_IRQ_0` or a poll): pauses the
    /// ADC, reads the overflow flag, drains the FIFO, returns the buffer to its channel.
    pub fn finish(&mut self) {
        let done = self.running.as_mut().is_some_and(|r| {
            let _ = r.check_irq0();
            r.is_done()
        });
        if !done {
            return;
        }
        let (ch, run, mut fifo) = match (self.owner.take(), self.running.take(), self.fifo.take()) {
            (Some(c), Some(r), Some(f)) => (c, r, f),
            (c, r, f) => {
                (self.owner, self.running, self.fifo) = (c, r, f);
                return;
            }
        };
        fifo.pause();
        let over = fifo.is_over();
        let (dma, _, window) = run.wait();
        compiler_fence(Ordering::SeqCst);
        self.dma = Some(dma);
        self.bufs[ch] = Some(window.buf);
        self.adc = Some(fifo.stop());
        if let Slot::Running(timing) = self.slots[ch] {
            self.slots[ch] = Slot::Done { timing, over };
        }
    }

    /// Copies channel `ch`'s completed capture into the front of `out`: `Ok(Some((len, first,
    /// period)))`, `Ok(None)` while armed or running (or nothing was armed).
    /// Errors: `out` shorter than the capture → `BufferLength`; FIFO overflow → `Overrun`; a
    /// conversion flagged with an error → `Other`.
    pub fn collect(
        &mut self,
        ch: usize,
        out: &mut [u16],
    ) -> Result<Option<(usize, Ticks, Ticks)>, SenseErrorKind> {
        self.finish();
        let Some(Slot::Done { timing, over }) = self.slots.get(ch).copied() else {
            return Ok(None);
        };
        if over {
            return Err(SenseErrorKind::Overrun);
        }
        let buf = self.bufs[ch].as_ref().ok_or(SenseErrorKind::Other)?;
        let src = buf
            .get(timing.skip..timing.skip + timing.len)
            .ok_or(SenseErrorKind::Other)?;
        let dst = out
            .get_mut(..timing.len)
            .ok_or(SenseErrorKind::BufferLength)?;
        for (d, s) in dst.iter_mut().zip(src) {
            *d = decode(*s)?;
        }
        Ok(Some((timing.len, timing.first, timing.period)))
    }
}
