//! The block-style reader: a byte scanner for the subset of YAML that rig files use,
//! building the spanned tree directly, with the spans serde-saphyr gives.
//!
//! It takes block mappings and sequences (also a sequence at its mapping's indentation),
//! plain scalars on one line, single- and double-quoted scalars on one line (no
//! backslash escapes), flow sequences and mappings of such scalars on one line (nested
//! too), literal and folded block scalars as mapping values (see
//! [`Scanner::block_scalar`]), and comments. Anything else returns `None` and the
//! document goes to the next reader: anchors, aliases, tags, multi-line plain or quoted
//! scalars or flow collections, explicit keys, directives and document markers, tabs,
//! carriage returns, control characters, keys that are not text, duplicate keys, and
//! nesting deeper than [`DEPTH`]. A declined document is never an error here: the
//! readers behind this one decide.
//!
//! Every line of a taken document is read by its indentation alone (the only thing it
//! takes that spans lines, a block scalar, is indented more than its key), so a long
//! top-level list can be cut at its items and read in parallel ([`PARALLEL_BYTES`]);
//! the spans are byte offsets into the whole text either way.

use super::fast::plain;
use super::{MAX_NODES, Node, NodeKind, new_text_key};
use crate::source::{FileId, Span};
use rayon::prelude::*;
use std::collections::HashSet;

/// The deepest nesting this reader takes (collections inside collections); deeper
/// documents go to the readers behind it, whose own limit is
/// [`MAX_DEPTH`](super::MAX_DEPTH). A rig needs about 8.
const DEPTH: usize = 32;

/// A top-level list whose text is at least this long is read in parallel, a run of its
/// items per task.
pub const PARALLEL_BYTES: usize = 1 << 20;

/// Items of a parallel list read by one task (at most).
pub const ITEMS_PER_TASK: usize = 2_000;

/// The most entries of a flow mapping (on one line) this reader takes; its keys are
/// searched for duplicates.
const FLOW_ENTRIES: usize = 64;

/// Read `text`, or `None` when it is not in the subset (see the module).
pub(super) fn parse(file: FileId, text: &str) -> Option<Node> {
    parse_with(file, text, Some((PARALLEL_BYTES, ITEMS_PER_TASK)))
}

/// `parse`, choosing when a top-level list is read in parallel: `split` is the least
/// length of its text and the items per task, `None` for never (the tests read the same
/// text every way).
pub(super) fn parse_with(file: FileId, text: &str, split: Option<(usize, usize)>) -> Option<Node> {
    if !plain_bytes(text) {
        return None;
    }
    let mut s = Scanner {
        b: text.as_bytes(),
        text,
        file,
        nodes: 0,
        split,
    };
    let (indent, p) = s.content_from(0)??;
    let (root, next) = match s.entry_at(p, indent, 0)? {
        Entry::Block(node, next) => (node, next),
        // A document that is one scalar or flow collection: not a rig.
        Entry::Inline(..) => return None,
    };
    if next.is_some() || s.nodes > MAX_NODES {
        return None;
    }
    Some(root)
}

/// No tab, carriage return or other control character, and no character that YAML
/// does not allow or reads as a line break (U+0085, U+2028, U+2029), nor a byte order
/// mark.
fn plain_bytes(text: &str) -> bool {
    let bytes = text.as_bytes();
    if bytes.iter().any(|&b| (b < 0x20 && b != b'\n') || b == 0x7f) {
        return false;
    }
    if bytes.is_ascii() {
        return true;
    }
    !text.chars().any(|c| {
        matches!(
            c,
            '\u{80}'..='\u{9f}' | '\u{feff}' | '\u{fffe}' | '\u{ffff}'
        ) || matches!(c, '\u{2028}' | '\u{2029}')
    })
}

/// A line that holds content: its indentation and where the content starts. `None` at
/// the end of the text.
type Next = Option<(usize, usize)>;

/// What starts at a position in block context.
enum Entry {
    /// A block mapping or sequence, and the next content line after it.
    Block(Node, Next),
    /// A scalar or flow collection that ends its line, and the next content line.
    Inline(Node, Next),
}

