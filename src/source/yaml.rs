//! The YAML front end: text to a tree of nodes that know their byte spans.
//!
//! serde-saphyr parses the text (with duplicate keys as errors and explicit budgets
//! against alias bombs and deep nesting); every node is wrapped in `Spanned`, and the
//! tree keeps the byte range of every key, scalar, sequence and mapping.

use super::{FileId, LineIndex, Span};
use serde::de::{self, Deserialize, Deserializer, MapAccess, SeqAccess, Visitor};
use serde_saphyr::Spanned;
use std::collections::HashSet;
use std::fmt;

mod scan;

/// The largest number of YAML nodes one file may hold (a 100k-channel rig needs about
/// 2 million; alias bombs are stopped far earlier by the alias budgets).
pub const MAX_NODES: usize = 20_000_000;

/// The most nodes that aliases may copy in one file. Sharing a filter list between a few
/// thousand channels needs far fewer; an alias bomb ("billion laughs") is stopped here
/// after about this many nodes, in well under a second.
pub const MAX_ALIAS_NODES: usize = 100_000;

/// The deepest nesting of collections one file may hold (a rig needs about 8).
pub const MAX_DEPTH: usize = 64;

/// A YAML node with its span.
#[derive(Debug, Clone, PartialEq)]
pub struct Node {
    /// Bytes the node covers. For mappings and sequences: from the opening token (or the
    /// first key / dash of a block collection) to the end of the last child.
    pub span: Span,
    /// What it holds.
    pub kind: NodeKind,
}

/// The value of a node.
#[derive(Debug, Clone, PartialEq)]
pub enum NodeKind {
    /// `~`, `null` or nothing.
    Null,
    /// `true` / `false`.
    Bool(bool),
    /// An integer that fits in i128.
    Int(i128),
    /// Any other number (the source text stays available through the span).
    Float(f64),
    /// A string (quoted or plain).
    Str(String),
    /// A sequence.
    Seq(Vec<Node>),
    /// A mapping, in source order.
    Map(Vec<(Node, Node)>),
}

impl Node {
    /// The entries of a mapping, if it is one.
    pub fn as_map(&self) -> Option<&[(Node, Node)]> {
        match &self.kind {
            NodeKind::Map(m) => Some(m),
            _ => None,
        }
    }

    /// The items of a sequence, if it is one.
    pub fn as_seq(&self) -> Option<&[Node]> {
        match &self.kind {
            NodeKind::Seq(s) => Some(s),
            _ => None,
        }
    }

    /// The string value, if it is a string.
    pub fn as_str(&self) -> Option<&str> {
        match &self.kind {
            NodeKind::Str(s) => Some(s),
            _ => None,
        }
    }

    /// The entry with a string key `key` (key node and value node).
    pub fn get(&self, key: &str) -> Option<(&Node, &Node)> {
        self.as_map()?
            .iter()
            .find(|(k, _)| k.as_str() == Some(key))
            .map(|(k, v)| (k, v))
    }

    /// A short name of the node's type, for messages.
    pub fn type_name(&self) -> &'static str {
        match self.kind {
            NodeKind::Null => "null",
            NodeKind::Bool(_) => "boolean",
            NodeKind::Int(_) | NodeKind::Float(_) => "number",
            NodeKind::Str(_) => "string",
            NodeKind::Seq(_) => "list",
            NodeKind::Map(_) => "mapping",
        }
    }

    /// The node as JSON, for schema validation. Keys that are not strings are written
    /// with their source text.
    pub fn to_json(&self, text: &str) -> serde_json::Value {
        use serde_json::Value;
        match &self.kind {
            NodeKind::Null => Value::Null,
            NodeKind::Bool(b) => Value::Bool(*b),
            NodeKind::Int(i) => match i64::try_from(*i) {
                Ok(v) => Value::from(v),
                Err(_) => Value::from(*i as f64),
            },
            NodeKind::Float(f) => serde_json::Number::from_f64(*f)
                .map(Value::Number)
                .unwrap_or(Value::Null),
            NodeKind::Str(s) => Value::String(s.clone()),
            NodeKind::Seq(items) => Value::Array(items.iter().map(|n| n.to_json(text)).collect()),
            NodeKind::Map(entries) => {
                let mut m = serde_json::Map::new();
                for (k, v) in entries {
                    m.insert(k.key_text(text), v.to_json(text));
                }
                Value::Object(m)
            }
        }
    }

    /// The key as text: the string for string keys, else the source text.
    pub fn key_text(&self, text: &str) -> String {
        match &self.kind {
            NodeKind::Str(s) => s.clone(),
            _ => text
                .get(self.span.start as usize..self.span.end as usize)
                .unwrap_or("")
                .to_string(),
        }
    }
}

