//! Sensor faults: traces the current sensor of a healthy coil produces when the sensor (or its
//! converter input) fails, applied to the converter counts after the pulse. None of them is a
//! current a coil can carry, so the verdict must be a sensor finding or "cannot tell", never
//! healthy and never a coil fault (the zero-stuck case excepted, below).

use coilwise_host_tests::Prng;

/// Full scale of the campaign's 12-bit converter, counts.
const TOP: u16 = 4095;

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
}

pub const SENSOR_FAULTS: [SensorFault; 4] = [
    SensorFault::StuckMid,
    SensorFault::StuckZero,
    SensorFault::Noisy,
    SensorFault::Dropouts,
];

impl SensorFault {
    pub fn label(&self) -> &'static str {
        match self {
            SensorFault::StuckMid => "sensor stuck mid-scale",
            SensorFault::StuckZero => "sensor stuck at 0",
            SensorFault::Noisy => "sensor noisy 40 rms",
            SensorFault::Dropouts => "sensor dropouts 10%",
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
            SensorFault::Dropouts => {
                for c in counts.iter_mut() {
                    if rng.uniform() < 0.1 {
                        *c = if rng.uniform() < 0.5 { 0 } else { TOP };
                    }
                }
            }
        }
    }
}
