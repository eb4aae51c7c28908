//! Responses of the digital filters of a decimation stage: `digital` (given by its
//! band edges) and `sinc` (a CIC decimator).

use std::f64::consts::PI;

use super::fold::fold;

/// The `digital` response (docs/model.md): 0 dB up to passband edge, linear in dB across the transition, `attenuation_db`
/// from the stopband edge up. If `period_hz` is Some(fin) (a decimation stage running at input
/// rate fin), the response is that of a sampled filter: f is first folded into [0, fin/2]
/// (periodic in fin, mirrored) before evaluation. Edges are already in Hz here.
///
/// A stopband edge at or below the passband edge makes a step at the passband edge.
/// The response is even in `f_hz`; `fin` must be positive and finite.
pub fn digital_attenuation_db(
    passband_edge_hz: f64,
    stopband_edge_hz: f64,
    attenuation_db: f64,
    f_hz: f64,
    period_hz: Option<f64>,
) -> f64 {
    let f = match period_hz {
        Some(fin) => fold(f_hz, fin),
        None => f_hz.abs(),
    };
    if f <= passband_edge_hz {
        0.0
    } else if f >= stopband_edge_hz {
        attenuation_db
    } else {
        attenuation_db * (f - passband_edge_hz) / (stopband_edge_hz - passband_edge_hz)
    }
}

/// The `sinc` response (docs/model.md): −20·order·log10|sin(π f M / fin) / (M · sin(π f / fin))|. At exact nulls returns
/// f64::INFINITY; at multiples of fin returns 0 (the limit). Never NaN. Must be numerically
/// robust near nulls and near multiples of fin (use the limit or a small-argument form).
///
/// `order` = N, `factor` = M ≥ 1, `input_rate_hz` = fin > 0. The response is even and
/// periodic in fin, so `f_hz` is first reduced to `t = |f/fin − round(f/fin)|` in
/// `[0, ½]`. Non-finite `f_hz` has no meaningful reduction and gives NaN.
///
/// # Panics
/// If `factor` is 0 or `input_rate_hz` is not positive and finite.
pub fn sinc_attenuation_db(order: u32, factor: u32, input_rate_hz: f64, f_hz: f64) -> f64 {
    assert!(factor >= 1, "sinc factor must be at least 1");
    assert!(
        input_rate_hz.is_finite() && input_rate_hz > 0.0,
        "sinc input rate must be positive and finite, got {input_rate_hz}"
    );
    if !f_hz.is_finite() {
        return f64::NAN;
    }
    if order == 0 {
        return 0.0;
    }
    let u = f_hz / input_rate_hz;
    let t = (u - u.round()).abs();
    if t == 0.0 {
        return 0.0;
    }
    let m = f64::from(factor);
    let tm = t * m;
    // ln|sin(π t M) / (M sin(π t))|.
    let ln_ratio = if tm < 0.5 {
        // No null yet: ln sinc(π t M) − ln sinc(π t), both near 0 for small t.
        ln_sinc(PI * tm) - ln_sinc(PI * t)
    } else {
        // sin(π t M) = ±sin(π d) with d the distance of tM from the nearest integer,
        // which keeps the nulls exact and their neighbourhood accurate.
        let d = tm - tm.round();
        if d == 0.0 {
            return f64::INFINITY;
        }
        (PI * d).sin().abs().ln() - (m * (PI * t).sin()).ln()
    };
    // |sin(Mx)| ≤ M |sin x|, so the true value is ≥ 0; clamp rounding below it.
    (-20.0 * f64::from(order) * ln_ratio / std::f64::consts::LN_10).max(0.0)
}

/// `ln(sin y / y)` for `0 ≤ y ≤ π/2`, with the Taylor series near 0:
/// `−y²/6 − y⁴/180 − y⁶/2835 − …`.
fn ln_sinc(y: f64) -> f64 {
    if y < 1e-2 {
        let y2 = y * y;
        -y2 * (1.0 / 6.0 + y2 * (1.0 / 180.0 + y2 / 2835.0))
    } else {
        (y.sin() / y).ln()
    }
}

/// Group delay of an order-`order` sinc (CIC) stage of factor `factor`, in samples of the
/// stage's input rate: `order · (factor − 1) / 2`.
///
/// Each of the N cascaded M-tap moving averages is a symmetric FIR filter of length M,
/// hence linear-phase with a delay of (M − 1)/2 samples; the cascade adds them
/// (Hogenauer 1981). The value may be a half sample (N odd, M even).
pub fn sinc_delay_samples(order: u32, factor: u32) -> f64 {
    f64::from(order) * (f64::from(factor) - 1.0) / 2.0
}
