//! The survey pass: trace checks and the closed-form one-pass estimate.

use super::num::{larger, sqrt};
use super::TraceFault;
use super::{MIN_SAMPLES, MONOTONE_SIGMAS};
use crate::diagnosis::sample::{Sample, Sampling};

/// What the first pass learns about a trace.
pub(super) struct Survey {
    pub(super) used: usize,
    pub(super) truncated: bool,
    pub(super) sigma: f32,
    pub(super) lambda: f32,
    pub(super) first: f32,
    pub(super) max: f32,
    pub(super) drop: f32,
    /// Σc over the window (raw units above zero).
    pub(super) sum: f32,
    /// One-pass λ of the free-level model (initial current not assumed zero); 0 when the
    /// regression is singular.
    pub(super) free_lambda: f32,
}

/// Σκ² for κ = k0 + k, k = 0…m−1, in closed form: m·k0² + k0·m(m−1) + (m−1)m(2m−1)/6.
fn sum_kappa2(k0: f32, m: f32) -> f32 {
    m * k0 * k0 + k0 * m * (m - 1.0) + (m - 1.0) * m * (2.0 * m - 1.0) / 6.0
}

/// The five running sums of the survey: S (Σc), R (ΣS), Q (ΣR), P (ΣS²) and C (Σc²).
struct Sums {
    s: f32,
    r: f32,
    q: f32,
    p: f32,
    c: f32,
}

impl Sums {
    /// The sums after the first sample `c0`.
    fn new(c0: f32) -> Self {
        Self {
            s: c0,
            r: c0,
            q: c0,
            p: c0 * c0,
            c: c0 * c0,
        }
    }

    /// Adds the next sample `c`: five flops.
    #[inline(always)]
    fn add(&mut self, c: f32) {
        self.s += c;
        self.r += self.s;
        self.q += self.r;
        self.p += self.s * self.s;
        self.c += c * c;
    }
}

/// Smallest count that reads as saturated, `⌈full⌉` limited to the `i32` range: for counts of at
/// most 2¹⁶ in magnitude, `x ≥ count_limit(full)` exactly when `x as f32 ≥ full`.
fn count_limit(full: f32) -> i32 {
    // `as` saturates (and +∞ goes to i32::MAX, above every exact count).
    let t = full as i32;
    if (t as f32) < full {
        t.saturating_add(1)
    } else {
        t
    }
}

/// Longest window whose survey sums are kept in integers: `ΣS_k²` stays below 2⁶² for counts of
/// 16 bits. Longer traces take the f32 sums.
const INT_SURVEY_MAX: usize = 1024;

/// The survey loop for exact integer counts ([`Sample::EXACT_COUNT`]) in integers: the sums of
/// `head, tail…` above `zero`, the last count, and a word that is negative exactly when some
/// count is below its predecessor (the OR of the differences; no compare per sample).
///
/// Up to [`INT_SURVEY_MAX`] samples the five running sums are kept exactly in integers on the
/// raw counts x (`|x| ≤ 65 535`, so `|S| < 2²⁶`, `S² < 2⁵²`, every sum below 2⁶²) and the
/// free-level λ is computed from them exactly ([`free_lambda_exact`]); only `Σc` is returned
/// among the f32 sums. No soft-float operation per sample on a target without an FPU. Longer
/// traces: the f32 sums and `None`.
#[inline(never)]
fn count_pass<S: Sample>(head: S, tail: &[S], zero: f32) -> (Sums, i32, i32, Option<f32>) {
    if tail.len() >= INT_SURVEY_MAX {
        let (sums, last, dips) = count_pass_f32(head, tail, zero);
        return (sums, last, dips, None);
    }
    let x0 = head.to_count();
    let (mut s1, mut r1, mut q1) = (x0, x0 as i64, x0 as i64);
    let (mut p1, mut c1) = (square_u64(x0), square_u64(x0));
    let (mut last, mut dips) = (x0, 0i32);
    for v in tail {
        let x = v.to_count();
        dips |= x.wrapping_sub(last);
        last = x;
        s1 = s1.wrapping_add(x);
        r1 = r1.wrapping_add(s1 as i64);
        q1 = q1.wrapping_add(r1);
        p1 = p1.wrapping_add(square_u64(s1));
        c1 = c1.wrapping_add(x.wrapping_mul(x) as u32 as u64);
    }
    let m = tail.len() as i64 + 1;
    let lambda = free_lambda_exact(m, s1 as i64, r1, q1, p1, c1);
    // Only Σc is needed besides λ on this path (the level of a flat trace).
    let sums = Sums {
        s: s1 as f32 - m as f32 * zero,
        r: 0.0,
        q: 0.0,
        p: 0.0,
        c: 0.0,
    };
    (sums, last, dips, Some(lambda))
}

