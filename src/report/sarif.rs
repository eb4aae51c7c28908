//! SARIF 2.1.0 output (OASIS Static Analysis Results Interchange Format).
//!
//! One log with one run. The run's `tool.driver.rules` lists every rule of
//! [`RULES`] in registry order, so a result's `ruleIndex` is the rule's position there.
//! Choices where SARIF leaves room:
//!
//! - `run.columnKind` is `unicodeCodePoints`: columns count characters, exactly as in the
//!   JSON output (SARIF's default would be UTF-16 code units). Regions use the same
//!   1-based `startLine`/`startColumn`/`endLine`/`endColumn` as JSON's `line`, `column`,
//!   `end_line`, `end_column`; `endColumn` is one past the last character, as SARIF
//!   defines it.
//! - `artifactLocation.uri` is the file's path relative to the top of the git work
//!   tree holding the current directory (else the current directory), percent-encoded
//!   as a URI reference, with `uriBaseId` `%SRCROOT%`; `run.originalUriBaseIds` declares
//!   `%SRCROOT%` as that directory's `file:` URI. A file outside it gets an absolute
//!   `file:` URI and no `uriBaseId`.
//! - `tool.driver.informationUri` is Cargo.toml's `repository`, written only when set.
//! - A rule's `name` is omitted when it would only repeat its id (`nyquist`).
//! - The log is written as it is produced: each result is serialised to the output in
//!   turn.
//! - `message.text` is the finding's message; when the finding has a help line it
//!   follows as a second sentence (`"<message>. <help>."`). The primary label's text is
//!   `locations[0].message`, each secondary label a `relatedLocations` entry with
//!   `id` 0, 1, … in label order.
//! - A verified fix is the result's one `fixes` entry: an `artifactChange` per file,
//!   each edit a `replacement` with a `deletedRegion` (byte offset and length, plus the
//!   line and column region) and `insertedContent`.
//! - A suppressed finding is listed with `suppressions: [{kind: "inSource",
//!   justification: <reason>}]`.
//! - `properties` holds `channel` and the machine-readable `values` (docs/model.md) when
//!   present.
//! - A rule's `fullDescription` is its explanation with the paragraphs unwrapped; its
//!   `help` carries the full text of `foldcheck rules RULE` (plain and Markdown), with
//!   the failing and passing examples.

use crate::finding::{Finding, Label, Severity};
use crate::rules::{RULES, Rule, describe};
use crate::source::Sources;
use serde::ser::{Serialize, SerializeMap, Serializer};
use serde_json::{Map, Value, json};
use std::io::Write;
use std::path::{Path, PathBuf};

/// The SARIF version written.
pub const SARIF_VERSION: &str = "2.1.0";

/// The `$schema` written: the `$id` of the OASIS SARIF 2.1.0 schema.
pub const SARIF_SCHEMA: &str = "https://raw.githubusercontent.com/oasis-tcs/sarif-spec/master/Schemata/sarif-schema-2.1.0.json";

/// The `uriBaseId` every artifact URI under the base directory is relative to.
pub const SRCROOT: &str = "%SRCROOT%";

/// The directory `%SRCROOT%` stands for: the top of the git work tree holding the
/// current directory (docs/output.md), else the current directory itself.
pub fn uri_base() -> PathBuf {
    let cwd = crate::campaign::absolute(Path::new("."));
    crate::root::git_top(&cwd).unwrap_or(cwd)
}

/// Render findings as a SARIF 2.1.0 log with one run (the text [`write()`] writes).
pub fn render(sources: &Sources, findings: &[Finding]) -> String {
    let mut out = Vec::new();
    write(&mut out, sources, findings, &uri_base()).expect("writing to memory does not fail");
    String::from_utf8(out).expect("serde_json writes UTF-8")
}

/// Write findings as a SARIF 2.1.0 log with one run to `out`, each result serialised
/// straight to the writer as it is produced: no tree of all results is built.
/// Artifact URIs are relative to `base`, declared as `%SRCROOT%`.
pub fn write<W: Write>(
    out: &mut W,
    sources: &Sources,
    findings: &[Finding],
    base: &Path,
) -> std::io::Result<()> {
    let pieces = findings.iter().map(|f| Ok(result_text(sources, base, f)));
    write_pieces(out, pieces, base)
}

