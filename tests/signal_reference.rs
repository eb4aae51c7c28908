//! `signal` checked against values from outside the project: tables computed with
//! scipy.signal / numpy (committed beside the scripts that made them in
//! `tests/reference/`), published closed forms, and the worked checks of docs/format.md.

use std::f64::consts::PI;
use std::path::Path;

use foldcheck::signal::MAX_ORDER;
use foldcheck::signal::analog::{Analog, AnalogKind};
use foldcheck::signal::design::{max_cutoff_for, min_order_for};
use foldcheck::signal::digital::{digital_attenuation_db, sinc_attenuation_db, sinc_delay_samples};
use foldcheck::signal::fold::{
    fold, folds_into_band, ideal_dynamic_range_db, images, lowest_folding_frequency,
};
use foldcheck::signal::table::table_attenuation_db;

/// 10·log10(2): the −3 dB point exactly.
const THREE_DB: f64 = 3.010_299_956_639_812;

/// Data rows of a committed reference CSV: `#` lines are comments, the first other line
/// names the columns (checked against `columns`).
fn read_table(name: &str, columns: &str) -> Vec<Vec<String>> {
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/reference")
        .join(name);
    let text = std::fs::read_to_string(&path)
        .unwrap_or_else(|e| panic!("cannot read {}: {e}", path.display()));
    let mut lines = text
        .lines()
        .filter(|l| !l.starts_with('#') && !l.is_empty());
    assert_eq!(lines.next(), Some(columns), "{name}: unexpected header");
    lines
        .map(|l| l.split(',').map(str::to_owned).collect())
        .collect()
}

fn num(field: &str) -> f64 {
    field
        .parse()
        .unwrap_or_else(|e| panic!("bad number {field:?}: {e}"))
}

/// Fails listing up to ten offending rows.
fn assert_no_failures(what: &str, checked: usize, failures: &[String]) {
    assert!(
        failures.is_empty(),
        "{what}: {} of {checked} rows off, e.g.\n{}",
        failures.len(),
        failures
            .iter()
            .take(10)
            .cloned()
            .collect::<Vec<_>>()
            .join("\n")
    );
}

// ---------------------------------------------------------------------------------
// Analog filters vs scipy.signal (butter / cheby1 / bessel(norm='mag'), analog=True,
// freqs; phase = numpy.unwrap(angle(h))). Table: tests/reference/filters.py.
// ---------------------------------------------------------------------------------

#[test]
fn analog_attenuation_and_phase_match_scipy_freqs() {
    let rows = read_table(
        "filters.csv",
        "kind,ripple_db,order,cutoff_hz,f_hz,attenuation_db,phase_deg",
    );
    // Every family and order 1–12 at 40 frequencies (Chebyshev at three ripples).
    assert_eq!(rows.len(), 12 * 5 * 40, "filters.csv is incomplete");
    let mut failures = Vec::new();
    let mut deepest: f64 = 0.0;
    for r in &rows {
        let kind = match r[0].as_str() {
            "butterworth" => AnalogKind::Butterworth,
            "chebyshev" => AnalogKind::Chebyshev {
                ripple_db: num(&r[1]),
            },
            "bessel" => AnalogKind::Bessel,
            other => panic!("unknown kind {other}"),
        };
        let filter = Analog::new(kind, r[2].parse().unwrap(), num(&r[3]));
        let f = num(&r[4]);
        let (want_db, want_deg) = (num(&r[5]), num(&r[6]));
        deepest = deepest.max(want_db);
        let (got_db, got_deg) = (filter.attenuation_db(f), filter.phase_deg(f));
        // Compared in dB even for the deepest rows (≈ 480 dB): 0.01 dB is a relative
        // tolerance of 0.1 % on the linear magnitude.
        if (got_db - want_db).abs() > 0.01 || (got_deg - want_deg).abs() > 0.1 {
            failures.push(format!(
                "{filter:?} at {f} Hz: {got_db} dB / {got_deg}° vs scipy {want_db} dB / {want_deg}°"
            ));
        }
    }
    assert!(deepest > 400.0, "the table should reach deep stopband rows");
    assert_no_failures("filters.csv", rows.len(), &failures);
}

// ---------------------------------------------------------------------------------
// Group delay vs scipy.signal's analog prototypes (butter / cheby1 / bessel(norm='mag'),
// analog=True, output='zpk'), closed form over the poles, cross-checked in the script
// against a numerical derivative of freqs_zpk's unwrapped phase.
// Table: tests/reference/group_delay.py.
// ---------------------------------------------------------------------------------