struct Scanner<'a> {
    b: &'a [u8],
    text: &'a str,
    file: FileId,
    nodes: usize,
    split: Option<(usize, usize)>,
}

impl<'a> Scanner<'a> {
    fn at(&self, i: usize) -> u8 {
        self.b.get(i).copied().unwrap_or(b'\n')
    }

    /// Whether the byte at `i` ends a token: a space, a line break or the end.
    fn sep(&self, i: usize) -> bool {
        i >= self.b.len() || matches!(self.b[i], b' ' | b'\n')
    }

    fn span(&self, start: usize, end: usize) -> Span {
        Span::new(self.file, start, end)
    }

    fn count(&mut self) -> Option<()> {
        self.nodes += 1;
        (self.nodes <= MAX_NODES).then_some(())
    }

    /// The first line holding content at or after `line`, a line start: blank lines
    /// and comment lines are skipped. `Some(None)` at the end of the text; `None` for a
    /// document marker (`---`, `...`), which this reader leaves to the others.
    fn content_from(&self, mut line: usize) -> Option<Next> {
        loop {
            let mut i = line;
            while self.b.get(i) == Some(&b' ') {
                i += 1;
            }
            match self.b.get(i) {
                None => return Some(None),
                Some(b'\n') => line = i + 1,
                Some(b'#') => line = self.line_end(i) + 1,
                Some(_) => {
                    if i == line
                        && (self.b[i..].starts_with(b"---") || self.b[i..].starts_with(b"..."))
                    {
                        return None;
                    }
                    return Some(Some((i - line, i)));
                }
            }
        }
    }

    /// The position of the line break ending the line holding `i` (or the text's end).
    fn line_end(&self, i: usize) -> usize {
        let i = i.min(self.b.len());
        // `str::find` of one byte's character searches with memchr; every position
        // asked about here is a character boundary (after ASCII or at a line start).
        let found = match self.text.get(i..) {
            Some(rest) => rest.find('\n'),
            None => self.b[i..].iter().position(|&c| c == b'\n'),
        };
        found.map_or(self.b.len(), |k| i + k)
    }

    /// After a token ending at `i`: spaces, perhaps a comment after a space, then the
    /// line break. The position of the line break (or the text's end).
    fn end_of_line(&self, i: usize) -> Option<usize> {
        let mut j = i;
        while self.b.get(j) == Some(&b' ') {
            j += 1;
        }
        match self.b.get(j) {
            None | Some(b'\n') => Some(j),
            Some(b'#') if j > i => Some(self.line_end(j)),
            _ => None,
        }
    }

    /// The next content line after the line break at `eol`.
    fn next_after(&self, eol: usize) -> Option<Next> {
        if eol >= self.b.len() {
            return Some(None);
        }
        self.content_from(eol + 1)
    }

    /// A block sequence entry indicator: `-` followed by a space, a line break or the end.
    fn dash(&self, p: usize) -> bool {
        self.b.get(p) == Some(&b'-') && self.sep(p + 1)
    }

    /// A key indicator at `i`: `:` followed by a space, a line break or the end.
    fn colon(&self, i: usize) -> bool {
        self.b.get(i) == Some(&b':') && self.sep(i + 1)
    }

    /// What starts at `p` (column `col`, `depth` collections around it) in block
    /// context: a sequence, a mapping, or a scalar or flow collection ending the line.
    fn entry_at(&mut self, p: usize, col: usize, depth: usize) -> Option<Entry> {
        if depth >= DEPTH {
            return None;
        }
        if self.dash(p) {
            let (node, next) = self.block_seq(p, col, depth + 1, false)?;
            return Some(Entry::Block(node, next));
        }
        let (node, end) = match self.at(p) {
            b'[' | b'{' => self.flow(p, depth + 1)?,
            _ => self.scalar(p, false)?,
        };
        let mut k = end;
        while self.at(k) == b' ' {
            k += 1;
        }
        if self.colon(k) {
            let (node, next) = self.block_map(node, k + 1, col, depth + 1)?;
            return Some(Entry::Block(node, next));
        }
        let eol = self.end_of_line(end)?;
        Some(Entry::Inline(node, self.next_after(eol)?))
    }

