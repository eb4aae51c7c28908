//! Analog low-pass responses: Butterworth, Chebyshev type I and Bessel.
//!
//! Magnitudes follow the closed forms of docs/model.md, "Filter responses" (Butterworth, Chebyshev) or the
//! Bessel polynomial in its magnitude-normalised form, all evaluated in the log domain
//! so that they stay finite and accurate from DC to far above the cutoff. Phases are
//! summed pole by pole, each pole's angle being continuous in frequency, which yields
//! the unwrapped phase directly.

use std::f64::consts::{LN_2, PI};

use super::{DB_PER_LN_POWER, MAX_ORDER, bessel, ln_1p_exp, ln_ratio};

/// The family of an analog low-pass filter.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum AnalogKind {
    /// Maximally flat; `cutoff_hz` is the −3 dB point.
    Butterworth,
    /// Chebyshev type I with `ripple_db` of passband ripple; `cutoff_hz` is the
    /// passband edge, where the attenuation last equals the ripple.
    Chebyshev {
        /// Peak-to-peak passband ripple in dB (> 0).
        ripple_db: f64,
    },
    /// Bessel (Thomson), magnitude-normalised; `cutoff_hz` is the −3 dB point.
    Bessel,
}

/// An analog low-pass filter of a given family, order and cutoff.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Analog {
    /// The filter family.
    pub kind: AnalogKind,
    /// The order, 1 ..= [`MAX_ORDER`].
    pub order: u32,
    /// The cutoff frequency in Hz (see [`AnalogKind`] for its meaning per family).
    pub cutoff_hz: f64,
}

impl Analog {
    /// A filter of `kind`, `order` and `cutoff_hz`.
    pub fn new(kind: AnalogKind, order: u32, cutoff_hz: f64) -> Self {
        Self {
            kind,
            order,
            cutoff_hz,
        }
    }

    /// Whether the parameters are in range: order 1 ..= [`MAX_ORDER`], a positive finite
    /// cutoff and, for Chebyshev, a positive finite ripple.
    pub fn is_valid(&self) -> bool {
        let kind_ok = match self.kind {
            AnalogKind::Chebyshev { ripple_db } => ripple_db.is_finite() && ripple_db > 0.0,
            AnalogKind::Butterworth | AnalogKind::Bessel => true,
        };
        kind_ok
            && (1..=MAX_ORDER).contains(&self.order)
            && self.cutoff_hz.is_finite()
            && self.cutoff_hz > 0.0
    }

    /// Attenuation in dB at `f_hz` (≥ 0; the response is even, so `|f|` is used).
    ///
    /// Finite for every finite `f_hz` and never NaN at DC.
    ///
    /// # Panics
    /// If the parameters are not [valid](Self::is_valid).
    pub fn attenuation_db(&self, f_hz: f64) -> f64 {
        self.assert_valid();
        let ln_x = ln_ratio(f_hz.abs(), self.cutoff_hz);
        attenuation_at_ln_ratio(self.kind, self.order, ln_x)
    }

    /// Unwrapped phase in degrees, 0 at DC, negative (lagging) and continuous as f rises,
    /// matching numpy.unwrap(angle(h)) of scipy.signal.freqs for the same filter.
    ///
    /// The phase is odd in `f_hz`. It falls monotonically towards `−90° · order`.
    ///
    /// # Panics
    /// If the parameters are not [valid](Self::is_valid).
    pub fn phase_deg(&self, f_hz: f64) -> f64 {
        self.assert_valid();
        let x = f_hz / self.cutoff_hz;
        // H(jx) = Π (−p) / (jx − p); with p = σ + jβ and σ < 0 the angle of jx − p is
        // atan2(x − β, −σ), which stays inside (−90°, 90°) and so never wraps.
        let radians: f64 = normalized_poles(self.kind, self.order)
            .map(|(sigma, beta)| (-beta).atan2(-sigma) - (x - beta).atan2(-sigma))
            .sum();
        radians.to_degrees()
    }

