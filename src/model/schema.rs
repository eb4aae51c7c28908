//! Shape checking against `schemas/rig.schema.json`, with findings at exact spans.

use crate::finding::{Edit, Finding, Fix, Label, Severity};
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
        return vec![
            Finding::new(
                "schema",
                Severity::Error,
                Label::new(root.span, "empty document"),
                "the file is empty; a rig file needs at least `format` and `rig`",
            )
            .with_help("start the file with `format: 1` and `rig: <name>`"),
        ];
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
        let (node, key) = locate(root, &path);
        let what = describe_path(&path);
        let finding = match error.kind() {
            ValidationErrorKind::AdditionalProperties { unexpected } => {
                let known = known_keys(error.schema_path().as_str());
                for name in unexpected {
                    let key_span = node
                        .as_map()
                        .and_then(|m| m.iter().find(|(k, _)| k.key_text(text) == *name))
                        .map(|(k, _)| k.span)
                        .unwrap_or(node.span);
                    let mut f = Finding::new(
                        "schema",
                        Severity::Error,
                        Label::new(key_span, "unknown key"),
                        format!("unknown key `{name}` in {what}"),
                    );
                    f.help = Some(
                        match crate::resolve::closest(name, known.iter().map(String::as_str)) {
                            Some(best) => format!("did you mean `{best}`?"),
                            None if !known.is_empty() => {
                                format!("known keys here: {}", known.join(", "))
                            }
                            None => "remove the key".to_string(),
                        },
                    );
                    out.push(f);
                }
                continue;
            }
            ValidationErrorKind::Required { property } => {
                let name = property.as_str().unwrap_or("?");
                let span = key.unwrap_or_else(|| head_span(node));
                Finding::new(
                    "schema",
                    Severity::Error,
                    Label::new(span, format!("needs `{name}`")),
                    format!("missing key `{name}` in {what}"),
                )
                .with_help(format!("add `{name}`"))
            }
            ValidationErrorKind::FalseSchema => {
                let name = path.last().cloned().unwrap_or_default();
                let parent = describe_path(&path[..path.len().saturating_sub(1)]);
                Finding::new(
                    "schema",
                    Severity::Error,
                    Label::new(key.unwrap_or(node.span), "not allowed here"),
                    format!("`{name}` is not allowed in {parent}"),
                )
                .with_help(false_schema_help(&path))
            }
            ValidationErrorKind::Enum { options } => {
                let mut f = Finding::new(
                    "schema",
                    Severity::Error,
                    Label::new(node.span, "here"),
                    format!("{what}: {}", plain(&error.to_string())),
                );
                // The same word in another case has one right spelling: propose it
                // (kept only if verification confirms it).
                let allowed: Vec<&str> = options
                    .as_array()
                    .map(|a| a.iter().filter_map(Value::as_str).collect())
                    .unwrap_or_default();
                if let NodeKind::Str(written) = &node.kind {
                    let same: Vec<&&str> = allowed
                        .iter()
                        .filter(|o| o.eq_ignore_ascii_case(written))
                        .collect();
                    if let [right] = same[..]
                        && let Some(edit) = Edit::replace_value(text, node.span, written, right)
                    {
                        f = f.with_fix_and_help(
                            Fix {
                                description: format!("write `{written}` as `{right}`"),
                                edits: vec![edit],
                            },
                            format!("write `{right}` (values are case-sensitive)"),
                            Some(format!("use one of: {}", allowed.join(", "))),
                        );
                    }
                }
                f
            }
            ValidationErrorKind::Type { .. } => Finding::new(
                "schema",
                Severity::Error,
                Label::new(node.span, format!("this is a {}", node.type_name())),
                format!("{what} has the wrong type: {}", plain(&error.to_string())),
            ),
            _ => Finding::new(
                "schema",
                Severity::Error,
                Label::new(node.span, "here"),
                format!("{what}: {}", plain(&error.to_string())),
            ),
        };
        out.push(finding);
    }
    out.dedup_by(|a, b| a.primary.span == b.primary.span && a.message == b.message);
    out
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
        _ => format!("remove `{key}`"),
    }
}

/// The library's message, lowercased at the start and without a final period.
fn plain(msg: &str) -> String {
    let msg = msg.trim().trim_end_matches('.');
    let mut chars = msg.chars();
    match chars.next() {
        Some(c) => c.to_lowercase().collect::<String>() + chars.as_str(),
        None => String::new(),
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

/// "the channel at channels[3]", "the document" …
fn describe_path(path: &[String]) -> String {
    if path.is_empty() {
        return "the document".to_string();
    }
    let mut s = String::new();
    for seg in path {
        if seg.parse::<usize>().is_ok() {
            s.push_str(&format!("[{seg}]"));
        } else {
            if !s.is_empty() {
                s.push('.');
            }
            s.push_str(seg);
        }
    }
    format!("`{s}`")
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
            f.iter()
                .any(|f| f.message == "missing key `clock` in `channels[0]`"),
            "{f:#?}"
        );
    }
}