    /// A block mapping at column `col` whose first key is `key`, its `:` just before
    /// `after`.
    fn block_map(
        &mut self,
        mut key: Node,
        mut after: usize,
        col: usize,
        depth: usize,
    ) -> Option<(Node, Next)> {
        self.count()?;
        let start = key.span;
        let mut entries: Vec<(Node, Node)> = Vec::new();
        let mut seen: HashSet<String> = HashSet::new();
        loop {
            if !new_text_key(&entries, &mut seen, &key) {
                return None;
            }
            let (value, next) = self.map_value(after, col, depth)?;
            entries.push((key, value));
            let Some((m, cp)) = next else {
                return Some((map_node(start, entries), None));
            };
            if m < col {
                return Some((map_node(start, entries), next));
            }
            if m > col {
                return None;
            }
            // The next key of this mapping.
            let (k, end) = match self.at(cp) {
                b'[' | b'{' => return None,
                _ => self.scalar(cp, false)?,
            };
            let mut i = end;
            while self.at(i) == b' ' {
                i += 1;
            }
            if !self.colon(i) {
                return None;
            }
            key = k;
            after = i + 1;
        }
    }

    /// The value of `key` in a mapping at `col`, from just after its `:`.
    fn map_value(&mut self, after: usize, col: usize, depth: usize) -> Option<(Node, Next)> {
        let mut r = after;
        while self.at(r) == b' ' {
            r += 1;
        }
        // An empty value sits where its `:` is, as the full reader places it (the key's
        // end only when nothing stands between the key and its `:`).
        let colon = after - 1;
        let null = |s: &Self| s.span(colon, colon);
        if r >= self.b.len() || self.b[r] == b'\n' || self.b[r] == b'#' {
            let eol = self.end_of_line(after)?;
            let next = self.next_after(eol)?;
            let Some((m, cp)) = next else {
                self.count()?;
                return Some((node(null(self), NodeKind::Null), None));
            };
            if m > col || (m == col && self.dash(cp)) {
                if depth >= DEPTH {
                    return None;
                }
                let (value, next) = if m == col {
                    self.block_seq(cp, col, depth + 1, true)?
                } else {
                    match self.entry_at(cp, m, depth)? {
                        Entry::Block(node, next) => (node, next),
                        // A scalar on the line after its key: left to the others.
                        Entry::Inline(..) => return None,
                    }
                };
                return Some((value, next));
            }
            self.count()?;
            return Some((node(null(self), NodeKind::Null), next));
        }
        if self.dash(r) {
            return None;
        }
        if matches!(self.b[r], b'>' | b'|') {
            return self.block_scalar(r, col);
        }
        let (value, end) = match self.b[r] {
            b'[' | b'{' => self.flow(r, depth + 1)?,
            _ => self.scalar(r, false)?,
        };
        let eol = self.end_of_line(end)?;
        Some((value, self.next_after(eol)?))
    }

    /// A block sequence whose first `-` is at `p`, column `col`. `indentless`: the value
    /// of a mapping key at the mapping's own column, whose span starts after its first
    /// `-` (see `finish_seq`), as the parser under serde-saphyr gives it.
    fn block_seq(
        &mut self,
        p: usize,
        col: usize,
        depth: usize,
        indentless: bool,
    ) -> Option<(Node, Next)> {
        self.count()?;
        let mut items: Vec<Node> = Vec::new();
        let mut dash = p;
        loop {
            if let Some((bytes, per_task)) = self.split
                && depth <= 2
                && self.b.len() - dash >= bytes
            {
                let (more, next) = self.items_in_parallel(dash, col, depth, per_task)?;
                items.extend(more);
                return Some(self.finish_seq(p, items, indentless, next));
            }
            let (item, next) = self.seq_item(dash, col, depth)?;
            items.push(item);
            let Some((m, cp)) = next else {
                return Some(self.finish_seq(p, items, indentless, None));
            };
            if m < col || (m == col && !self.dash(cp) && indentless) {
                return Some(self.finish_seq(p, items, indentless, next));
            }
            if m > col || !self.dash(cp) {
                return None;
            }
            dash = cp;
        }
    }

