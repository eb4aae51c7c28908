//! Shape checking against `schemas/rig.schema.json`, with findings at exact spans.

use crate::declared;
use crate::finding::{Edit, Finding, Fix};
use crate::source::Span;
use crate::source::yaml::{Node, NodeKind};
use jsonschema::error::ValidationErrorKind;
use serde_json::Value;
use std::sync::OnceLock;

/// The JSON Schema of the rig format (draft 2020-12), as shipped in `schemas/`.
pub const RIG_SCHEMA: &str = include_str!("../../schemas/rig.schema.json");

fn schema_value() -> &'static Value {
    static SCHEMA: OnceLock<Value> = OnceLock::new();
    SCHEMA.get_or_init(|| {
        serde_json::from_str(RIG_SCHEMA).expect("the embedded rig schema is valid JSON")
    })
}

fn validator() -> &'static jsonschema::Validator {
    static VALIDATOR: OnceLock<jsonschema::Validator> = OnceLock::new();
    VALIDATOR.get_or_init(|| {
        jsonschema::draft202012::new(schema_value())
            .expect("the embedded rig schema is a valid 2020-12 schema")
    })
}

/// Validate a document; every error becomes a `schema` finding at the span of the value
/// it concerns (unknown keys at the key itself, missing keys at the mapping's key).
pub fn check(root: &Node, text: &str) -> Vec<Finding> {
    if let NodeKind::Null = root.kind {
        // Only comments, blank lines and document markers: the file is empty. Anything
        // else that reads as null (`null`, `~`) is a document that holds nothing.
        let empty = text.lines().all(|l| {
            let l = l.trim_matches(|c: char| c.is_whitespace() || c == '\u{feff}');
            l.is_empty() || l.starts_with('#') || l == "---" || l == "..."
        });
        let (label, message) = if empty {
            (
                "empty document",
                "the file is empty; a rig file needs at least `format` and `rig`",
            )
        } else {
            (
                "a null document",
                "the document is null, where a rig file is a mapping with at least `format` and `rig`",
            )
        };
        return vec![
            declared::SCHEMA
                .finding(root.span, label, message)
                .with_help("start the file with `format: 1` and `rig: <name>`"),
        ];
    }
    // The clean path: a document shown to conform needs neither the validator (built on
    // first use) nor the copy of its tree into JSON. Nothing below this line runs for such
    // a document: a check that is not a JSON Schema keyword belongs elsewhere.
    if super::conform::surely_conforms(root) {
        return Vec::new();
    }
    let instance = root.to_json(text);
    let mut out: Vec<Finding> = Vec::new();
    for error in validator().iter_errors(&instance) {
        let path: Vec<String> = error
            .instance_path()
            .as_str()
            .split('/')
            .filter(|s| !s.is_empty())
            .map(|s| s.replace("~1", "/").replace("~0", "~"))
            .collect();
        let schema_path = error.schema_path().as_str().to_string();
        let (node, key) = locate(root, &path);
        let at = Place {
            root,
            text,
            path: &path,
        };
        let what = at.container();
        let finding = match error.kind() {
            ValidationErrorKind::AdditionalProperties { unexpected } => {
                let known = known_keys(&schema_path);
                for name in unexpected {
                    out.push(unknown_key(node, text, &path, &what, name, &known));
                }
                continue;
            }
            ValidationErrorKind::Required { property } => {
                let name = property.as_str().unwrap_or("?");
                let span = key.unwrap_or_else(|| head_span(node));
                declared::SCHEMA
                    .finding(
                        span,
                        format!("needs `{name}`"),
                        format!("{what} has no `{name}`"),
                    )
                    .with_help(required_help(&path, name))
            }
            ValidationErrorKind::FalseSchema => {
                let name = path.last().cloned().unwrap_or_default();
                let parent = if path.len() == 1 && root.get("catalog").is_some() {
                    "a catalog".to_string()
                } else {
                    at.parent().container()
                };
                declared::SCHEMA
                    .finding(
                        key.unwrap_or(node.span),
                        "not allowed here",
                        format!("`{name}` is not allowed in {parent}"),
                    )
                    .with_help(false_schema_help(&path))
            }
            ValidationErrorKind::Pattern { .. } => {
                let value = node.as_str().unwrap_or_default();
                let (message, help) = if schema_path.starts_with("/$defs/name/") {
                    (
                        format!(
                            "{} is not a valid name: names use lowercase letters, digits, `.`, `_` and `-`, starting with a letter or digit",
                            at.written(value)
                        ),
                        match name_suggestion(value) {
                            Some(s) => format!("try `{s}`"),
                            None => "write it in lowercase letters and digits, e.g. `bay-3-strain`"
                                .to_string(),
                        },
                    )
                } else {
                    (
                        format!(
                            "{} is not written as the rig format expects",
                            at.written(value)
                        ),
                        description_at(&schema_path)
                            .unwrap_or_else(|| "see docs/format.md".to_string()),
                    )
                };
                declared::SCHEMA
                    .finding(node.span, "not a name", message)
                    .with_help(help)
            }
            ValidationErrorKind::Enum { options } => {
                let options: Vec<&str> = options
                    .as_array()
                    .map(|a| a.iter().filter_map(Value::as_str).collect())
                    .unwrap_or_default();
                let f = enum_finding(node, &at, &options);
                // The same word in another case has one right spelling: propose it
                // (kept only if verification confirms it).
                match &node.kind {
                    NodeKind::Str(written) => {
                        let same: Vec<&&str> = options
                            .iter()
                            .filter(|o| o.eq_ignore_ascii_case(written))
                            .collect();
                        match same[..] {
                            [right] => match Edit::replace_value(text, node.span, written, right) {
                                Some(edit) => {
                                    let generic = Some(format!(
                                        "the choices are {}",
                                        join_with(&options, "and")
                                    ));
                                    let help = f.help.clone().unwrap_or_default();
                                    f.with_fix_and_help(
                                        Fix {
                                            description: format!("write `{written}` as `{right}`"),
                                            edits: vec![edit],
                                        },
                                        help,
                                        generic,
                                    )
                                }
                                None => f,
                            },
                            _ => f,
                        }
                    }
                    _ => f,
                }
            }
            ValidationErrorKind::Constant { expected_value } => {
                let expected = expected_value.to_string();
                let key = path.last().cloned().unwrap_or_default();
                let message = if key == "format" {
                    format!(
                        "`format: {}` is not a format this version of foldcheck reads",
                        shown(&node_text(node, text))
                    )
                } else {
                    format!(
                        "{} can only be `{expected}`",
                        at.written(&node_text(node, text))
                    )
                };
                declared::SCHEMA
                    .finding(node.span, format!("must be {expected}"), message)
                    .with_help(format!("write `{key}: {expected}`"))
            }
            ValidationErrorKind::Type { kind } => {
                let expected: Vec<String> = match kind {
                    jsonschema::error::TypeKind::Single(t) => vec![t.to_string()],
                    jsonschema::error::TypeKind::Multiple(ts) => {
                        ts.iter().map(|t| t.to_string()).collect()
                    }
                };
                type_finding(node, &at, &expected, &schema_path)
            }
            ValidationErrorKind::Minimum { .. }
            | ValidationErrorKind::Maximum { .. }
            | ValidationErrorKind::ExclusiveMinimum { .. }
            | ValidationErrorKind::ExclusiveMaximum { .. } => {
                let range = range_at(&schema_path).unwrap_or_else(|| "out of range".to_string());
                declared::SCHEMA
                    .finding(
                        node.span,
                        format!("must be {range}"),
                        format!(
                            "{} is out of range: it must be {range}",
                            at.written(&node_text(node, text))
                        ),
                    )
                    .with_help(range_help(&path, &range))
            }
            ValidationErrorKind::MinItems { limit } | ValidationErrorKind::MaxItems { limit } => {
                let n = node.as_seq().map_or(0, <[Node]>::len);
                let bound = if matches!(error.kind(), ValidationErrorKind::MinItems { .. }) {
                    "at least"
                } else {
                    "at most"
                };
                let (message, help) = items_wording(&at, n, bound, *limit);
                declared::SCHEMA
                    .finding(node.span, plural_items(n), message)
                    .with_help(help)
            }
            ValidationErrorKind::UniqueItems => {
                let items = node.as_seq().unwrap_or_default();
                let twice = items.iter().enumerate().find_map(|(i, a)| {
                    items[..i]
                        .iter()
                        .find(|b| b.to_json(text) == a.to_json(text))
                        .map(|_| a)
                });
                let (span, value) = match twice {
                    Some(n) => (n.span, node_text(n, text)),
                    None => (node.span, String::new()),
                };
                declared::SCHEMA
                    .finding(
                        span,
                        "listed again",
                        format!(
                            "{} lists `{}` more than once",
                            at.value_noun(),
                            shown(&value)
                        ),
                    )
                    .with_help(format!("remove the second `{}`", shown(&value)))
            }
            ValidationErrorKind::MinLength { .. } => declared::SCHEMA
                .finding(node.span, "empty", format!("{} is empty", at.value_noun()))
                .with_help("write a path, or remove the entry".to_string()),
            _ => {
                // Shapes the schema does not use today (oneOf, not, ...): say what the
                // place is for, in the schema's own description, never the validator's text.
                declared::SCHEMA
                    .finding(
                        node.span,
                        "not valid here",
                        format!(
                            "{} does not have the shape the rig format expects",
                            at.value_noun()
                        ),
                    )
                    .with_help(
                        description_at(&schema_path)
                            .unwrap_or_else(|| "see docs/format.md".to_string()),
                    )
            }
        };
        out.push(finding);
    }
    out.dedup_by(|a, b| a.primary.span == b.primary.span && a.message == b.message);
    out
}

