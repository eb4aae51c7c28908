//! Numbers and names as people read and write them: significant digits, frequencies,
//! durations, data rates, attenuations, exact rates, plurals, decimals read exactly,
//! and the closest name for "did you mean".
//!
//! The lowest module of the crate: it uses no other module of it, so every layer
//! (model, resolve, analysis, rules, renderers) can format the same way without an
//! import that runs back up the pipeline.

use num_rational::Ratio;
use num_traits::{CheckedMul, ToPrimitive, Zero};

/// An exact rational value (the same type as `model::Exact`).
type Exact = Ratio<i128>;

// Numbers.

/// A number with up to 6 significant digits, trailing zeros removed.
pub fn sig6(x: f64) -> String {
    if x == 0.0 {
        // Never "-0": a negative zero reads as a sign that means nothing.
        return "0".to_string();
    }
    if !x.is_finite() {
        return format!("{x}");
    }
    let digits = 6 - 1 - x.abs().log10().floor() as i32;
    let decimals = digits.clamp(0, 12) as usize;
    let mut s = format!("{x:.decimals$}");
    if s.contains('.') {
        // Trailing zeros and the point cut off in place (no second string).
        let kept = s.trim_end_matches('0').trim_end_matches('.').len();
        s.truncate(kept);
    }
    if s == "-0" { "0".to_string() } else { s }
}

/// Round to a number of decimals, for JSON values that users compare by eye.
pub fn round_to(x: f64, decimals: i32) -> f64 {
    let p = 10f64.powi(decimals);
    (x * p).round() / p
}

/// Round to `digits` significant digits, for a derived figure in a message that should
/// not look more exact than a person needs (`523.4 GB`, not `523.377 GB`).
pub fn round_sig(x: f64, digits: i32) -> f64 {
    if x == 0.0 || !x.is_finite() {
        return x;
    }
    let unit = 10f64.powi(x.abs().log10().floor() as i32 - digits + 1);
    (x / unit).round() * unit
}

/// Parse a decimal number (optional sign, fraction and exponent) exactly.
pub fn parse_decimal(s: &str) -> Option<Exact> {
    let s = s.trim();
    let (neg, body) = match s.as_bytes().first()? {
        b'-' => (true, &s[1..]),
        b'+' => (false, &s[1..]),
        _ => (false, s),
    };
    let (mantissa, exp) = match body.find(['e', 'E']) {
        Some(i) => (&body[..i], body[i + 1..].parse::<i32>().ok()?),
        None => (body, 0),
    };
    let (int_part, frac_part) = match mantissa.find('.') {
        Some(i) => (&mantissa[..i], &mantissa[i + 1..]),
        None => (mantissa, ""),
    };
    if int_part.is_empty() && frac_part.is_empty() {
        return None;
    }
    if !int_part.bytes().all(|b| b.is_ascii_digit())
        || !frac_part.bytes().all(|b| b.is_ascii_digit())
    {
        return None;
    }
    let digits = format!("{int_part}{frac_part}");
    let digits = digits.trim_start_matches('0');
    let mut value: i128 = if digits.is_empty() {
        0
    } else {
        digits.parse().ok()?
    };
    let scale = exp.checked_sub(i32::try_from(frac_part.len()).ok()?)?;
    if value == 0 {
        return Some(Exact::zero());
    }
    if neg {
        value = -value;
    }
    let ten_pow = |n: u32| 10i128.checked_pow(n);
    if scale >= 0 {
        let p = ten_pow(scale as u32)?;
        Some(Exact::from_integer(value.checked_mul(p)?))
    } else {
        let p = ten_pow(scale.unsigned_abs())?;
        Some(Exact::new(value, p))
    }
}

// Frequencies and rates.

/// Format a frequency in the largest unit that keeps the value ≥ 1, with up to 6
/// significant digits: `51.2 kHz`, `44.1 kHz`, `3.33333 MHz`.
pub fn format_hz(hz: f64) -> String {
    let (mut number, _, unit) = hz_parts(hz);
    number.push(' ');
    number.push_str(unit);
    number
}

/// The units a frequency is shown in, largest first.
const HZ_UNITS: [(i128, &str); 4] = [
    (1_000_000_000, "GHz"),
    (1_000_000, "MHz"),
    (1_000, "kHz"),
    (1, "Hz"),
];

