//! The human format: miette's graphical reports, one per finding, and a summary line.

use super::{Counts, plural};
use crate::finding::{Finding, Label, Severity};
use crate::source::{Sources, Span};
use miette::{
    Diagnostic, GraphicalReportHandler, GraphicalTheme, LabeledSpan, MietteError,
    MietteSpanContents, SourceCode, SourceSpan, SpanContents,
};
use std::fmt;
use std::time::Duration;

/// Whether to colour.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Color {
    /// Colour.
    Always,
    /// No colour.
    Never,
}

struct Report {
    message: String,
    rule: &'static str,
    severity: Severity,
    help: Option<String>,
    source: Source,
    labels: Vec<LabeledSpan>,
    related: Vec<Report>,
}

impl fmt::Debug for Report {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

impl fmt::Display for Report {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

impl std::error::Error for Report {}

impl Diagnostic for Report {
    fn code<'a>(&'a self) -> Option<Box<dyn fmt::Display + 'a>> {
        if self.rule.is_empty() {
            None
        } else {
            Some(Box::new(self.rule))
        }
    }
    fn severity(&self) -> Option<miette::Severity> {
        Some(match self.severity {
            Severity::Error => miette::Severity::Error,
            Severity::Warning => miette::Severity::Warning,
            Severity::Note => miette::Severity::Advice,
        })
    }
    fn help<'a>(&'a self) -> Option<Box<dyn fmt::Display + 'a>> {
        self.help
            .as_ref()
            .map(|h| Box::new(h) as Box<dyn fmt::Display>)
    }
    fn source_code(&self) -> Option<&dyn miette::SourceCode> {
        Some(&self.source)
    }
    fn labels(&self) -> Option<Box<dyn Iterator<Item = LabeledSpan> + '_>> {
        Some(Box::new(self.labels.iter().cloned()))
    }
    fn related<'a>(&'a self) -> Option<Box<dyn Iterator<Item = &'a dyn Diagnostic> + 'a>> {
        if self.related.is_empty() {
            None
        } else {
            Some(Box::new(self.related.iter().map(|r| r as &dyn Diagnostic)))
        }
    }
}

/// A named YAML text whose columns count characters (as the JSON and SARIF output and
/// SPEC §7 do), not bytes.
struct Source {
    name: String,
    text: String,
}

impl Source {
    fn new(name: &str, text: &str) -> Self {
        Source {
            name: name.to_string(),
            text: text.to_string(),
        }
    }
}

impl SourceCode for Source {
    fn read_span<'a>(
        &'a self,
        span: &SourceSpan,
        context_lines_before: usize,
        context_lines_after: usize,
    ) -> Result<Box<dyn SpanContents<'a> + 'a>, MietteError> {
        let inner =
            self.text
                .as_str()
                .read_span(span, context_lines_before, context_lines_after)?;
        let start = inner.span().offset().min(self.text.len());
        let line_start = self.text[..start].rfind('\n').map_or(0, |i| i + 1);
        let column = self
            .text
            .get(line_start..start)
            .map_or(0, |s| s.chars().count());
        Ok(Box::new(
            MietteSpanContents::new_named(
                self.name.clone(),
                inner.data(),
                *inner.span(),
                inner.line(),
                column,
                inner.line_count(),
            )
            .with_language("yaml"),
        ))
    }
}

fn source_span(span: Span) -> SourceSpan {
    SourceSpan::new((span.start as usize).into(), span.len())
}

fn build(sources: &Sources, f: &Finding) -> Report {
    let file = sources.get(f.primary.span.file);
    let mut labels = vec![LabeledSpan::new_primary_with_span(
        Some(f.primary.text.clone()),
        source_span(f.primary.span),
    )];
    let mut elsewhere: Vec<&Label> = Vec::new();
    for l in &f.secondary {
        if l.span.file == f.primary.span.file {
            labels.push(LabeledSpan::new_with_span(
                Some(l.text.clone()),
                source_span(l.span),
            ));
        } else {
            elsewhere.push(l);
        }
    }
    // Labels in other files (an included catalog) become related notes, one per file.
    let mut related: Vec<Report> = Vec::new();
    for l in elsewhere {
        let other = sources.get(l.span.file);
        let label = LabeledSpan::new_with_span(Some(l.text.clone()), source_span(l.span));
        match related.iter_mut().find(|r| r.source.name == other.display) {
            Some(r) => r.labels.push(label),
            None => related.push(Report {
                message: format!("in {}", other.display),
                rule: "",
                severity: Severity::Note,
                help: None,
                source: Source::new(&other.display, &other.text),
                labels: vec![label],
                related: Vec::new(),
            }),
        }
    }
    Report {
        message: f.message.clone(),
        rule: f.rule,
        severity: f.severity,
        help: f.help.clone(),
        source: Source::new(&file.display, &file.text),
        labels,
        related,
    }
}

/// Render one finding.
pub fn render_finding(sources: &Sources, f: &Finding, color: Color) -> String {
    let theme = match color {
        Color::Always => GraphicalTheme::unicode(),
        Color::Never => GraphicalTheme::unicode_nocolor(),
    };
    let handler = GraphicalReportHandler::new_themed(theme)
        .with_width(100)
        .with_context_lines(1)
        .with_show_related_as_nested(true);
    let mut out = String::new();
    let report = build(sources, f);
    if handler.render_report(&mut out, &report).is_err() {
        out = format!("{}: {}\n", f.rule, f.message);
    }
    out
}

/// The summary line: counts by severity, files, channels, elapsed time.
pub fn summary(findings: &[Finding], files: usize, channels: usize, elapsed: Duration) -> String {
    let c = Counts::of(findings);
    let suppressed = if c.suppressed > 0 {
        format!(" ({} suppressed)", c.suppressed)
    } else {
        String::new()
    };
    format!(
        "{}, {}, {}{suppressed} in {}, {} ({:.0} ms)\n",
        plural(c.error, "error"),
        plural(c.warning, "warning"),
        plural(c.note, "note"),
        plural(files, "file"),
        plural(channels, "channel"),
        elapsed.as_secs_f64() * 1000.0
    )
}

/// The whole human report: every unsuppressed finding, then the summary.
pub fn render(
    sources: &Sources,
    findings: &[Finding],
    files: usize,
    channels: usize,
    elapsed: Duration,
    color: Color,
) -> String {
    let mut out = String::new();
    for f in findings.iter().filter(|f| f.suppressed.is_none()) {
        out.push_str(&render_finding(sources, f, color));
        out.push('\n');
    }
    out.push_str(&summary(findings, files, channels, elapsed));
    out
}