/// A value as shown in a message: control characters escaped, long values elided.
fn shown(value: &str) -> String {
    let escaped: String = value.chars().flat_map(char::escape_debug).collect();
    let escaped = escaped.replace("\\\"", "\"").replace("\\'", "'");
    if escaped.chars().count() > 40 {
        let head: String = escaped.chars().take(37).collect();
        format!("{head}…")
    } else {
        escaped
    }
}

/// The node's source text, one line.
fn node_text(node: &Node, text: &str) -> String {
    let raw = text
        .get(node.span.start as usize..node.span.end as usize)
        .unwrap_or("");
    match &node.kind {
        NodeKind::Str(s) => s.clone(),
        _ => raw.lines().next().unwrap_or("").trim().to_string(),
    }
}

/// Where in the document an error lies, in words: "channel `a`", "filter 2 of channel
/// `a`", "decimation stage 1 of channel `b`", "the document".
struct Place<'a> {
    root: &'a Node,
    text: &'a str,
    path: &'a [String],
}

impl<'a> Place<'a> {
    fn parent(&self) -> Place<'a> {
        Place {
            root: self.root,
            text: self.text,
            path: &self.path[..self.path.len().saturating_sub(1)],
        }
    }

    /// The place as a container: the thing the path leads to.
    fn container(&self) -> String {
        if self.path.is_empty() {
            return "the document".to_string();
        }
        let mut parts: Vec<String> = Vec::new();
        let mut node = Some(self.root);
        let mut i = 0;
        while i < self.path.len() {
            let seg = &self.path[i];
            let child = node.and_then(|n| child(n, seg, self.text));
            let next_is_index = self
                .path
                .get(i + 1)
                .is_some_and(|s| s.parse::<usize>().is_ok());
            if next_is_index {
                let index: usize = self.path[i + 1].parse().unwrap_or(0);
                let item = child.and_then(|c| c.as_seq()).and_then(|s| s.get(index));
                let noun = singular(seg, i);
                let name = item
                    .and_then(|it| it.get("name"))
                    .and_then(|(_, v)| v.as_str())
                    .filter(|n| !n.is_empty());
                parts.push(match name {
                    Some(n) if i == 0 => format!("{noun} `{}`", shown(n)),
                    _ if i == 0 => format!("{noun} {} (`{seg}[{index}]`)", index + 1),
                    _ => format!("{noun} {}", index + 1),
                });
                node = item;
                i += 2;
            } else {
                parts.push(match seg.as_str() {
                    "logger" if i == 0 => "the logger".to_string(),
                    "defaults" if i == 0 => "`defaults`".to_string(),
                    "filter" => "the filter".to_string(),
                    "resonance" => "the resonance".to_string(),
                    "modulator" => "the modulator".to_string(),
                    other => format!("`{other}`"),
                });
                node = child;
                i += 1;
            }
        }
        parts.reverse();
        parts.join(" of ")
    }

    /// The value as the user wrote it, with where it is: "`divide: 0` in clock
    /// `osc3`", "`rig: Träger-DMS`", "`A` in `channels` of group `g`".
    fn written(&self, value: &str) -> String {
        match self.path.last() {
            None => format!("`{}`", shown(value)),
            Some(last) if last.parse::<usize>().is_ok() => {
                let list = &self.path[..self.path.len() - 1];
                let key = list.last().map(String::as_str).unwrap_or("");
                let owner = Place {
                    root: self.root,
                    text: self.text,
                    path: &list[..list.len().saturating_sub(1)],
                };
                if owner.path.is_empty() {
                    format!("`{}` in `{key}`", shown(value))
                } else {
                    format!("`{}` in `{key}` of {}", shown(value), owner.container())
                }
            }
            Some(key) => {
                let parent = self.parent();
                if parent.path.is_empty() {
                    format!("`{key}: {}`", shown(value))
                } else {
                    format!("`{key}: {}` in {}", shown(value), parent.container())
                }
            }
        }
    }

    /// The value at the place, named by its key: "`band` of channel `a`", "the name
    /// of channel 1", "`rig`".
    fn value_noun(&self) -> String {
        match self.path.last() {
            None => "the document".to_string(),
            Some(last) if last.parse::<usize>().is_ok() => {
                let list = &self.path[..self.path.len() - 1];
                let owner = Place {
                    root: self.root,
                    text: self.text,
                    path: &list[..list.len().saturating_sub(1)],
                };
                let index: usize = last.parse().unwrap_or(0);
                let key = list.last().map(String::as_str).unwrap_or("");
                if owner.path.is_empty() {
                    format!("entry {} of `{key}`", index + 1)
                } else {
                    format!("entry {} of `{key}` in {}", index + 1, owner.container())
                }
            }
            Some(key) => {
                let parent = self.parent();
                if parent.path.is_empty() {
                    format!("`{key}`")
                } else {
                    format!("`{key}` of {}", parent.container())
                }
            }
        }
    }
}

