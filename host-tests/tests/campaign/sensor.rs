//! Sensor faults: traces the current sensor of a healthy coil produces when the sensor (or its
//! converter input) fails, applied to the converter counts after the pulse. None of them is a
//! current a coil can carry, so the verdict must be a sensor finding or "cannot tell", never
//! healthy and never a coil fault (the zero-stuck case excepted, below).

use coilwise_host_tests::Prng;

/// Full scale of the campaign's 12-bit converter, counts.
const TOP: u16 = 4095;
/// A dropout that moves a sample by more than this many counts (8 times the converter's rated
/// 2 counts RMS) is one the trace shows.
const VISIBLE: u16 = 16;

/// How the sensor fails.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum SensorFault {
    /// Every sample the same mid-scale count (drawn 1024…3072): a frozen converter or a sample
    /// buffer that is never refilled.
    StuckMid,
    /// Every sample 0: a dead sensor, a broken sense connection, an amplifier without supply.
    StuckZero,
    /// 40 counts RMS of extra Gaussian noise (a loose shield, a sense amplifier oscillating):
    /// 20–40 times the converter's rated 1–2 counts.
    Noisy,
    /// Each sample with probability 0.1 read as 0 or full scale (50/50): a failing conversion
    /// or a bus glitch.
    Dropouts,
    /// Dropouts to 0 only (probability 0.1 a sample).
    DropoutsZero,
    /// Dropouts to full scale only (probability 0.1 a sample).
    DropoutsTop,
    /// The sense amplifier's gain off by a factor (a feedback resistor open or shorted, the
    /// wrong part fitted).
    Gain(f64),
}

pub const SENSOR_FAULTS: [SensorFault; 8] = [
    SensorFault::StuckMid,
    SensorFault::StuckZero,
    SensorFault::Noisy,
    SensorFault::Dropouts,
    SensorFault::DropoutsZero,
    SensorFault::DropoutsTop,
    SensorFault::Gain(0.5),
    SensorFault::Gain(2.0),
];

impl SensorFault {
    pub fn label(&self) -> String {
        match self {
            SensorFault::Gain(k) => format!("sensor gain x{k}"),
            SensorFault::StuckMid => "sensor stuck mid-scale".into(),
            SensorFault::StuckZero => "sensor stuck at 0".into(),
            SensorFault::Noisy => "sensor noisy 40 rms".into(),
            SensorFault::Dropouts => "sensor dropouts 10%".into(),
            SensorFault::DropoutsZero => "sensor dropouts to 0".into(),
            SensorFault::DropoutsTop => "sensor dropouts to top".into(),
        }
    }

    /// Corrupts a capture in place.
    pub fn apply(&self, counts: &mut [u16], rng: &mut Prng) {
        match self {
            SensorFault::StuckMid => {
                let level = (1024.0 + 2048.0 * rng.uniform()) as u16;
                counts.fill(level);
            }
            SensorFault::StuckZero => counts.fill(0),
            SensorFault::Noisy => {
                for c in counts.iter_mut() {
                    let v = (*c as f64 + rng.normal(0.0, 40.0)).round();
                    *c = v.clamp(0.0, TOP as f64) as u16;
                }
            }
            SensorFault::Gain(k) => {
                for c in counts.iter_mut() {
                    *c = (*c as f64 * k).round().clamp(0.0, TOP as f64) as u16;
                }
            }
            SensorFault::Dropouts | SensorFault::DropoutsZero | SensorFault::DropoutsTop => {
                let pick = |rng: &mut Prng| {
                    let top = match self {
                        SensorFault::DropoutsZero => false,
                        SensorFault::DropoutsTop => true,
                        _ => rng.uniform() < 0.5,
                    };
                    if top {
                        TOP
                    } else {
                        0
                    }
                };
                let mut visible = false;
                for c in counts.iter_mut() {
                    if rng.uniform() < 0.1 {
                        let v = pick(rng);
                        visible |= c.abs_diff(v) > VISIBLE;
                        *c = v;
                    }
                }
                // A dropout the trace cannot show (none drawn, 0.9⁶⁴ = 0.1 % of captures, or
                // only a 0 where the current reads a few counts anyway) is no sensor fault yet:
                // one more in the second half, where the current is well above the noise.
                if !visible {
                    let n = counts.len();
                    let at = n / 2 + ((n - n / 2) as f64 * rng.uniform()) as usize;
                    let at = at.min(n - 1);
                    counts[at] = pick(rng);
                }
            }
        }
    }
}
