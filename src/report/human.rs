//! The human format: miette's graphical reports, one per finding, and a summary line.

use super::{Counts, plural};
use crate::finding::{Finding, Label, Severity};
use crate::source::{SourceFile, Sources, Span};
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

/// A file's text as miette reads it: borrowed, not copied for every finding, and the
/// lines around a span found through the file's line index instead of a scan from the
/// start of the file (which made a report on a large file quadratic in its findings).
#[derive(Clone, Copy)]
struct FileSource<'a> {
    file: &'a SourceFile,
    language: Option<&'static str>,
}

impl FileSource<'_> {
    fn name(&self) -> &str {
        &self.file.display
    }
}

impl SourceCode for FileSource<'_> {
    fn read_span<'b>(
        &'b self,
        span: &SourceSpan,
        context_lines_before: usize,
        context_lines_after: usize,
    ) -> Result<Box<dyn SpanContents<'b> + 'b>, MietteError> {
        let text = self.file.text.as_str();
        let lines = &self.file.lines;
        let start = span.offset().min(text.len());
        let end = (span.offset() + span.len()).min(text.len()).max(start);
        // A window of whole lines, one more on each side than the context asked for;
        // miette then reads the context inside it exactly as in the whole text.
        let first = lines.line_col(text, start).0;
        let last = lines.line_col(text, end).0;
        let w_first = first.saturating_sub(context_lines_before + 1).max(1);
        let w0 = lines.offset(text, w_first, 1);
        let w1 = lines.offset(text, last + context_lines_after + 2, 1);
        let window = &text[w0..w1];
        let inner = window.read_span(
            &SourceSpan::new((start - w0).into(), end - start),
            context_lines_before,
            context_lines_after,
        )?;
        let shift = w_first - 1;
        // Columns count characters (as JSON, SARIF and SPEC §7 do), not bytes.
        let at = (inner.span().offset() + w0).min(text.len());
        let line_start = text[..at].rfind('\n').map_or(0, |i| i + 1);
        let column = text.get(line_start..at).map_or(0, |s| s.chars().count());
        let mut contents = MietteSpanContents::new_named(
            self.file.display.clone(),
            inner.data(),
            SourceSpan::new((inner.span().offset() + w0).into(), inner.span().len()),
            inner.line() + shift,
            column,
            inner.line_count() + shift,
        );
        if let Some(language) = self.language {
            contents = contents.with_language(language);
        }
        Ok(Box::new(contents))
    }
}

struct Report<'a> {
    message: String,
    rule: &'static str,
    severity: Severity,
    help: Option<String>,
    source: FileSource<'a>,
    labels: Vec<LabeledSpan>,
    related: Vec<Report<'a>>,
}

impl fmt::Debug for Report<'_> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

impl fmt::Display for Report<'_> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

impl std::error::Error for Report<'_> {}

impl Diagnostic for Report<'_> {
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

fn source_span(span: Span) -> SourceSpan {
    SourceSpan::new((span.start as usize).into(), span.len())
}

fn build<'a>(sources: &'a Sources, f: &Finding) -> Report<'a> {
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
        match related
            .iter_mut()
            .find(|r| r.source.name() == other.display)
        {
            Some(r) => r.labels.push(label),
            None => related.push(Report {
                message: format!("in {}", other.display),
                rule: "",
                severity: Severity::Note,
                help: None,
                source: FileSource {
                    file: other,
                    language: None,
                },
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
        source: FileSource {
            file,
            language: Some("yaml"),
        },
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