/// How deep a result sits in the log (`runs`, the run, `results`): 8 spaces.
const RESULT_INDENT: &[u8] = b"        ";

/// One result as it stands in the log's `results` list (indented, no separator).
pub fn result_text(sources: &Sources, base: &Path, f: &Finding) -> Vec<u8> {
    let text =
        serde_json::to_string_pretty(&result(sources, base, f)).expect("JSON values serialise");
    let mut out = Vec::with_capacity(text.len() + 256);
    // Pretty JSON never holds a raw line break inside a string: indent by lines.
    for (k, line) in text.lines().enumerate() {
        if k > 0 {
            out.push(b'\n');
        }
        out.extend_from_slice(RESULT_INDENT);
        out.extend_from_slice(line.as_bytes());
    }
    out
}

/// The log from results already turned into text ([`result_text`]), in output order.
pub fn write_pieces<W: Write, P: AsRef<[u8]>>(
    out: &mut W,
    pieces: impl IntoIterator<Item = std::io::Result<P>>,
    base: &Path,
) -> std::io::Result<()> {
    // The log around an empty result list, split where the results go.
    let log = Log {
        sources: &Sources::new(),
        findings: &[],
        base,
    };
    let frame = serde_json::to_string_pretty(&log).map_err(std::io::Error::from)?;
    const EMPTY: &str = "\"results\": []";
    let at = frame.rfind(EMPTY).expect("the log has a result list") + EMPTY.len() - 1;
    let (head, tail) = frame.split_at(at);
    out.write_all(head.as_bytes())?;
    let mut empty = true;
    for p in pieces {
        out.write_all(if empty { b"\n" } else { b",\n" })?;
        out.write_all(p?.as_ref())?;
        empty = false;
    }
    if !empty {
        out.write_all(b"\n      ")?;
    }
    out.write_all(tail.as_bytes())?;
    out.write_all(b"\n")
}

/// The whole log, serialised field by field (key order as written).
struct Log<'a> {
    sources: &'a Sources,
    findings: &'a [Finding],
    base: &'a Path,
}

/// The run's `tool` (the driver's name, version and rule table), already written out.
/// It depends on nothing but the build, so it is rendered once per process, indented for
/// its place in the log (`runs[0].tool`, three levels deep), and copied into every log
/// verbatim: the rule table, with every rule's full help text, is most of a small log.
fn tool() -> &'static serde_json::value::RawValue {
    static TOOL: std::sync::OnceLock<Box<serde_json::value::RawValue>> = std::sync::OnceLock::new();
    TOOL.get_or_init(|| {
        let mut driver = Map::new();
        driver.insert("name".into(), json!("foldcheck"));
        driver.insert("version".into(), json!(env!("CARGO_PKG_VERSION")));
        // Only when Cargo.toml names a repository (docs/output.md).
        let repository = env!("CARGO_PKG_REPOSITORY");
        if !repository.is_empty() {
            driver.insert("informationUri".into(), json!(repository));
        }
        driver.insert(
            "rules".into(),
            Value::Array(RULES.iter().map(|r| rule(r)).collect()),
        );
        let pretty = serde_json::to_string_pretty(&json!({ "driver": driver }))
            .expect("a JSON value serialises");
        // The pretty printer indents by two spaces a level; `tool` sits at level 3, so
        // every line after the first moves right by six spaces.
        let indented = pretty.replace('\n', "\n      ");
        serde_json::value::RawValue::from_string(indented).expect("the text is JSON")
    })
}

/// The log's one run.
struct Run<'a>(&'a Log<'a>);

/// The run's results, serialised one at a time.
struct Results<'a>(&'a Log<'a>);

impl Serialize for Log<'_> {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        let mut m = s.serialize_map(Some(3))?;
        m.serialize_entry("$schema", SARIF_SCHEMA)?;
        m.serialize_entry("version", SARIF_VERSION)?;
        m.serialize_entry("runs", &[Run(self)])?;
        m.end()
    }
}

impl Serialize for Run<'_> {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        let mut m = s.serialize_map(Some(4))?;
        m.serialize_entry("tool", tool())?;
        m.serialize_entry(
            "originalUriBaseIds",
            &json!({ SRCROOT: { "uri": base_uri(self.0.base) } }),
        )?;
        m.serialize_entry("columnKind", "unicodeCodePoints")?;
        m.serialize_entry("results", &Results(self.0))?;
        m.end()
    }
}