fn child<'n>(node: &'n Node, seg: &str, text: &str) -> Option<&'n Node> {
    match &node.kind {
        NodeKind::Map(entries) => entries
            .iter()
            .find(|(k, _)| k.key_text(text) == seg)
            .map(|(_, v)| v),
        NodeKind::Seq(items) => seg.parse::<usize>().ok().and_then(|i| items.get(i)),
        _ => None,
    }
}

/// The word for one item of a list key.
fn singular(key: &str, depth: usize) -> String {
    match (key, depth) {
        ("clocks", 0) => "clock",
        ("sensors", 0) => "sensor",
        ("modules", 0) => "module",
        ("channels", 0) => "channel",
        ("groups", 0) => "group",
        ("disturbances", 0) => "disturbance",
        ("include", 0) => "include",
        ("filters", _) => "filter",
        ("decimate", _) => "decimation stage",
        ("response", _) => "response filter",
        ("points", _) => "point",
        ("rates", _) => "rate",
        ("channels", _) => "member",
        (other, _) => return format!("entry of `{other}`"),
    }
    .to_string()
}

/// An unknown key: a concept the format expresses elsewhere, a decimal comma that a
/// flow mapping split into two entries, or a misspelt key.
fn unknown_key(
    node: &Node,
    text: &str,
    path: &[String],
    what: &str,
    name: &str,
    known: &[String],
) -> Finding {
    let entries = node.as_map().unwrap_or_default();
    let position = entries.iter().position(|(k, _)| k.key_text(text) == name);
    let key_span = position.map_or(node.span, |i| entries[i].0.span);
    // `{ frequency: 51,2 kHz }`: the comma ends the entry `frequency: 51` and starts a
    // key `2 kHz` with no value.
    if let Some(i) = position.filter(|&i| i > 0)
        && name.starts_with(|c: char| c.is_ascii_digit())
        && matches!(entries[i].1.kind, NodeKind::Null)
    {
        let (prev_key, prev_value) = &entries[i - 1];
        if matches!(prev_value.kind, NodeKind::Int(_)) {
            let whole = node_text(prev_value, text);
            let written = format!("{whole},{name}");
            let number_end = name
                .find(|c: char| !c.is_ascii_digit())
                .unwrap_or(name.len());
            let unit = name[number_end..].trim();
            let dotted = format!("{whole}.{}", &name[..number_end]);
            let suggestion = if unit.is_empty() {
                dotted
            } else {
                format!("{dotted} {unit}")
            };
            let key = prev_key.key_text(text);
            return declared::SCHEMA.finding(
prev_value.span.join(&key_span), "a decimal comma",
                format!(
                    "`{key}: {}` has a decimal comma, which ends the entry in a `{{ … }}` mapping",
                    shown(&written)
                ),
            )
            .with_help(format!("write `{key}: {}`", shown(&suggestion)));
        }
    }
    let on_channel = path.len() == 2 && path[0] == "channels";
    let in_sinc = path.last().is_some_and(|s| s == "filter")
        && node
            .get("response")
            .and_then(|(_, v)| v.as_str())
            .is_some_and(|r| r == "sinc");
    let (message, help) = match name {
        "sample-rate" | "sample_rate" | "samplerate" | "sampling-rate" | "rate" | "fs"
        | "frequency"
            if on_channel =>
        {
            (
                format!("`{name}` is not a channel key: a channel's rate comes from its `clock`"),
                format!(
                    "remove `{name}` and name a clock that runs at that rate in `clock` (then `decimate` if the rate is reduced digitally)"
                ),
            )
        }
        "cutoff" if in_sinc => (
            "a sinc stage has no cutoff: its response follows from `factor` and `order`"
                .to_string(),
            "remove `cutoff`; to move the response, change the stage's `factor` or the filter's `order`, or use a `digital` filter with edges".to_string(),
        ),
        _ => (
            format!("unknown key `{}` in {what}", shown(name)),
            match crate::words::closest(name, known.iter().map(String::as_str)) {
                Some(best) => format!("did you mean `{best}`?"),
                None if !known.is_empty() => format!(
                    "the keys here are {}",
                    known
                        .iter()
                        .map(|k| format!("`{k}`"))
                        .collect::<Vec<_>>()
                        .join(", ")
                ),
                None => "remove the key".to_string(),
            },
        ),
    };
    declared::SCHEMA
        .finding(key_span, "unknown key", message)
        .with_help(help)
}

