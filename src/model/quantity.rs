//! Quantities: a number with an optional unit, parsed exactly.
//!
//! `24.576 MHz` becomes the rational 24 576 000 Hz, so clock trees divide exactly.
//! Units are case-sensitive SI spellings; a near miss gets a hint with the right one.

use num_rational::Ratio;
use num_traits::{CheckedMul, ToPrimitive};

use crate::words::parse_decimal;

/// An exact rational value in the base unit (Hz, dB, deg, bytes, bytes/s, s).
pub type Exact = Ratio<i128>;

/// The kinds of quantity the rig format uses.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Kind {
    /// Hz; a bare number is Hz.
    Frequency,
    /// dB; a bare number is dB.
    Level,
    /// deg; a bare number is degrees.
    Phase,
    /// bytes; a unit is required.
    DataSize,
    /// bytes per second; a unit is required.
    DataRate,
    /// seconds; a unit is required.
    Duration,
}

impl Kind {
    /// Every kind, for looking a unit up across kinds.
    pub const ALL: [Kind; 6] = [
        Kind::Frequency,
        Kind::Level,
        Kind::Phase,
        Kind::DataSize,
        Kind::DataRate,
        Kind::Duration,
    ];

    /// The word for messages.
    pub fn noun(self) -> &'static str {
        match self {
            Kind::Frequency => "frequency",
            Kind::Level => "level",
            Kind::Phase => "phase",
            Kind::DataSize => "data size",
            Kind::DataRate => "data rate",
            Kind::Duration => "duration",
        }
    }

    /// The units of this kind with their scale to the base unit.
    pub fn units(self) -> &'static [(&'static str, i128, i128)] {
        // (spelling, numerator, denominator)
        match self {
            Kind::Frequency => &[
                ("Hz", 1, 1),
                ("kHz", 1_000, 1),
                ("MHz", 1_000_000, 1),
                ("GHz", 1_000_000_000, 1),
            ],
            Kind::Level => &[("dB", 1, 1)],
            Kind::Phase => &[("deg", 1, 1)],
            Kind::DataSize => &SIZE_UNITS,
            Kind::DataRate => &RATE_UNITS,
            Kind::Duration => &[
                ("ns", 1, 1_000_000_000),
                ("us", 1, 1_000_000),
                // U+00B5 MICRO SIGN, the SI spelling; `us` is the ASCII one.
                ("\u{b5}s", 1, 1_000_000),
                ("ms", 1, 1_000),
                ("s", 1, 1),
                ("min", 60, 1),
                ("h", 3_600, 1),
                ("d", 86_400, 1),
            ],
        }
    }

    /// Whether a bare number is accepted (in the base unit).
    pub fn bare_allowed(self) -> bool {
        matches!(self, Kind::Frequency | Kind::Level | Kind::Phase)
    }

    /// An example spelling for help text.
    pub fn example(self) -> &'static str {
        match self {
            Kind::Frequency => "`51.2 kHz`",
            Kind::Level => "`80 dB`",
            Kind::Phase => "`2 deg`",
            Kind::DataSize => "`500 GB`",
            Kind::DataRate => "`40 MB/s`",
            Kind::Duration => "`72 h`",
        }
    }

    fn unit_list(self) -> String {
        self.units()
            .iter()
            .map(|u| u.0)
            .collect::<Vec<_>>()
            .join(" ")
    }
}

const SIZE_UNITS: [(&str, i128, i128); 9] = [
    ("B", 1, 1),
    ("kB", 1_000, 1),
    ("MB", 1_000_000, 1),
    ("GB", 1_000_000_000, 1),
    ("TB", 1_000_000_000_000, 1),
    ("KiB", 1 << 10, 1),
    ("MiB", 1 << 20, 1),
    ("GiB", 1 << 30, 1),
    ("TiB", 1 << 40, 1),
];

const RATE_UNITS: [(&str, i128, i128); 9] = [
    ("B/s", 1, 1),
    ("kB/s", 1_000, 1),
    ("MB/s", 1_000_000, 1),
    ("GB/s", 1_000_000_000, 1),
    ("TB/s", 1_000_000_000_000, 1),
    ("KiB/s", 1 << 10, 1),
    ("MiB/s", 1 << 20, 1),
    ("GiB/s", 1 << 30, 1),
    ("TiB/s", 1 << 40, 1),
];

/// Why a quantity was refused: a message and an optional help line.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct QuantityError {
    /// One clause, lowercase.
    pub message: String,
    /// What to write instead.
    pub help: Option<String>,
    /// A certain repair: the byte range of the unit in the text given to [`parse`] and
    /// the spelling to put there (a unit in the wrong case: `KHz` → `kHz`).
    pub unit_fix: Option<(std::ops::Range<usize>, &'static str)>,
}