/// A YAML syntax error: a message and where it happened.
#[derive(Debug, Clone, PartialEq)]
pub struct SyntaxError {
    /// One clause, lowercase, no position in it.
    pub message: String,
    /// Where.
    pub span: Span,
}

/// Parse one YAML document into a node tree.
pub fn parse(file: FileId, text: &str, lines: &LineIndex) -> Result<Node, SyntaxError> {
    if let Some(node) = scan::parse(file, text) {
        // Nothing for the continuation check below to find: the scanner takes no quoted
        // scalar or flow collection over several lines, and every line of a block
        // scalar it takes is indented past the mapping holding it.
        return Ok(empty_at_start(node));
    }
    let node = match fast::parse(file, text) {
        Some(node) => node,
        None => parse_with_serde(file, text, lines)?,
    };
    continuation_indent(text, &node)?;
    Ok(empty_at_start(node))
}

/// YAML 1.2 (§6.1, §7.3, §7.4): the continuation lines of a multi-line quoted scalar or
/// flow collection inside a block collection must be indented more than that block
/// collection, by spaces (a tab is not indentation). The event parser under both
/// readers accepts them at or below its column (the YAML test suite's cases 9C9N, QB6E,
/// DK95-1), so they are refused here.
fn continuation_indent(text: &str, node: &Node) -> Result<(), SyntaxError> {
    let bytes = text.as_bytes();
    let block = |n: &Node| {
        matches!(n.kind, NodeKind::Map(_) | NodeKind::Seq(_))
            && !matches!(bytes.get(n.span.start as usize), Some(b'[' | b'{'))
    };
    if !block(node) {
        return Ok(());
    }
    // The block collection's column, in bytes after a byte order mark.
    let start = node.span.start as usize;
    let line_start = text[..start].rfind(['\n', '\r']).map_or(0, |i| i + 1);
    let bom = if line_start == 0 && text.starts_with('\u{feff}') {
        3
    } else {
        0
    };
    let indent = start - line_start - bom;
    let (entries, items): (&[(Node, Node)], &[Node]) = match &node.kind {
        NodeKind::Map(entries) => (entries, &[]),
        NodeKind::Seq(items) => (&[], items),
        _ => (&[], &[]),
    };
    for child in entries.iter().flat_map(|(k, v)| [k, v]).chain(items) {
        if block(child) {
            continuation_indent(text, child)?;
            continue;
        }
        let (s, e) = (child.span.start as usize, child.span.end as usize);
        if !matches!(bytes.get(s), Some(b'"' | b'\'' | b'[' | b'{')) {
            continue;
        }
        let mut i = s;
        while let Some(nl) = text[i..e].find(['\n', '\r']).map(|k| i + k) {
            i = nl + 1;
            let line = &text[i..];
            let spaces = line.len() - line.trim_start_matches(' ').len();
            let rest = &line[spaces..];
            // Blank lines (only spaces and tabs) are not continuation lines.
            let blank = rest
                .trim_start_matches([' ', '\t'])
                .starts_with(['\n', '\r'])
                || rest.trim_start_matches([' ', '\t']).is_empty();
            if i < e && spaces <= indent && !blank {
                return Err(SyntaxError {
                    message: format!(
                        "this continuation line of a multi-line value is indented by {spaces} space{}; it must be indented by more than the {indent} of the mapping or list holding the value (a tab is not indentation)",
                        if spaces == 1 { "" } else { "s" }
                    ),
                    span: Span::point(child.span.file, i + spaces),
                });
            }
        }
    }
    Ok(())
}

/// An empty document points at the start of the file.
fn empty_at_start(mut node: Node) -> Node {
    if let NodeKind::Null = node.kind {
        node.span = Span::point(node.span.file, 0);
    }
    node
}

/// Both readers on one text, for differential tests and fuzzing: the fast path's tree
/// and serde-saphyr's, when the fast path takes the document (`None` otherwise). The
/// fast path is the one [`parse`] takes: the block-style scanner when it takes the
/// document, else the event-based reader.
#[doc(hidden)]
pub fn both_readers(file: FileId, text: &str) -> Option<(Node, Result<Node, SyntaxError>)> {
    // The scanner cuts every top-level list into runs of two items here, so that the
    // fuzz target also checks its parallel reading against serde-saphyr.
    let fast = scan::parse_with(file, text, Some((0, 2))).or_else(|| fast::parse(file, text))?;
    let fast = empty_at_start(fast);
    let full = parse_with_serde(file, text, &LineIndex::new(text)).map(empty_at_start);
    Some((fast, full))
}

