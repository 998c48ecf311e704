//! Inputs and checks: the seeded generator, the nasty values, and the scan of accepted results.

use super::*;

/// splitmix64: small, seedable, its whole state one `u64` (so an iteration can be replayed).
#[derive(Clone, Copy)]
pub(crate) struct Rng(pub(crate) u64);

impl Rng {
    pub(crate) fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    /// Uniform in [0, 1).
    pub(crate) fn unit(&mut self) -> f32 {
        (self.next() >> 40) as f32 / (1u64 << 24) as f32
    }
    pub(crate) fn below(&mut self, n: u64) -> u64 {
        self.next() % n
    }
    pub(crate) fn chance(&mut self, p: f32) -> bool {
        self.unit() < p
    }
}

/// Values every f32 input must survive.
pub(crate) const NASTY: [f32; 18] = [
    f32::NAN,
    f32::INFINITY,
    f32::NEG_INFINITY,
    0.0,
    -0.0,
    f32::MIN_POSITIVE,
    -f32::MIN_POSITIVE,
    1.0e-40, // subnormal
    -1.0e-40,
    1.0e-45, // smallest subnormal
    f32::MAX,
    -f32::MAX,
    1.0e38,
    1.0e-38,
    f32::EPSILON,
    1.0,
    -1.0,
    3.0e38,
];

/// The generator: a seeded stream of inputs, the call count, and a verbose switch for replays.
pub(crate) struct Gen {
    pub(crate) rng: Rng,
    pub(crate) calls: u64,
    pub(crate) verbose: bool,
}

impl Gen {
    /// A nasty value or one of any sign and magnitude (10⁻⁴⁵ … 10³⁸·⁵).
    pub(crate) fn wild(&mut self) -> f32 {
        if self.rng.chance(0.5) {
            NASTY[self.rng.below(NASTY.len() as u64) as usize]
        } else {
            let e = -45.0 + 83.5 * self.rng.unit();
            let sign = if self.rng.chance(0.8) { 1.0 } else { -1.0 };
            sign * 10f32.powf(e)
        }
    }
    /// Mostly a plausible value near `typical` (×e^±2), sometimes a wild one.
    pub(crate) fn val(&mut self, typical: f32) -> f32 {
        if self.rng.chance(0.07) {
            self.wild()
        } else {
            typical * (4.0 * self.rng.unit() - 2.0).exp()
        }
    }
    /// Mostly `centre ± half`, sometimes wild (temperatures, factors, fractions).
    pub(crate) fn around(&mut self, centre: f32, half: f32) -> f32 {
        if self.rng.chance(0.07) {
            self.wild()
        } else {
            centre + half * (2.0 * self.rng.unit() - 1.0)
        }
    }
    pub(crate) fn volts(&mut self, typical: f32) -> Volts {
        Volts::new(self.val(typical))
    }
    pub(crate) fn ohms(&mut self, typical: f32) -> Ohms {
        Ohms::new(self.val(typical))
    }
    pub(crate) fn secs(&mut self, typical: f32) -> Seconds {
        Seconds::new(self.val(typical))
    }
    pub(crate) fn amps(&mut self, typical: f32) -> Amps {
        Amps::new(self.val(typical))
    }
    pub(crate) fn u32_any(&mut self) -> u32 {
        match self.rng.below(4) {
            0 => [0, 1, u32::MAX, u32::MAX - 1, 1 << 31][self.rng.below(5) as usize],
            1 => self.rng.below(1000) as u32,
            _ => self.rng.next() as u32,
        }
    }

    /// One call: counted, and with its inputs printed on a verbose replay.
    pub(crate) fn log(&mut self, name: &str, inputs: &dyn Debug) {
        self.calls += 1;
        if self.verbose {
            eprintln!("  call {name} {inputs:?}");
        }
    }
}

/// Fails when the Debug text of an accepted value holds a NaN or an infinity, a negative time
/// (`Seconds(-x)`) or a negative energy (`Joules(-x)`); -0.0 counts as zero.
pub(crate) fn scan(name: &str, v: &dyn Debug) -> Result<(), String> {
    let s = format!("{v:?}");
    let b = s.as_bytes();
    let word = |i: usize, len: usize| {
        let before = i == 0 || !b[i - 1].is_ascii_alphanumeric();
        let after = i + len >= b.len() || !b[i + len].is_ascii_alphanumeric();
        before && after
    };
    for pat in ["NaN", "inf"] {
        for (i, _) in s.match_indices(pat) {
            if word(i, pat.len()) {
                return Err(format!("{name}: non-finite value in {s}"));
            }
        }
    }
    for pat in ["Seconds(-", "Joules(-"] {
        for (i, _) in s.match_indices(pat) {
            let rest = &s[i + pat.len()..];
            if !rest.starts_with("0.0)") {
                return Err(format!("{name}: negative time or energy in {s}"));
            }
        }
    }
    Ok(())
}

/// How many results of each name were `Ok` and `Err` (to show the calls reach the `Ok` paths).
pub(crate) static TALLY: Mutex<BTreeMap<&'static str, [u64; 2]>> = Mutex::new(BTreeMap::new());

/// [`scan`] of an `Ok`; errors pass. Tallied.
pub(crate) fn ok<T: Debug, E>(name: &'static str, r: &Result<T, E>) -> Result<(), String> {
    if let Ok(mut t) = TALLY.lock() {
        t.entry(name).or_default()[r.is_err() as usize] += 1;
    }
    match r {
        Ok(v) => scan(name, v),
        Err(_) => Ok(()),
    }
}

pub(crate) fn ensure(cond: bool, what: impl FnOnce() -> String) -> Result<(), String> {
    if cond {
        Ok(())
    } else {
        Err(what())
    }
}
