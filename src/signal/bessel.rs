//! The Bessel (Thomson) low-pass prototype, scaled to the magnitude-normalised form.
//!
//! The delay-normalised prototype is `H(s) = θ_n(0) / θ_n(s)` with the reverse Bessel
//! polynomial `θ_n(s) = Σ a_k s^k`, `a_k = (2n − k)! / (2^(n−k) · k! · (n − k)!)`.
//! Its squared magnitude on the jω axis is `θ_n(0)² / P(ω²)` with
//! `P(w) = |θ_n(j√w)|² = Σ c_m w^m`, whose coefficients are computed exactly in integers.
//! The magnitude-normalised form rescales frequency so that `P(ω₃²) = 2·c_0`, i.e. the
//! attenuation is exactly 10·log10(2) dB at the cutoff.

use std::sync::OnceLock;

use super::MAX_ORDER;

/// One order of the magnitude-normalised Bessel prototype.
#[derive(Debug)]
pub(crate) struct Prototype {
    order: u32,
    /// `c_m / c_0` for `m = 1..=n` (index `m − 1`).
    rel_to_dc: Vec<f64>,
    /// `c_m` for `m = 0..n`; the leading coefficient `c_n` is 1.
    coefficients: Vec<f64>,
    /// `ln c_0`.
    ln_c0: f64,
    /// `ln ω₃`, the −3 dB angular frequency of the delay-normalised prototype.
    ln_omega3: f64,
    /// `ω₃` itself.
    omega3: f64,
    /// Poles `(re, im)` of the magnitude-normalised prototype (cutoff at 1), found on
    /// first use: only phase needs them, and the root finder is most of the cost.
    poles: OnceLock<Vec<(f64, f64)>>,
}

impl Prototype {
    /// `ln(|H(0)|² / |H(jx)|²)` at the normalised frequency `x = f / fc`, given `ln x`.
    ///
    /// Accurate at both ends: a `ln_1p` form below the −3 dB region of the
    /// delay-normalised variable, a leading-term form above it.
    pub(crate) fn ln_power_loss(&self, ln_x: f64) -> f64 {
        let ln_w = 2.0 * (self.ln_omega3 + ln_x);
        if ln_w < 0.0 {
            let w = ln_w.exp();
            let sum = self.rel_to_dc.iter().rev().fold(0.0, |acc, r| acc * w + r) * w;
            sum.ln_1p()
        } else {
            let u = (-ln_w).exp();
            let tail = self.coefficients.iter().fold(0.0, |acc, c| acc * u + c) * u;
            f64::from(self.order) * ln_w + tail.ln_1p() - self.ln_c0
        }
    }

    /// Poles `(re, im)` with the cutoff normalised to 1.
    pub(crate) fn poles(&self) -> &[(f64, f64)] {
        self.poles.get_or_init(|| {
            let omega3 = self.omega3;
            let coefficients: Vec<f64> = polynomial(self.order).iter().map(|&v| v as f64).collect();
            roots(&coefficients)
                .into_iter()
                .map(|z| (z.re / omega3, z.im / omega3))
                .collect()
        })
    }
}

/// The prototype of `order` (1 ..= [`MAX_ORDER`]), computed once, when first used.
///
/// # Panics
/// If `order` is 0 or above [`MAX_ORDER`].
pub(crate) fn prototype(order: u32) -> &'static Prototype {
    static TABLE: [OnceLock<Prototype>; MAX_ORDER as usize] =
        [const { OnceLock::new() }; MAX_ORDER as usize];
    assert!(
        (1..=MAX_ORDER).contains(&order),
        "Bessel order {order} outside 1..={MAX_ORDER}"
    );
    TABLE[order as usize - 1].get_or_init(|| build(order))
}

/// Exact coefficients `a_k`, `k = 0..=n`, of the reverse Bessel polynomial.
fn polynomial(order: u32) -> Vec<u128> {
    let n = order as usize;
    let mut factorial = vec![1u128; 2 * n + 1];
    for i in 1..factorial.len() {
        factorial[i] = factorial[i - 1] * i as u128;
    }
    (0..=n)
        .map(|k| factorial[2 * n - k] / ((1u128 << (n - k)) * factorial[k] * factorial[n - k]))
        .collect()
}