    fn finish_seq(&self, p: usize, items: Vec<Node>, indentless: bool, next: Next) -> (Node, Next) {
        let first = if indentless {
            // Where the first item's own text starts: after the `-` and its spaces, or
            // at the end of that line when the item starts on a later one.
            let mut r = p + 1;
            while self.at(r) == b' ' && r < self.b.len() {
                r += 1;
            }
            if self.at(r) == b'\n' || (self.at(r) == b'#' && r > p + 1) {
                r = self.line_end(r);
            }
            self.span(r, r)
        } else {
            self.span(p, p)
        };
        let span = match items.last() {
            Some(last) => first.join(&last.span),
            None => first,
        };
        (node(span, NodeKind::Seq(items)), next)
    }

    /// One item of a block sequence at `col`, its `-` at `dash`.
    fn seq_item(&mut self, dash: usize, col: usize, depth: usize) -> Option<(Node, Next)> {
        let mut r = dash + 1;
        while self.at(r) == b' ' {
            r += 1;
        }
        if r >= self.b.len() || self.b[r] == b'\n' || (self.b[r] == b'#' && r > dash + 1) {
            let eol = self.end_of_line(dash + 1)?;
            let next = self.next_after(eol)?;
            if let Some((m, cp)) = next
                && m > col
            {
                return match self.entry_at(cp, m, depth)? {
                    Entry::Block(node, next) => Some((node, next)),
                    Entry::Inline(..) => None,
                };
            }
            self.count()?;
            return Some((node(self.span(eol, eol), NodeKind::Null), next));
        }
        let line_start = dash - col;
        match self.entry_at(r, r - line_start, depth)? {
            Entry::Block(node, next) | Entry::Inline(node, next) => Some((node, next)),
        }
    }

    /// The items of a long block sequence, from the `-` at `first`, read in parallel:
    /// the lines at the sequence's column that start with `-` cut it into runs of items,
    /// and each run is read by its own scanner over the text up to the next run. Since
    /// nothing this reader takes spans lines, the cuts are exactly the item boundaries a
    /// sequential read finds, and the spans are offsets into the same text.
    fn items_in_parallel(
        &mut self,
        first: usize,
        col: usize,
        depth: usize,
        per_task: usize,
    ) -> Option<(Vec<Node>, Next)> {
        // Item starts, up to the first content line that is not an item of this list.
        let mut starts = vec![first];
        let mut line = self.line_end(first) + 1;
        let mut next: Next = None;
        while line < self.b.len() {
            let Some((m, cp)) = self.content_from(line)? else {
                break;
            };
            if m < col || (m == col && !self.dash(cp)) {
                next = Some((m, cp));
                break;
            }
            if m == col {
                starts.push(cp);
            }
            line = self.line_end(cp) + 1;
        }
        let end = next.map_or(self.b.len(), |(m, cp)| cp - m);
        let mut bounds: Vec<(usize, usize)> = Vec::new();
        let per_task = per_task.max(1);
        for (i, chunk) in starts.chunks(per_task).enumerate() {
            let stop = starts.get((i + 1) * per_task).map_or(end, |&s| s - col);
            bounds.push((chunk[0], stop));
        }
        let (file, text) = (self.file, self.text);
        let runs: Vec<Option<(Vec<Node>, usize)>> = bounds
            .par_iter()
            .map(|&(from, stop)| {
                let mut s = Scanner {
                    b: &text.as_bytes()[..stop],
                    text: &text[..stop],
                    file,
                    nodes: 0,
                    split: None,
                };
                let mut items = Vec::new();
                let mut dash = from;
                loop {
                    let (item, next) = s.seq_item(dash, col, depth)?;
                    items.push(item);
                    match next {
                        None => return Some((items, s.nodes)),
                        Some((m, cp)) if m == col && s.dash(cp) => dash = cp,
                        Some(_) => return None,
                    }
                }
            })
            .collect();
        let mut items = Vec::with_capacity(starts.len());
        for run in runs {
            let (run, nodes) = run?;
            self.nodes += nodes;
            items.extend(run);
        }
        if self.nodes > MAX_NODES || items.len() != starts.len() {
            return None;
        }
        Some((items, next))
    }

