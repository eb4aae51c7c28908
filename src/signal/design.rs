//! Inverse problems behind fix suggestions: the cutoff or the order that reaches a
//! required attenuation at a given frequency.

use super::MAX_ORDER;
use super::analog::{Analog, AnalogKind, attenuation_at_ln_ratio};
use super::{DB_PER_LN_POWER, ln_exp_m1};
use std::f64::consts::LN_2;

/// Highest cutoff at which `filter` (same kind/order) still attenuates at least `required_db`
/// at `f_hz` (bisection/closed form; None if impossible, e.g. required ≤ 0 handled sensibly).
///
/// Returns `None` when there is no finite answer: `required_db ≤ 0` (every cutoff
/// meets it, so there is nothing to lower), `f_hz ≤ 0` or not finite (no filter
/// attenuates DC), invalid parameters, or a requirement so large that the cutoff would
/// not be a positive `f64`.
///
/// Butterworth and Bessel attenuation rise monotonically with `f / cutoff`, so the
/// answer is the cutoff at which the attenuation at `f_hz` is exactly `required_db`.
/// For Chebyshev the search is limited to cutoffs at or below `f_hz` (`f_hz` in the
/// stopband, where the attenuation rises monotonically): meeting a requirement on a
/// passband ripple peak is fragile and no fix to suggest. So for `required_db` up to
/// the ripple the answer is `f_hz` itself, where the attenuation is the ripple.
pub fn max_cutoff_for(kind: AnalogKind, order: u32, f_hz: f64, required_db: f64) -> Option<f64> {
    let meaningful = required_db > 0.0 && required_db.is_finite();
    let attenuable = f_hz > 0.0 && f_hz.is_finite();
    if !meaningful || !attenuable || !Analog::new(kind, order, 1.0).is_valid() {
        return None;
    }
    let n = f64::from(order);
    // ln(10^(required/10) − 1), the log of the excess power ratio needed.
    let ln_excess = ln_exp_m1(required_db / DB_PER_LN_POWER);
    let ln_x = match kind {
        // x^(2n) = 10^(R/10) − 1.
        AnalogKind::Butterworth => ln_excess / (2.0 * n),
        // ε² T_n(x)² = 10^(R/10) − 1 with x ≥ 1: x = cosh(acosh(T) / n).
        AnalogKind::Chebyshev { ripple_db } => {
            let eps2 = (ripple_db / DB_PER_LN_POWER).exp_m1();
            let ln_t = 0.5 * (ln_excess - eps2.ln());
            if ln_t <= 0.0 {
                0.0
            } else {
                let acosh_t = if ln_t < 18.0 {
                    ln_t.exp().acosh()
                } else {
                    ln_t + LN_2
                };
                let y = acosh_t / n;
                y + (-2.0 * y).exp().ln_1p() - LN_2
            }
        }
        AnalogKind::Bessel => bisect_ln_ratio(kind, order, required_db)?,
    };
    let scale = ln_x.exp();
    let cutoff = if scale.is_finite() {
        f_hz / scale
    } else {
        (f_hz.ln() - ln_x).exp()
    };
    (cutoff.is_finite() && cutoff >= f64::MIN_POSITIVE).then_some(cutoff)
}

/// Lowest order 1..=12 meeting `required_db` at `f_hz` with this cutoff, or None.
///
/// `None` also for invalid parameters. A requirement ≤ 0 is met by order 1.
pub fn min_order_for(kind: AnalogKind, cutoff_hz: f64, f_hz: f64, required_db: f64) -> Option<u32> {
    if required_db.is_nan() || !f_hz.is_finite() {
        return None;
    }
    (1..=MAX_ORDER).find(|&order| {
        let filter = Analog::new(kind, order, cutoff_hz);
        filter.is_valid() && filter.attenuation_db(f_hz) >= required_db
    })
}