impl QuantityError {
    fn new(message: String, help: Option<String>) -> Self {
        QuantityError {
            message,
            help,
            unit_fix: None,
        }
    }
}

/// Parse `text` as a quantity of `kind`. Returns the exact value in the base unit.
/// Range is not checked here (see [`check_positive`]).
pub fn parse(text: &str, kind: Kind) -> Result<Exact, QuantityError> {
    let t = text.trim();
    let shown = elide(t);
    if t.is_empty() {
        return Err(QuantityError::new(
            format!("expected a {}, found an empty value", kind.noun()),
            Some(format!(
                "write a number and a unit, e.g. {}",
                kind.example()
            )),
        ));
    }
    // Split into the number and the unit: the number is the longest prefix that reads
    // as a decimal (found in one pass: trying every prefix was quadratic, and a long
    // run of digits took minutes).
    let split = number_len(t);
    if split == 0 {
        return Err(QuantityError::new(
            format!(
                "`{shown}` is not a {}: it does not start with a number",
                kind.noun()
            ),
            Some(format!(
                "write a number and a unit, e.g. {}",
                kind.example()
            )),
        ));
    }
    // A decimal comma (`51,2 kHz`), as many locales write it.
    if let Some(rest) = t[split..].strip_prefix(',')
        && rest.starts_with(|c: char| c.is_ascii_digit())
        && !t[..split].contains(['.', 'e', 'E'])
    {
        let fraction = number_len(rest);
        let dotted = format!("{}.{}", &t[..split], &rest[..fraction]);
        if parse_decimal(&dotted).is_some() {
            let unit = rest[fraction..].trim();
            let with_unit = |n: &str| {
                if unit.is_empty() {
                    n.to_string()
                } else {
                    format!("{n} {unit}")
                }
            };
            if fraction == 3 {
                // `1,024 kHz`: a thousands separator or a decimal comma; offer both.
                let whole = format!("{}{}", &t[..split], &rest[..fraction]);
                return Err(QuantityError::new(
                    format!(
                        "`{shown}` has a comma in its number; quantities take neither \
                         thousands separators nor decimal commas"
                    ),
                    Some(format!(
                        "write `{}` or `{}`, whichever you mean",
                        elide(&with_unit(&whole)),
                        elide(&with_unit(&dotted))
                    )),
                ));
            }
            let suggestion = with_unit(&dotted);
            return Err(QuantityError::new(
                format!("`{shown}` has a decimal comma; quantities use a decimal point"),
                Some(format!("write `{}`", elide(&suggestion))),
            ));
        }
    }
    let Some(number) = parse_decimal(&t[..split]) else {
        return Err(out_of_range(t, kind));
    };
    let unit = t[split..].trim();
    let unit_shown = elide(unit);
    if unit.is_empty() {
        if kind.bare_allowed() {
            return Ok(number);
        }
        return Err(QuantityError::new(
            format!("`{shown}` has no unit; a {} needs one", kind.noun()),
            Some(format!(
                "write the unit, e.g. {} (units: {})",
                kind.example(),
                kind.unit_list()
            )),
        ));
    }
    if let Some((_, num, den)) = kind.units().iter().find(|u| u.0 == unit) {
        return number
            .checked_mul(&Exact::new(*num, *den))
            .ok_or_else(|| out_of_range(t, kind));
    }
    // The Greek letter mu (U+03BC) looks like the micro sign but is another character.
    if kind == Kind::Duration && unit == "\u{3bc}s" {
        return Err(QuantityError::new(
            format!("unknown unit `{unit_shown}` in `{shown}`: that is the Greek letter mu"),
            Some("write `us` or `\u{b5}s` (the micro sign)".to_string()),
        ));
    }
    // A near miss: the same letters in another case.
    if let Some((right, _, _)) = kind.units().iter().find(|u| u.0.eq_ignore_ascii_case(unit)) {
        // Where the unit lies in `text`: after the leading blanks and the number.
        let lead = text.len() - text.trim_start().len();
        let at = lead + split + (t[split..].len() - t[split..].trim_start().len());
        let mut e = QuantityError::new(
            format!("unknown unit `{unit_shown}` in `{shown}`; units are case-sensitive"),
            Some(format!(
                "write `{}{right}`",
                &t[..t.len() - t[split..].trim_start().len()]
            )),
        );
        e.unit_fix = Some((at..at + unit.len(), right));
        return Err(e);
    }
    if let Some(other) = Kind::ALL
        .iter()
        .find(|k| k.units().iter().any(|u| u.0 == unit))
    {
        return Err(QuantityError::new(
            format!(
                "`{shown}` is a {}, but a {} is expected here",
                other.noun(),
                kind.noun()
            ),
            Some(format!("use one of: {}", kind.unit_list())),
        ));
    }
    Err(QuantityError::new(
        format!("unknown unit `{unit_shown}` in `{shown}`"),
        Some(format!("use one of: {}", kind.unit_list())),
    ))
}

