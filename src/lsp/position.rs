//! Positions in the editor's terms: LSP counts lines from 0 and characters in the code
//! units of the negotiated encoding (UTF-16 unless the client offers UTF-8). Our spans are
//! byte ranges; this module converts both ways. Lines end at `\n` (a `\r` before it is
//! part of the line's text, as in the rest of foldcheck).

use lsp_types::{Position, Range};

/// The code unit an LSP `character` counts.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Encoding {
    /// Bytes of UTF-8.
    Utf8,
    /// UTF-16 code units (the protocol's default).
    Utf16,
    /// Unicode scalar values.
    Utf32,
}

impl Encoding {
    /// The protocol's name for it (`utf-8`, `utf-16`, `utf-32`).
    pub fn name(self) -> &'static str {
        match self {
            Encoding::Utf8 => "utf-8",
            Encoding::Utf16 => "utf-16",
            Encoding::Utf32 => "utf-32",
        }
    }

    /// Choose from the encodings a client offers (`general.positionEncodings`): UTF-8
    /// when offered, else UTF-16, which every client supports.
    pub fn negotiate(offered: &[String]) -> Encoding {
        if offered.iter().any(|e| e == "utf-8") {
            Encoding::Utf8
        } else {
            Encoding::Utf16
        }
    }

    fn units(self, c: char) -> usize {
        match self {
            Encoding::Utf8 => c.len_utf8(),
            Encoding::Utf16 => c.len_utf16(),
            Encoding::Utf32 => 1,
        }
    }
}

/// Line starts of one text.
#[derive(Clone, Debug)]
pub struct LineMap {
    starts: Vec<usize>,
}

impl LineMap {
    /// Index the lines of `text`.
    pub fn new(text: &str) -> Self {
        let mut starts = vec![0];
        starts.extend(text.match_indices('\n').map(|(i, _)| i + 1));
        LineMap { starts }
    }

    /// The LSP position of byte `offset` (clamped to the text, moved back to a character
    /// boundary).
    pub fn position(&self, text: &str, offset: usize, enc: Encoding) -> Position {
        let mut offset = offset.min(text.len());
        while !text.is_char_boundary(offset) {
            offset -= 1;
        }
        let line = self.starts.partition_point(|&s| s <= offset) - 1;
        let start = self.starts[line];
        let character: usize = text[start..offset].chars().map(|c| enc.units(c)).sum();
        Position::new(to_u32(line), to_u32(character))
    }

    /// The LSP range of bytes `start..end`.
    pub fn range(&self, text: &str, start: usize, end: usize, enc: Encoding) -> Range {
        Range::new(
            self.position(text, start, enc),
            self.position(text, end.max(start), enc),
        )
    }

    /// The byte offset of an LSP position. A line past the end gives the end of the text;
    /// a character past the end of its line gives the end of the line (before its `\n`);
    /// a character inside a character's code units (half a surrogate pair) gives that
    /// character's start.
    pub fn offset(&self, text: &str, pos: Position, enc: Encoding) -> usize {
        let Some(&start) = self.starts.get(pos.line as usize) else {
            return text.len();
        };
        let rest = &text[start..];
        let line = &rest[..rest.find('\n').unwrap_or(rest.len())];
        let want = pos.character as usize;
        let mut units = 0;
        for (i, c) in line.char_indices() {
            let next = units + enc.units(c);
            if next > want {
                return start + i;
            }
            units = next;
        }
        start + line.len()
    }
}

fn to_u32(n: usize) -> u32 {
    u32::try_from(n).unwrap_or(u32::MAX)
}

#[cfg(test)]
mod tests {
    use super::*;

    // Code-unit counts from the Unicode standard: 'µ' (U+00B5) is 2 bytes in UTF-8 and one
    // UTF-16 unit; '😀' (U+1F600) is 4 bytes in UTF-8 and a surrogate pair in UTF-16.
    const LINE: &str = "  - name: µ-probe # 😀 → ok\nnext: 1\n";

    #[test]
    fn multibyte_and_emoji_in_each_encoding() {
        let map = LineMap::new(LINE);
        let ok = LINE.find("ok").unwrap();
        // 24 characters before "ok": µ, 😀 and → are one scalar value each.
        assert_eq!(
            map.position(LINE, ok, Encoding::Utf32),
            Position::new(0, 24)
        );
        // UTF-16: the emoji takes two units.
        assert_eq!(
            map.position(LINE, ok, Encoding::Utf16),
            Position::new(0, 25)
        );
        // UTF-8: µ 2 bytes, 😀 4, → 3.
        assert_eq!(
            map.position(LINE, ok, Encoding::Utf8),
            Position::new(0, ok as u32)
        );
        assert_eq!(ok, 24 + 1 + 3 + 2);
        for enc in [Encoding::Utf8, Encoding::Utf16, Encoding::Utf32] {
            let pos = map.position(LINE, ok, enc);
            assert_eq!(map.offset(LINE, pos, enc), ok, "{enc:?}");
        }
    }

    #[test]
    fn half_a_surrogate_pair_and_past_the_end() {
        let map = LineMap::new(LINE);
        let emoji = LINE.find('😀').unwrap();
        // Character 21 in UTF-16 is the emoji's low surrogate: snap to the emoji's start.
        let at = map.position(LINE, emoji, Encoding::Utf16);
        assert_eq!(at, Position::new(0, 20));
        assert_eq!(
            map.offset(LINE, Position::new(0, 21), Encoding::Utf16),
            emoji
        );
        // Past the end of a line: its end; past the last line: the text's end.
        assert_eq!(
            map.offset(LINE, Position::new(1, 99), Encoding::Utf16),
            LINE.len() - 1
        );
        assert_eq!(
            map.offset(LINE, Position::new(9, 0), Encoding::Utf16),
            LINE.len()
        );
        // An offset inside a character moves back to its start.
        assert_eq!(
            map.position(LINE, emoji + 2, Encoding::Utf8),
            Position::new(0, emoji as u32)
        );
    }

    #[test]
    fn negotiation_prefers_utf8_and_defaults_to_utf16() {
        assert_eq!(Encoding::negotiate(&[]), Encoding::Utf16);
        assert_eq!(
            Encoding::negotiate(&["utf-16".into(), "utf-8".into()]),
            Encoding::Utf8
        );
        assert_eq!(Encoding::negotiate(&["utf-32".into()]), Encoding::Utf16);
    }
}