/// The block-style scanner alone (`None` when it declines), for tests that compare it
/// with the other readers and with itself: `split` is `None` to read sequentially, or
/// the least length of a top-level list read in parallel and the items per task.
#[doc(hidden)]
pub fn block_reader(file: FileId, text: &str, split: Option<(usize, usize)>) -> Option<Node> {
    scan::parse_with(file, text, split).map(empty_at_start)
}

/// The length of a top-level list from which [`parse`] reads it in parallel, and the
/// items per task (for the benchmark).
#[doc(hidden)]
pub use scan::{ITEMS_PER_TASK, PARALLEL_BYTES};

/// The event-based fast reader alone, for the same tests.
#[doc(hidden)]
pub fn event_reader(file: FileId, text: &str) -> Option<Node> {
    fast::parse(file, text).map(empty_at_start)
}

/// Whether `key` may be the next key of a mapping holding `entries`, for the fast
/// readers: a text key (`<<` is a merge key, which serde-saphyr expands) not already
/// there. Small mappings (nearly all) are searched; a large one gets the set `seen`.
fn new_text_key(entries: &[(Node, Node)], seen: &mut HashSet<String>, key: &Node) -> bool {
    const SEARCHED: usize = 16;
    let Some(k) = key.as_str().filter(|k| *k != "<<") else {
        return false;
    };
    if entries.len() < SEARCHED {
        return !entries.iter().any(|(e, _)| e.as_str() == Some(k));
    }
    if seen.is_empty() {
        seen.extend(
            entries
                .iter()
                .filter_map(|(e, _)| e.as_str())
                .map(str::to_string),
        );
    }
    seen.insert(k.to_string())
}

/// The full reader: serde-saphyr with its budgets, anchors and aliases, merge keys,
/// tags, every scalar form, and its error messages. [`parse`] falls back to it; public
/// for the benchmark.
#[doc(hidden)]
pub fn parse_with_serde(file: FileId, text: &str, lines: &LineIndex) -> Result<Node, SyntaxError> {
    let mut options = serde_saphyr::Options::default();
    options.strict_booleans = true;
    options.with_snippet = false;
    // `.inf` and `.nan` arrive as text: a quantity or a number field then says what it
    // expected, instead of the parser refusing the whole file.
    options.non_finite_float_policy = serde_saphyr::NonFiniteFloatPolicy::AsString;
    let budget = options
        .budget
        .get_or_insert_with(serde_saphyr::Budget::default);
    budget.max_nodes = MAX_NODES;
    budget.max_events = 2 * MAX_NODES;
    budget.max_documents = 1;
    budget.max_depth = MAX_DEPTH;
    budget.flow_nesting_limit = MAX_DEPTH;
    budget.max_recorded_anchor_events = MAX_ALIAS_NODES;
    options.alias_limits.max_total_replayed_events = MAX_ALIAS_NODES;
    let raw: Spanned<Raw> = serde_saphyr::from_str_with_options(text, options)
        .map_err(|e| syntax_error(file, text, lines, &e))?;
    Ok(convert(file, text, lines, raw))
}

/// The common case, fast: a single document with no anchors, aliases or tags, no
/// duplicate keys, no nesting deeper than [`MAX_DEPTH`], and scalars whose type is plain
/// to see, is built straight from the event parser that serde-saphyr itself uses
/// (granit-parser), with the same spans. Anything else (including every error) returns
/// `None`, and the document is read again by [`parse_with_serde`], so that budgets, alias
/// handling and messages stay serde-saphyr's. `tests` check that both paths agree.
mod fast {
    use super::{MAX_DEPTH, MAX_NODES, Node, NodeKind, close_flow, scalar_end};
    use crate::source::{FileId, Span};
    use serde_saphyr::granit_parser::{Event, Parser, ScalarStyle};
    use std::collections::HashSet;

    enum Frame {
        Seq {
            start: Span,
            items: Vec<Node>,
        },
        Map {
            start: Span,
            entries: Vec<(Node, Node)>,
            key: Option<Node>,
        },
    }

    fn span_of(file: FileId, span: &serde_saphyr::granit_parser::Span) -> Option<Span> {
        let start = span.start.byte_offset()?;
        let end = span.end.byte_offset()?;
        Some(Span::new(file, start, end.max(start)))
    }

