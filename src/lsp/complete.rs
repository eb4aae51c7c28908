//! Completion: what may be written at the cursor, worked out from the text of the line
//! (and, for a block list, the key above it) so that it works while the file is half
//! written and does not parse. Names come from the last analysis that resolved.

use super::snapshot::SymbolKind;
use crate::model::quantity::Kind;

/// What the cursor wants.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum Want {
    /// A name of this kind (a reference).
    Name(SymbolKind),
    /// A filter `response` keyword.
    Response,
    /// A unit of this kind, after a number.
    Unit(Kind),
}

/// The filter responses of the rig format (docs/format.md).
pub use crate::model::RESPONSES;

/// The kind of quantity a key holds (docs/format.md), if it holds one.
pub fn quantity_kind(key: &str) -> Option<Kind> {
    Some(match key {
        "frequency" | "bandwidth" | "band" | "cutoff" | "max-rate" | "rates" | "rate" => {
            Kind::Frequency
        }
        "gain" | "ripple" | "attenuation" | "alias-rejection" | "passband-tolerance" | "level" => {
            Kind::Level
        }
        "phase-tolerance" => Kind::Phase,
        "throughput" => Kind::DataRate,
        "storage" => Kind::DataSize,
        "duration" | "delay" => Kind::Duration,
        _ => return None,
    })
}

fn indent_of(line: &str) -> usize {
    line.len() - line.trim_start_matches(' ').len()
}

/// The last `key:` on `prefix` and the text after it.
fn last_key(prefix: &str) -> Option<(&str, usize, &str)> {
    let bytes = prefix.as_bytes();
    let mut i = prefix.len();
    while i > 0 {
        i -= 1;
        if bytes[i] != b':' {
            continue;
        }
        let after = &prefix[i + 1..];
        if !(after.is_empty() || after.starts_with(' ')) {
            continue;
        }
        let before = &prefix[..i];
        let start = before
            .rfind(|c: char| !(c.is_ascii_alphanumeric() || c == '-' || c == '_' || c == '.'))
            .map_or(0, |p| p + 1);
        let key = &before[start..];
        if !key.is_empty() {
            return Some((key, start, after));
        }
    }
    None
}

/// What to complete at the end of `prefix` (the line up to the cursor), and the byte
/// column in the line where the text to replace starts. `above` yields the lines above,
/// nearest first.
pub fn context<'a>(prefix: &str, above: impl Iterator<Item = &'a str>) -> Option<(Want, usize)> {
    if prefix.trim_start().starts_with('#') {
        return None;
    }
    // The partial word being typed.
    let word_start = prefix.rfind([' ', '[', ',', '{', ':']).map_or(0, |p| p + 1);
    if let Some((key, key_col, after)) = last_key(prefix) {
        if after.contains('#') {
            return None;
        }
        let list = after.contains('[');
        return match key {
            "clock" | "source" => Some((Want::Name(SymbolKind::Clock), word_start)),
            "sensor" => Some((Want::Name(SymbolKind::Sensor), word_start)),
            "module" => Some((Want::Name(SymbolKind::Module), word_start)),
            "channels" if list && key_col > 0 => {
                Some((Want::Name(SymbolKind::Channel), word_start))
            }
            "response" => Some((Want::Response, word_start)),
            _ => {
                let kind = quantity_kind(key)?;
                // The value being typed: after `[` or `,` in a list.
                let value_start = prefix.len() - after.len();
                let piece_start = prefix[value_start..]
                    .rfind(['[', ','])
                    .map_or(value_start, |p| value_start + p + 1);
                let piece = &prefix[piece_start..];
                let lead = piece.len() - piece.trim_start().len();
                let piece = piece.trim_start();
                let number_len = piece
                    .find(|c: char| {
                        !(c.is_ascii_digit() || matches!(c, '.' | 'e' | 'E' | '+' | '-'))
                    })
                    .unwrap_or(piece.len());
                if number_len == 0 || !piece.as_bytes()[0].is_ascii_digit() {
                    return None;
                }
                let rest = &piece[number_len..];
                let unit = rest.trim_start();
                if unit.contains(|c: char| !(c.is_ascii_alphabetic() || c == '/')) {
                    return None;
                }
                let unit_col = piece_start + lead + number_len + (rest.len() - unit.len());
                Some((Want::Unit(kind), unit_col))
            }
        };
    }
    // A block list item under `channels:` of a group or a disturbance.
    let trimmed = prefix.trim_start();
    if !(trimmed == "-" || trimmed.starts_with("- ")) {
        return None;
    }
    let dash = indent_of(prefix);
    for line in above {
        let t = line.trim_start();
        if t.is_empty() || t.starts_with('#') {
            continue;
        }
        let ind = indent_of(line);
        if ind > dash || (ind == dash && t.starts_with('-')) {
            continue;
        }
        let t = t.strip_prefix("- ").unwrap_or(t);
        let key_col = line.len() - t.len();
        return (t.trim_end() == "channels:" && key_col > 0)
            .then_some((Want::Name(SymbolKind::Channel), word_start));
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;

    fn ctx(prefix: &str, above: &[&str]) -> Option<(Want, usize)> {
        context(prefix, above.iter().rev().copied())
    }

    #[test]
    fn references_by_key() {
        assert_eq!(
            ctx("    clock: hal", &[]),
            Some((Want::Name(SymbolKind::Clock), 11))
        );
        assert_eq!(
            ctx("  - name: a\n".trim_end(), &[]),
            None,
            "a channel's own name is not a reference"
        );
        assert_eq!(
            ctx("    source: ", &[]),
            Some((Want::Name(SymbolKind::Clock), 12))
        );
        assert_eq!(
            ctx("    channels: [a, b", &[]),
            Some((Want::Name(SymbolKind::Channel), 18))
        );
        assert_eq!(
            ctx("channels: [", &[]),
            None,
            "top-level channels hold items"
        );
    }

    #[test]
    fn block_list_of_channel_names() {
        let above = ["groups:", "  - name: g", "    channels:", "      - a"];
        assert_eq!(
            ctx("      - b", &above),
            Some((Want::Name(SymbolKind::Channel), 8))
        );
        assert_eq!(ctx("  - ", &["channels:"]), None);
    }

    #[test]
    fn enum_values_and_units() {
        assert_eq!(
            ctx("      - { response: butt", &[]),
            Some((Want::Response, 20))
        );
        assert_eq!(
            ctx("    band: 2 k", &[]),
            Some((Want::Unit(Kind::Frequency), 12))
        );
        assert_eq!(
            ctx("    rates: [51.2 kHz, 25.6", &[]),
            Some((Want::Unit(Kind::Frequency), 26))
        );
        assert_eq!(
            ctx("  throughput: 40 MB/", &[]),
            Some((Want::Unit(Kind::DataRate), 17))
        );
        assert_eq!(ctx("    band: k", &[]), None, "no number, no unit");
        assert_eq!(ctx("    kind: 2 k", &[]), None, "free text");
        assert_eq!(ctx("    clock: a # b", &[]), None, "inside a comment");
    }
}