    /// [`Analog::phase_deg`] with the poles and their angles at DC worked out once, for
    /// evaluating at many frequencies; [`PhaseCurve::deg`] gives the same numbers, bit
    /// for bit.
    ///
    /// # Panics
    /// If the parameters are not [valid](Self::is_valid).
    pub fn phase_curve(&self) -> PhaseCurve {
        self.assert_valid();
        PhaseCurve {
            cutoff_hz: self.cutoff_hz,
            poles: normalized_poles(self.kind, self.order)
                .map(|(sigma, beta)| (sigma, beta, (-beta).atan2(-sigma)))
                .collect(),
        }
    }

    /// Group delay in seconds at `f_hz`, by the closed form over the poles (the filters
    /// here have no finite zeros): with ω = 2πf and each pole p in rad/s,
    /// τ(ω) = Σ −Re(p) / (Re(p)² + (ω − Im(p))²). No finite difference is taken.
    ///
    /// The delay is even in `f_hz`; at DC it is the filter's low-frequency delay.
    ///
    /// # Panics
    /// If the parameters are not [valid](Self::is_valid).
    pub fn group_delay_s(&self, f_hz: f64) -> f64 {
        self.assert_valid();
        // In units normalised to the cutoff: p = 2π·fc·(σ + jβ), ω = 2π·fc·x, so each
        // term is −σ / (σ² + (x − β)²) divided by 2π·fc.
        let x = f_hz.abs() / self.cutoff_hz;
        let normalised: f64 = normalized_poles(self.kind, self.order)
            .map(|(sigma, beta)| -sigma / (sigma * sigma + (x - beta) * (x - beta)))
            .sum();
        normalised / (2.0 * PI * self.cutoff_hz)
    }

    /// Poles `(re, im)` of the filter in Hz-normalised units: the poles of the transfer
    /// function with frequency measured as `f / cutoff_hz` (all have `re < 0`).
    ///
    /// # Panics
    /// If the parameters are not [valid](Self::is_valid).
    pub fn normalized_poles(&self) -> Vec<(f64, f64)> {
        self.assert_valid();
        normalized_poles(self.kind, self.order).collect()
    }

    fn assert_valid(&self) {
        assert!(
            self.is_valid(),
            "invalid analog filter parameters: {self:?}"
        );
    }
}

/// An analog filter's phase with its poles worked out: see [`Analog::phase_curve`].
#[derive(Clone, Debug, PartialEq)]
pub struct PhaseCurve {
    cutoff_hz: f64,
    /// Each pole `(σ, β)` with the angle of `−p` at DC.
    poles: Vec<(f64, f64, f64)>,
}

impl PhaseCurve {
    /// Phase in degrees at `f_hz`, as [`Analog::phase_deg`].
    pub fn deg(&self, f_hz: f64) -> f64 {
        let x = f_hz / self.cutoff_hz;
        let radians: f64 = self
            .poles
            .iter()
            .map(|&(sigma, beta, at_dc)| at_dc - (x - beta).atan2(-sigma))
            .sum();
        radians.to_degrees()
    }
}

/// Attenuation in dB of a filter of `kind` and `order` at `ln(f / cutoff)`.
///
/// `ln_x = −∞` is DC. Parameters are assumed valid.
pub(crate) fn attenuation_at_ln_ratio(kind: AnalogKind, order: u32, ln_x: f64) -> f64 {
    let n = f64::from(order);
    let loss = match kind {
        // 10·log10(1 + x^(2n)).
        AnalogKind::Butterworth => ln_1p_exp(2.0 * n * ln_x),
        // 10·log10(1 + ε²·T_n(x)²), ε² = 10^(ripple/10) − 1.
        AnalogKind::Chebyshev { ripple_db } => {
            let eps2 = (ripple_db / DB_PER_LN_POWER).exp_m1();
            if ln_x < 0.0 {
                let t = chebyshev_t_inside(order, ln_x.exp());
                (eps2 * t * t).ln_1p()
            } else {
                ln_1p_exp(eps2.ln() + 2.0 * ln_chebyshev_t_outside(n, ln_x))
            }
        }
        AnalogKind::Bessel => bessel::prototype(order).ln_power_loss(ln_x),
    };
    DB_PER_LN_POWER * loss
}

/// `T_n(x)` for `0 ≤ x < 1`: `cos(n · acos x)`.
fn chebyshev_t_inside(order: u32, x: f64) -> f64 {
    (f64::from(order) * x.acos()).cos()
}