    /// The type of a plain scalar, when it is beyond doubt; `None` sends the document to
    /// serde-saphyr (numbers in other notations, `.inf`, `True`, `0x1F`, `1e3` …).
    pub(super) fn plain(v: &str) -> Option<NodeKind> {
        match v {
            "" | "~" | "null" | "Null" | "NULL" => return Some(NodeKind::Null),
            "true" => return Some(NodeKind::Bool(true)),
            "false" => return Some(NodeKind::Bool(false)),
            _ => {}
        }
        let first = v.as_bytes()[0];
        if first.is_ascii_alphabetic() {
            let special = ["null", "true", "false", "yes", "no", "on", "off", "y", "n"];
            if v.len() <= 5 && special.iter().any(|s| v.eq_ignore_ascii_case(s)) {
                return None;
            }
            return Some(NodeKind::Str(v.to_string()));
        }
        if !(first.is_ascii_digit() || matches!(first, b'+' | b'-' | b'.')) {
            return Some(NodeKind::Str(v.to_string()));
        }
        let unsigned = v.strip_prefix('-').unwrap_or(v);
        let (int, frac) = match unsigned.split_once('.') {
            Some((i, f)) => (i, Some(f)),
            None => (unsigned, None),
        };
        let digits = |s: &str| !s.is_empty() && s.bytes().all(|b| b.is_ascii_digit());
        let canonical_int = digits(int) && (int == "0" || !int.starts_with('0')) && int.len() <= 18;
        match frac {
            None if canonical_int => return v.parse::<i64>().ok().map(|i| NodeKind::Int(i.into())),
            Some(f) if canonical_int && digits(f) && f.len() <= 17 => {
                return v.parse::<f64>().ok().map(NodeKind::Float);
            }
            _ => {}
        }
        // A character that no YAML number, infinity or NaN holds makes it text: `10 kHz`,
        // `../catalog.yaml`, `1.5x`.
        let number_like = |b: u8| b.is_ascii_hexdigit() || b"xXoO._+-iInN".contains(&b);
        if !v.bytes().all(number_like) {
            return Some(NodeKind::Str(v.to_string()));
        }
        None
    }

    fn collection(start: Span, kind: NodeKind, last: Option<Span>, text: &str) -> Node {
        let mut span = start;
        if let Some(last) = last {
            span = span.join(&last);
        }
        let span = match kind {
            NodeKind::Seq(_) => close_flow(text, span, b'[', b']'),
            _ => close_flow(text, span, b'{', b'}'),
        };
        Node { span, kind }
    }

    /// Add a finished node to its parent; `false` for a duplicate, merge or non-text key.
    fn place(
        stack: &mut [Frame],
        node: Node,
        root: &mut Option<Node>,
        keys: &mut [HashSet<String>],
    ) -> bool {
        match stack.last_mut() {
            None => {
                *root = Some(node);
                true
            }
            Some(Frame::Seq { items, .. }) => {
                items.push(node);
                true
            }
            Some(Frame::Map { entries, key, .. }) => match key.take() {
                None => {
                    let seen = keys.last_mut().expect("a key set per mapping");
                    if !super::new_text_key(entries, seen, &node) {
                        return false;
                    }
                    *key = Some(node);
                    true
                }
                Some(k) => {
                    entries.push((k, node));
                    true
                }
            },
        }
    }

    /// The tree of a document in the common case, or `None` (see the module).
    pub(super) fn parse(file: FileId, text: &str) -> Option<Node> {
        let mut stack: Vec<Frame> = Vec::new();
        let mut keys: Vec<HashSet<String>> = Vec::new();
        let mut root: Option<Node> = None;
        let mut documents = 0;
        let mut nodes = 0usize;
        for ev in Parser::new_from_str(text) {
            let (event, span) = ev.ok()?;
            match event {
                Event::StreamStart | Event::DocumentEnd | Event::StreamEnd => {}
                #[allow(unreachable_patterns)]
                Event::Comment(..) => {}
                Event::DocumentStart(..) => {
                    documents += 1;
                    if documents > 1 {
                        return None;
                    }
                }
                Event::Scalar(value, style, anchor, tag) => {
                    if anchor != 0 || tag.is_some() {
                        return None;
                    }
                    nodes += 1;
                    let kind = match style {
                        ScalarStyle::Plain => plain(&value)?,
                        _ => NodeKind::Str(value.into_owned()),
                    };
                    let node = Node {
                        span: scalar_end(text, span_of(file, &span)?),
                        kind,
                    };
                    if !place(&mut stack, node, &mut root, &mut keys) {
                        return None;
                    }
                }
                Event::SequenceStart(_, anchor, ref tag)
                | Event::MappingStart(_, anchor, ref tag) => {
                    if anchor != 0 || tag.is_some() || stack.len() >= MAX_DEPTH {
                        return None;
                    }
                    nodes += 1;
                    let start = span_of(file, &span)?;
                    if matches!(event, Event::SequenceStart(..)) {
                        stack.push(Frame::Seq {
                            start,
                            items: Vec::new(),
                        });
                    } else {
                        stack.push(Frame::Map {
                            start,
                            entries: Vec::new(),
                            key: None,
                        });
                        keys.push(HashSet::new());
                    }
                }
                Event::SequenceEnd | Event::MappingEnd => {
                    let node = match stack.pop()? {
                        Frame::Seq { start, items } => {
                            let last = items.last().map(|n| n.span);
                            collection(start, NodeKind::Seq(items), last, text)
                        }
                        Frame::Map {
                            start,
                            entries,
                            key,
                        } => {
                            keys.pop();
                            if key.is_some() {
                                return None;
                            }
                            let last = entries.last().map(|(_, v)| v.span);
                            collection(start, NodeKind::Map(entries), last, text)
                        }
                    };
                    if !place(&mut stack, node, &mut root, &mut keys) {
                        return None;
                    }
                }
                _ => return None,
            }
            if nodes > MAX_NODES {
                return None;
            }
        }
        if !stack.is_empty() {
            return None;
        }
        Some(root.unwrap_or(Node {
            span: Span::point(file, 0),
            kind: NodeKind::Null,
        }))
    }
}