/// What to add for a missing key.
fn required_help(path: &[String], name: &str) -> String {
    match (path.first().map(String::as_str), name) {
        (Some("channels"), "clock") => "add `clock:` with the name of the clock the channel's ADC samples on".to_string(),
        (_, "name") => "add `name:` with a name of lowercase letters, digits, `.`, `_` and `-`".to_string(),
        (Some("clocks"), "source") => "give the clock a `frequency` (a root clock) or a `source` (a derived clock)".to_string(),
        (_, "response") => "add `response:` (`butterworth`, `bessel`, `chebyshev`, `table`, `digital` or `sinc`)".to_string(),
        (None, "format") => "start the file with `format: 1`".to_string(),
        (None, "rig") => "add `rig:` with the rig's name (or `catalog:` for a catalog of shared clocks, sensors and modules)".to_string(),
        _ => format!("add `{name}`"),
    }
}

/// An enum value that is not one of the options: a case slip, a near miss, or a value
/// that belongs elsewhere.
fn enum_finding(node: &Node, at: &Place, options: &[&str]) -> Finding {
    let value = node
        .as_str()
        .map(str::to_string)
        .unwrap_or_else(|| node_text(node, at.text));
    let key = at.path.last().map(String::as_str).unwrap_or("value");
    let list = join_or(options);
    let written = at.written(&value);
    let (message, label, help) = if matches!(node.kind, NodeKind::Seq(_) | NodeKind::Map(_)) {
        (
            format!(
                "{} takes one of {list}, not a {}",
                at.value_noun(),
                node.type_name()
            ),
            format!("this is a {}", node.type_name()),
            format!("write one of {list}"),
        )
    } else if let Some(right) = options.iter().find(|o| o.eq_ignore_ascii_case(&value)) {
        (
            format!("{written}: `{key}` values are written in lowercase"),
            format!("write `{right}`"),
            format!("write `{right}`"),
        )
    } else if key == "response" && value == "sinc" {
        (
            format!("{written}: only a decimation stage's filter can be a `sinc`"),
            "not here".to_string(),
            format!(
                "move it into a `decimate` stage (`decimate: [{{ factor: 4, filter: {{ response: sinc, order: 3 }} }}]`), or use {list} here"
            ),
        )
    } else if key == "response" && (value == "digital" || value == "sinc") {
        (
            format!("{written}: a sensor's response is analog"),
            "not here".to_string(),
            format!("use {list}"),
        )
    } else {
        let best = crate::words::closest(&value.to_lowercase(), options.iter().copied());
        (
            format!("{written} is not a known `{key}`"),
            "unknown".to_string(),
            match best {
                Some(b) => format!(
                    "write `{b}` (the choices are {})",
                    join_with(options, "and")
                ),
                None => format!("write one of {list}"),
            },
        )
    };
    declared::SCHEMA
        .finding(node.span, label, message)
        .with_help(help)
}