#[test]
fn analog_group_delay_matches_scipy_poles_and_zeros() {
    let rows = read_table(
        "group_delay.csv",
        "kind,ripple_db,order,cutoff_hz,f_hz,group_delay_s",
    );
    // Every family and order 1–12 at 25 frequencies from 0.1 to 10 × cutoff.
    assert_eq!(rows.len(), 12 * 5 * 25, "group_delay.csv is incomplete");
    let mut failures = Vec::new();
    let mut worst: f64 = 0.0;
    for r in &rows {
        let kind = match r[0].as_str() {
            "butterworth" => AnalogKind::Butterworth,
            "chebyshev" => AnalogKind::Chebyshev {
                ripple_db: num(&r[1]),
            },
            "bessel" => AnalogKind::Bessel,
            other => panic!("unknown kind {other}"),
        };
        let filter = Analog::new(kind, r[2].parse().unwrap(), num(&r[3]));
        let f = num(&r[4]);
        let want = num(&r[5]);
        let got = filter.group_delay_s(f);
        let rel = ((got - want) / want).abs();
        worst = worst.max(rel);
        if rel > 1e-9 {
            failures.push(format!("{filter:?} at {f} Hz: {got} s vs scipy {want} s"));
        }
    }
    assert_no_failures("group_delay.csv", rows.len(), &failures);
    assert!(
        worst > 0.0,
        "the comparison must see rounding, not identical values"
    );
}

#[test]
fn butterworth_first_order_group_delay_is_the_rc_form() {
    // A first-order low-pass 1/(1 + jω/ωc): τ(ω) = ωc / (ωc² + ω²) (textbook closed form),
    // so 1/ωc at DC and half that at the cutoff.
    let fc = 1000.0;
    let wc = 2.0 * PI * fc;
    let b = Analog::new(AnalogKind::Butterworth, 1, fc);
    assert!((b.group_delay_s(0.0) - 1.0 / wc).abs() < 1e-18);
    assert!((b.group_delay_s(fc) - 0.5 / wc).abs() < 1e-18);
    assert!((b.group_delay_s(-fc) - b.group_delay_s(fc)).abs() < 1e-18);
}

// ---------------------------------------------------------------------------------
// Sinc (CIC) delay vs the centroid of N cascaded M-tap moving averages (numpy.convolve),
// closed form N·(M − 1)/2 (Hogenauer 1981, from memory). Table: tests/reference/cic_delay.py.
// ---------------------------------------------------------------------------------

#[test]
fn sinc_delay_matches_the_centroid_of_cascaded_moving_averages() {
    let rows = read_table("cic_delay.csv", "order,factor,delay_samples");
    assert_eq!(rows.len(), 6 * 9, "cic_delay.csv is incomplete");
    for r in &rows {
        let (order, factor) = (r[0].parse().unwrap(), r[1].parse().unwrap());
        let want = num(&r[2]);
        let got = sinc_delay_samples(order, factor);
        assert!(
            (got - want).abs() < 1e-9,
            "order {order} factor {factor}: {got} vs centroid {want}"
        );
    }
    // The case that motivated it: 5th order ÷ 8 is 17.5 input samples.
    assert_eq!(sinc_delay_samples(5, 8), 17.5);
}

#[test]
fn bessel_is_three_db_down_at_its_cutoff_for_every_order() {
    // docs/model.md ("Filter responses") and scipy.signal.bessel(norm='mag'): A(fc) = 10·log10(2) = 3.0103 dB.
    for order in 1..=MAX_ORDER {
        let filter = Analog::new(AnalogKind::Bessel, order, 2_500.0);
        let a = filter.attenuation_db(2_500.0);
        assert!((a - THREE_DB).abs() < 1e-9, "order {order}: {a} dB");
    }
}

#[test]
fn butterworth_and_chebyshev_meet_their_defining_points() {
    // Published closed forms (docs/model.md, "Filter responses"): Butterworth A(fc) = 10·log10(2);
    // Chebyshev T_n(1) = 1, so A(fc) = ripple, and at DC T_n(0) = 0 (odd n) or ±1
    // (even n), so A(0) = 0 or the ripple.
    for order in 1..=MAX_ORDER {
        let b = Analog::new(AnalogKind::Butterworth, order, 100.0);
        assert!((b.attenuation_db(100.0) - THREE_DB).abs() < 1e-12);
        assert_eq!(b.attenuation_db(0.0), 0.0);
        for ripple_db in [0.1, 0.5, 1.0, 3.0] {
            let c = Analog::new(AnalogKind::Chebyshev { ripple_db }, order, 100.0);
            assert!((c.attenuation_db(100.0) - ripple_db).abs() < 1e-9);
            let dc = if order % 2 == 0 { ripple_db } else { 0.0 };
            assert!((c.attenuation_db(0.0) - dc).abs() < 1e-9, "order {order}");
            assert_eq!(c.phase_deg(0.0), 0.0);
        }
    }
}

