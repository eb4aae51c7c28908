//! Pure signal arithmetic: filter responses, folding and design inverses.
//!
//! Everything here is a function of numbers (no I/O, no YAML), so it can be checked
//! against reference tables computed outside the project. Conventions used throughout:
//!
//! - frequencies are in Hz (`f64`), never in rad/s;
//! - attenuation is in dB and is ≥ 0 when the signal is made smaller;
//! - phase is in degrees, 0 at DC and negative (lagging) as the frequency rises.

#![warn(missing_docs)]

pub mod analog;
mod bessel;
pub mod design;
pub mod digital;
pub mod fold;
pub mod table;

use std::f64::consts::LN_10;

/// The highest filter order foldcheck accepts (docs/format.md: orders 1–12). It lives
/// here, above `analog` and `bessel`, so neither has to import the other for it.
pub const MAX_ORDER: u32 = 12;

/// Decibels per natural-log unit of a power ratio: 10 / ln 10.
pub(crate) const DB_PER_LN_POWER: f64 = 10.0 / LN_10;

/// `ln(1 + e^x)` without overflow for large `x` or loss of accuracy for very negative `x`.
pub(crate) fn ln_1p_exp(x: f64) -> f64 {
    if x > 0.0 {
        x + (-x).exp().ln_1p()
    } else {
        x.exp().ln_1p()
    }
}

/// `ln(e^x − 1)` for `x > 0`, without overflow for large `x`.
pub(crate) fn ln_exp_m1(x: f64) -> f64 {
    if x > 30.0 {
        x + (-(-x).exp()).ln_1p()
    } else {
        x.exp_m1().ln()
    }
}

/// `ln(f / reference)` computed without overflow or underflow of the quotient.
///
/// Returns `-inf` for `f == 0`.
pub(crate) fn ln_ratio(f: f64, reference: f64) -> f64 {
    let x = f / reference;
    if x.is_finite() && x >= f64::MIN_POSITIVE {
        x.ln()
    } else {
        f.ln() - reference.ln()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ln_1p_exp_matches_direct_form_where_that_is_exact_enough() {
        for x in [-30.0, -2.0, -1e-3, 0.0, 0.5, 3.0, 20.0] {
            let direct = (1.0 + f64::exp(x)).ln();
            assert!((ln_1p_exp(x) - direct).abs() < 1e-12, "x = {x}");
        }
        // Far beyond exp's range the result is x itself.
        assert_eq!(ln_1p_exp(1e4), 1e4);
        assert!(ln_1p_exp(-1e4) >= 0.0 && ln_1p_exp(-1e4) < 1e-300);
    }

    #[test]
    fn ln_exp_m1_is_the_inverse_of_ln_1p_exp() {
        for x in [1e-6, 0.3, 5.0, 29.0, 31.0, 200.0, 5000.0] {
            let y = ln_exp_m1(x);
            assert!((ln_1p_exp(y) - x).abs() <= 1e-12 * x.max(1.0), "x = {x}");
        }
    }

    #[test]
    fn ln_ratio_survives_extreme_quotients() {
        assert!((ln_ratio(2.0, 1.0) - std::f64::consts::LN_2).abs() < 1e-15);
        let big = ln_ratio(f64::MAX, 1e-300);
        assert!((big - (f64::MAX.ln() + 300.0 * LN_10)).abs() < 1e-9);
        assert!(ln_ratio(1e-300, 1e300).is_finite());
        assert_eq!(ln_ratio(0.0, 1.0), f64::NEG_INFINITY);
    }
}
