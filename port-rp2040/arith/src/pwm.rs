//! PWM slice carriers: a slice counts the system clock (divider 1) from 0 to TOP and wraps,
//! so its period is `(TOP + 1) / f_sys` (RP2040 datasheet, PWM chapter, from memory); a compare
//! value `c` is high for `c` counts of each period, `c = TOP + 1` is always high.

/// System clock the slices count, Hz (PLL_SYS from the 12 MHz crystal).
pub const SYS_HZ: u32 = 125_000_000;

/// TOP for a carrier of `hz` at divider 1: `f_sys / hz − 1`; `None` when that is not a whole
/// number of counts, or does not fit the 16-bit counter (below 1 908 Hz), or `hz` is 0.
pub const fn top_for(hz: u32) -> Option<u16> {
    if hz == 0 || !SYS_HZ.is_multiple_of(hz) {
        return None;
    }
    let counts = SYS_HZ / hz;
    if counts < 2 || counts > u16::MAX as u32 + 1 {
        return None;
    }
    Some((counts - 1) as u16)
}

/// Hold PWM carrier of the gates, Hz (above hearing).
pub const HOLD_HZ: u32 = 20_000;

/// TOP of the gate slices: 6249 (`max_duty_cycle` = 6250 steps of 8 ns).
pub const HOLD_TOP: u16 = match top_for(HOLD_HZ) {
    Some(t) => t,
    None => panic!("HOLD_HZ must divide SYS_HZ"),
};

#[cfg(test)]
mod tests {
    use super::*;

    /// Period formula (TOP + 1)/f_sys, RP2040 datasheet (from memory): 6250 counts of 8 ns =
    /// 50 µs = 20 kHz.
    #[test]
    fn hold_carrier_is_20_khz() {
        assert_eq!(HOLD_TOP, 6249);
        assert_eq!(SYS_HZ / (u32::from(HOLD_TOP) + 1), 20_000);
    }

    /// The counter is 16 bits: the slowest carrier at divider 1 is 125 MHz / 65536 ≈ 1907.3 Hz.
    #[test]
    fn top_limits() {
        assert_eq!(top_for(0), None);
        assert_eq!(top_for(1_000), None); // 125 000 counts do not fit 16 bits
        assert_eq!(top_for(3), None); // not a whole number of counts
        assert_eq!(top_for(122_070), None); // 125 MHz / 1024 = 122 070.3 Hz: not whole
        assert_eq!(top_for(2_000), Some(62_499));
    }
}