#[test]
fn analog_stays_finite_far_beyond_the_table() {
    // Closed form (docs/model.md, "Filter responses"), evaluated by hand in log form: Butterworth order 12 at
    // 1e100 × fc is 20·12·100 = 24000 dB; Chebyshev grows as 20·n·log10(2x) + 20·log10(ε/2)
    // (T_n(x) → (2x)^n / 2), from memory / standard asymptote.
    let b = Analog::new(AnalogKind::Butterworth, 12, 1.0);
    assert!((b.attenuation_db(1e100) - 24_000.0).abs() < 1e-9);
    let ripple_db: f64 = 1.0;
    let c = Analog::new(AnalogKind::Chebyshev { ripple_db }, 12, 1.0);
    let eps = (10f64.powf(ripple_db / 10.0) - 1.0).sqrt();
    let want = 20.0 * 12.0 * (2e100f64).log10() + 20.0 * (eps / 2.0).log10();
    assert!((c.attenuation_db(1e100) - want).abs() < 1e-9);
    let bessel = Analog::new(AnalogKind::Bessel, 12, 1e-3);
    assert!(bessel.attenuation_db(f64::MAX).is_finite());
    assert!((bessel.phase_deg(f64::MAX) - (-1080.0)).abs() < 1e-6);
}

// ---------------------------------------------------------------------------------
// Sinc (CIC) stage: Hogenauer, "An economical class of digital filters for decimation
// and interpolation", IEEE Trans. ASSP 29 (1981), from memory: an order-N stage of
// factor M is N cascaded M-tap moving averages, |H| = |sin(π f M/fin) / (M sin(π f/fin))|^N.
// ---------------------------------------------------------------------------------

#[test]
fn sinc_matches_scipy_freqz_of_cascaded_boxcars() {
    // Table: tests/reference/sinc.py (numpy.convolve of boxcars, scipy.signal.freqz).
    let rows = read_table("sinc.csv", "order,factor,input_rate_hz,f_hz,attenuation_db");
    assert!(rows.len() > 400, "sinc.csv is incomplete");
    let mut failures = Vec::new();
    for r in &rows {
        let (order, factor): (u32, u32) = (r[0].parse().unwrap(), r[1].parse().unwrap());
        let (fin, f, want) = (num(&r[2]), num(&r[3]), num(&r[4]));
        let got = sinc_attenuation_db(order, factor, fin, f);
        if (got - want).abs() > 0.01 {
            failures.push(format!("N={order} M={factor} f={f}: {got} vs {want}"));
        }
    }
    assert_no_failures("sinc.csv", rows.len(), &failures);
}

/// The moving-average form of one stage, written independently of the library:
/// |(1/M) Σ_{k<M} e^(−j 2π f k / fin)|, then N stages in dB.
fn boxcar_db(order: u32, factor: u32, fin: f64, f: f64) -> f64 {
    let w = 2.0 * PI * f / fin;
    let (re, im) = (0..factor).fold((0.0, 0.0), |(re, im), k| {
        let phase = w * f64::from(k);
        (re + phase.cos(), im - phase.sin())
    });
    let magnitude = re.hypot(im) / f64::from(factor);
    -20.0 * f64::from(order) * magnitude.log10()
}

#[test]
fn sinc_matches_the_moving_average_form_at_chosen_points() {
    for (order, factor, fin, f) in [
        (3, 8, 48_000.0, 1_000.0),
        (3, 8, 48_000.0, 3_000.0),
        (1, 2, 1_000.0, 200.0),
        (4, 16, 768_000.0, 20_000.0),
        (5, 4, 100.0, 37.5),
        (2, 10, 10_000.0, 12_345.0), // above fin: periodic
        (6, 3, 3_000.0, 999.0),      // next to a null at fin/3
    ] {
        let want = boxcar_db(order, factor, fin, f);
        let got = sinc_attenuation_db(order, factor, fin, f);
        assert!(
            (got - want).abs() < 1e-6 * want.max(1.0),
            "N={order} M={factor} fin={fin} f={f}: {got} vs {want}"
        );
    }
}

