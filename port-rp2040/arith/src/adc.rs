//! ADC pacing and the timing of a capture.
//!
//! The ADC runs from `clk_adc` = 48 MHz (PLL_USB); one conversion takes 96 clocks (2 µs,
//! 500 kS/s). In free-running mode (`CS.START_MANY`) with a non-zero divider, a conversion
//! starts every `1 + INT + FRAC/256` clocks (RP2040 datasheet, ADC `DIV` register; the same
//! formula in rp2040-hal's `AdcFifoBuilder::clock_divider` docs). With FRAC = 0 a period of `P`
//! µs of the 1 MHz TIMER is `INT = 48·P − 1`, exactly, for P = 2…1365 µs (INT is 16 bits). The
//! TIMER tick and `clk_adc` come from the same crystal, so the period is exact in ticks.
//!
//! Sample `j` of the stream is taken `(lead + j)·P` after `START_MANY` is set, where `lead` is
//! 0 or 1 period — measured once at start-up ([`lead_from_delay`]), because the datasheet does
//! not say whether the divider's first period runs before the first conversion.

use coilwise::Ticks;
use coilwise_driver::SenseErrorKind;

/// Samples one capture hands to the caller.
pub const MAX_SAMPLES: usize = 64;
/// Leading samples a plan may discard (a first sample later than the start lead).
pub const MAX_LEAD: usize = 8;
/// Capacity of each channel's DMA buffer.
pub const CAPACITY: usize = MAX_SAMPLES + MAX_LEAD;
/// ADC clock, Hz.
pub const ADC_HZ: u32 = 48_000_000;
/// ADC clocks per TIMER tick (1 µs).
pub const ADC_CLOCKS_PER_TICK: u32 = ADC_HZ / 1_000_000;
/// ADC clocks of one conversion.
pub const CONVERSION_CLOCKS: u32 = 96;
/// Shortest sample period, ticks: one conversion.
pub const MIN_PERIOD: u32 = CONVERSION_CLOCKS / ADC_CLOCKS_PER_TICK;
/// Longest sample period, ticks: `1 + INT` with a 16-bit INT, whole µs.
pub const MAX_PERIOD: u32 = (u16::MAX as u32 + 1) / ADC_CLOCKS_PER_TICK;
/// Bit 15 of a FIFO word: that conversion had an error (`FCS.ERR` = 1).
pub const FIFO_ERR: u16 = 1 << 15;
/// The 12 result bits of a FIFO word.
pub const FIFO_VALUE: u16 = 0x0FFF;

/// The divider integer part for a period of `period` ticks: `48·P − 1`; `PeriodUnsupported`
/// outside [`MIN_PERIOD`]…[`MAX_PERIOD`].
pub fn div_int(period: Ticks) -> Result<u16, SenseErrorKind> {
    let p = period.get();
    if !(MIN_PERIOD..=MAX_PERIOD).contains(&p) {
        return Err(SenseErrorKind::PeriodUnsupported);
    }
    u16::try_from(p * ADC_CLOCKS_PER_TICK - 1).map_err(|_| SenseErrorKind::PeriodUnsupported)
}

/// The start lead from a measured delay: with a pacing period of `period` ticks, the first
/// result came `delay` ticks after `START_MANY`. A result within half a period means the first
/// conversion started at once (lead 0); later, it waited for the divider's first period
/// (lead 1).
pub const fn lead_from_delay(delay: u32, period: u32) -> u32 {
    if delay < period / 2 {
        0
    } else {
        1
    }
}

/// Samples timed by the start-up pacing check ([`pacing_ok`]).
pub const PACING_SAMPLES: u32 = 400;
/// Largest deviation the pacing check accepts, ticks: two TIMER readings of ±1 tick each plus
/// one of polling latency, 0.375 % of the 800 µs measured.
pub const PACING_TOLERANCE: u32 = 3;

