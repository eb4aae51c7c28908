//! Properties of the quantity parser (docs/format.md, "Quantities"), on random input:
//! exact values written with a unit parse back to exactly that value; no string makes
//! the parser panic; a unit in the wrong case always gets a help line naming the right
//! spelling; printed rates parse back to within their 6 significant digits.
//!
//! The expected values are built here from integers with num-rational (m · 10^e times
//! the unit's SI scale: powers of 1000, powers of 1024 for the binary prefixes, 60, 3600
//! and 86 400 for the time units), independently of the parser's own digit handling.

use foldcheck::model::quantity::{Exact, Kind, parse, to_f64};
use foldcheck::words::format_hz;
use proptest::prelude::*;

const KINDS: [Kind; 6] = Kind::ALL;

fn kind() -> impl Strategy<Value = Kind> {
    proptest::sample::select(KINDS.to_vec())
}

/// A kind and one of its units (spelling, scale numerator, scale denominator).
fn kind_and_unit() -> impl Strategy<Value = (Kind, &'static str, i128, i128)> {
    kind().prop_flat_map(|k| {
        proptest::sample::select(k.units().to_vec()).prop_map(move |(u, n, d)| (k, u, n, d))
    })
}

/// `m · 10^e` written as a plain decimal (`-12.5`, `1250`, `0.00125`).
fn plain_decimal(m: i64, e: i32) -> String {
    let digits = m.unsigned_abs().to_string();
    let sign = if m < 0 { "-" } else { "" };
    if e >= 0 {
        format!("{sign}{digits}{}", "0".repeat(e as usize))
    } else {
        let shift = e.unsigned_abs() as usize;
        let padded = format!("{digits:0>width$}", width = shift + 1);
        let (int, frac) = padded.split_at(padded.len() - shift);
        format!("{sign}{int}.{frac}")
    }
}

fn exact(m: i64, e: i32) -> Exact {
    let ten = |n: u32| 10i128.pow(n);
    if e >= 0 {
        Exact::from_integer(i128::from(m) * ten(e as u32))
    } else {
        Exact::new(i128::from(m), ten(e.unsigned_abs()))
    }
}

/// Every spelling of `unit` that differs from it only in the case of its letters.
fn case_variant(unit: &str, mask: u32) -> Option<String> {
    let letters = unit.chars().filter(char::is_ascii_alphabetic).count() as u32;
    let flip = mask % (1 << letters);
    let mut i = 0;
    let v: String = unit
        .chars()
        .map(|c| {
            if c.is_ascii_alphabetic() {
                let out = if flip & (1 << i) != 0 {
                    if c.is_ascii_uppercase() {
                        c.to_ascii_lowercase()
                    } else {
                        c.to_ascii_uppercase()
                    }
                } else {
                    c
                };
                i += 1;
                out
            } else {
                c
            }
        })
        .collect();
    (v != unit).then_some(v)
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(2000))]

    #[test]
    fn exact_value_with_unit_round_trips(
        (k, unit, num, den) in kind_and_unit(),
        m in -1_000_000_000i64..=1_000_000_000,
        e in -9i32..=9,
        spaced in any::<bool>(),
        exponent_form in any::<bool>(),
    ) {
        let number = if exponent_form { format!("{m}e{e}") } else { plain_decimal(m, e) };
        let text = format!("{number}{}{unit}", if spaced { " " } else { "" });
        let want = exact(m, e) * Exact::new(num, den);
        prop_assert_eq!(parse(&text, k), Ok(want), "{}", text);
    }

    #[test]
    fn bare_numbers_are_base_units_where_allowed(
        k in kind(),
        m in -1_000_000_000i64..=1_000_000_000,
        e in -9i32..=9,
    ) {
        let text = plain_decimal(m, e);
        let r = parse(&text, k);
        if k.bare_allowed() {
            prop_assert_eq!(r, Ok(exact(m, e)));
        } else {
            let err = r.unwrap_err();
            prop_assert!(err.message.ends_with("needs one"), "{}", err.message);
            prop_assert!(err.help.is_some());
        }
    }

    #[test]
    fn no_string_panics(s in any::<String>(), k in kind()) {
        if let Err(e) = parse(&s, k) {
            prop_assert!(!e.message.is_empty());
        }
    }

    #[test]
    fn no_number_like_string_panics(
        s in "[-+]?[0-9]{0,60}(\\.[0-9]{0,40})?([eE][-+]?[0-9]{0,12})? ?[A-Za-z/µ]{0,6}",
        k in kind(),
    ) {
        if let Err(e) = parse(&s, k) {
            prop_assert!(!e.message.is_empty());
        }
    }

    #[test]
    fn unit_in_the_wrong_case_gets_the_right_spelling(
        (k, unit, _num, _den) in kind_and_unit(),
        mask in 1u32..64,
        m in 1i64..100_000,
        spaced in any::<bool>(),
    ) {
        let Some(variant) = case_variant(unit, mask) else { return Ok(()); };
        let sep = if spaced { " " } else { "" };
        let text = format!("{m}{sep}{variant}");
        let err = parse(&text, k).unwrap_err();
        prop_assert_eq!(
            err.message,
            format!("unknown unit `{variant}` in `{text}`; units are case-sensitive")
        );
        prop_assert_eq!(err.help, Some(format!("write `{m}{sep}{unit}`")));
    }

    #[test]
    fn unknown_units_always_get_a_help_line(
        k in kind(),
        unit in "[A-Za-z/]{1,5}",
        m in 1i64..100_000,
    ) {
        prop_assume!(!KINDS.iter().any(|k| k.units().iter().any(|u| u.0 == unit)));
        let err = parse(&format!("{m} {unit}"), k).unwrap_err();
        prop_assert!(err.help.is_some(), "{}", err.message);
    }

    #[test]
    fn printed_rates_parse_back_within_six_digits(hz in 1.0f64..1e11) {
        let printed = format_hz(hz);
        let back = to_f64(&parse(&printed, Kind::Frequency).unwrap());
        // 6 significant digits: a rounding error of at most half a unit in the 6th digit.
        prop_assert!(((back - hz) / hz).abs() <= 5e-6, "{} -> {} -> {}", hz, printed, back);
    }
}

#[test]
fn the_spec_examples_of_near_misses_name_the_right_spelling() {
    // docs/format.md, "Quantities": `KHz`, `khz`, `hz` are near misses.
    for (text, help) in [
        ("10 KHz", "write `10 kHz`"),
        ("10 khz", "write `10 kHz`"),
        ("10 hz", "write `10 Hz`"),
    ] {
        let e = parse(text, Kind::Frequency).unwrap_err();
        assert_eq!(e.help.as_deref(), Some(help), "{text}");
    }
}

#[test]
fn plain_decimal_writes_what_it_should() {
    // The test's own formatter, checked by hand.
    assert_eq!(plain_decimal(125, -2), "1.25");
    assert_eq!(plain_decimal(-5, -3), "-0.005");
    assert_eq!(plain_decimal(7, 2), "700");
    assert_eq!(plain_decimal(0, -1), "0.0");
}