#[test]
fn sinc_is_zero_at_dc_and_multiples_of_the_input_rate() {
    // The limit sin(Mx)/(M sin x) → 1 as x → kπ (Hogenauer 1981, from memory).
    for (order, factor) in [(1, 2), (3, 8), (6, 64)] {
        for k in 0..5 {
            let f = f64::from(k) * 48_000.0;
            assert_eq!(sinc_attenuation_db(order, factor, 48_000.0, f), 0.0);
        }
    }
    // Just off a multiple of fin the small-argument form gives ≈ N (πt)²(M²−1)/6 · 20/ln10
    // (Taylor expansion of ln(sin y / y) = −y²/6 − …).
    let t: f64 = 1e-9;
    let want = 3.0 * (PI * t).powi(2) * (64.0 - 1.0) / 6.0 * 20.0 / std::f64::consts::LN_10;
    let got = sinc_attenuation_db(3, 8, 1.0, 5.0 + t);
    assert!((got - want).abs() < 1e-6 * want, "{got} vs {want}");
}

#[test]
fn sinc_nulls_at_multiples_of_the_output_rate_are_infinite_or_deeper_than_300_db() {
    // Nulls at f = k·fin/M, k not a multiple of M (Hogenauer 1981, from memory).
    for (order, factor, fin) in [
        (1, 8, 48_000.0),
        (3, 3, 48_000.0),
        (2, 10, 1e6),
        (1, 7, 1.0),
    ] {
        for k in 1..(3 * factor) {
            if k % factor == 0 {
                continue;
            }
            let f = f64::from(k) * fin / f64::from(factor);
            let a = sinc_attenuation_db(order, factor, fin, f);
            assert!(!a.is_nan() && a > 300.0, "N={order} M={factor} k={k}: {a}");
        }
    }
    // Exactly representable null (fin/M = 6 kHz): infinite.
    assert_eq!(sinc_attenuation_db(3, 8, 48_000.0, 6_000.0), f64::INFINITY);
}

#[test]
fn sinc_at_the_output_nyquist_frequency() {
    // M = 8, N = 3 at fout/2 = fin/16: |H| = 1/(8 sin(π/16)) per stage, so
    // A = 3 · 20·log10(8 sin(π/16)) ≈ 3 × 3.867 dB ≈ 11.600 dB (Hogenauer 1981, from memory;
    // evaluated here). For large M the per-stage value tends to 20·log10(π/2) ≈ 3.922 dB.
    let want = 3.0 * 20.0 * (8.0 * (PI / 16.0).sin()).log10();
    assert!((want - 11.5995).abs() < 1e-3);
    let got = sinc_attenuation_db(3, 8, 48_000.0, 3_000.0);
    assert!((got - want).abs() < 1e-9, "{got} vs {want}");
    let large_m = sinc_attenuation_db(1, 4096, 4096.0 * 1_000.0, 500.0);
    assert!((large_m - 20.0 * (PI / 2.0).log10()).abs() < 1e-5);
}

// ---------------------------------------------------------------------------------
// `digital` and `table` responses: definitions of docs/model.md, values worked by hand.
// ---------------------------------------------------------------------------------

#[test]
fn digital_response_is_piecewise_linear_in_db() {
    // The `digital` response (docs/model.md): 0 to 1 kHz, linear to 100 dB at 2 kHz, then held.
    let a = |f| digital_attenuation_db(1_000.0, 2_000.0, 100.0, f, None);
    assert_eq!(a(0.0), 0.0);
    assert_eq!(a(1_000.0), 0.0);
    assert!((a(1_250.0) - 25.0).abs() < 1e-12);
    assert!((a(1_500.0) - 50.0).abs() < 1e-12);
    assert_eq!(a(2_000.0), 100.0);
    assert_eq!(a(1e9), 100.0);
    // In a stage with input rate 8 kHz the response is periodic and mirrored:
    // 7.5 kHz behaves as 0.5 kHz, 6.5 kHz as 1.5 kHz, 9.5 kHz as 1.5 kHz.
    let s = |f| digital_attenuation_db(1_000.0, 2_000.0, 100.0, f, Some(8_000.0));
    assert_eq!(s(7_500.0), 0.0);
    assert!((s(6_500.0) - 50.0).abs() < 1e-9);
    assert!((s(9_500.0) - 50.0).abs() < 1e-9);
    assert_eq!(s(4_000.0), 100.0);
}