/// A frequency as its six-digit number, the unit's scale and the unit's name.
fn hz_parts(hz: f64) -> (String, i128, &'static str) {
    // Choose the unit after rounding to 6 significant digits, so 999 999.7 Hz is
    // "1 MHz", not "1000 kHz". Rounding to 6 digits moves a value by at most half a
    // unit in its 6th digit (5e-7 of a power of ten below it), so only a value just under
    // a unit's scale (within 1e-6 of it) needs the rounded value to choose; any other
    // value chooses by itself, and its digits are formatted once.
    let a = hz.abs();
    if a.is_finite() {
        for (scale, unit) in HZ_UNITS {
            let s = scale as f64;
            if a >= s {
                return (sig6(hz / s), scale, unit);
            }
            if a >= s * (1.0 - 1e-6) {
                break;
            }
        }
        if a < 1.0 - 1e-6 {
            return (sig6(hz), 1, "Hz");
        }
    }
    hz_parts_rounded(hz)
}

/// [`hz_parts`] choosing the unit by the value rounded to 6 significant digits.
fn hz_parts_rounded(hz: f64) -> (String, i128, &'static str) {
    let rounded = sig6(hz).parse::<f64>().unwrap_or(hz);
    let (scale, unit) = HZ_UNITS
        .iter()
        .copied()
        .find(|(scale, _)| rounded.abs() >= *scale as f64)
        .unwrap_or((1, "Hz"));
    (sig6(hz / scale as f64), scale, unit)
}

/// A frequency for people: `48 kHz`, and the exact value when six significant digits
/// cannot show it (`3.51086 MHz (exactly 24576000/7 Hz)`).
pub fn rate_text(rate: &Exact) -> String {
    let shown = format_hz(rate.to_f64().unwrap_or(f64::NAN));
    match exact_suffix(rate) {
        Some(exact) => format!("{shown} ({exact})"),
        None => shown,
    }
}

/// "exactly 24576000/7 Hz" when the six-digit form of `rate` is not exact.
pub fn exact_suffix(rate: &Exact) -> Option<String> {
    let (number, scale, _) = hz_parts(rate.to_f64().unwrap_or(f64::NAN));
    let shown = parse_decimal(&number).and_then(|n| n.checked_mul(&Exact::from_integer(scale)));
    if shown == Some(*rate) {
        return None;
    }
    Some(format!("exactly {} Hz", exact_string(rate)))
}

/// An exact rate as `N` or `N/D` (Hz).
pub fn exact_string(rate: &Exact) -> String {
    if rate.is_integer() {
        rate.numer().to_string()
    } else {
        format!("{}/{}", rate.numer(), rate.denom())
    }
}

/// A clock's rate for messages in six digits (no exact form), or "an unknown rate".
pub fn rate_or_unknown(rate: Option<Exact>) -> String {
    rate.map(|r| format_hz(r.to_f64().unwrap_or(f64::NAN)))
        .unwrap_or_else(|| "an unknown rate".to_string())
}

// Durations and data.

/// A duration in seconds in the largest of `s`, `ms`, `µs`, `ns` that keeps the value
/// ≥ 1, with up to 6 significant digits: `0.684 ms` is written `684 µs`.
pub fn format_seconds(s: f64) -> String {
    if s == 0.0 || !s.is_finite() {
        return format!("{} s", sig6(s));
    }
    let units = [(1.0, "s"), (1e-3, "ms"), (1e-6, "\u{b5}s"), (1e-9, "ns")];
    let rounded = sig6(s).parse::<f64>().unwrap_or(s);
    let (scale, unit) = units
        .iter()
        .copied()
        .find(|(scale, _)| rounded.abs() >= *scale)
        .unwrap_or((1e-9, "ns"));
    format!("{} {unit}", sig6(s / scale))
}

/// A duration for messages: `72 h`, `1.5 min`, `40 s`, `3 d`.
pub fn format_duration(seconds: f64) -> String {
    let s = seconds;
    if s >= 2.0 * 86_400.0 {
        format!("{} d", sig6((s / 86_400.0 * 100.0).round() / 100.0))
    } else if s >= 3_600.0 {
        format!("{} h", sig6((s / 3_600.0 * 100.0).round() / 100.0))
    } else if s >= 60.0 {
        format!("{} min", sig6((s / 60.0 * 100.0).round() / 100.0))
    } else {
        format!("{} s", sig6((s * 100.0).round() / 100.0))
    }
}