/// "`a`, `b` or `c`": one of them.
fn join_or(options: &[&str]) -> String {
    join_with(options, "or")
}

/// "`a`, `b` and `c`" (all of them, as in "the choices are …") or with "or".
fn join_with(options: &[&str], word: &str) -> String {
    let quoted: Vec<String> = options.iter().map(|o| format!("`{o}`")).collect();
    match quoted.split_last() {
        None => String::new(),
        Some((last, [])) => last.clone(),
        Some((last, rest)) => format!("{} {word} {last}", rest.join(", ")),
    }
}

/// A value of the wrong type, said in the trade's words.
fn type_finding(node: &Node, at: &Place, expected: &[String], schema_path: &str) -> Finding {
    let key = at.path.last().map(String::as_str).unwrap_or("");
    let quantity = schema_path
        .strip_prefix("/$defs/")
        .and_then(|p| p.split('/').next())
        .and_then(|d| match d {
            "frequency" => Some(crate::model::quantity::Kind::Frequency),
            "level" => Some(crate::model::quantity::Kind::Level),
            "phase" => Some(crate::model::quantity::Kind::Phase),
            "data-size" => Some(crate::model::quantity::Kind::DataSize),
            "data-rate" => Some(crate::model::quantity::Kind::DataRate),
            "duration" => Some(crate::model::quantity::Kind::Duration),
            _ => None,
        });
    let wanted = if let Some(kind) = quantity {
        format!("a {} such as {}", kind.noun(), kind.example())
    } else if schema_path.starts_with("/$defs/name/") {
        "a name such as `bay-3-strain`".to_string()
    } else {
        let mut words: Vec<&str> = expected
            .iter()
            .map(|t| match t.as_str() {
                "string" => "text",
                "integer" => "a whole number",
                "number" => "a number",
                "array" => "a list",
                "object" => "a mapping of keys to values",
                "boolean" => "`true` or `false`",
                _ => "a value",
            })
            .collect();
        words.dedup();
        words.join(" or ")
    };
    let found = match node.kind {
        NodeKind::Null => "nothing".to_string(),
        NodeKind::Bool(b) => format!("`{b}`"),
        NodeKind::Int(_) | NodeKind::Float(_) => {
            format!("the number `{}`", node_text(node, at.text))
        }
        NodeKind::Str(_) => format!("the text `{}`", shown(&node_text(node, at.text))),
        NodeKind::Seq(_) => "a list".to_string(),
        NodeKind::Map(_) => "a mapping".to_string(),
    };
    let help = match (&node.kind, expected) {
        (NodeKind::Str(s), [t]) if t == "integer" && s.trim().parse::<i64>().is_ok() => {
            format!("write `{key}: {}` without quotes", s.trim())
        }
        (NodeKind::Int(n), [t]) if t == "array" && key == "decimate" => {
            format!(
                "write `decimate: [{{ factor: {n} }}]` (a list of stages, each with a `factor`)"
            )
        }
        (NodeKind::Seq(items), _) if quantity.is_some() && items.len() == 1 => {
            let inner = node_text(&items[0], at.text);
            if key.parse::<usize>().is_ok() {
                format!("write `{inner}` without the brackets")
            } else {
                format!("write `{key}: {inner}` without the brackets")
            }
        }
        (NodeKind::Str(s), [t]) if t == "array" => format!("write `{key}: [{}]`", shown(s)),
        _ => format!("write {wanted}"),
    };
    declared::SCHEMA
        .finding(
            node.span,
            format!("this is {found}"),
            format!("{} takes {wanted}, not {found}", at.value_noun()),
        )
        .with_help(help)
}