impl Serialize for Results<'_> {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        let log = self.0;
        s.collect_seq(
            log.findings
                .iter()
                .map(|f| result(log.sources, log.base, f)),
        )
    }
}

/// The base directory as an absolute `file:` URI ending in `/`.
fn base_uri(base: &Path) -> String {
    let mut u = uri(&base.to_string_lossy());
    if !u.ends_with('/') {
        u.push('/');
    }
    u
}

/// A file's `artifactLocation`: relative to `base` with `uriBaseId` `%SRCROOT%` when
/// the file lies below it, else an absolute `file:` URI.
fn artifact_location(file: &crate::source::SourceFile, base: &Path) -> Value {
    let abs = crate::campaign::absolute(&file.path);
    match abs.strip_prefix(base) {
        Ok(rel) if !rel.as_os_str().is_empty() => {
            let rel = rel
                .components()
                .map(|c| encode(&c.as_os_str().to_string_lossy()))
                .collect::<Vec<_>>()
                .join("/");
            json!({ "uri": rel, "uriBaseId": SRCROOT })
        }
        _ => json!({ "uri": uri(&abs.to_string_lossy()) }),
    }
}

/// SARIF's name for a severity.
fn level(s: Severity) -> &'static str {
    match s {
        Severity::Error => "error",
        Severity::Warning => "warning",
        Severity::Note => "note",
    }
}

/// A rule as a SARIF `reportingDescriptor`.
fn rule(r: &Rule) -> Value {
    let mut o = Map::new();
    o.insert("id".into(), json!(r.name));
    // SARIF validators ask to omit a `name` that only repeats the `id` (one-word rules
    // such as `nyquist`: SARIF1001 compares them ignoring case).
    let name = pascal_case(r.name);
    if !name.eq_ignore_ascii_case(r.name) {
        o.insert("name".into(), json!(name));
    }
    o.insert("shortDescription".into(), json!({ "text": r.summary }));
    o.insert(
        "fullDescription".into(),
        json!({ "text": unwrap_paragraphs(r.explanation) }),
    );
    o.insert(
        "help".into(),
        json!({ "text": describe(r), "markdown": help_markdown(r) }),
    );
    o.insert(
        "defaultConfiguration".into(),
        json!({ "level": level(r.severity) }),
    );
    Value::Object(o)
}

/// A rule's friendly SARIF `name`: its kebab-case name in PascalCase
/// (`alias-rejection` → `AliasRejection`), as SARIF's reportingDescriptor.name asks.
pub fn pascal_case(name: &str) -> String {
    name.split('-')
        .map(|w| {
            let mut c = w.chars();
            c.next()
                .map(|f| f.to_uppercase().chain(c).collect::<String>())
                .unwrap_or_default()
        })
        .collect()
}

/// Join the hard-wrapped lines of each paragraph; paragraphs stay apart.
fn unwrap_paragraphs(text: &str) -> String {
    text.split("\n\n")
        .map(|p| p.split_whitespace().collect::<Vec<_>>().join(" "))
        .filter(|p| !p.is_empty())
        .collect::<Vec<_>>()
        .join("\n\n")
}

/// The rule's text as Markdown, with the examples as YAML code blocks.
fn help_markdown(r: &Rule) -> String {
    format!(
        "**{}** ({} by default): {}\n\n{}\n\nRaises it:\n\n```yaml\n{}```\n\nPasses:\n\n```yaml\n{}```\n",
        r.name,
        level(r.severity),
        r.summary,
        unwrap_paragraphs(r.explanation),
        r.failing,
        r.passing
    )
}