/// Format a data rate in bytes per second (powers of 1000).
pub fn format_bytes(b: f64, per_second: bool) -> String {
    let units = ["B", "kB", "MB", "GB", "TB", "PB"];
    let mut v = b;
    let mut i = 0;
    while v.abs() >= 1000.0 && i + 1 < units.len() {
        v /= 1000.0;
        i += 1;
    }
    format!(
        "{} {}{}",
        sig6(v),
        units[i],
        if per_second { "/s" } else { "" }
    )
}

// Attenuations.

/// Attenuation deeper than this is shown as "> 300 dB" and carried as 300 in JSON:
/// exact nulls of a sinc response are infinitely deep.
pub const ATTENUATION_CEILING_DB: f64 = 300.0;

/// Make a value writable as JSON (which has no infinity): ±infinity, which only an
/// exact null of a response can produce, becomes ±[`ATTENUATION_CEILING_DB`]; NaN, which
/// no computation should produce, becomes 0.
pub fn finite(x: f64) -> f64 {
    if x.is_nan() {
        0.0
    } else if x.is_infinite() {
        ATTENUATION_CEILING_DB.copysign(x)
    } else {
        // Adding +0 turns a negative zero into zero (docs/model.md §6) and changes
        // nothing else.
        x + 0.0
    }
}

/// An attenuation for messages: `11.97 dB`, or `> 300 dB` past the ceiling.
pub fn format_db(db: f64) -> String {
    if db >= ATTENUATION_CEILING_DB {
        format!("> {ATTENUATION_CEILING_DB:.0} dB")
    } else {
        format!("{:.2} dB", if db.abs() < 0.005 { 0.0 } else { db })
    }
}

/// A required attenuation for messages: `98.08 dB`. Never capped (docs/model.md §6): a
/// requirement is shown as configured, however large.
pub fn format_required_db(db: f64) -> String {
    format!("{:.2} dB", if db.abs() < 0.005 { 0.0 } else { db })
}

/// An attenuation for labels: `11.97 dB`, `90 dB`, `> 300 dB`.
pub fn db_text(db: f64) -> String {
    format_db(db).replace(".00 dB", " dB")
}

// Words and names.

/// "3 errors, 1 warning, 0 notes".
pub fn plural(n: usize, word: &str) -> String {
    if n == 1 {
        format!("1 {word}")
    } else {
        format!("{n} {word}s")
    }
}

/// The closest name among `candidates` (Jaro-Winkler, with a floor), for "did you mean".
pub fn closest<'a>(name: &str, candidates: impl Iterator<Item = &'a str>) -> Option<&'a str> {
    candidates
        .map(|c| (strsim::jaro_winkler(name, c), c))
        .filter(|(score, _)| *score >= 0.75)
        // Ties go to the name that sorts first, so the answer never depends on the
        // order candidates come in (hash maps).
        .max_by(|a, b| a.0.total_cmp(&b.0).then_with(|| b.1.cmp(a.1)))
        .map(|(_, c)| c)
}