/// Exact coefficients `c_m`, `m = 0..=n`, of `P(w) = |θ_n(j√w)|²`.
///
/// `|Σ a_k (jω)^k|² = Σ_i Σ_j a_i a_j Re(j^(i−j)) ω^(i+j)`, and `Re(j^d)` is
/// `(−1)^(d/2)` for even `d`, 0 for odd `d`.
fn squared_magnitude(a: &[u128]) -> Vec<i128> {
    let n = a.len() - 1;
    (0..=n)
        .map(|m| {
            let mut c: i128 = 0;
            for i in 0..=(2 * m).min(n) {
                let j = 2 * m - i;
                if j > n {
                    continue;
                }
                let term = (a[i] * a[j]) as i128;
                let half_difference = (i as i64 - j as i64) / 2;
                if half_difference.rem_euclid(2) == 0 {
                    c += term;
                } else {
                    c -= term;
                }
            }
            c
        })
        .collect()
}

fn build(order: u32) -> Prototype {
    let a = polynomial(order);
    let c = squared_magnitude(&a);
    debug_assert!(
        c.iter().all(|&v| v > 0),
        "Bessel |θ|² coefficients are positive"
    );
    let c: Vec<f64> = c.iter().map(|&v| v as f64).collect();
    let c0 = c[0];
    let rel_to_dc: Vec<f64> = c[1..].iter().map(|v| v / c0).collect();

    // −3 dB point: Σ_{m≥1} (c_m / c_0) w^m = 1, increasing in w, root in (0, c_0 / c_1].
    let excess = |w: f64| rel_to_dc.iter().rev().fold(0.0, |acc, r| acc * w + r) * w;
    let (mut lo, mut hi) = (0.0_f64, 1.0 / rel_to_dc[0]);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if mid <= lo || mid >= hi {
            break;
        }
        if excess(mid) < 1.0 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    let w3 = 0.5 * (lo + hi);
    let omega3 = w3.sqrt();

    Prototype {
        order,
        rel_to_dc,
        coefficients: c[..order as usize].to_vec(),
        ln_c0: c0.ln(),
        ln_omega3: omega3.ln(),
        omega3,
        poles: OnceLock::new(),
    }
}

/// A minimal complex number for the root finder.
#[derive(Clone, Copy, Debug, PartialEq)]
struct Complex {
    re: f64,
    im: f64,
}

impl Complex {
    fn new(re: f64, im: f64) -> Self {
        Self { re, im }
    }
    fn add(self, o: Self) -> Self {
        Self::new(self.re + o.re, self.im + o.im)
    }
    fn sub(self, o: Self) -> Self {
        Self::new(self.re - o.re, self.im - o.im)
    }
    fn mul(self, o: Self) -> Self {
        Self::new(
            self.re * o.re - self.im * o.im,
            self.re * o.im + self.im * o.re,
        )
    }
    fn div(self, o: Self) -> Self {
        let d = o.re * o.re + o.im * o.im;
        Self::new(
            (self.re * o.re + self.im * o.im) / d,
            (self.im * o.re - self.re * o.im) / d,
        )
    }
    fn abs(self) -> f64 {
        self.re.hypot(self.im)
    }
}

/// Value and derivative of the polynomial `Σ coefficients[k] z^k` at `z`.
fn eval(coefficients: &[f64], z: Complex) -> (Complex, Complex) {
    let mut p = Complex::new(0.0, 0.0);
    let mut dp = Complex::new(0.0, 0.0);
    for &c in coefficients.iter().rev() {
        dp = dp.mul(z).add(p);
        p = p.mul(z).add(Complex::new(c, 0.0));
    }
    (p, dp)
}

