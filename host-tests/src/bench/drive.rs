//! How a channel's gate is commanded: a plain pin level or a PWM carrier.

#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) enum Drive {
    Pin(bool),
    Pwm {
        period_ns: u64,
        on_ns: u64,
        origin_ns: u64,
    },
}

impl Drive {
    pub(super) fn commanded_on(&self) -> bool {
        match *self {
            Drive::Pin(on) => on,
            Drive::Pwm { on_ns, .. } => on_ns > 0,
        }
    }

    pub(super) fn gate_at(&self, t: u64) -> bool {
        match *self {
            Drive::Pin(on) => on,
            Drive::Pwm {
                period_ns,
                on_ns,
                origin_ns,
            } => {
                if on_ns == 0 {
                    false
                } else if on_ns >= period_ns {
                    true
                } else {
                    (t.saturating_sub(origin_ns)) % period_ns < on_ns
                }
            }
        }
    }

    pub(super) fn next_edge_after(&self, t: u64) -> Option<u64> {
        match *self {
            Drive::Pin(_) => None,
            Drive::Pwm {
                period_ns,
                on_ns,
                origin_ns,
            } => {
                if on_ns == 0 || on_ns >= period_ns {
                    return None;
                }
                let phase = t.saturating_sub(origin_ns) % period_ns;
                Some(if phase < on_ns {
                    t + (on_ns - phase)
                } else {
                    t + (period_ns - phase)
                })
            }
        }
    }
}