/// The range a number must lie in, read from the schema node that holds the bound:
/// "from 1 to 12", "at least 2", "above 1".
fn range_at(schema_path: &str) -> Option<String> {
    let parent = schema_path.rsplit_once('/')?.0;
    let node = schema_value().pointer(parent)?;
    let num = |k: &str| node.get(k).and_then(Value::as_f64);
    let fmt = |x: f64| crate::words::sig6(x);
    let whole = node.get("type").and_then(Value::as_str) == Some("integer");
    let lower = num("minimum")
        .map(|m| (m, true))
        .or_else(|| num("exclusiveMinimum").map(|m| (m, false)));
    let upper = num("maximum")
        .map(|m| (m, true))
        .or_else(|| num("exclusiveMaximum").map(|m| (m, false)));
    let kind = if whole { "a whole number " } else { "" };
    Some(match (lower, upper) {
        (Some((lo, true)), Some((hi, true))) => format!("{kind}from {} to {}", fmt(lo), fmt(hi)),
        (Some((lo, li)), Some((hi, hi_in))) => format!(
            "{kind}{} {} and {} {}",
            if li { "at least" } else { "above" },
            fmt(lo),
            if hi_in { "at most" } else { "below" },
            fmt(hi)
        ),
        (Some((lo, true)), None) => format!("{kind}of at least {}", fmt(lo)),
        (Some((lo, false)), None) => format!("{kind}above {}", fmt(lo)),
        (None, Some((hi, true))) => format!("{kind}of at most {}", fmt(hi)),
        (None, Some((hi, false))) => format!("{kind}below {}", fmt(hi)),
        (None, None) => return None,
    })
}