/// The free-level one-pass λ of [`survey`] (`c_k = a + λP·κ_k − λ·J_k`, see there) from the
/// integer sums of the raw counts x: `S = Σx`, `R = ΣS_k`, `Q = ΣR_k`, `P = ΣS_k²`, `C = Σx²`.
/// The free intercept and the κ column absorb the converter zero and the first trapezoid, so
/// `2J_k = 2S_k − x_k` and `u_k = k` serve; every centred sum is `N/m` with the integer
/// `N = m·Σab − Σa·Σb`, exact in i128 (`ΣS_k² < 2⁶²` for up to 1 024 counts of 16 bits), and
/// `λ = 2(N_uj·N_xu − N_uu·N_xj)/(N_uu·N_jj − N_uj²)` in f32 from them (0 when singular).
fn free_lambda_exact(m: i64, s: i64, r: i64, q: i64, p: u64, c: u64) -> f32 {
    // Σk and Σk² in i64 (m ≤ 1 024): no 128-bit division, whose library routine alone
    // would deepen the fit's stack on a small core.
    let (su, suu) = (m * (m - 1) / 2, (m - 1) * m * (2 * m - 1) / 6);
    let (m, s, r, q, p, c, su, suu) = (
        m as i128,
        s as i128,
        r as i128,
        q as i128,
        p as i128,
        c as i128,
        su as i128,
        suu as i128,
    );
    // Σk·x = m·S − R and Σk·S_k = m·R − Q (summation by parts); Σx_k·S_k = (S² + C)/2.
    let sxu = m * s - r;
    let sj = 2 * r - s;
    let suj = 2 * (m * r - q) - sxu;
    let sjj = 4 * p - 2 * s * s - c;
    let sxj = s * s;
    let nuu = (m * suu - su * su) as f32;
    let nuj = (m * suj - su * sj) as f32;
    let njj = (m * sjj - sj * sj) as f32;
    let nxu = (m * sxu - s * su) as f32;
    let nxj = (m * sxj - s * sj) as f32;
    let dc = nuu * njj - nuj * nuj;
    if dc > 1.0e-7 * nuu * njj && dc.is_finite() {
        2.0 * (nuj * nxu - nuu * nxj) / dc
    } else {
        0.0
    }
}

/// `x²` for |x| < 2³¹ as u64 from 16-bit halves (three 32-bit multiplies).
#[inline(always)]
fn square_u64(x: i32) -> u64 {
    let a = x.unsigned_abs();
    let (hi, lo) = (a >> 16, a & 0xffff);
    (((hi * hi) as u64) << 32)
        .wrapping_add(((2 * hi * lo) as u64) << 16)
        .wrapping_add((lo * lo) as u64)
}

/// [`count_pass`] in f32 sums, for traces longer than the integer bounds.
fn count_pass_f32<S: Sample>(head: S, tail: &[S], zero: f32) -> (Sums, i32, i32) {
    let mut sums = Sums::new(head.to_f32() - zero);
    let (mut last, mut dips) = (head.to_count(), 0i32);
    let mut step = |v: S| {
        let x = v.to_count();
        dips |= x.wrapping_sub(last);
        last = x;
        sums.add(v.to_f32() - zero);
    };
    // Two samples per loop turn halve the loop overhead; the arithmetic is the same.
    let mut pairs = tail.chunks_exact(2);
    for pair in &mut pairs {
        step(pair[0]);
        step(pair[1]);
    }
    for &v in pairs.remainder() {
        step(v);
    }
    (sums, last, dips)
}

/// The largest count of `head, tail…` and the largest drop below the running maximum (counts);
/// run only for a trace that falls somewhere.
fn count_extent<S: Sample>(head: S, tail: &[S]) -> (i32, i32) {
    let (mut hi, mut drop) = (head.to_count(), 0i32);
    for v in tail {
        let x = v.to_count();
        if x >= hi {
            hi = x;
        } else if hi.wrapping_sub(x) > drop {
            drop = hi.wrapping_sub(x);
        }
    }
    (hi, drop)
}