/// `ln T_n(x)` for `x ≥ 1`, given `ln x`: `T_n(x) = cosh(n · acosh x)` in log form.
fn ln_chebyshev_t_outside(n: f64, ln_x: f64) -> f64 {
    // acosh x = ln x + ln(1 + √(1 − 1/x²)); beyond x ≈ 1e8 the last term is ln 2.
    let acosh_x = if ln_x < 18.0 {
        ln_x.exp().acosh()
    } else {
        ln_x + LN_2
    };
    ln_cosh(n * acosh_x)
}

/// `ln cosh y` for `y ≥ 0` without overflow.
fn ln_cosh(y: f64) -> f64 {
    y + (-2.0 * y).exp().ln_1p() - LN_2
}

/// Poles `(σ, β)` of the normalised prototype (cutoff at 1).
fn normalized_poles(kind: AnalogKind, order: u32) -> impl Iterator<Item = (f64, f64)> {
    let n = f64::from(order);
    // Butterworth: p_k = −sin θ_k + j·cos θ_k on the unit circle, θ_k = (2k − 1)π / 2n.
    // Chebyshev: p_k = −sinh(μ)·sin θ_k + j·cosh(μ)·cos θ_k, μ = asinh(1/ε) / n.
    // Bessel: the roots of its polynomial, computed once.
    let (shrink, stretch, analytic, bessel_poles) = match kind {
        AnalogKind::Butterworth => (1.0, 1.0, order, &[][..]),
        AnalogKind::Chebyshev { ripple_db } => {
            let eps = (ripple_db / DB_PER_LN_POWER).exp_m1().sqrt();
            let mu = (1.0 / eps).asinh() / n;
            (mu.sinh(), mu.cosh(), order, &[][..])
        }
        AnalogKind::Bessel => (0.0, 0.0, 0, bessel::prototype(order).poles()),
    };
    (1..=analytic)
        .map(move |k| {
            let theta = PI * f64::from(2 * k - 1) / (2.0 * n);
            (-shrink * theta.sin(), stretch * theta.cos())
        })
        .chain(bessel_poles.iter().copied())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_phase_curve_gives_the_same_numbers_as_phase_deg() {
        for order in 1..=MAX_ORDER {
            for kind in [
                AnalogKind::Butterworth,
                AnalogKind::Chebyshev { ripple_db: 0.5 },
                AnalogKind::Bessel,
            ] {
                let a = Analog::new(kind, order, 1234.5);
                let c = a.phase_curve();
                for f in [0.0, 1.0, 600.0, 1234.5, 5000.0, 1e6] {
                    assert_eq!(
                        c.deg(f).to_bits(),
                        a.phase_deg(f).to_bits(),
                        "{kind:?} {order} {f}"
                    );
                }
            }
        }
    }

    #[test]
    fn poles_are_stable_and_one_per_order() {
        for order in 1..=MAX_ORDER {
            for kind in [
                AnalogKind::Butterworth,
                AnalogKind::Chebyshev { ripple_db: 1.0 },
                AnalogKind::Bessel,
            ] {
                let poles = Analog::new(kind, order, 1.0).normalized_poles();
                assert_eq!(poles.len(), order as usize, "{kind:?}");
                assert!(
                    poles.iter().all(|p| p.0 < 0.0),
                    "{kind:?} {order}: {poles:?}"
                );
                // Real coefficients: the imaginary parts cancel in pairs.
                let im: f64 = poles.iter().map(|p| p.1).sum();
                assert!(im.abs() < 1e-9, "{kind:?} {order}: {poles:?}");
            }
            // Butterworth poles lie on the unit circle (standard construction).
            for (re, im) in Analog::new(AnalogKind::Butterworth, order, 1.0).normalized_poles() {
                assert!((re.hypot(im) - 1.0).abs() < 1e-15);
            }
        }
    }

    #[test]
    fn chebyshev_branches_meet_at_the_cutoff() {
        // Just inside and just outside x = 1 the two forms of T_n agree with T_n(1) = 1.
        for order in 1..=MAX_ORDER {
            let n = f64::from(order);
            let inside = chebyshev_t_inside(order, 1.0 - 1e-12);
            let outside = ln_chebyshev_t_outside(n, 1e-12).exp();
            assert!((inside - 1.0).abs() < 1e-9 && (outside - 1.0).abs() < 1e-9);
        }
    }
}
