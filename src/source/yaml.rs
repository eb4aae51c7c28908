//! The YAML front end: text to a tree of nodes that know their byte spans.
//!
//! serde-saphyr parses the text (with duplicate keys as errors and explicit budgets
//! against alias bombs and deep nesting); every node is wrapped in `Spanned`, and the
//! tree keeps the byte range of every key, scalar, sequence and mapping.

use super::{FileId, LineIndex, Span};
use serde::de::{self, Deserialize, Deserializer, MapAccess, SeqAccess, Visitor};
use serde_saphyr::Spanned;
use std::fmt;

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
    let mut options = serde_saphyr::Options::default();
    options.strict_booleans = true;
    options.with_snippet = false;
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
    let mut node = convert(file, text, lines, raw);
    if let NodeKind::Null = node.kind {
        // An empty document: point at its start.
        node.span = Span::point(file, 0);
    }
    Ok(node)
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
    SyntaxError {
        message: describe(e),
        span: Span::point(file, offset),
    }
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
    let kind = match raw.value {
        Raw::Null => NodeKind::Null,
        Raw::Bool(b) => NodeKind::Bool(b),
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