/// The survey of `samples`: trace checks and the one-pass estimate. `int_sums`: keep the
/// running sums of exact counts in integers ([`count_pass`]; for the integer path, where f32
/// operations are emulated) rather than in f32.
pub(super) fn survey<S: Sample>(
    samples: &[S],
    sampling: &Sampling,
    int_sums: bool,
) -> Result<Survey, TraceFault> {
    let n = samples.len();
    let zero = sampling.zero();
    let full = sampling.full_scale();
    let k0 = sampling.first().value() / sampling.period().value();
    let Some((head, tail)) = samples.split_first() else {
        return Err(TraceFault::TooFewSamples { usable: 0 });
    };
    let x = head.to_f32();
    if !S::IS_INTEGER && !x.is_finite() {
        return Err(TraceFault::NotFinite { index: 0 });
    }
    if x >= full {
        return Err(
            match falls_after_saturation(samples, 0, sampling, saturation_margin::<S>(sampling)) {
                Some(index) => TraceFault::NotMonotone { index },
                None => TraceFault::SaturatedEarly { index: 0 },
            },
        );
    }
    // The trapezoid integral is J_k = S_k − c_k/2 + γ with the prefix sum S_k = Σ_{j≤k} c_j and
    // γ = c₀(k0 − 1)/2 (the first trapezoid runs from switch-on, i = 0, to the first sample). Every
    // sum of the least-squares problem then follows from five running sums, S (Σc), R (ΣS),
    // Q (ΣR), P (ΣS²) and C (Σc²), by summation by parts (see below): five flops per sample.
    let c0 = x - zero;
    let (sums, hi, drop, used, truncated, exact) = if S::EXACT_COUNT {
        // Integer counts: saturation, running maximum and largest drop on the counts themselves
        // (exact). Saturation needs no test per sample: a saturated sample raises the maximum to
        // the limit, and then the pass is redone on the window before the first one.
        let limit = count_limit(full);
        let mut window = tail;
        let mut truncated = false;
        let (sums, hi, drop, exact) = loop {
            let (sums, last, dips, exact) = if int_sums {
                count_pass(*head, window, zero)
            } else {
                let (sums, last, dips) = count_pass_f32(*head, window, zero);
                (sums, last, dips, None)
            };
            // A trace that never falls has its maximum at the end and no drop.
            let (hi, drop) = if dips < 0 {
                count_extent(*head, window)
            } else {
                (last, 0)
            };
            if hi < limit || truncated {
                break (sums, hi, drop, exact);
            }
            let k = window
                .iter()
                .position(|v| v.to_count() >= limit)
                .unwrap_or(window.len());
            window = window.get(..k).unwrap_or(&[]);
            truncated = true;
        };
        let used = window.len() + 1;
        (sums, hi as f32 - zero, drop as f32, used, truncated, exact)
    } else {
        let mut sums = Sums::new(c0);
        let (mut hi, mut drop) = (c0, 0.0f32);
        let mut truncated = false;
        let mut rest = tail.iter();
        while let Some(v) = rest.next() {
            let x = v.to_f32();
            if !S::IS_INTEGER && !x.is_finite() {
                return Err(TraceFault::NotFinite {
                    index: (n - rest.len() - 1) as u32,
                });
            }
            if x >= full {
                truncated = true;
                break;
            }
            let c = x - zero;
            sums.add(c);
            // Plain compares: `f32::max` may become a library call on the target.
            if c > hi {
                hi = c;
            }
            let fall = hi - c;
            if fall > drop {
                drop = fall;
            }
        }
        let used = if truncated { n - rest.len() - 1 } else { n };
        (sums, hi, drop, used, truncated, None)
    };
    let Sums {
        s: s_sum,
        r: r_sum,
        q: q_sum,
        p: p_sum,
        c: c_sum,
    } = sums;
    if truncated {
        if let Some(index) =
            falls_after_saturation(samples, used, sampling, saturation_margin::<S>(sampling))
        {
            return Err(TraceFault::NotMonotone { index });
        }
    }
    if used < MIN_SAMPLES {
        return Err(if truncated {
            TraceFault::SaturatedEarly { index: used as u32 }
        } else {
            TraceFault::TooFewSamples {
                usable: used as u32,
            }
        });
    }
    if let Some(free_lambda) = exact {
        // The integer survey: the free-level λ exactly; the constrained (σ, λ) of `fit_rise` is
        // not needed by the free-level fit and is left out (0, so a fallback start is 1/m).
        return Ok(Survey {
            free_lambda,
            used,
            truncated,
            sigma: 0.0,
            lambda: 0.0,
            first: c0,
            max: hi,
            drop,
            sum: s_sum,
        });
    }
    let m = used as f32;
    let gamma = 0.5 * c0 * (k0 - 1.0);
    let km = k0 + m;
    // Σκ² and Σκ in closed form; Σk·c_k = m·S − R and Σk·S_k = m·R − Q (summation by parts);
    // Σc_k·S_k = (S² + C)/2.
    let suu = sum_kappa2(k0, m);
    let su = m * k0 + 0.5 * m * (m - 1.0);
    let scu = km * s_sum - r_sum;
    let scj = 0.5 * s_sum * s_sum + gamma * s_sum;
    let suj = km * r_sum - q_sum - 0.5 * scu + gamma * su;
    let sjj = p_sum - 0.5 * s_sum * s_sum - 0.25 * c_sum + 2.0 * gamma * r_sum - gamma * s_sum
        + m * gamma * gamma;
    let d = suu * sjj - suj * suj;
    let (sigma, lambda) = if d > 1.0e-6 * suu * sjj && d.is_finite() {
        ((scu * sjj - suj * scj) / d, (suj * scu - suu * scj) / d)
    } else {
        (scu / suu, 0.0)
    };
    // The free-level model `c = P − A·e^(−λκ)` obeys `dc/dκ = λ·(P − c)`, so
    // `c_k = a + λP·κ_k − λ·J_k` with a free intercept a (which also absorbs the unknown first
    // trapezoid γ): the same regression on (κ, J) with both columns and c centred.
    let sj = r_sum - 0.5 * s_sum + m * gamma;
    let (mu, mj) = (su / m, sj / m);
    let cuu = suu - su * mu;
    let cuj = suj - su * mj;
    let cjj = sjj - sj * mj;
    let ccu = scu - s_sum * mu;
    let ccj = scj - s_sum * mj;
    let dc = cuu * cjj - cuj * cuj;
    let free_lambda = if dc > 1.0e-7 * cuu * cjj && dc.is_finite() {
        (cuj * ccu - cuu * ccj) / dc
    } else {
        0.0
    };
    Ok(Survey {
        free_lambda,
        used,
        truncated,
        sigma,
        lambda,
        first: c0,
        max: hi,
        drop,
        sum: s_sum,
    })
}