fn syntax_error(
    file: FileId,
    text: &str,
    lines: &LineIndex,
    e: &serde_saphyr::Error,
) -> SyntaxError {
    let offset = e
        .location()
        .map(|loc| {
            loc.span()
                .byte_offset()
                .map(|b| b as usize)
                .filter(|&b| b <= text.len() && text.is_char_boundary(b))
                .unwrap_or_else(|| lines.offset(text, loc.line() as usize, loc.column() as usize))
        })
        .unwrap_or(0);
    let message = describe(e);
    let offset = if message.contains("tab") {
        indentation_tab(text, offset).unwrap_or(offset)
    } else {
        offset
    };
    SyntaxError {
        message,
        span: Span::point(file, offset),
    }
}

/// The offset of the first tab in a line's indentation, on the line holding `offset` or
/// the next one. The parser reports a tab in block indentation at the node it was
/// reading (the end of the previous line, or just after the tab); the tab is where the
/// user has to look.
fn indentation_tab(text: &str, offset: usize) -> Option<usize> {
    let line_start = text[..offset.min(text.len())]
        .rfind(['\n', '\r'])
        .map_or(0, |i| i + 1);
    let mut start = line_start;
    for _ in 0..2 {
        let rest = &text[start..];
        let line_len = rest.find(['\n', '\r']).unwrap_or(rest.len());
        let line = &rest[..line_len];
        let indent = line.len() - line.trim_start_matches([' ', '\t']).len();
        if let Some(i) = line[..indent].find('\t') {
            return Some(start + i);
        }
        if line_len == rest.len() {
            return None;
        }
        start += line_len;
        // \r\n is one line break.
        start += if text[start..].starts_with("\r\n") {
            2
        } else {
            1
        };
    }
    None
}

/// The parser's message without positions (the report renders those from the span):
/// the innermost error of an alias or snippet wrapper, formatted without its location
/// suffix; budget breaches in our own words.
fn describe(e: &serde_saphyr::Error) -> String {
    use serde_saphyr::{Error, MessageFormatter};
    let mut inner = e;
    while let Error::AliasError { error, .. } | Error::WithSnippet { error, .. } = inner {
        inner = error;
    }
    if let Error::Budget { breach, .. } = inner {
        return budget_message(breach);
    }
    let raw = serde_saphyr::DefaultMessageFormatter.format_message(inner);
    if raw == "recursion limit exceeded" {
        return format!(
            "collections nest more than {MAX_DEPTH} deep, over the limit for reading a file safely"
        );
    }
    // Control characters from the input (a NUL, an escape) must not reach a terminal.
    let safe: String = raw
        .chars()
        .flat_map(|c| {
            let escaped: Vec<char> = if c.is_control() {
                c.escape_debug().collect()
            } else {
                vec![c]
            };
            escaped
        })
        .collect();
    clean_message(&safe)
}

/// A budget breach as one clause with the limit that was hit.
fn budget_message(breach: &serde_saphyr::budget::BudgetBreach) -> String {
    use serde_saphyr::budget::BudgetBreach as B;
    let what = match breach {
        B::Depth { .. } => format!("collections nest more than {MAX_DEPTH} deep"),
        B::Nodes { nodes } => format!("the document holds more than {} nodes", nodes - 1),
        B::Events { events } => format!("the document holds more than {} events", events - 1),
        B::Aliases { aliases } => format!("the document uses more than {} aliases", aliases - 1),
        B::Anchors { anchors } => format!("the document defines more than {} anchors", anchors - 1),
        B::RecordedAnchorEvents {
            recorded_anchor_events,
        } => format!(
            "aliases expand to more than {} copied nodes",
            recorded_anchor_events - 1
        ),
        B::RecordedAnchorBytes {
            recorded_anchor_bytes,
        } => format!(
            "aliases expand to more than {} copied bytes",
            recorded_anchor_bytes - 1
        ),
        B::ScalarBytes { total_scalar_bytes } => {
            format!(
                "the document's values hold more than {} bytes",
                total_scalar_bytes - 1
            )
        }
        B::Documents { .. } => {
            return "the file holds more than one YAML document, where a rig or catalog is one"
                .to_string();
        }
        other => format!("the document breaks a parser limit ({other:?})"),
    };
    format!("{what}, over the limit for reading a file safely")
}