/// The closest name when no other candidate is as close (for a fix, which must be
/// certain; "did you mean" may still name one of several equally close names).
pub fn closest_unambiguous<'a>(
    name: &str,
    candidates: impl Iterator<Item = &'a str>,
) -> Option<&'a str> {
    let mut scored: Vec<(f64, &str)> = candidates
        .map(|c| (strsim::jaro_winkler(name, c), c))
        .filter(|(score, _)| *score >= 0.75)
        .collect();
    scored.sort_by(|a, b| b.0.total_cmp(&a.0).then_with(|| a.1.cmp(b.1)));
    match scored[..] {
        [(_, only)] => Some(only),
        [(a, best), (b, _), ..] if a > b => Some(best),
        _ => None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn significant_digits_round_half_away() {
        let near = |a: f64, b: f64| (a - b).abs() <= 1e-12 * b.abs();
        assert!(near(round_sig(523_377_000_000.0, 4), 523.4e9));
        assert!(near(round_sig(0.000_566_406_25, 4), 566.4e-6));
        assert!(near(round_sig(-12.345, 3), -12.3));
        assert_eq!(round_sig(0.0, 4), 0.0);
    }

    /// The unit chosen without rounding first is the unit chosen after rounding: every
    /// power of ten around the unit boundaries, values a few ulps and a few 6th-digit
    /// steps either side of them, both signs, and a seeded spread of magnitudes from
    /// 1e-4 Hz to 1e13 Hz.
    #[test]
    fn frequency_units_chosen_without_rounding_agree_with_rounding_first() {
        let mut values = vec![0.0, -0.0, f64::NAN, f64::INFINITY, f64::NEG_INFINITY];
        for e in -4..=13 {
            let p = 10f64.powi(e);
            for d in [
                -2e-6, -1e-6, -6e-7, -5.0001e-7, -5e-7, -4.9999e-7, -1e-7, -1e-12, 0.0, 1e-12,
                1e-7, 5e-7,
            ] {
                values.push(p * (1.0 + d));
            }
            let mut x = p;
            for _ in 0..8 {
                x = f64::from_bits(x.to_bits() - 1);
                values.push(x);
            }
        }
        let mut state: u64 = 0x9e37_79b9_7f4a_7c15;
        for _ in 0..20_000 {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            let u = (state >> 11) as f64 / (1u64 << 53) as f64;
            values.push(10f64.powf(-4.0 + 17.0 * u));
        }
        for v in values {
            for x in [v, -v] {
                assert_eq!(hz_parts(x), hz_parts_rounded(x), "{x:e}");
            }
        }
    }

    #[test]
    fn no_negative_zero_is_printed() {
        assert_eq!(sig6(-0.0), "0");
        assert_eq!(sig6(-1e-20), "0");
        assert_eq!(sig6(-0.5), "-0.5");
        assert_eq!(format_seconds(-0.0), "0 s");
    }

    #[test]
    fn durations_take_the_largest_unit_above_one() {
        assert_eq!(format_seconds(17.5 / 25_600.0), "683.594 \u{b5}s");
        assert_eq!(format_seconds(0.0025), "2.5 ms");
        assert_eq!(format_seconds(2.0), "2 s");
        assert_eq!(format_seconds(-3e-8), "-30 ns");
    }

    #[test]
    fn formatting_follows_the_spec() {
        assert_eq!(format_hz(51_200.0), "51.2 kHz");
        assert_eq!(format_hz(44_100.0), "44.1 kHz");
        assert_eq!(format_hz(10_000_000.0 / 3.0), "3.33333 MHz");
        assert_eq!(format_hz(750.0), "750 Hz");
        assert_eq!(format_hz(1_000.0), "1 kHz");
        // Regression: the unit was chosen before rounding.
        assert_eq!(format_hz(999_999.7), "1 MHz");
        assert_eq!(format_hz(999.9999), "1 kHz");
        assert_eq!(format_hz(0.5), "0.5 Hz");
    }

    #[test]
    fn infinite_attenuation_stays_valid_json() {
        assert_eq!(finite(f64::INFINITY), ATTENUATION_CEILING_DB);
        assert_eq!(finite(12.5), 12.5);
        assert!(finite(-0.0).is_sign_positive(), "no negative zero in JSON");
        assert_eq!(finite(1e6), 1e6);
        assert_eq!(format_db(f64::INFINITY), "> 300 dB");
        assert_eq!(format_db(11.974), "11.97 dB");
        assert_eq!(format_db(-0.001), "0.00 dB");
        assert_eq!(format_required_db(320.0), "320.00 dB");
    }

    #[test]
    fn closest_name_ties_do_not_depend_on_order() {
        // Regression: a hash map's order once decided between equally close names.
        assert_eq!(
            closest("temp-3", ["temp-2", "temp-1"].into_iter()),
            Some("temp-1")
        );
        assert_eq!(
            closest("temp-3", ["temp-1", "temp-2"].into_iter()),
            Some("temp-1")
        );
        assert_eq!(closest("bsae", ["base", "spare"].into_iter()), Some("base"));
        assert_eq!(closest("xyz", ["base"].into_iter()), None);
    }

    #[test]
    fn the_exact_rate_is_added_only_when_six_digits_do_not_show_it() {
        // 24.576 MHz / 7 = 3 510 857.142857… Hz (arithmetic).
        assert_eq!(
            rate_text(&Exact::new(24_576_000, 7)),
            "3.51086 MHz (exactly 24576000/7 Hz)"
        );
        assert_eq!(rate_text(&Exact::from_integer(51_200)), "51.2 kHz");
        assert_eq!(rate_text(&Exact::new(1, 2)), "0.5 Hz");
        assert_eq!(
            rate_text(&Exact::from_integer(1_234_567)),
            "1.23457 MHz (exactly 1234567 Hz)"
        );
        assert_eq!(rate_or_unknown(None), "an unknown rate");
        assert_eq!(format_duration(90.0), "1.5 min");
        assert_eq!(plural(1, "note"), "1 note");
    }
}