/// The length of the longest prefix of `t` shaped like a decimal number: an optional
/// sign, digits with an optional point (at least one digit), and an optional exponent
/// (`e` or `E`, an optional sign, at least one digit). 0 when there is none.
fn number_len(t: &str) -> usize {
    let b = t.as_bytes();
    let digits_from = |mut i: usize| {
        while i < b.len() && b[i].is_ascii_digit() {
            i += 1;
        }
        i
    };
    let mut i = usize::from(matches!(b.first(), Some(b'+' | b'-')));
    let int_end = digits_from(i);
    let mut end = int_end;
    let mut has_digits = int_end > i;
    if b.get(end) == Some(&b'.') {
        let frac_end = digits_from(end + 1);
        has_digits |= frac_end > end + 1;
        end = frac_end;
    }
    if !has_digits {
        return 0;
    }
    i = end;
    if matches!(b.get(i), Some(b'e' | b'E')) {
        let mut j = i + 1;
        if matches!(b.get(j), Some(b'+' | b'-')) {
            j += 1;
        }
        let exp_end = digits_from(j);
        if exp_end > j {
            end = exp_end;
        }
    }
    end
}

/// A value as quoted in a message: a long one keeps its start and end.
fn elide(s: &str) -> String {
    const KEEP_START: usize = 24;
    const KEEP_END: usize = 12;
    let n = s.chars().count();
    if n <= KEEP_START + KEEP_END + 12 {
        return s.to_string();
    }
    let start: String = s.chars().take(KEEP_START).collect();
    let end: String = s.chars().skip(n - KEEP_END).collect();
    format!("{start}…{end}")
}

fn out_of_range(t: &str, kind: Kind) -> QuantityError {
    QuantityError::new(
        format!(
            "`{}` is out of the range this tool can represent exactly as a {}",
            elide(t),
            kind.noun()
        ),
        None,
    )
}

/// Refuse zero and negative values (frequencies, sizes, rates and durations).
pub fn check_positive(value: &Exact, text: &str, kind: Kind) -> Result<(), QuantityError> {
    if *value.numer() <= 0 {
        return Err(QuantityError::new(
            format!(
                "a {} must be above zero, found `{}`",
                kind.noun(),
                text.trim()
            ),
            None,
        ));
    }
    Ok(())
}

/// The decimal a user wrote, exactly, from the `f64` it was read into: the shortest
/// text that reads back as the same `f64` (Rust's `Display`) is the written decimal for
/// any value of up to 15 significant digits, so `2.14` becomes 214/100, not the binary
/// neighbour 2.140000000000000124…. None for non-finite values or beyond i128.
pub fn exact_decimal(x: f64) -> Option<Exact> {
    if !x.is_finite() {
        return None;
    }
    parse_decimal(&format!("{x}"))
}