/// Strip the parser's "error: line N column M:" prefix, any "at line N, column M" suffix
/// and option hints: positions are rendered by the report, not carried in messages.
fn clean_message(raw: &str) -> String {
    let first = raw.lines().next().unwrap_or(raw).trim();
    let mut msg = first.strip_prefix("error:").unwrap_or(first).trim();
    if let Some(rest) = msg.strip_prefix("line ")
        && let Some(idx) = rest.find(": ")
    {
        let head = &rest[..idx];
        if head
            .split_whitespace()
            .all(|w| w == "column" || w.chars().all(|c| c.is_ascii_digit()))
        {
            msg = rest[idx + 2..].trim();
        }
    }
    if let Some(idx) = msg.rfind(" at line ") {
        let tail = &msg[idx + " at line ".len()..];
        let is_position = tail
            .split([',', ' '])
            .filter(|w| !w.is_empty())
            .all(|w| w == "column" || w.chars().all(|c| c.is_ascii_digit()));
        if is_position {
            msg = &msg[..idx];
        }
    }
    let msg = msg.split(", set DuplicateKeyPolicy").next().unwrap_or(msg);
    let msg = msg.trim_end_matches('.');
    if msg.starts_with("recursive references") {
        return "an alias refers to a node that contains it (a recursive alias)".to_string();
    }
    msg.to_string()
}

fn convert(file: FileId, text: &str, lines: &LineIndex, raw: Spanned<Raw>) -> Node {
    let loc = raw.referenced;
    let span = loc.span();
    let start = span
        .byte_offset()
        .map(|b| b as usize)
        .filter(|&b| b <= text.len())
        .unwrap_or_else(|| lines.offset(text, loc.line() as usize, loc.column() as usize));
    let len = span.byte_len().map(|l| l as usize).unwrap_or(0);
    let mut span = Span::new(file, start, (start + len).min(text.len()));
    if !matches!(raw.value, Raw::Seq(_) | Raw::Map(_)) {
        span = scalar_end(text, span);
    }
    let kind = match raw.value {
        Raw::Null => NodeKind::Null,
        Raw::Bool(b) => NodeKind::Bool(b),
        // YAML 1.1 reads `4_0` as 40, YAML 1.2 as text; foldcheck takes the 1.2 reading
        // everywhere (a quantity never takes `_` either), so `divide: 4_0` is refused.
        Raw::Int(_) | Raw::Float(_) if underscored(text, span) => {
            NodeKind::Str(text[span.start as usize..span.end as usize].to_string())
        }
        Raw::Int(i) => NodeKind::Int(i),
        Raw::Float(f) => NodeKind::Float(f),
        Raw::Str(s) => NodeKind::Str(s),
        Raw::Seq(items) => {
            let items: Vec<Node> = items
                .into_iter()
                .map(|n| convert(file, text, lines, n))
                .collect();
            if let Some(last) = items.last() {
                span = span.join(&last.span);
            }
            span = close_flow(text, span, b'[', b']');
            NodeKind::Seq(items)
        }
        Raw::Map(entries) => {
            let entries: Vec<(Node, Node)> = entries
                .into_iter()
                .map(|(k, v)| (convert(file, text, lines, k), convert(file, text, lines, v)))
                .collect();
            if let Some((_, last)) = entries.last() {
                span = span.join(&last.span);
            }
            span = close_flow(text, span, b'{', b'}');
            NodeKind::Map(entries)
        }
    };
    Node { span, kind }
}

/// A scalar's span ends at its last character: the parser ends a block scalar's span
/// after its final line break and trailing blank lines, at the start of the next node.
fn scalar_end(text: &str, span: Span) -> Span {
    let bytes = text.as_bytes();
    let mut end = span.end as usize;
    while end > span.start as usize
        && matches!(bytes.get(end - 1), Some(b'\n' | b'\r' | b' ' | b'\t'))
    {
        end -= 1;
    }
    Span {
        end: end as u32,
        ..span
    }
}

