//! Every `pattern`, `enum` and `type` of `schemas/rig.schema.json`, broken on purpose:
//! the `schema` findings it raises must be in our words (docs/format.md), never the
//! validator's ("does not match", "is not one of", a regular expression).
//!
//! The walk follows the schema from its root (`properties`, `items`, `$ref`, `allOf`,
//! and `then` branches with their `if` conditions met) and builds, for each keyword
//! it reaches, a document with a wrong value at that place. Keywords inside `if` and
//! `not` are conditions, not checks, and are not walked.

use foldcheck::model::schema::{RIG_SCHEMA, check};
use foldcheck::source::LineIndex;
use foldcheck::source::yaml::{Node, NodeKind, parse};
use serde_json::{Map, Value, json};
use std::collections::BTreeSet;

#[derive(Clone, Debug)]
enum Seg {
    Key(String),
    Index,
}

/// A place to break: the keyword's schema location, the instance path to it, the
/// `if` conditions to meet on the way (instance path, key, value), and the keyword.
#[derive(Debug)]
struct Target {
    location: String,
    path: Vec<Seg>,
    conditions: Vec<(Vec<Seg>, String, Value)>,
    keyword: &'static str,
    schema: Value,
}

struct Walk<'a> {
    root: &'a Value,
    targets: Vec<Target>,
}

impl Walk<'_> {
    fn visit(
        &mut self,
        node: &Value,
        location: &str,
        path: &[Seg],
        conditions: &[(Vec<Seg>, String, Value)],
        depth: usize,
    ) {
        let Some(obj) = node.as_object() else {
            return;
        };
        assert!(depth < 40, "the walk went in circles at {location}");
        for keyword in ["type", "enum", "pattern"] {
            if obj.contains_key(keyword) {
                self.targets.push(Target {
                    location: format!("{location}/{keyword}"),
                    path: path.to_vec(),
                    conditions: conditions.to_vec(),
                    keyword,
                    schema: node.clone(),
                });
            }
        }
        if let Some(r) = obj.get("$ref").and_then(Value::as_str) {
            let pointer = r.strip_prefix('#').expect("local references only");
            let target = self.root.pointer(pointer).expect("the reference resolves");
            self.visit(target, pointer, path, conditions, depth + 1);
        }
        if let Some(props) = obj.get("properties").and_then(Value::as_object) {
            for (k, v) in props {
                let mut p = path.to_vec();
                p.push(Seg::Key(k.clone()));
                self.visit(
                    v,
                    &format!("{location}/properties/{k}"),
                    &p,
                    conditions,
                    depth + 1,
                );
            }
        }
        if let Some(items) = obj.get("items") {
            let mut p = path.to_vec();
            p.push(Seg::Index);
            self.visit(
                items,
                &format!("{location}/items"),
                &p,
                conditions,
                depth + 1,
            );
        }
        if let Some(all) = obj.get("allOf").and_then(Value::as_array) {
            for (i, sub) in all.iter().enumerate() {
                self.visit(
                    sub,
                    &format!("{location}/allOf/{i}"),
                    path,
                    conditions,
                    depth + 1,
                );
            }
        }
        if let Some(then) = obj.get("then") {
            let mut c = conditions.to_vec();
            if let Some(props) = obj
                .get("if")
                .and_then(|i| i.get("properties"))
                .and_then(Value::as_object)
            {
                for (k, v) in props {
                    if let Some(value) = v.get("const") {
                        c.push((path.to_vec(), k.clone(), value.clone()));
                    }
                }
            }
            self.visit(then, &format!("{location}/then"), path, &c, depth + 1);
        }
        if let Some(otherwise) = obj.get("else") {
            self.visit(
                otherwise,
                &format!("{location}/else"),
                path,
                conditions,
                depth + 1,
            );
        }
    }
}

/// Every `type`, `enum` and `pattern` keyword of the schema outside `if`/`not`.
fn keyword_locations(v: &Value, location: &str, out: &mut BTreeSet<String>) {
    match v {
        Value::Object(o) => {
            for (k, sub) in o {
                if k == "if" || k == "not" {
                    continue;
                }
                let here = format!("{location}/{k}");
                if matches!(k.as_str(), "type" | "enum" | "pattern")
                    && !location.ends_with("/properties")
                {
                    out.insert(here.clone());
                }
                keyword_locations(sub, &here, out);
            }
        }
        Value::Array(a) => {
            for (i, sub) in a.iter().enumerate() {
                keyword_locations(sub, &format!("{location}/{i}"), out);
            }
        }
        _ => {}
    }
}

