//! JSON output, version 1 (docs/output.md).

use super::Counts;
use crate::finding::{Finding, Fix};
use crate::source::{Sources, escape_control};
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
    o.insert("file".into(), json!(escape_control(&file.display)));
    o.insert("line".into(), json!(line));
    o.insert("column".into(), json!(column));
    o.insert("end_line".into(), json!(end_line));
    o.insert("end_column".into(), json!(end_column));
    // Always present: null when the finding concerns no single channel.
    o.insert("channel".into(), json!(f.channel));
    // Text from the input is shown escaped (README, "Limits"); the JSON encoding would
    // escape a control character too, but a reader printing the message would not.
    o.insert("message".into(), json!(escape_control(&f.message)));
    if let Some(h) = &f.help {
        o.insert("help".into(), json!(escape_control(h)));
    }
    if !f.values.is_empty() {
        o.insert("values".into(), Value::Object(f.values.clone()));
    }
    if let Some(reason) = &f.suppressed {
        o.insert("suppressed".into(), json!(escape_control(reason)));
    }
    if let Some(fix) = &f.fix {
        o.insert(
            "fix".into(),
            json!({ "description": escape_control(&fix.description), "edits": fix_edits(sources, fix) }),
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
                "file": escape_control(&file.display),
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

/// The whole report. Each finding is turned into JSON text as it is reached, so the
/// report's memory is its text, not a tree of every finding as well.
pub fn render(sources: &Sources, findings: &[Finding], files: usize, channels: usize) -> String {
    let mut out = Vec::new();
    write(&mut out, sources, findings, files, channels).expect("writing to memory cannot fail");
    String::from_utf8(out).expect("JSON text is UTF-8")
}

/// The whole report, written to `w` as each finding is serialised (the report is never
/// held in memory whole: `foldcheck check --format json` streams it to stdout).
pub fn write<W: std::io::Write>(
    w: &mut W,
    sources: &Sources,
    findings: &[Finding],
    files: usize,
    channels: usize,
) -> std::io::Result<()> {
    let pieces = findings.iter().map(|f| Ok(finding_text(sources, f)));
    write_pieces(w, pieces, files, channels, Counts::of(findings))
}

/// One finding as it stands in the report's `findings` list (indented, no separator).
pub fn finding_text(sources: &Sources, f: &Finding) -> Vec<u8> {
    let text = serde_json::to_string_pretty(&finding(sources, f)).expect("JSON values serialise");
    let mut out = Vec::with_capacity(text.len() + 64);
    // Pretty JSON never holds a raw line break inside a string: indent by lines.
    for (k, line) in text.lines().enumerate() {
        if k > 0 {
            out.push(b'\n');
        }
        out.extend_from_slice(b"    ");
        out.extend_from_slice(line.as_bytes());
    }
    out
}

/// The whole report from findings already turned into text ([`finding_text`]), in
/// output order, and the counts of all findings.
pub fn write_pieces<W: std::io::Write, P: AsRef<[u8]>>(
    w: &mut W,
    pieces: impl IntoIterator<Item = std::io::Result<P>>,
    files: usize,
    channels: usize,
    c: Counts,
) -> std::io::Result<()> {
    write!(
        w,
        "{{\n  \"version\": 1,\n  \"files\": {files},\n  \"channels\": {channels},\n  \"findings\": ["
    )?;
    let mut empty = true;
    for p in pieces {
        w.write_all(if empty { b"\n" } else { b",\n" })?;
        w.write_all(p?.as_ref())?;
        empty = false;
    }
    w.write_all(if empty { b"],\n" } else { b"\n  ],\n" })?;
    write!(
        w,
        "  \"summary\": {{\n    \"error\": {},\n    \"warning\": {},\n    \"note\": {}\n  }}\n}}\n",
        c.error, c.warning, c.note
    )
}