/// `ln(f / cutoff)` at which a monotonic response reaches `required_db`, by bisection.
fn bisect_ln_ratio(kind: AnalogKind, order: u32, required_db: f64) -> Option<f64> {
    let atten = |ln_x: f64| attenuation_at_ln_ratio(kind, order, ln_x);
    // Bracket: below the cutoff the attenuation is under 3.0103 dB; step up until it
    // passes the requirement. ln x beyond ~1500 cannot give a positive f64 cutoff.
    let (mut lo, mut hi) = (-40.0_f64, 1.0_f64);
    while atten(lo) > required_db {
        lo *= 2.0;
        if lo < -1e4 {
            return None;
        }
    }
    while atten(hi) < required_db {
        lo = hi;
        hi *= 2.0;
        if hi > 4096.0 {
            return None;
        }
    }
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if mid <= lo || mid >= hi {
            break;
        }
        if atten(mid) < required_db {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    Some(hi)
}

/// A Butterworth front end to add before a converter: the lowest order (1..=12) with a
/// cutoff that attenuates `f_hz` by at least `required_db` while drooping the band edge
/// `band_hz` by at most `droop_db`, and such a cutoff, rounded to two (else three)
/// significant digits inside the allowed range. `None` when no order up to 12 does both,
/// or the inputs make no sense (`droop_db ≤ 0`, `f_hz ≤ band_hz`).
///
/// Both bounds are [`max_cutoff_for`]: the highest cutoff reaching `required_db` at
/// `f_hz`, and the highest cutoff that still attenuates `band_hz` by `droop_db` (every
/// cutoff above it droops less).
pub fn butterworth_front_end(
    band_hz: f64,
    droop_db: f64,
    f_hz: f64,
    required_db: f64,
) -> Option<(u32, f64)> {
    if !(droop_db > 0.0 && band_hz > 0.0 && f_hz > band_hz && required_db.is_finite()) {
        return None;
    }
    let kind = AnalogKind::Butterworth;
    (1..=MAX_ORDER).find_map(|order| {
        let hi = if required_db <= 0.0 {
            f64::INFINITY
        } else {
            max_cutoff_for(kind, order, f_hz, required_db)?
        };
        let lo = max_cutoff_for(kind, order, band_hz, droop_db)?;
        if lo > hi {
            return None;
        }
        let mid = if hi.is_finite() {
            (lo * hi).sqrt()
        } else {
            2.0 * lo
        };
        let pick = [2, 3, 4]
            .iter()
            .map(|&digits| round_sig(mid, digits))
            .find(|&c| c >= lo && c <= hi)
            .unwrap_or(mid);
        Some((order, pick))
    })
}

/// `x` rounded to `digits` significant digits.
fn round_sig(x: f64, digits: i32) -> f64 {
    if x <= 0.0 || !x.is_finite() {
        return x;
    }
    let scale = 10f64.powi(x.log10().floor() as i32 - (digits - 1));
    (x / scale).round() * scale
}

#[cfg(test)]
mod front_end_tests {
    use super::*;

    #[test]
    fn the_front_end_reaches_the_image_and_keeps_the_band_flat() {
        // The delta-sigma worked check of docs/model.md §4: band 20 kHz, first modulator
        // image at 3.2568 MHz, 60 dB required, 0.5 dB droop allowed. A 1st-order
        // Butterworth cannot do both (it would need a cutoff ≤ 3.26 kHz for the image
        // but ≥ 57.3 kHz for the band: 10·log10(1 + (f/fc)²), closed form); a 2nd-order
        // one can, between 33.8 kHz and 103 kHz.
        let (order, fc) = butterworth_front_end(20e3, 0.5, 3.2568e6, 60.0).unwrap();
        assert_eq!(order, 2);
        assert!((33_800.0..=103_000.0).contains(&fc), "{fc}");
        let f = Analog::new(AnalogKind::Butterworth, order, fc);
        assert!(f.attenuation_db(3.2568e6) >= 60.0);
        assert!(f.attenuation_db(20e3) <= 0.5);
        // Closed form of the same: 10·log10(1 + (f/fc)^4).
        let closed = |x: f64| 10.0 * (1.0 + (x / fc).powi(4)).log10();
        assert!((f.attenuation_db(3.2568e6) - closed(3.2568e6)).abs() < 1e-9);
        assert!((f.attenuation_db(20e3) - closed(20e3)).abs() < 1e-9);
        // Nothing to design without a droop budget, or below the band.
        assert_eq!(butterworth_front_end(20e3, 0.0, 3.2568e6, 60.0), None);
        assert_eq!(butterworth_front_end(20e3, 0.5, 10e3, 60.0), None);
    }
}
