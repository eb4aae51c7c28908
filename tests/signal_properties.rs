//! Property tests of `signal`: invariants that hold for every valid input, checked on
//! random inputs with proptest. The invariants follow from the definitions in docs/model.md, "Filter responses"
//! (closed forms, pole-based phases) rather than from any single reference value.

use foldcheck::signal::MAX_ORDER;
use foldcheck::signal::analog::{Analog, AnalogKind};
use foldcheck::signal::design::max_cutoff_for;
use foldcheck::signal::digital::{digital_attenuation_db, sinc_attenuation_db};
use foldcheck::signal::fold::fold;
use foldcheck::signal::table::table_attenuation_db;
use proptest::prelude::*;

/// Any family, Chebyshev ripple between 0.01 and 6 dB.
fn any_kind() -> impl Strategy<Value = AnalogKind> {
    prop_oneof![
        Just(AnalogKind::Butterworth),
        Just(AnalogKind::Bessel),
        (0.01f64..6.0).prop_map(|ripple_db| AnalogKind::Chebyshev { ripple_db }),
    ]
}

/// Families whose magnitude has no ripple (Butterworth is maximally flat, Bessel
/// monotonic): attenuation never falls as the frequency rises.
fn monotonic_kind() -> impl Strategy<Value = AnalogKind> {
    prop_oneof![Just(AnalogKind::Butterworth), Just(AnalogKind::Bessel)]
}

fn any_filter() -> impl Strategy<Value = Analog> {
    (any_kind(), 1..=MAX_ORDER, -3.0f64..8.0)
        .prop_map(|(kind, order, log_fc)| Analog::new(kind, order, 10f64.powf(log_fc)))
}

/// A frequency as a multiple of the cutoff, 0 or log-uniform in [1e-6, 1e4].
fn ratio() -> impl Strategy<Value = f64> {
    prop_oneof![1 => Just(0.0), 9 => (-6.0f64..4.0).prop_map(|e| 10f64.powf(e))]
}