/// All roots of a polynomial (ascending real coefficients, degree ≥ 1) by the
/// Aberth–Ehrlich simultaneous iteration, then one Newton polish each.
fn roots(coefficients: &[f64]) -> Vec<Complex> {
    let n = coefficients.len() - 1;
    let lead = coefficients[n];
    // The roots' geometric mean modulus is |a_0 / a_n|^(1/n); start on that circle at
    // angles that break the conjugate symmetry.
    let radius = (coefficients[0] / lead).abs().powf(1.0 / n as f64);
    let mut z: Vec<Complex> = (0..n)
        .map(|k| {
            let angle = 0.4 + std::f64::consts::TAU * k as f64 / n as f64;
            Complex::new(radius * angle.cos(), radius * angle.sin())
        })
        .collect();
    // Stop when the steps are negligible, or when they have stopped shrinking: from
    // order 5 up they jitter at the rounding floor (1e-15 to 1e-11 of the root) and never
    // reach 1e-15, and further rounds only move the roots within that floor.
    let (mut smallest, mut stalled) = (f64::INFINITY, 0);
    for _ in 0..500 {
        let mut largest_step = 0.0_f64;
        for k in 0..n {
            let (p, dp) = eval(coefficients, z[k]);
            if p.abs() == 0.0 {
                continue;
            }
            let newton = p.div(dp);
            let mut repulsion = Complex::new(0.0, 0.0);
            for (j, zj) in z.iter().enumerate() {
                if j != k {
                    repulsion = repulsion.add(Complex::new(1.0, 0.0).div(z[k].sub(*zj)));
                }
            }
            let step = newton.div(Complex::new(1.0, 0.0).sub(newton.mul(repulsion)));
            z[k] = z[k].sub(step);
            largest_step = largest_step.max(step.abs() / z[k].abs().max(f64::MIN_POSITIVE));
        }
        if largest_step < smallest {
            (smallest, stalled) = (largest_step, 0);
        } else {
            stalled += 1;
        }
        if largest_step < 1e-15 || stalled >= 8 {
            break;
        }
    }
    for zk in &mut z {
        let (p, dp) = eval(coefficients, *zk);
        if dp.abs() > 0.0 {
            *zk = zk.sub(p.div(dp));
        }
    }
    z
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn polynomial_coefficients_match_the_textbook_values() {
        // Reverse Bessel polynomials, from memory (standard tables):
        // θ_1 = s + 1, θ_2 = s² + 3s + 3, θ_3 = s³ + 6s² + 15s + 15,
        // θ_4 = s⁴ + 10s³ + 45s² + 105s + 105.
        assert_eq!(polynomial(1), vec![1, 1]);
        assert_eq!(polynomial(2), vec![3, 3, 1]);
        assert_eq!(polynomial(3), vec![15, 15, 6, 1]);
        assert_eq!(polynomial(4), vec![105, 105, 45, 10, 1]);
    }

    #[test]
    fn squared_magnitude_expands_by_hand() {
        // |3 − ω² + 3jω|² = 9 + 3ω² + ω⁴ (expanded by hand).
        assert_eq!(squared_magnitude(&polynomial(2)), vec![9, 3, 1]);
        for order in 1..=MAX_ORDER {
            let c = squared_magnitude(&polynomial(order));
            assert!(c.iter().all(|&v| v > 0), "order {order}: {c:?}");
        }
    }

    #[test]
    fn roots_satisfy_the_polynomial_and_lie_in_the_left_half_plane() {
        for order in 1..=MAX_ORDER {
            let a: Vec<f64> = polynomial(order).iter().map(|&v| v as f64).collect();
            let z = roots(&a);
            assert_eq!(z.len(), order as usize);
            for r in &z {
                let (p, _) = eval(&a, *r);
                // Residual relative to the size of the terms at |z|.
                let scale: f64 = a
                    .iter()
                    .enumerate()
                    .map(|(k, c)| c * r.abs().powi(k as i32))
                    .sum();
                assert!(p.abs() < 1e-12 * scale, "order {order}, root {r:?}");
                assert!(r.re < 0.0, "order {order}, root {r:?}");
            }
            // Vieta: the product of the roots is (−1)^n a_0.
            let product = z.iter().fold(Complex::new(1.0, 0.0), |acc, r| acc.mul(*r));
            let expected = if order % 2 == 0 { a[0] } else { -a[0] };
            assert!((product.re - expected).abs() < 1e-9 * a[0], "order {order}");
            assert!(product.im.abs() < 1e-9 * a[0], "order {order}");
        }
    }

    #[test]
    fn prototype_is_three_db_down_at_the_cutoff() {
        for order in 1..=MAX_ORDER {
            let loss = prototype(order).ln_power_loss(0.0);
            assert!(
                (loss - std::f64::consts::LN_2).abs() < 1e-13,
                "order {order}"
            );
        }
    }
}