fn slot<'v>(root: &'v mut Value, path: &[Seg]) -> &'v mut Value {
    let mut v = root;
    for seg in path {
        v = match seg {
            Seg::Key(k) => {
                if !v.is_object() {
                    *v = Value::Object(Map::new());
                }
                v.as_object_mut()
                    .unwrap()
                    .entry(k.clone())
                    .or_insert(Value::Null)
            }
            Seg::Index => {
                if !v.is_array() {
                    *v = json!([null]);
                }
                &mut v.as_array_mut().unwrap()[0]
            }
        };
    }
    v
}

/// Wrong values for a keyword: a boolean and a list or a number where a type is
/// expected (the schema never takes a boolean), a near miss in case and a made-up
/// word for an enum, a name with capitals, an umlaut and a space for a pattern.
fn wrong_values(t: &Target) -> Vec<Value> {
    match t.keyword {
        "type" => {
            let types = t.schema["type"].to_string();
            let other = if types.contains("array") {
                json!(7)
            } else {
                json!([1])
            };
            vec![json!(true), other]
        }
        "enum" => {
            let first = t.schema["enum"][0].as_str().unwrap_or("x").to_uppercase();
            vec![json!(first), json!("made-up-kind")]
        }
        "pattern" => vec![json!("Träger DMS"), json!("-Bad!")],
        _ => unreachable!(),
    }
}

fn find<'n>(root: &'n Node, path: &[Seg]) -> &'n Node {
    let mut node = root;
    for seg in path {
        node = match (&node.kind, seg) {
            (NodeKind::Map(entries), Seg::Key(k)) => {
                &entries
                    .iter()
                    .find(|(key, _)| key.as_str() == Some(k))
                    .unwrap()
                    .1
            }
            (NodeKind::Seq(items), Seg::Index) => &items[0],
            _ => panic!("the document has no {seg:?} here"),
        };
    }
    node
}

/// Phrases of the validator's own messages, and the schema's regular expression.
const VALIDATOR_TEXT: &[&str] = &[
    "does not match",
    "is not one of",
    "is not of type",
    "is not of types",
    "is a required property",
    "additional properties",
    "is greater than",
    "is less than",
    "^[a-z0-9]",
    "]*$",
    "candidates",
];

#[test]
fn every_pattern_enum_and_type_breaks_into_our_words() {
    let schema: Value = serde_json::from_str(RIG_SCHEMA).unwrap();
    let mut walk = Walk {
        root: &schema,
        targets: Vec::new(),
    };
    walk.visit(&schema, "", &[], &[], 0);

    let mut expected = BTreeSet::new();
    keyword_locations(&schema, "", &mut expected);
    let reached: BTreeSet<String> = walk.targets.iter().map(|t| t.location.clone()).collect();
    let missed: Vec<&String> = expected.difference(&reached).collect();
    assert!(missed.is_empty(), "the walk never reached {missed:?}");
    assert!(
        expected.len() >= 40,
        "only {} keywords found",
        expected.len()
    );

    let mut problems = Vec::new();
    let mut documents = 0;
    for target in &walk.targets {
        for wrong in wrong_values(target) {
            let mut doc = json!({ "format": 1, "rig": "walk" });
            for (at, key, value) in &target.conditions {
                let obj = slot(&mut doc, at);
                if !obj.is_object() {
                    *obj = Value::Object(Map::new());
                }
                obj.as_object_mut()
                    .unwrap()
                    .insert(key.clone(), value.clone());
            }
            *slot(&mut doc, &target.path) = wrong.clone();
            let text = serde_json::to_string_pretty(&doc).unwrap();
            let root = parse(0, &text, &LineIndex::new(&text)).expect("JSON is YAML");
            let findings = check(&root, &text);
            documents += 1;
            let leaf = find(&root, &target.path).span;
            let here = findings.iter().any(|f| {
                f.primary.span.start < leaf.end.max(leaf.start + 1)
                    && leaf.start < f.primary.span.end.max(f.primary.span.start + 1)
            });
            if !here {
                problems.push(format!(
                    "{} with {wrong}: no finding at the value\n{text}\n{findings:#?}",
                    target.location
                ));
            }
            for f in &findings {
                let texts = std::iter::once(f.message.as_str())
                    .chain(f.help.as_deref())
                    .chain(std::iter::once(f.primary.text.as_str()));
                for t in texts {
                    if let Some(bad) = VALIDATOR_TEXT.iter().find(|b| t.contains(*b)) {
                        problems.push(format!(
                            "{} with {wrong}: `{bad}` in {t:?}",
                            target.location
                        ));
                    }
                    if t.is_empty() {
                        problems.push(format!("{}: an empty text", target.location));
                    }
                }
                if f.help.is_none() {
                    problems.push(format!(
                        "{} with {wrong}: no help for {:?}",
                        target.location, f.message
                    ));
                }
            }
        }
    }
    assert!(documents >= 80, "only {documents} documents");
    assert!(
        problems.is_empty(),
        "{} problem(s):\n{}",
        problems.len(),
        problems.join("\n")
    );
}