/// One finding as a SARIF `result`.
fn result(sources: &Sources, base: &Path, f: &Finding) -> Value {
    let mut o = Map::new();
    o.insert("ruleId".into(), json!(f.rule));
    if let Some(i) = RULES.iter().position(|r| r.name == f.rule) {
        o.insert("ruleIndex".into(), json!(i));
    }
    o.insert("level".into(), json!(level(f.severity)));
    o.insert(
        "message".into(),
        json!({ "text": crate::source::escape_control(&message_text(f)) }),
    );
    o.insert(
        "locations".into(),
        json!([location(sources, base, &f.primary, None)]),
    );
    if !f.secondary.is_empty() {
        let related: Vec<Value> = f
            .secondary
            .iter()
            .enumerate()
            .map(|(i, l)| location(sources, base, l, Some(i)))
            .collect();
        o.insert("relatedLocations".into(), Value::Array(related));
    }
    if let Some(fp) = &f.fingerprint {
        o.insert(
            "partialFingerprints".into(),
            json!({ crate::fingerprint::SCHEME: fp }),
        );
    }
    if let Some(reason) = &f.suppressed {
        o.insert(
            "suppressions".into(),
            json!([{ "kind": "inSource", "justification": reason }]),
        );
    }
    if let Some(fix) = &f.fix {
        o.insert("fixes".into(), json!([sarif_fix(sources, base, fix)]));
    }
    let mut props = Map::new();
    if let Some(c) = &f.channel {
        props.insert("channel".into(), json!(c));
    }
    if !f.values.is_empty() {
        props.insert("values".into(), Value::Object(f.values.clone()));
    }
    if !props.is_empty() {
        o.insert("properties".into(), Value::Object(props));
    }
    Value::Object(o)
}

/// A verified fix as a SARIF `fix`: one `artifactChange` per file, each edit a
/// `replacement` whose `deletedRegion` is given by byte offset and length (with the
/// same line and column region as results) and whose `insertedContent` is the new text.
fn sarif_fix(sources: &Sources, base: &Path, fix: &crate::finding::Fix) -> Value {
    let mut by_file: Vec<(crate::source::FileId, Vec<Value>)> = Vec::new();
    let mut edits: Vec<_> = fix.edits.iter().collect();
    edits.sort_by_key(|e| (e.span.file, e.span.start));
    for e in edits {
        let file = sources.get(e.span.file);
        let (start_line, start_column) = file.line_col(e.span.start);
        let (end_line, end_column) = file.line_col(e.span.end);
        let replacement = json!({
            "deletedRegion": {
                "byteOffset": e.span.start,
                "byteLength": e.span.len(),
                "startLine": start_line,
                "startColumn": start_column,
                "endLine": end_line,
                "endColumn": end_column,
            },
            "insertedContent": { "text": e.replacement },
        });
        match by_file.last_mut() {
            Some((f, list)) if *f == e.span.file => list.push(replacement),
            _ => by_file.push((e.span.file, vec![replacement])),
        }
    }
    json!({
        "description": { "text": fix.description },
        "artifactChanges": by_file
            .into_iter()
            .map(|(f, replacements)| json!({
                "artifactLocation": artifact_location(sources.get(f), base),
                "replacements": replacements,
            }))
            .collect::<Vec<_>>(),
    })
}

/// The message, with the help as a second sentence.
fn message_text(f: &Finding) -> String {
    let sentence = |s: &str| {
        if s.ends_with('.') {
            s.to_string()
        } else {
            format!("{s}.")
        }
    };
    match &f.help {
        Some(h) if !h.is_empty() => format!("{} {}", sentence(&f.message), sentence(h)),
        _ => f.message.clone(),
    }
}

/// A labelled span as a SARIF `location` (with an `id` when it is a related location).
fn location(sources: &Sources, base: &Path, label: &Label, id: Option<usize>) -> Value {
    let file = sources.get(label.span.file);
    let (start_line, start_column) = file.line_col(label.span.start);
    let (end_line, end_column) = file.line_col(label.span.end);
    let mut o = Map::new();
    if let Some(id) = id {
        o.insert("id".into(), json!(id));
    }
    o.insert(
        "physicalLocation".into(),
        json!({
            "artifactLocation": artifact_location(file, base),
            "region": {
                "startLine": start_line,
                "startColumn": start_column,
                "endLine": end_line,
                "endColumn": end_column,
            },
        }),
    );
    if !label.text.is_empty() {
        o.insert(
            "message".into(),
            json!({ "text": crate::source::escape_control(&label.text) }),
        );
    }
    Value::Object(o)
}