proptest! {
    #[test]
    fn attenuation_is_finite_and_not_negative(filter in any_filter(), x in ratio()) {
        let a = filter.attenuation_db(x * filter.cutoff_hz);
        prop_assert!(a.is_finite(), "{filter:?} at {x}·fc: {a}");
        // Chebyshev touches 0 dB inside its passband ripple but never goes below it.
        prop_assert!(a >= -1e-9, "{filter:?} at {x}·fc: {a}");
    }

    #[test]
    fn ripple_free_families_never_fall_above_the_cutoff(
        kind in monotonic_kind(),
        order in 1..=MAX_ORDER,
        x in 1.0f64..1e4,
        step in 1e-9f64..1.0,
    ) {
        let filter = Analog::new(kind, order, 1_000.0);
        let (f1, f2) = (x * 1_000.0, x * (1.0 + step) * 1_000.0);
        let (a1, a2) = (filter.attenuation_db(f1), filter.attenuation_db(f2));
        prop_assert!(a2 >= a1 - 1e-12 * a1, "{filter:?}: A({f1}) = {a1} > A({f2}) = {a2}");
    }

    #[test]
    fn chebyshev_stays_within_its_ripple_in_the_passband(
        ripple_db in 0.01f64..6.0,
        order in 1..=MAX_ORDER,
        x in 0.0f64..=1.0,
    ) {
        // |T_n(x)| ≤ 1 on [0, 1], so 0 ≤ A ≤ ripple there (docs/model.md, "Filter responses" closed form).
        let filter = Analog::new(AnalogKind::Chebyshev { ripple_db }, order, 50.0);
        let a = filter.attenuation_db(x * 50.0);
        prop_assert!(a >= -1e-9 && a <= ripple_db + 1e-9, "{filter:?} at {x}·fc: {a}");
    }

    #[test]
    fn phase_is_continuous_lagging_and_bounded(filter in any_filter(), x in ratio()) {
        let fc = filter.cutoff_hz;
        let (f1, f2) = (x * fc, x * fc + 1e-6 * fc);
        let (p1, p2) = (filter.phase_deg(f1), filter.phase_deg(f2));
        // Each pole's angle changes at most Δx/|Re p| radians; even the sharpest pole
        // here (Chebyshev, 6 dB, order 12: |Re p| ≈ 0.006) moves < 0.2° in 1e-6·fc.
        // A 360° wrap would show up as a jump of hundreds of degrees.
        prop_assert!((p2 - p1).abs() < 1.0, "{filter:?}: {p1}° → {p2}°");
        // The angle of every pole term rises with f, so the phase never rises.
        prop_assert!(p2 <= p1 + 1e-9, "{filter:?}: {p1}° → {p2}°");
        let floor = -90.0 * f64::from(filter.order);
        prop_assert!(p1 <= 1e-9 && p1 >= floor - 1e-9, "{filter:?} at {x}·fc: {p1}°");
    }

    #[test]
    fn sinc_is_never_nan_and_never_negative(
        order in 1u32..=6,
        factor in 1u32..=1024,
        log_fin in 0.0f64..9.0,
        u in 0.0f64..1000.0,
    ) {
        let fin = 10f64.powf(log_fin);
        let a = sinc_attenuation_db(order, factor, fin, u * fin);
        prop_assert!(!a.is_nan() && a >= 0.0, "N={order} M={factor} fin={fin} u={u}: {a}");
    }

    #[test]
    fn sinc_is_never_nan_next_to_nulls_and_rate_multiples(
        order in 1u32..=6,
        factor in 2u32..=256,
        k in 0u32..2048,
        offset in prop_oneof![Just(0.0), -1e-9f64..1e-9, -1e-15f64..1e-15],
    ) {
        // Frequencies at or within a hair of k·fin/M: nulls (k not a multiple of M) or
        // multiples of fin.
        let fin = 48_000.0;
        let f = (f64::from(k) / f64::from(factor) + offset) * fin;
        let a = sinc_attenuation_db(order, factor, fin, f);
        prop_assert!(!a.is_nan() && a >= 0.0, "N={order} M={factor} k={k}: {a}");
        if k % factor == 0 && offset == 0.0 {
            prop_assert_eq!(a, 0.0);
        }
    }

    #[test]
    fn table_stays_within_its_points(
        start in -1.0f64..6.0,
        steps in prop::collection::vec((0.0f64..2.0, -20.0f64..120.0), 1..8),
        first_db in -20.0f64..120.0,
        probe in -2.0f64..10.0,
    ) {
        // Rising frequencies (10^start, then multiplied by 10^step), arbitrary dB values.
        let mut f = 10f64.powf(start);
        let mut points = vec![(f, first_db)];
        for (step, db) in steps {
            f *= 10f64.powf(step);
            points.push((f, db));
        }
        let probe = 10f64.powf(probe);
        let a = table_attenuation_db(&points, probe);
        if probe < points[0].0 {
            prop_assert_eq!(a, 0.0);
        } else {
            let lo = points.iter().map(|p| p.1).fold(f64::INFINITY, f64::min);
            let hi = points.iter().map(|p| p.1).fold(f64::NEG_INFINITY, f64::max);
            prop_assert!(a >= lo && a <= hi, "{points:?} at {probe}: {a}");
        }
    }

    #[test]
    fn fold_lands_in_the_first_nyquist_zone_and_is_periodic(
        log_fs in 0.0f64..8.0,
        u in 0.0f64..100.0,
        k in 0u32..50,
    ) {
        // |f − round(f/fs)·fs| (docs/model.md) lies in [0, fs/2] and ignores whole turns of fs.
        let fs = 10f64.powf(log_fs);
        let f = u * fs;
        let alias = fold(f, fs);
        prop_assert!((0.0..=fs / 2.0).contains(&alias), "{f} at {fs}: {alias}");
        let shifted = fold(f + f64::from(k) * fs, fs);
        prop_assert!((shifted - alias).abs() <= 1e-9 * (f + f64::from(k) * fs).max(fs));
    }

    #[test]
    fn digital_stays_between_zero_and_its_stopband_attenuation(
        pass in 0.0f64..0.5,
        width in 0.0f64..0.5,
        atten in 0.0f64..200.0,
        u in 0.0f64..20.0,
        decimating in any::<bool>(),
    ) {
        let fin = 96_000.0;
        let period = decimating.then_some(fin);
        let a = digital_attenuation_db(pass * fin, (pass + width) * fin, atten, u * fin, period);
        prop_assert!(a >= 0.0 && a <= atten, "{a}");
    }

    #[test]
    fn max_cutoff_round_trips(
        kind in any_kind(),
        order in 1..=MAX_ORDER,
        log_f in 0.0f64..7.0,
        required in 0.0f64..300.0,
    ) {
        let f = 10f64.powf(log_f);
        let ripple = match kind { AnalogKind::Chebyshev { ripple_db } => ripple_db, _ => 0.0 };
        prop_assume!(required > ripple + 1e-6);
        let cutoff = max_cutoff_for(kind, order, f, required);
        prop_assert!(cutoff.is_some(), "{kind:?} {order} {f} {required}");
        let got = Analog::new(kind, order, cutoff.unwrap()).attenuation_db(f);
        prop_assert!((got - required).abs() < 0.01, "{kind:?} {order}: {got} vs {required}");
    }
}