/// Whether [`PACING_SAMPLES`] conversions at the shortest period ([`MIN_PERIOD`], 96 ADC
/// clocks) took the expected `PACING_SAMPLES · MIN_PERIOD` = 800 µs within
/// [`PACING_TOLERANCE`]. A converter that needs even one clock more per conversion (97 of
/// 48 MHz: +1 %, 808.3 µs) fails, so the capture's time axis is known to 0.4 % before a coil
/// is driven.
pub const fn pacing_ok(elapsed: u32) -> bool {
    elapsed.abs_diff(PACING_SAMPLES * MIN_PERIOD) <= PACING_TOLERANCE
}

/// A FIFO word as a 12-bit reading; `Other` when the word carries the conversion-error flag.
pub const fn decode(word: u16) -> Result<u16, SenseErrorKind> {
    if word & FIFO_ERR != 0 {
        Err(SenseErrorKind::Other)
    } else {
        Ok(word & FIFO_VALUE)
    }
}

/// The hardware timing of a capture.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Timing {
    /// ADC samples discarded before the first one handed out.
    pub skip: usize,
    /// Samples handed out.
    pub len: usize,
    /// Time of the first sample handed out after the edge, ticks: `(lead + skip)·period`.
    pub first: Ticks,
    /// Sample period, ticks.
    pub period: Ticks,
    /// Pacing divider integer part ([`div_int`]).
    pub div_int: u16,
}

impl Timing {
    /// Timing for `samples` samples every `period` ticks, the first no earlier than `first`
    /// ticks after the edge, with a start lead of `lead` periods:
    /// `skip = max(0, ⌈first/period⌉ − lead)`, actual first = `(lead + skip)·period` — the
    /// first sample at or after the asked one (less than one period later), except that it
    /// cannot come before `lead·period`.
    ///
    /// Errors: a period outside [`MIN_PERIOD`]…[`MAX_PERIOD`] → `PeriodUnsupported`; more
    /// than [`MAX_SAMPLES`] samples, or more than [`MAX_LEAD`] to discard → `BufferLength`.
    pub fn plan(
        first: Ticks,
        period: Ticks,
        samples: usize,
        lead: u32,
    ) -> Result<Self, SenseErrorKind> {
        let div_int = div_int(period)?;
        if samples > MAX_SAMPLES {
            return Err(SenseErrorKind::BufferLength);
        }
        let p = period.get();
        let skip = first.get().div_ceil(p).saturating_sub(lead);
        if skip as usize > MAX_LEAD {
            return Err(SenseErrorKind::BufferLength);
        }
        let first_actual = (lead + skip)
            .checked_mul(p)
            .ok_or(SenseErrorKind::PeriodUnsupported)?;
        Ok(Self {
            skip: skip as usize,
            len: samples,
            first: Ticks(first_actual),
            period,
            div_int,
        })
    }