/// A display path as a URI reference (RFC 3986): a relative path stays relative; an
/// absolute one (as the platform reads it) becomes a `file:` URI (RFC 8089):
/// `/srv/rigs/a.rig.yaml` → `file:///srv/rigs/a.rig.yaml`, and on Windows
/// `C:/rigs/a.rig.yaml` → `file:///C:/rigs/a.rig.yaml`, `//host/share/a.rig.yaml` →
/// `file://host/share/a.rig.yaml`. Every byte outside the unreserved set and `/` is
/// percent-encoded, so a `:` in a relative path cannot be read as a scheme.
pub fn uri(display: &str) -> String {
    // A backslash separates directories only on Windows; elsewhere it is a character
    // of the name (`bad\name.rig.yaml`), percent-encoded like any other.
    let path = if cfg!(windows) {
        display.replace('\\', "/")
    } else {
        display.to_string()
    };
    if !std::path::Path::new(display).is_absolute() {
        return encode(&path);
    }
    let b = path.as_bytes();
    if b.len() >= 2 && b[0].is_ascii_alphabetic() && b[1] == b':' {
        // A drive keeps its colon.
        format!("file:///{}{}", &path[..2], encode(&path[2..]))
    } else if cfg!(windows) && path.starts_with("//") {
        format!("file:{}", encode(&path))
    } else {
        format!("file://{}", encode(&path))
    }
}

fn encode(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for &byte in s.as_bytes() {
        if byte.is_ascii_alphanumeric() || matches!(byte, b'-' | b'.' | b'_' | b'~' | b'/') {
            out.push(char::from(byte));
        } else {
            out.push_str(&format!("%{byte:02X}"));
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    // RFC 3986 §2.1–2.3: unreserved characters stay, everything else is %XX of its
    // UTF-8 bytes in upper-case hex.
    #[test]
    fn relative_paths_stay_relative_and_are_percent_encoded() {
        assert_eq!(
            uri("rigs/bay-3.rig.yaml"),
            "rigs/bay-3.rig.yaml".to_string()
        );
        assert_eq!(uri("../catalog/lab.yaml"), "../catalog/lab.yaml");
        assert_eq!(uri("my rigs/bay 3.rig.yaml"), "my%20rigs/bay%203.rig.yaml");
        assert_eq!(uri("a:b.rig.yaml"), "a%3Ab.rig.yaml");
        assert_eq!(uri("µ#%.rig.yaml"), "%C2%B5%23%25.rig.yaml");
        if cfg!(windows) {
            assert_eq!(uri("rigs\\bay.rig.yaml"), "rigs/bay.rig.yaml");
        } else {
            assert_eq!(uri("bad\\name.rig.yaml"), "bad%5Cname.rig.yaml");
        }
    }

    // RFC 8089 (the `file` URI scheme): `file:///path`, `file:///C:/path`,
    // `file://host/share/path`.
    #[test]
    fn absolute_paths_become_file_uris() {
        #[cfg(unix)]
        {
            assert_eq!(
                uri("/srv/rigs/a b.rig.yaml"),
                "file:///srv/rigs/a%20b.rig.yaml"
            );
            // Not absolute on Unix: a directory named `C:`.
            assert_eq!(uri("C:/rigs/a.rig.yaml"), "C%3A/rigs/a.rig.yaml");
        }
        #[cfg(windows)]
        {
            assert_eq!(
                uri("C:/rigs/a b.rig.yaml"),
                "file:///C:/rigs/a%20b.rig.yaml"
            );
            assert_eq!(uri("C:\\rigs\\a.rig.yaml"), "file:///C:/rigs/a.rig.yaml");
            assert_eq!(
                uri("//host/share/a.rig.yaml"),
                "file://host/share/a.rig.yaml"
            );
        }
    }

    #[test]
    fn help_becomes_the_second_sentence() {
        let span = crate::source::Span::point(0, 0);
        let f = crate::declared::NYQUIST.finding(span, "x", "too slow");
        assert_eq!(message_text(&f), "too slow");
        let f = f.with_help("divide by less");
        assert_eq!(message_text(&f), "too slow. divide by less.");
    }

    #[test]
    fn rule_names_are_pascal_case() {
        assert_eq!(pascal_case("alias-rejection"), "AliasRejection");
        assert_eq!(pascal_case("nyquist"), "Nyquist");
        assert_eq!(pascal_case("yaml-syntax"), "YamlSyntax");
    }

    #[test]
    fn paragraphs_are_unwrapped() {
        assert_eq!(unwrap_paragraphs("a b\nc\n\nd\ne\n"), "a b c\n\nd e");
    }
}