/// Whether the plain number written at `span` uses `_` separators (`4_0`, `48_000`).
fn underscored(text: &str, span: Span) -> bool {
    text.get(span.start as usize..span.end as usize)
        .is_some_and(|s| {
            s.starts_with(|c: char| c.is_ascii_digit() || "+-.".contains(c)) && s.contains('_')
        })
}

/// Extend a flow collection's span over its closing bracket.
fn close_flow(text: &str, span: Span, open: u8, close: u8) -> Span {
    let bytes = text.as_bytes();
    if bytes.get(span.start as usize) != Some(&open) {
        return span;
    }
    let mut i = span.end as usize;
    while i < bytes.len()
        && (bytes[i] == b' ' || bytes[i] == b'\n' || bytes[i] == b'\r' || bytes[i] == b',')
    {
        i += 1;
    }
    if bytes.get(i) == Some(&close) {
        Span {
            end: (i + 1) as u32,
            ..span
        }
    } else {
        span
    }
}

/// What serde-saphyr hands us: any YAML value, children spanned.
enum Raw {
    Null,
    Bool(bool),
    Int(i128),
    Float(f64),
    Str(String),
    Seq(Vec<Spanned<Raw>>),
    Map(Vec<(Spanned<Raw>, Spanned<Raw>)>),
}

impl<'de> Deserialize<'de> for Raw {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        d.deserialize_any(RawVisitor)
    }
}

struct RawVisitor;

impl<'de> Visitor<'de> for RawVisitor {
    type Value = Raw;

    fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
        f.write_str("any YAML value")
    }
    fn visit_unit<E>(self) -> Result<Raw, E> {
        Ok(Raw::Null)
    }
    fn visit_none<E>(self) -> Result<Raw, E> {
        Ok(Raw::Null)
    }
    fn visit_some<D: Deserializer<'de>>(self, d: D) -> Result<Raw, D::Error> {
        Raw::deserialize(d)
    }
    fn visit_bool<E>(self, v: bool) -> Result<Raw, E> {
        Ok(Raw::Bool(v))
    }
    fn visit_i64<E>(self, v: i64) -> Result<Raw, E> {
        Ok(Raw::Int(v.into()))
    }
    fn visit_u64<E>(self, v: u64) -> Result<Raw, E> {
        Ok(Raw::Int(v.into()))
    }
    fn visit_i128<E>(self, v: i128) -> Result<Raw, E> {
        Ok(Raw::Int(v))
    }
    fn visit_u128<E: de::Error>(self, v: u128) -> Result<Raw, E> {
        Ok(i128::try_from(v)
            .map(Raw::Int)
            .unwrap_or(Raw::Float(v as f64)))
    }
    fn visit_f64<E>(self, v: f64) -> Result<Raw, E> {
        Ok(Raw::Float(v))
    }
    fn visit_str<E>(self, v: &str) -> Result<Raw, E> {
        Ok(Raw::Str(v.to_owned()))
    }
    fn visit_string<E>(self, v: String) -> Result<Raw, E> {
        Ok(Raw::Str(v))
    }
    fn visit_bytes<E>(self, v: &[u8]) -> Result<Raw, E> {
        Ok(Raw::Str(String::from_utf8_lossy(v).into_owned()))
    }
    fn visit_seq<A: SeqAccess<'de>>(self, mut a: A) -> Result<Raw, A::Error> {
        let mut v = Vec::new();
        while let Some(x) = a.next_element()? {
            v.push(x);
        }
        Ok(Raw::Seq(v))
    }
    fn visit_map<A: MapAccess<'de>>(self, mut a: A) -> Result<Raw, A::Error> {
        let mut v = Vec::new();
        while let Some(entry) = a.next_entry()? {
            v.push(entry);
        }
        Ok(Raw::Map(v))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The fast path must build exactly serde-saphyr's tree, or decline.
    fn agree(text: &str) -> bool {
        match both_readers(0, text) {
            None => false,
            Some((fast, slow)) => {
                assert_eq!(Ok(fast), slow, "the readers disagree on {text:?}");
                true
            }
        }
    }

    #[test]
    fn fast_reader_builds_serde_saphyrs_tree() {
        let mut taken = 0;
        let mut texts: Vec<String> = Vec::new();
        for r in crate::rules::RULES {
            texts.push(r.failing.to_string());
            texts.push(r.passing.to_string());
        }
        let examples = concat!(env!("CARGO_MANIFEST_DIR"), "/examples");
        for dir in [examples.to_string(), format!("{examples}/catalog")] {
            for e in std::fs::read_dir(dir).unwrap() {
                let p = e.unwrap().path();
                if p.extension().is_some_and(|x| x == "yaml") {
                    texts.push(std::fs::read_to_string(p).unwrap());
                }
            }
        }
        for t in [
            "a: 1\nb: -2\nc: 2.5\nd: -0.125\ne: 10 kHz\nf: ~\ng: null\nh: true\ni: false\n",
            "a: [1, 2, {b: c}]\nd: {e: [f, 'g', \"h\"]}\n",
            "- a\n- - b\n  - c\n-\n- {}\n- []\n",
            "a: |\n  text\n  more\nb: >\n  folded\n",
            "# comment\na: 1 # trailing\n\n# more\n",
            "k: v\n",
            "",
            "plain text",
            "a:\n  b:\n    c: 0\n",
            "x: µs and unicode ü\ny: \"\\u00e9\"\n",
            "a: 18446744073709551615\n",
            "a: 0.1\nb: 1.0\nc: 100.25\nd: 0\ne: -0\n",
        ] {
            texts.push(t.to_string());
        }
        for t in &texts {
            if agree(t) {
                taken += 1;
            }
        }
        assert!(
            taken * 10 >= texts.len() * 9,
            "the fast path took only {taken} of {}",
            texts.len()
        );
    }

    #[test]
    fn fast_reader_declines_what_serde_saphyr_must_judge() {
        for t in [
            "a: &x 1\nb: *x\n",
            "a: !!str 1\n",
            "a: 1\na: 2\n",
            "a: 0x1F\n",
            "a: 1e3\n",
            "a: .inf\n",
            "a: True\n",
            "a: yes\n",
            "a: 007\n",
            "---\na: 1\n---\nb: 2\n",
            "a: [1, 2\n",
            "? [a, b]\n: c\n",
            "<<: {a: 1}\n",
        ] {
            assert!(both_readers(0, t).is_none() || agree(t), "{t:?}");
        }
        assert!(both_readers(0, "a: &x 1\nb: *x\n").is_none());
        assert!(both_readers(0, "a: 1\na: 2\n").is_none());
        assert!(both_readers(0, &"[".repeat(100)).is_none());
        // Duplicates past the searched length of a mapping, and early in it.
        let many: String = (0..40).map(|i| format!("k{i}: {i}\n")).collect();
        assert!(agree(&many));
        for dup in ["k3: x\n", "k30: x\n"] {
            let text = format!("{many}{dup}");
            assert!(both_readers(0, &text).is_none(), "{dup}");
            let e = parse(0, &text, &LineIndex::new(&text)).unwrap_err();
            assert!(
                e.message.starts_with("duplicate mapping key"),
                "{}",
                e.message
            );
        }
    }

    fn parse_str(text: &str) -> Result<Node, SyntaxError> {
        parse(0, text, &LineIndex::new(text))
    }

    #[test]
    fn spans_cover_keys_and_values() {
        let text = "rig: bay-3\nclocks:\n  - name: osc\n    frequency: 24.576 MHz\n";
        let root = parse_str(text).unwrap();
        let (k, v) = root.get("rig").unwrap();
        assert_eq!(&text[k.span.start as usize..k.span.end as usize], "rig");
        assert_eq!(&text[v.span.start as usize..v.span.end as usize], "bay-3");
        let (_, clocks) = root.get("clocks").unwrap();
        let item = &clocks.as_seq().unwrap()[0];
        let (_, f) = item.get("frequency").unwrap();
        assert_eq!(
            &text[f.span.start as usize..f.span.end as usize],
            "24.576 MHz"
        );
        // a block mapping's span runs to the end of its last value
        assert_eq!(item.span.end, f.span.end);
    }

    #[test]
    fn duplicate_key_is_located() {
        let text = "a: 1\nb: 2\na: 3\n";
        let e = parse_str(text).unwrap_err();
        assert_eq!(e.span.start, 10);
        assert!(e.message.contains("duplicate"), "{}", e.message);
    }

    #[test]
    fn several_documents_and_recursive_aliases_get_plain_messages() {
        let e = parse_str("format: 1\n---\nformat: 1\n").unwrap_err();
        assert!(
            e.message.contains("more than one YAML document"),
            "{}",
            e.message
        );
        let e = parse_str("&a [*a]\n").unwrap_err();
        assert!(e.message.contains("recursive alias"), "{}", e.message);
    }

    #[test]
    fn plain_y_and_n_stay_strings() {
        let root = parse_str("y: 1\nn: 2\n").unwrap();
        assert!(root.get("y").is_some() && root.get("n").is_some());
    }

    #[test]
    fn flow_mapping_span_includes_closing_brace() {
        let text = "a: {b: 1, c: 2}\n";
        let root = parse_str(text).unwrap();
        let (_, v) = root.get("a").unwrap();
        assert_eq!(
            &text[v.span.start as usize..v.span.end as usize],
            "{b: 1, c: 2}"
        );
    }
}