#[test]
fn table_interpolates_linearly_in_db_over_log_frequency() {
    // The `table` response (docs/model.md), worked by hand: halfway (in log10 f) between 1 kHz / 0 dB and
    // 100 kHz / 40 dB is 10 kHz / 20 dB; a quarter is 10^3.5 Hz / 10 dB.
    let points = [(1_000.0, 0.0), (100_000.0, 40.0), (1e6, 60.0)];
    assert_eq!(table_attenuation_db(&points, 10.0), 0.0);
    assert!((table_attenuation_db(&points, 10_000.0) - 20.0).abs() < 1e-12);
    assert!((table_attenuation_db(&points, 10f64.powf(3.5)) - 10.0).abs() < 1e-12);
    assert!((table_attenuation_db(&points, 316_227.766_016_837_94) - 50.0).abs() < 1e-9);
    assert_eq!(table_attenuation_db(&points, 1e6), 60.0);
    assert_eq!(table_attenuation_db(&points, 1e9), 60.0);
    // 0 below the first point even when that point is not 0 dB.
    let raised = [(5_000.0, 6.0), (50_000.0, 26.0)];
    assert_eq!(table_attenuation_db(&raised, 4_999.0), 0.0);
    assert_eq!(table_attenuation_db(&raised, 5_000.0), 6.0);
    assert_eq!(table_attenuation_db(&[], 5_000.0), 0.0);
}

// ---------------------------------------------------------------------------------
// Folding vs numpy: tones sampled and located by their FFT peak.
// Table: tests/reference/folding.py.
// ---------------------------------------------------------------------------------

#[test]
fn fold_matches_the_fft_peak_of_sampled_tones() {
    let rows = read_table("folding.csv", "f_hz,fs_hz,alias_hz,resolution_hz");
    assert!(rows.len() > 250, "folding.csv is incomplete");
    let mut failures = Vec::new();
    for r in &rows {
        let (f, fs, measured, resolution) = (num(&r[0]), num(&r[1]), num(&r[2]), num(&r[3]));
        let got = fold(f, fs);
        if (got - measured).abs() > resolution {
            failures.push(format!(
                "{f} Hz at {fs} Hz: {got} vs measured {measured} (bin {resolution})"
            ));
        }
    }
    assert_no_failures("folding.csv", rows.len(), &failures);
}

#[test]
fn images_all_land_on_the_same_alias() {
    // Sampling at 5 kHz, 1 kHz is reached from 4, 6, 9, 11, 14, 16 kHz … (k·fs ± 1 kHz).
    let got = images(16_000.0, 5_000.0, 16_000.0);
    assert_eq!(
        got,
        vec![
            1_000.0, 4_000.0, 6_000.0, 9_000.0, 11_000.0, 14_000.0, 16_000.0
        ]
    );
    for f in images(1_234.5, 1_000.0, 50_000.0) {
        assert!((fold(f, 1_000.0) - 234.5).abs() < 1e-9, "{f}");
    }
}

// ---------------------------------------------------------------------------------
// Worked checks of docs/format.md.
// ---------------------------------------------------------------------------------

#[test]
fn spec_worked_checks() {
    // 4th-order Butterworth, cutoff 20 kHz, at 28 kHz (48 kHz − 20 kHz): 11.97 dB.
    assert_eq!(lowest_folding_frequency(48_000.0, 20_000.0), 28_000.0);
    let b = Analog::new(AnalogKind::Butterworth, 4, 20_000.0);
    assert!((b.attenuation_db(28_000.0) - 11.97).abs() < 0.01);
    // A 16 kHz tone sampled at 5 kHz folds to 1 kHz.
    assert!((fold(16_000.0, 5_000.0) - 1_000.0).abs() < 1e-9);
    assert!(folds_into_band(16_000.0, 5_000.0, 1_000.0));
    assert!(!folds_into_band(16_000.0, 5_000.0, 999.0));
    // Ideal dynamic range 6.02·16 + 1.76 = 98.08 dB (W. Kester, Analog Devices MT-001,
    // from memory).
    assert!((ideal_dynamic_range_db(16) - 98.08).abs() < 1e-9);
    assert!((ideal_dynamic_range_db(24) - 146.24).abs() < 1e-9);
}

// ---------------------------------------------------------------------------------
// design: inverses of the responses above (round trips through attenuation_db).
// ---------------------------------------------------------------------------------