/// After the converter saturates a coil current stays saturated: the index (into `samples`) of
/// the first sample after `samples[used]` (the first saturated one) that reads more than
/// `margin` (raw units) below the full scale, or `None`. A sample that falls back is a sensor
/// that spiked to full scale (a dropout), not a coil that saturated the converter: the monotone
/// rule applied past the window. Cost: one compare per sample after the window, only for a
/// truncated trace.
/// How far below full scale a saturated coil current may read: the monotone limit at the noise
/// the fits reckon (converter noise and quantisation, the signal floor taken at full scale).
fn saturation_margin<S: Sample>(sampling: &Sampling) -> f32 {
    let quantum = if S::IS_INTEGER { 1.0 / 12.0 } else { 0.0 };
    let base = sqrt(sampling.noise() * sampling.noise() + quantum);
    MONOTONE_SIGMAS
        * larger(
            larger(base, sampling.full_scale() * 7.6e-6),
            f32::MIN_POSITIVE,
        )
}

fn falls_after_saturation<S: Sample>(
    samples: &[S],
    used: usize,
    sampling: &Sampling,
    margin: f32,
) -> Option<u32> {
    let limit = sampling.full_scale() - margin;
    let after = samples.get(used.saturating_add(1)..)?;
    after
        .iter()
        .position(|v| v.to_f32() < limit || v.to_f32().is_nan())
        .map(|k| (used + 1 + k) as u32)
}

/// Index of the largest drop below the running maximum (rescan; only when reporting it).
pub(super) fn drop_index<S: Sample>(samples: &[S], zero: f32) -> u32 {
    let (mut hi, mut best, mut at) = (f32::NEG_INFINITY, 0.0f32, 0usize);
    for (k, s) in samples.iter().enumerate() {
        let c = s.to_f32() - zero;
        if c > hi {
            hi = c;
        } else if hi - c > best {
            best = hi - c;
            at = k;
        }
    }
    at as u32
}