    /// Samples the DMA moves: discarded ones plus those handed out (≤ [`CAPACITY`]).
    pub const fn transfer_len(&self) -> usize {
        self.skip + self.len
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// rp2040-hal 0.12 `AdcFifoBuilder::clock_divider` table: 1000 sps → INT 47999, FRAC 0.
    #[test]
    fn divider_matches_the_hal_table() {
        assert_eq!(div_int(Ticks(1_000)), Ok(47_999));
    }

    /// RP2040 datasheet (from memory): 500 kS/s at most, i.e. 2 µs; INT is 16 bits, so the
    /// slowest whole-µs period is 1365 µs (the HAL docs give 732.41 Hz ≈ 1365.3 µs with
    /// INT = 0xFFFF, FRAC = 0xFF).
    #[test]
    fn period_range() {
        assert_eq!(MIN_PERIOD, 2);
        assert_eq!(div_int(Ticks(2)), Ok(95)); // 96 clocks: back-to-back conversions
        assert_eq!(div_int(Ticks(1)), Err(SenseErrorKind::PeriodUnsupported));
        assert_eq!(div_int(Ticks(0)), Err(SenseErrorKind::PeriodUnsupported));
        assert_eq!(MAX_PERIOD, 1_365);
        assert_eq!(div_int(Ticks(1_365)), Ok(65_519));
        assert_eq!(
            div_int(Ticks(1_366)),
            Err(SenseErrorKind::PeriodUnsupported)
        );
        assert_eq!(
            div_int(Ticks(u32::MAX)),
            Err(SenseErrorKind::PeriodUnsupported)
        );
        let slowest_hz: f64 = 48e6 / (1.0 + 65535.0 + 255.0 / 256.0);
        assert!((slowest_hz - 732.41).abs() < 0.01);
    }

    /// Every plan the port accepts puts its first sample at or after the asked time (unless
    /// the asked time is inside the start lead), less than one period late, and fits the
    /// buffer; what it refuses, it refuses for the stated reason.
    #[test]
    fn timing_invariants_exhaustive() {
        for lead in 0..=1u32 {
            for p in (MIN_PERIOD..=40).chain([100, 999, MAX_PERIOD]) {
                for first in 0..=(12 * p) {
                    for samples in [0, 1, 63, 64] {
                        let r = Timing::plan(Ticks(first), Ticks(p), samples, lead);
                        let periods = first.div_ceil(p);
                        match r {
                            Ok(t) => {
                                assert!(t.transfer_len() <= CAPACITY);
                                assert_eq!(t.period, Ticks(p));
                                assert_eq!(t.len, samples);
                                let f = t.first.get();
                                assert_eq!(f % p, 0);
                                if first >= lead * p {
                                    assert!(f >= first && f - first < p, "{first} {p} {f}");
                                } else {
                                    assert_eq!(f, lead * p);
                                }
                                assert_eq!(u32::from(t.div_int) + 1, 48 * p);
                            }
                            Err(e) => {
                                assert_eq!(e, SenseErrorKind::BufferLength);
                                assert!(periods.saturating_sub(lead) as usize > MAX_LEAD);
                            }
                        }
                    }
                }
            }
        }
        let too_many = Timing::plan(Ticks(10), Ticks(10), MAX_SAMPLES + 1, 1);
        assert_eq!(too_many, Err(SenseErrorKind::BufferLength));
    }

    /// The driver's plan (first = period) needs no discarded sample with lead 1, one with lead 0.
    #[test]
    fn driver_plan() {
        let t = Timing::plan(Ticks(120), Ticks(120), 64, 1).unwrap();
        assert_eq!((t.skip, t.first), (0, Ticks(120)));
        let t = Timing::plan(Ticks(120), Ticks(120), 64, 0).unwrap();
        assert_eq!((t.skip, t.first), (1, Ticks(120)));
    }

    /// 500 kS/s (RP2040 datasheet, from memory): 400 conversions take 800 µs.
    #[test]
    fn pacing_check() {
        assert_eq!(PACING_SAMPLES * MIN_PERIOD, 800);
        for e in 797..=803 {
            assert!(pacing_ok(e), "{e}");
        }
        assert!(!pacing_ok(796) && !pacing_ok(804));
        // One ADC clock more per conversion: 400 · 97 / 48 MHz = 808.3 µs.
        let slow = (PACING_SAMPLES * (CONVERSION_CLOCKS + 1)).div_ceil(ADC_CLOCKS_PER_TICK);
        assert_eq!(slow, 809);
        assert!(!pacing_ok(slow) && !pacing_ok(slow - 1));
        assert!(!pacing_ok(0) && !pacing_ok(u32::MAX));
    }

    #[test]
    fn lead_and_fifo_words() {
        assert_eq!(lead_from_delay(2, 100), 0);
        assert_eq!(lead_from_delay(49, 100), 0);
        assert_eq!(lead_from_delay(50, 100), 1);
        assert_eq!(lead_from_delay(102, 100), 1);
        // RP2040 datasheet FIFO register (from memory): ERR is bit 15, VAL bits 11:0.
        assert_eq!(decode(0x0ABC), Ok(0x0ABC));
        assert_eq!(decode(0x8ABC), Err(SenseErrorKind::Other));
        assert_eq!(decode(0x0FFF), Ok(4095));
    }
}
