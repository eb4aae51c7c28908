//! JSON output, version 1 (docs/output.md).

use super::Counts;
use crate::finding::{Finding, Fix};
use crate::source::Sources;
use serde_json::{Map, Value, json};

/// The JSON Schema of this report (`foldcheck schema --output`; docs/output.md).
pub const OUTPUT_SCHEMA: &str = include_str!("../../schemas/output.schema.json");

/// One finding as a JSON object.
pub fn finding(sources: &Sources, f: &Finding) -> Value {
    let file = sources.get(f.primary.span.file);
    let (line, column) = file.line_col(f.primary.span.start);
    let (end_line, end_column) = file.line_col(f.primary.span.end);
    let mut o = Map::new();
    o.insert("rule".into(), json!(f.rule));
    o.insert("severity".into(), json!(f.severity.as_str()));
    o.insert("file".into(), json!(file.display));
    o.insert("line".into(), json!(line));
    o.insert("column".into(), json!(column));
    o.insert("end_line".into(), json!(end_line));
    o.insert("end_column".into(), json!(end_column));
    // Always present: null when the finding concerns no single channel.
    o.insert("channel".into(), json!(f.channel));
    o.insert("message".into(), json!(f.message));
    if let Some(h) = &f.help {
        o.insert("help".into(), json!(h));
    }
    if !f.values.is_empty() {
        o.insert("values".into(), Value::Object(f.values.clone()));
    }
    if let Some(reason) = &f.suppressed {
        o.insert("suppressed".into(), json!(reason));
    }
    if let Some(fix) = &f.fix {
        o.insert(
            "fix".into(),
            json!({ "description": fix.description, "edits": fix_edits(sources, fix) }),
        );
    }
    if let Some(fp) = &f.fingerprint {
        o.insert("fingerprint".into(), json!(fp));
    }
    Value::Object(o)
}

/// A fix's edits as JSON (README, "Fixing findings"): `file`, byte offsets `start` and `end` (end
/// exclusive), 1-based `line`, `column`, `end_line`, `end_column` (columns count
/// characters) and the `replacement` text; in file and offset order.
pub fn fix_edits(sources: &Sources, fix: &Fix) -> Vec<Value> {
    let mut edits: Vec<_> = fix.edits.iter().collect();
    edits.sort_by(|a, b| {
        let (fa, fb) = (sources.get(a.span.file), sources.get(b.span.file));
        fa.display
            .cmp(&fb.display)
            .then(a.span.start.cmp(&b.span.start))
    });
    edits
        .into_iter()
        .map(|e| {
            let file = sources.get(e.span.file);
            let (line, column) = file.line_col(e.span.start);
            let (end_line, end_column) = file.line_col(e.span.end);
            json!({
                "file": file.display,
                "start": e.span.start,
                "end": e.span.end,
                "line": line,
                "column": column,
                "end_line": end_line,
                "end_column": end_column,
                "replacement": e.replacement,
            })
        })
        .collect()
}

/// The whole report.
pub fn render(sources: &Sources, findings: &[Finding], files: usize, channels: usize) -> String {
    let c = Counts::of(findings);
    let v = json!({
        "version": 1,
        "files": files,
        "channels": channels,
        "findings": findings.iter().map(|f| finding(sources, f)).collect::<Vec<_>>(),
        "summary": { "error": c.error, "warning": c.warning, "note": c.note },
    });
    let mut s = serde_json::to_string_pretty(&v).expect("JSON values serialise");
    s.push('\n');
    s
}