fn kinds() -> [AnalogKind; 4] {
    [
        AnalogKind::Butterworth,
        AnalogKind::Chebyshev { ripple_db: 0.5 },
        AnalogKind::Chebyshev { ripple_db: 3.0 },
        AnalogKind::Bessel,
    ]
}

#[test]
fn max_cutoff_gives_exactly_the_required_attenuation() {
    for kind in kinds() {
        for order in 1..=MAX_ORDER {
            for required in [3.5, 12.0, 40.0, 80.0, 120.0, 400.0] {
                let f = 28_000.0;
                let cutoff = max_cutoff_for(kind, order, f, required)
                    .unwrap_or_else(|| panic!("{kind:?} {order} {required}: no cutoff"));
                let filter = Analog::new(kind, order, cutoff);
                let got = filter.attenuation_db(f);
                assert!(
                    (got - required).abs() < 0.01,
                    "{kind:?} order {order}: {got} dB at cutoff {cutoff} for {required}"
                );
                // A slightly higher cutoff no longer meets it.
                let higher = Analog::new(kind, order, cutoff * 1.001);
                assert!(higher.attenuation_db(f) < required, "{kind:?} {order}");
            }
        }
    }
    // The docs/format.md worked check turned round: to get 80 dB at 28 kHz a 4th-order Butterworth needs a
    // cutoff of 28 kHz / (10^8 − 1)^(1/8) (closed form of docs/model.md, "Filter responses") ≈ 2.8 kHz.
    let cutoff = max_cutoff_for(AnalogKind::Butterworth, 4, 28_000.0, 80.0).unwrap();
    let want = 28_000.0 / (1e8f64 - 1.0).powf(1.0 / 8.0);
    assert!((cutoff - want).abs() < 1e-9 * want);
}

#[test]
fn max_cutoff_handles_requirements_without_a_finite_answer() {
    assert_eq!(max_cutoff_for(AnalogKind::Butterworth, 4, 1e3, 0.0), None);
    assert_eq!(max_cutoff_for(AnalogKind::Bessel, 4, 1e3, -3.0), None);
    assert_eq!(max_cutoff_for(AnalogKind::Bessel, 4, 0.0, 40.0), None);
    assert_eq!(max_cutoff_for(AnalogKind::Butterworth, 0, 1e3, 40.0), None);
    assert_eq!(max_cutoff_for(AnalogKind::Bessel, 13, 1e3, 40.0), None);
    // 1e6 dB with one pole would need a cutoff far below the smallest f64.
    assert_eq!(max_cutoff_for(AnalogKind::Butterworth, 1, 1e3, 1e6), None);
    assert_eq!(max_cutoff_for(AnalogKind::Bessel, 1, 1e3, 1e6), None);
    // Chebyshev: a requirement within the ripple is met at the passband edge itself.
    let kind = AnalogKind::Chebyshev { ripple_db: 1.0 };
    assert_eq!(max_cutoff_for(kind, 5, 1e3, 0.5), Some(1e3));
}

#[test]
fn min_order_is_the_smallest_that_meets_the_requirement() {
    for kind in kinds() {
        for (cutoff, f, required) in [
            (20_000.0, 28_000.0, 11.97),
            (10_000.0, 40_000.0, 60.0),
            (1_000.0, 2_500.0, 40.0),
            (1_000.0, 100_000.0, 100.0),
        ] {
            let got = min_order_for(kind, cutoff, f, required);
            let meets = |n| Analog::new(kind, n, cutoff).attenuation_db(f) >= required;
            match got {
                Some(n) => {
                    assert!(meets(n), "{kind:?}: order {n} does not meet {required}");
                    assert!((1..n).all(|m| !meets(m)), "{kind:?}: {n} is not minimal");
                }
                None => assert!((1..=MAX_ORDER).all(|m| !meets(m)), "{kind:?}: missed one"),
            }
        }
    }
    // docs/model.md: 11.97 dB at 1.4 × fc takes a 4th-order Butterworth (the 3rd gives 9.1 dB
    // by the closed form 10·log10(1 + 1.4^6)).
    assert_eq!(
        min_order_for(AnalogKind::Butterworth, 20_000.0, 28_000.0, 11.9),
        Some(4)
    );
    assert_eq!(
        min_order_for(AnalogKind::Bessel, 1_000.0, 1_001.0, 1e4),
        None
    );
    assert_eq!(
        min_order_for(AnalogKind::Bessel, 1_000.0, 10.0, 0.0),
        Some(1)
    );
    assert_eq!(min_order_for(AnalogKind::Bessel, -1.0, 10.0, 1.0), None);
}