    /// A scalar at `p` (plain, or quoted on one line) and the position after it.
    /// `flow`: inside a flow collection, where `,[]{}` end a plain scalar.
    fn scalar(&mut self, p: usize, flow: bool) -> Option<(Node, usize)> {
        self.count()?;
        match self.at(p) {
            b'\'' => {
                let mut i = p + 1;
                let mut escaped = false;
                loop {
                    match self.b.get(i)? {
                        b'\n' => return None,
                        b'\'' if self.b.get(i + 1) == Some(&b'\'') => {
                            escaped = true;
                            i += 2;
                        }
                        b'\'' => break,
                        _ => i += 1,
                    }
                }
                let inner = &self.text[p + 1..i];
                let value = if escaped {
                    inner.replace("''", "'")
                } else {
                    inner.to_string()
                };
                Some((node(self.span(p, i + 1), NodeKind::Str(value)), i + 1))
            }
            b'"' => {
                let rel = self.b[p + 1..]
                    .iter()
                    .position(|&c| matches!(c, b'"' | b'\\' | b'\n'))?;
                let i = p + 1 + rel;
                if self.b[i] != b'"' {
                    return None;
                }
                let value = self.text[p + 1..i].to_string();
                Some((node(self.span(p, i + 1), NodeKind::Str(value)), i + 1))
            }
            c => {
                // Indicators that cannot start a plain scalar, or that this reader leaves
                // to the others; `-` only when something other than a space follows.
                if b"?:,[]{}#&*!|>'\"%@`".contains(&c)
                    || c == b' '
                    || c == b'\n'
                    || (c == b'-' && self.sep(p + 1))
                {
                    return None;
                }
                let mut i = p;
                let mut end = p;
                loop {
                    match self.b.get(i) {
                        None | Some(b'\n') => break,
                        Some(b':') if self.sep(i + 1) => break,
                        Some(b':') if flow => return None,
                        Some(b'#') if self.b[i - 1] == b' ' => {
                            if flow {
                                return None;
                            }
                            break;
                        }
                        Some(b',' | b'[' | b']' | b'{' | b'}') if flow => break,
                        Some(b'[' | b']' | b'{' | b'}') => return None,
                        Some(b' ') => {}
                        Some(_) => end = i + 1,
                    }
                    i += 1;
                }
                let kind = plain(&self.text[p..end])?;
                Some((node(self.span(p, end), kind), end))
            }
        }
    }

    /// A flow sequence or mapping of scalars on one line, from its bracket at `p`, and
    /// the position after its closing bracket.
    fn flow(&mut self, p: usize, depth: usize) -> Option<(Node, usize)> {
        if depth > DEPTH {
            return None;
        }
        self.count()?;
        let map = self.b[p] == b'{';
        let close = if map { b'}' } else { b']' };
        let mut items: Vec<Node> = Vec::new();
        let mut entries: Vec<(Node, Node)> = Vec::new();
        let mut i = self.skip_spaces(p + 1);
        if self.at(i) != close {
            loop {
                let (first, end) = match self.at(i) {
                    b',' => return None,
                    b'[' | b'{' if !map => self.flow(i, depth + 1)?,
                    _ => self.scalar(i, true)?,
                };
                i = self.skip_spaces(end);
                if map {
                    if !self.colon(i) {
                        return None;
                    }
                    let NodeKind::Str(k) = &first.kind else {
                        return None;
                    };
                    // One line of a rig holds a few entries; a long one is searched no
                    // further and left to the others.
                    if k == "<<"
                        || entries.len() >= FLOW_ENTRIES
                        || entries.iter().any(|(e, _)| e.as_str() == Some(k))
                    {
                        return None;
                    }
                    i = self.skip_spaces(i + 1);
                    let (value, end) = match self.at(i) {
                        b',' | b'}' | b'\n' => return None,
                        b'[' | b'{' => self.flow(i, depth + 1)?,
                        _ => self.scalar(i, true)?,
                    };
                    entries.push((first, value));
                    i = self.skip_spaces(end);
                } else {
                    items.push(first);
                }
                match self.at(i) {
                    b',' => {
                        i = self.skip_spaces(i + 1);
                        if matches!(self.at(i), b']' | b'}') {
                            return None;
                        }
                    }
                    c if c == close => break,
                    _ => return None,
                }
            }
        }
        let span = self.span(p, i + 1);
        let kind = if map {
            NodeKind::Map(entries)
        } else {
            NodeKind::Seq(items)
        };
        Some((node(span, kind), i + 1))
    }