/// What to write for a number out of range, with the trade's reason where there is one.
fn range_help(path: &[String], range: &str) -> String {
    let key = path.last().map(String::as_str).unwrap_or("");
    let range = range.trim_start_matches("a whole number ");
    match key {
        "factor" => "a decimation stage divides the rate by a whole factor of 2 or more; remove a stage that does not reduce the rate".to_string(),
        "divide" | "multiply" => format!("a clock's `{key}` is a whole number of at least 1 (1 leaves the rate as it is)"),
        "passband-edge" | "stopband-edge" => "a digital filter's edges are fractions of its output rate, above 0 (e.g. `passband-edge: 0.45`, `stopband-edge: 0.55`)".to_string(),
        "order" => format!("write an order {range}"),
        _ => format!("write a value {range}"),
    }
}

fn plural_items(n: usize) -> String {
    if n == 1 {
        "1 entry".to_string()
    } else {
        format!("{n} entries")
    }
}

/// Too few (or too many) entries in a list.
fn items_wording(at: &Place, n: usize, bound: &str, limit: u64) -> (String, String) {
    let key = at.path.last().map(String::as_str).unwrap_or("");
    let parent = at.parent();
    match key {
        "channels" if parent.path.first().is_some_and(|s| s == "groups") => (
            format!(
                "{} has {}; a group compares two or more channels",
                parent.container(),
                if n == 1 {
                    "1 member".to_string()
                } else {
                    format!("{n} members")
                }
            ),
            "add the channels to compare, or remove the group".to_string(),
        ),
        "rates" => (
            format!("{} lists no rates", at.value_noun()),
            "list the ADC rates the module supports, or remove `rates`".to_string(),
        ),
        _ if parent.path.last().is_some_and(|s| s == "points") => (
            format!(
                "{} has {}; a point is a pair `[frequency, level]`",
                at.value_noun(),
                plural_items(n)
            ),
            "write the point as `[10 kHz, 40 dB]`".to_string(),
        ),
        "points" => (
            format!(
                "{} has {}; a table needs {bound} {limit} points",
                at.value_noun(),
                plural_items(n)
            ),
            "list the measured attenuation as `[frequency, level]` pairs".to_string(),
        ),
        _ => (
            format!(
                "{} has {}; it needs {bound} {limit}",
                at.value_noun(),
                plural_items(n)
            ),
            format!("give it {bound} {limit} entries"),
        ),
    }
}

/// The schema's own description of the node that holds the failing keyword.
fn description_at(schema_path: &str) -> Option<String> {
    let parent = schema_path.rsplit_once('/')?.0;
    schema_value()
        .pointer(parent)?
        .get("description")?
        .as_str()
        .map(str::to_string)
}

/// A name written the way names are: lowercase ASCII letters and digits, `.`, `_`, `-`,
/// accents dropped (`Träger-DMS` → `trager-dms`), spaces as `-`.
fn name_suggestion(value: &str) -> Option<String> {
    let mut s = String::new();
    for c in value.chars() {
        let c = c.to_lowercase().next().unwrap_or(c);
        let mapped: &str = match c {
            'a'..='z' | '0'..='9' | '.' | '_' | '-' => {
                s.push(c);
                continue;
            }
            'à' | 'á' | 'â' | 'ã' | 'ä' | 'å' | 'ā' | 'ą' => "a",
            'æ' => "ae",
            'ç' | 'č' | 'ć' => "c",
            'ď' => "d",
            'è' | 'é' | 'ê' | 'ë' | 'ē' | 'ę' | 'ě' => "e",
            'ì' | 'í' | 'î' | 'ï' => "i",
            'ł' => "l",
            'ñ' | 'ń' | 'ň' => "n",
            'ò' | 'ó' | 'ô' | 'õ' | 'ö' | 'ø' | 'ő' => "o",
            'œ' => "oe",
            'ř' => "r",
            'ś' | 'š' => "s",
            'ß' => "ss",
            'ť' => "t",
            'ù' | 'ú' | 'û' | 'ü' | 'ů' | 'ű' => "u",
            'ý' | 'ÿ' => "y",
            'ź' | 'ż' | 'ž' => "z",
            ' ' | '/' | '\\' | ':' | ',' | '+' => "-",
            _ => "",
        };
        s.push_str(mapped);
    }
    let s = s.trim_start_matches(['.', '_', '-']).to_string();
    (!s.is_empty() && s != value).then_some(s)
}

