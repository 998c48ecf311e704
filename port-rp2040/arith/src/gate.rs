//! The gate of one channel: what the pad, the PWM compare and the capture do on a switch or
//! duty change.
//!
//! The seam's rule: while the hold duty is non-zero the PWM drives the gate; at duty 0 the gate
//! follows the switch. On the RP2040 the gate pin stays in its PWM function and the pad's output
//! override picks forced low, forced high or the slice's output. The compare register is
//! double-buffered (taken at the counter's wrap), the override is not; hence the order of the
//! writes in [`Step`].

use crate::pwm::HOLD_TOP;

/// What the gate does.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Gate {
    /// Off.
    Off,
    /// Full drive.
    Full,
    /// Hold PWM at this compare (1 … TOP + 1).
    Hold(u16),
}

impl Gate {
    /// The gate for a switch state and a hold duty (clamped to TOP + 1).
    pub const fn of(switch_on: bool, duty: u16) -> Self {
        let d = if duty > HOLD_TOP + 1 {
            HOLD_TOP + 1
        } else {
            duty
        };
        match (d, switch_on) {
            (0, false) => Gate::Off,
            (0, true) => Gate::Full,
            (d, _) => Gate::Hold(d),
        }
    }
}

/// The pad's output override.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Pad {
    /// Forced low.
    Low,
    /// Forced high.
    High,
    /// The PWM slice's output.
    Pwm,
}

/// The register writes of one gate change, in this order: the compare first if
/// `compare_first` (and the counter restart), the capture start if `switch_on_edge`, the pad,
/// the compare last otherwise, then the comparator's edge time.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Step {
    /// The override to write.
    pub pad: Pad,
    /// The compare value to write: 0 off, TOP + 1 (always high) on full drive, so that a later
    /// hand-over to the hold PWM keeps the gate high until the new duty is taken at the wrap.
    pub compare: u16,
    /// Write the compare before the pad (the pad goes to the PWM, which must already have its
    /// duty).
    pub compare_first: bool,
    /// Set the counter to TOP so the new compare is taken at once (a hold started from off).
    pub restart_counter: bool,
    /// An off → on change: start the armed capture and the comparator watch.
    pub switch_on_edge: bool,
}

/// The writes for a change from `before` to `after`; `None` when the gate does not change.
pub fn step(before: Gate, after: Gate) -> Option<Step> {
    if before == after {
        return None;
    }
    let from_off = before == Gate::Off;
    Some(match after {
        Gate::Off => Step {
            pad: Pad::Low,
            compare: 0,
            compare_first: false,
            restart_counter: false,
            switch_on_edge: false,
        },
        Gate::Full => Step {
            pad: Pad::High,
            compare: HOLD_TOP + 1,
            compare_first: false,
            restart_counter: false,
            switch_on_edge: from_off,
        },
        Gate::Hold(d) => Step {
            pad: Pad::Pwm,
            compare: d,
            compare_first: true,
            restart_counter: from_off,
            switch_on_edge: from_off,
        },
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn all_gates() -> impl Iterator<Item = (bool, u16)> {
        [false, true]
            .into_iter()
            .flat_map(|s| [0, 1, 3_125, HOLD_TOP, HOLD_TOP + 1, u16::MAX].map(move |d| (s, d)))
    }

    /// The seam's rule (driver `ChannelHw` docs): non-zero hold duty drives the gate, at duty 0
    /// the gate follows the switch.
    #[test]
    fn pad_follows_the_seam_rule() {
        for (s0, d0) in all_gates() {
            for (s1, d1) in all_gates() {
                let (g0, g1) = (Gate::of(s0, d0), Gate::of(s1, d1));
                let Some(st) = step(g0, g1) else {
                    assert_eq!(g0, g1);
                    continue;
                };
                let want = match (d1, s1) {
                    (0, false) => Pad::Low,
                    (0, true) => Pad::High,
                    _ => Pad::Pwm,
                };
                assert_eq!(st.pad, want, "{g0:?} -> {g1:?}");
                assert_eq!(st.switch_on_edge, g0 == Gate::Off && g1 != Gate::Off);
                assert_eq!(st.restart_counter, g0 == Gate::Off && st.pad == Pad::Pwm);
                assert_eq!(st.compare_first, st.pad == Pad::Pwm);
                assert!(st.compare <= HOLD_TOP + 1);
                if st.pad == Pad::Pwm {
                    assert_eq!(st.compare, d1.min(HOLD_TOP + 1));
                    assert!(st.compare > 0);
                }
            }
        }
    }

    #[test]
    fn full_drive_keeps_the_compare_at_always_high() {
        let st = step(Gate::Off, Gate::Full).unwrap();
        assert_eq!(st.compare, HOLD_TOP + 1);
        let st = step(Gate::Full, Gate::Hold(2_000)).unwrap();
        assert!(!st.switch_on_edge && !st.restart_counter);
        let st = step(Gate::Hold(2_000), Gate::Off).unwrap();
        assert_eq!((st.pad, st.compare), (Pad::Low, 0));
        assert_eq!(Gate::of(true, u16::MAX), Gate::Hold(HOLD_TOP + 1));
    }
}