/// Convert an exact value to f64.
pub fn to_f64(v: &Exact) -> f64 {
    v.to_f64().unwrap_or(f64::NAN)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn exact_decimal_keeps_the_written_digits() {
        // 2.14 × 15000 is 32100.000000000004 in f64; as decimals it is 32100 exactly.
        let m = exact_decimal(2.14).unwrap();
        assert_eq!(m, Exact::new(214, 100));
        assert_eq!(m * Exact::from_integer(15000), Exact::from_integer(32100));
        assert_eq!(exact_decimal(20.0).unwrap(), Exact::from_integer(20));
        assert!(exact_decimal(f64::NAN).is_none());
    }

    fn hz(s: &str) -> Exact {
        parse(s, Kind::Frequency).unwrap()
    }

    #[test]
    fn decimal_comma_gets_a_decimal_point() {
        let e = parse("51,2 kHz", Kind::Frequency).unwrap_err();
        assert_eq!(
            e.message,
            "`51,2 kHz` has a decimal comma; quantities use a decimal point"
        );
        assert_eq!(e.help.as_deref(), Some("write `51.2 kHz`"));
        let e = parse("0,5 dB", Kind::Level).unwrap_err();
        assert_eq!(e.help.as_deref(), Some("write `0.5 dB`"));
        let e = parse("12,5", Kind::Frequency).unwrap_err();
        assert_eq!(e.help.as_deref(), Some("write `12.5`"));
        // Three digits after the comma may be a thousands separator: both readings.
        let e = parse("1,024 kHz", Kind::Frequency).unwrap_err();
        assert_eq!(
            e.help.as_deref(),
            Some("write `1024 kHz` or `1.024 kHz`, whichever you mean")
        );
    }

    #[test]
    fn long_digit_run_is_read_in_one_pass() {
        // Regression: the number was found by trying every prefix, each parsed anew
        // (quadratic: 20 000 digits took 35 s). Now one pass, and a number too large
        // for an exact value says so instead of splitting off digits as a "unit".
        let text = format!("{} Hz", "1".repeat(1_000_000));
        let e = parse(&text, Kind::Frequency).unwrap_err();
        assert_eq!(
            e.message,
            "`111111111111111111111111…111111111 Hz` is out of the range this tool can \
             represent exactly as a frequency"
        );
        assert_eq!(
            parse("1e400 Hz", Kind::Frequency).unwrap_err().message,
            "`1e400 Hz` is out of the range this tool can represent exactly as a frequency"
        );
        // The split still takes the longest decimal: `1.2.3` is 1.2 and a unit `.3`.
        assert_eq!(
            parse("1.2.3", Kind::Frequency).unwrap_err().message,
            "unknown unit `.3` in `1.2.3`"
        );
        assert_eq!(hz("5e3"), Exact::from_integer(5000));
        assert_eq!(hz("-.5e1 Hz"), Exact::from_integer(-5));
    }

    #[test]
    fn exact_decimal_frequencies() {
        assert_eq!(hz("24.576 MHz"), Exact::from_integer(24_576_000));
        assert_eq!(hz("44.1kHz"), Exact::from_integer(44_100));
        assert_eq!(hz("48000"), Exact::from_integer(48_000));
        assert_eq!(hz("1e3 Hz"), Exact::from_integer(1_000));
        assert_eq!(hz("0.5"), Exact::new(1, 2));
        // 24.576 MHz / 512 = 48 kHz exactly
        assert_eq!(
            hz("24.576 MHz") / Exact::from_integer(512),
            Exact::from_integer(48_000)
        );
    }

    #[test]
    fn near_miss_units_get_the_right_spelling() {
        let e = parse("51.2 KHz", Kind::Frequency).unwrap_err();
        assert!(e.message.contains("case-sensitive"), "{}", e.message);
        assert_eq!(e.help.as_deref(), Some("write `51.2 kHz`"));
        let e = parse("10khz", Kind::Frequency).unwrap_err();
        assert_eq!(e.help.as_deref(), Some("write `10kHz`"));
        let e = parse("80 db", Kind::Level).unwrap_err();
        assert_eq!(e.help.as_deref(), Some("write `80 dB`"));
    }

    #[test]
    fn wrong_kind_and_missing_units() {
        let e = parse("80 dB", Kind::Frequency).unwrap_err();
        assert!(e.message.contains("is a level"), "{}", e.message);
        let e = parse("40", Kind::DataRate).unwrap_err();
        assert!(e.message.contains("no unit"), "{}", e.message);
        assert_eq!(
            parse("40 MB/s", Kind::DataRate).unwrap(),
            Exact::from_integer(40_000_000)
        );
        assert_eq!(
            parse("1 GiB", Kind::DataSize).unwrap(),
            Exact::from_integer(1 << 30)
        );
        assert_eq!(
            parse("72 h", Kind::Duration).unwrap(),
            Exact::from_integer(259_200)
        );
        // Short durations for delays: exact fractions of a second.
        assert_eq!(
            parse("0.684 ms", Kind::Duration).unwrap(),
            Exact::new(684, 1_000_000)
        );
        assert_eq!(
            parse("12 us", Kind::Duration).unwrap(),
            Exact::new(12, 1_000_000)
        );
        assert_eq!(
            parse("12 \u{b5}s", Kind::Duration).unwrap(),
            Exact::new(12, 1_000_000)
        );
        assert_eq!(
            parse("250 ns", Kind::Duration).unwrap(),
            Exact::new(1, 4_000_000)
        );
        assert_eq!(
            parse("0 s", Kind::Duration).unwrap(),
            Exact::from_integer(0)
        );
        let e = parse("12 \u{3bc}s", Kind::Duration).unwrap_err();
        assert!(
            e.help.as_deref().is_some_and(|h| h.contains("`us`")),
            "{e:?}"
        );
        let e = parse("3 MS", Kind::Duration).unwrap_err();
        assert_eq!(e.help.as_deref(), Some("write `3 ms`"));
        assert!(parse("fast", Kind::Frequency).is_err());
        let e = parse("1e400 Hz", Kind::Frequency).unwrap_err();
        assert!(e.message.contains("out of the range"), "{}", e.message);
        assert!(
            parse("1e3kHz", Kind::Frequency).is_ok_and(|v| v == Exact::from_integer(1_000_000))
        );
        assert!(parse(".5 Hz", Kind::Frequency).is_ok_and(|v| v == Exact::new(1, 2)));
        assert!(parse(". Hz", Kind::Frequency).is_err());
        assert!(parse("2 e", Kind::Frequency).is_err());
    }
}