    /// A literal (`|`) or folded (`>`) block scalar whose indicator is at `p`, the value
    /// of a key in a mapping at `col`, and the next content line after it. Taken: the
    /// clip and strip (`-`) chomping, the indentation found from the first line, no
    /// blank line before the first line of text, and in a folded scalar no line
    /// indented more than the first (those keep their line breaks, a rule left to the
    /// others). The span runs from the first character of text to the last one that is
    /// not a space, as serde-saphyr gives it.
    fn block_scalar(&mut self, p: usize, col: usize) -> Option<(Node, Next)> {
        self.count()?;
        let folded = self.b[p] == b'>';
        let strip = self.at(p + 1) == b'-';
        let header = p + 1 + usize::from(strip);
        if !self.sep(header) {
            return None;
        }
        let eol = self.end_of_line(header)?;
        if eol >= self.b.len() {
            return None;
        }
        // The first line of text fixes the indentation.
        let first = eol + 1;
        let mut i = first;
        while self.at(i) == b' ' && i < self.b.len() {
            i += 1;
        }
        let indent = i - first;
        if indent <= col || i >= self.b.len() || self.b[i] == b'\n' {
            return None;
        }
        let start = i;
        // Lines of text (from after the indentation to the line break), with the number
        // of blank lines before each.
        let mut lines: Vec<(usize, usize, usize)> = Vec::new();
        let mut blank = 0;
        let mut line = first;
        let mut last_end = start;
        let next = loop {
            let mut j = line;
            while self.at(j) == b' ' && j < self.b.len() {
                j += 1;
            }
            if j >= self.b.len() && j == line {
                break None;
            }
            let end = self.line_end(j);
            if j == end {
                // A blank line: only spaces, no more than the indentation.
                if j - line > indent {
                    return None;
                }
                blank += 1;
            } else if j - line < indent {
                // Less indented: the scalar has ended.
                break self.content_from(line)?;
            } else {
                if folded && j - line > indent {
                    return None;
                }
                lines.push((line + indent, end, blank));
                blank = 0;
                last_end = end;
            }
            if end >= self.b.len() {
                break None;
            }
            line = end + 1;
        };
        let mut value = String::new();
        for (k, &(from, to, blank)) in lines.iter().enumerate() {
            if k > 0 {
                if folded && blank == 0 {
                    value.push(' ');
                } else {
                    let breaks = if folded { blank } else { blank + 1 };
                    value.extend(std::iter::repeat_n('\n', breaks));
                }
            }
            value.push_str(&self.text[from..to]);
        }
        if !strip {
            value.push('\n');
        }
        let mut end = last_end;
        while end > start && self.b[end - 1] == b' ' {
            end -= 1;
        }
        Some((node(self.span(start, end), NodeKind::Str(value)), next))
    }

    fn skip_spaces(&self, mut i: usize) -> usize {
        while self.at(i) == b' ' && i < self.b.len() {
            i += 1;
        }
        i
    }
}

/// A block mapping: from its first key to the end of its last value.
fn map_node(start: Span, entries: Vec<(Node, Node)>) -> Node {
    let span = entries.last().map_or(start, |(_, v)| start.join(&v.span));
    node(span, NodeKind::Map(entries))
}

fn node(span: Span, kind: NodeKind) -> Node {
    Node { span, kind }
}