/// Why a key is refused where the schema says `false`.
fn false_schema_help(path: &[String]) -> String {
    let key = path.last().map(String::as_str).unwrap_or("");
    match (path.first().map(String::as_str), key) {
        (Some("clocks"), "divide" | "multiply" | "source") => {
            "a root clock has a `frequency` and nothing else; a derived clock has a `source` (and `divide`/`multiply`)".to_string()
        }
        (_, "delay-samples") => {
            "give the filter's delay once: `delay` (a duration) or `delay-samples`, not both"
                .to_string()
        }
        (_, "oversampling-ratio") => {
            "give the modulator's `rate` or its `oversampling-ratio`, not both".to_string()
        }
        (Some(_), _) if path.len() == 1 => format!(
            "a catalog holds shared clocks, sensors and modules: move `{key}` to a rig file, or remove `catalog` if this file is a rig"
        ),
        _ => format!("remove `{key}`"),
    }
}

/// Follow an instance path to its node; also return the span of the key that holds it.
fn locate<'a>(root: &'a Node, path: &[String]) -> (&'a Node, Option<Span>) {
    let mut node = root;
    let mut key = None;
    for seg in path {
        let next = match &node.kind {
            NodeKind::Map(entries) => entries
                .iter()
                .find(|(k, _)| {
                    k.as_str() == Some(seg.as_str())
                        || matches!(k.kind, NodeKind::Int(i) if i.to_string() == *seg)
                })
                .map(|(k, v)| {
                    key = Some(k.span);
                    v
                }),
            NodeKind::Seq(items) => seg
                .parse::<usize>()
                .ok()
                .and_then(|i| items.get(i))
                .inspect(|_| {
                    key = None;
                }),
            _ => None,
        };
        match next {
            Some(n) => node = n,
            None => break,
        }
    }
    (node, key)
}

/// The start of a mapping: its first key, for "missing key" findings on list items.
fn head_span(node: &Node) -> Span {
    match node.as_map().and_then(|m| m.first()) {
        Some((k, v)) => k.span.join(&v.span),
        None => node.span,
    }
}

/// The property names the schema allows at a schema path ending in
/// `additionalProperties`.
fn known_keys(schema_path: &str) -> Vec<String> {
    let parent = schema_path
        .strip_suffix("/additionalProperties")
        .unwrap_or(schema_path);
    schema_value()
        .pointer(parent)
        .and_then(|s| s.get("properties"))
        .and_then(Value::as_object)
        .map(|p| p.keys().cloned().collect())
        .unwrap_or_default()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::source::LineIndex;

    fn findings(text: &str) -> Vec<Finding> {
        let root = crate::source::yaml::parse(0, text, &LineIndex::new(text)).unwrap();
        check(&root, text)
    }

    #[test]
    fn embedded_schema_compiles() {
        let _ = validator();
    }

    #[test]
    fn unknown_key_points_at_the_key_and_suggests() {
        let text = "format: 1\nrig: r\nclocks:\n  - name: osc\n    frequency: 1 MHz\nchannels:\n  - name: a\n    clock: osc\n    bnad: 2 kHz\n";
        let f = findings(text);
        assert_eq!(f.len(), 1, "{f:#?}");
        let span = f[0].primary.span;
        assert_eq!(&text[span.start as usize..span.end as usize], "bnad");
        assert_eq!(f[0].help.as_deref(), Some("did you mean `band`?"));
    }

    #[test]
    fn missing_key_points_at_the_item() {
        let text = "format: 1\nrig: r\nchannels:\n  - name: a\n    band: 2 kHz\n";
        let f = findings(text);
        assert!(
            f.iter().any(|f| f.message == "channel `a` has no `clock`"),
            "{f:#?}"
        );
    }
}
