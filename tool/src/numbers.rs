//! The decimal form of the numbers in the JSON output.
//!
//! Every figure comes from an `f32` computation, whose last bit is rounding, not information: the
//! core's `26.4 V + 18.8 V` is the f32 just below 45.2 and would print as `45.199997`, and a
//! margin worked out in f64 from f32 figures carries seventeen digits of which eight mean
//! something. [`f32_decimal`] prints each at f32 precision, as the shortest decimal within one f32
//! unit in the last place (ulp) of the value: `45.2`, `0.09`, `0.2142042`.

use serde_json::Value;

/// Significant decimal digits of a shortest-form float text (`"0.0450"` → 3).
fn significant_digits(text: &str) -> usize {
    let mantissa = text.split(['e', 'E']).next().unwrap_or(text);
    let digits: String = mantissa.chars().filter(char::is_ascii_digit).collect();
    digits.trim_start_matches('0').trim_end_matches('0').len()
}

/// `x` at f32 precision: of the f32 nearest `x` and its two neighbours, the one whose shortest
/// round-trip decimal has the fewest significant digits (the nearest itself on a tie), returned
/// as the f64 of that decimal, so that a JSON writer prints exactly that decimal.
///
/// Domain: any f64; non-finite values and values outside the f32 range are returned unchanged.
/// Accuracy: the result is within 1 f32 ulp (relative 1.2e-7) of `x` rounded to f32.
pub fn f32_decimal(x: f64) -> f64 {
    let v = x as f32;
    if !x.is_finite() || !v.is_finite() {
        return x;
    }
    let mut best = v.to_string();
    for c in [v.next_down(), v.next_up()] {
        if !c.is_finite() || c.signum() != v.signum() {
            continue;
        }
        let s = c.to_string();
        if significant_digits(&s) < significant_digits(&best) {
            best = s;
        }
    }
    best.parse().unwrap_or(x)
}

/// Applies [`f32_decimal`] to every non-integer number in a JSON tree (integers, such as tick
/// counts, are exact and stay as they are).
pub fn tidy(value: &mut Value) {
    match value {
        Value::Number(n) if n.is_f64() => {
            if let Some(x) = n.as_f64() {
                if let Some(m) = serde_json::Number::from_f64(f32_decimal(x)) {
                    *n = m;
                }
            }
        }
        Value::Array(items) => items.iter_mut().for_each(tidy),
        Value::Object(map) => map.values_mut().for_each(tidy),
        _ => {}
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn f32_results_print_at_f32_precision() {
        // IEEE 754 binary32 (the standard): 26.4f32 + 18.8f32 rounds to the float just below
        // 45.2f32; 14.4f32 / 160f32 to the float just below 0.09f32.
        let sum = 26.4f32 + 18.8f32;
        assert_eq!(sum.to_string(), "45.199997");
        assert_eq!(f32_decimal(sum as f64), 45.2);
        assert_eq!(f32_decimal((14.4f32 / 160.0f32) as f64), 0.09);
        assert_eq!(f32_decimal(0.21420419999999996), 0.2142042);
        // Values already short, integers, zero, negatives, tiny and huge values keep their value.
        for x in [0.15f64, 24.0, 0.0, -3.5, 1e-30, 3.0e38] {
            assert_eq!(
                f32_decimal(x),
                (x as f32).to_string().parse::<f64>().unwrap()
            );
        }
        // Never further than one f32 ulp from the f32 value.
        for x in [1.0f64 / 3.0, 2.0f64.sqrt(), 0.089999996, 123_456.79] {
            let v = x as f32;
            let got = f32_decimal(x) as f32;
            assert!(
                got == v || got == v.next_up() || got == v.next_down(),
                "{x}"
            );
        }
        assert!(f32_decimal(f64::NAN).is_nan());
        assert_eq!(f32_decimal(1e300), 1e300);
    }

    #[test]
    fn tidy_leaves_integers_alone() {
        let mut v: Value =
            serde_json::json!({"ticks": 4294967295u32, "a": [45.199997f32 as f64, null]});
        tidy(&mut v);
        assert_eq!(
            v,
            serde_json::json!({"ticks": 4294967295u32, "a": [45.2, null]})
        );
    }
}
