//! The human format: miette's graphical reports, one per finding, and a summary line.

use super::Counts;
use crate::finding::{Finding, Label, Severity};
use crate::source::{Excerpt, SourceFile, Sources, escape_control};
use crate::words::plural;
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

/// One excerpt: whole lines `[start, end)` of one file (bytes), holding one or more
/// labels and one line of context around each, placed at `vstart` in the report's own
/// offset space.
struct Segment<'a> {
    file: &'a SourceFile,
    start: usize,
    end: usize,
    first_line: usize,
    vstart: usize,
    /// The lines as shown, when they hold control characters (escaped, with the map
    /// between offsets); `None`: shown as they are.
    shown: Option<Excerpt>,
}

impl Segment<'_> {
    /// The length of the lines as shown.
    fn len(&self) -> usize {
        self.shown
            .as_ref()
            .map_or(self.end - self.start, |e| e.text.len())
    }
}

/// The text of a finding's excerpts as miette reads it. miette prints excerpts in the
/// order of their offsets; to print the primary excerpt first, then the others of its
/// file in file order, then the other files, every excerpt is given its own range of
/// offsets in that order (labels are moved with it). A span that crosses two excerpts
/// cannot be read, so miette never merges them. Text is borrowed, not copied.
struct Excerpts<'a> {
    segments: Vec<Segment<'a>>,
}

/// A gap between two excerpts' offset ranges, so that they never touch.
const GAP: usize = 16;

impl<'a> Excerpts<'a> {
    fn segment_at(&self, offset: usize, end: usize) -> Option<&Segment<'a>> {
        self.segments.iter().find(|s| {
            let vend = s.vstart + s.len();
            s.vstart <= offset && end <= vend
        })
    }
}

impl SourceCode for Excerpts<'_> {
    fn read_span<'b>(
        &'b self,
        span: &SourceSpan,
        context_lines_before: usize,
        context_lines_after: usize,
    ) -> Result<Box<dyn SpanContents<'b> + 'b>, MietteError> {
        let seg = self
            .segment_at(span.offset(), span.offset() + span.len())
            .ok_or(MietteError::OutOfBounds)?;
        let text = seg.file.text.as_str();
        let window = match &seg.shown {
            Some(e) => e.text.as_str(),
            None => &text[seg.start..seg.end],
        };
        let local = span.offset() - seg.vstart;
        let inner = window.read_span(
            &SourceSpan::new(local.into(), span.len()),
            context_lines_before,
            context_lines_after,
        )?;
        // Columns count characters (as JSON and SARIF do: docs/output.md), not bytes.
        let at = seg.start
            + seg
                .shown
                .as_ref()
                .map_or(inner.span().offset(), |e| e.original(inner.span().offset()));
        let line_start = text[..at].rfind(['\n', '\r']).map_or(0, |i| i + 1);
        let column = text.get(line_start..at).map_or(0, |s| s.chars().count());
        Ok(Box::new(MietteSpanContents::new_named(
            escape_control(&seg.file.display).into_owned(),
            inner.data(),
            SourceSpan::new(
                (inner.span().offset() + seg.vstart).into(),
                inner.span().len(),
            ),
            inner.line() + seg.first_line - 1,
            column,
            inner.line_count(),
        )))
    }
}

/// The excerpts of a finding and its labels in their offset space: the primary label's
/// excerpt first, then the others of its file in file order, then other files (by name),
/// each in file order. Labels whose lines (with one line of context) touch share an
/// excerpt.
fn excerpts<'a>(sources: &'a Sources, f: &Finding) -> (Excerpts<'a>, Vec<LabeledSpan>) {
    struct Placed<'l> {
        label: &'l Label,
        primary: bool,
        first: usize,
        last: usize,
    }
    let mut by_file: Vec<(&SourceFile, Vec<Placed>)> = Vec::new();
    let all = std::iter::once((&f.primary, true)).chain(f.secondary.iter().map(|l| (l, false)));
    for (label, primary) in all {
        let file = sources.get(label.span.file);
        let text = file.text.as_str();
        let start = (label.span.start as usize).min(text.len());
        let end = (label.span.end as usize).min(text.len()).max(start);
        let first = file.lines.line_col(text, start).0;
        // A span that ends just after a line break ends on the line before it.
        let last_at = if end > start && text.as_bytes()[end - 1] == b'\n' {
            end - 1
        } else {
            end
        };
        let last = file.lines.line_col(text, last_at).0.max(first);
        let placed = Placed {
            label,
            primary,
            first,
            last,
        };
        match by_file.iter_mut().find(|(f, _)| f.id == file.id) {
            Some((_, v)) => v.push(placed),
            None => by_file.push((file, vec![placed])),
        }
    }
    // The primary's file first, then the others by name.
    by_file[1..].sort_by(|a, b| a.0.display.cmp(&b.0.display));
    let mut clusters: Vec<(&SourceFile, usize, usize, Vec<&Placed>, bool)> = Vec::new();
    for (file, placed) in &by_file {
        let mut placed: Vec<&Placed> = placed.iter().collect();
        placed.sort_by_key(|p| (p.first, p.label.span.start));
        let line_count = file.lines.lines();
        let mut mine: Vec<(&SourceFile, usize, usize, Vec<&Placed>, bool)> = Vec::new();
        for p in placed {
            let w0 = p.first.saturating_sub(1).max(1);
            let w1 = (p.last + 1).min(line_count);
            match mine.last_mut() {
                Some(c) if w0 <= c.2 + 1 => {
                    c.2 = c.2.max(w1);
                    c.4 |= p.primary;
                    c.3.push(p);
                }
                _ => mine.push((file, w0, w1, vec![p], p.primary)),
            }
        }
        // The cluster with the primary label comes first; the rest keep file order.
        if let Some(i) = mine.iter().position(|c| c.4) {
            let c = mine.remove(i);
            mine.insert(0, c);
        }
        clusters.extend(mine);
    }
    let mut segments = Vec::new();
    let mut labels = Vec::new();
    let mut vstart = 0;
    for (file, w0, w1, placed, _) in clusters {
        let text = file.text.as_str();
        let start = file.lines.offset(text, w0, 1);
        let end = file.lines.offset(text, w1 + 1, 1).max(start);
        let end = if w1 >= file.lines.lines() {
            text.len()
        } else {
            end
        };
        let shown = Excerpt::of(&text[start..end]);
        let at = |offset: usize| {
            shown
                .as_ref()
                .map_or(offset - start, |x| x.escaped(offset - start))
        };
        for p in placed {
            let s = (p.label.span.start as usize).clamp(start, end);
            let e = (p.label.span.end as usize).clamp(s, end);
            let span = SourceSpan::new((at(s) + vstart).into(), at(e) - at(s));
            let text = Some(escape_control(&p.label.text).into_owned());
            labels.push(if p.primary {
                LabeledSpan::new_primary_with_span(text, span)
            } else {
                LabeledSpan::new_with_span(text, span)
            });
        }
        let segment = Segment {
            file,
            start,
            end,
            first_line: w0,
            vstart,
            shown,
        };
        vstart += segment.len() + GAP;
        segments.push(segment);
    }
    (Excerpts { segments }, labels)
}

struct Report<'a> {
    message: String,
    rule: &'static str,
    severity: Severity,
    help: Option<String>,
    source: Excerpts<'a>,
    labels: Vec<LabeledSpan>,
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
        Some(Box::new(self.rule))
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
}

fn build<'a>(sources: &'a Sources, f: &Finding) -> Report<'a> {
    let (source, labels) = excerpts(sources, f);
    Report {
        message: escape_control(&f.message).into_owned(),
        rule: f.rule,
        severity: f.severity,
        help: f.help.as_deref().map(|h| escape_control(h).into_owned()),
        source,
        labels,
    }
}

/// Text without ANSI escape sequences (for recognising miette's frame lines).
fn plain(line: &str) -> String {
    let mut out = String::with_capacity(line.len());
    let mut chars = line.chars();
    while let Some(c) = chars.next() {
        if c == '\u{1b}' {
            // CSI: ESC [ ... final byte in @..~
            if chars.next() == Some('[') {
                for c in chars.by_ref() {
                    if ('@'..='~').contains(&c) {
                        break;
                    }
                }
            }
        } else {
            out.push(c);
        }
    }
    out
}

/// Where an excerpt's frame starts in a line miette drew (`╭─[...]` or `╰────`).
fn frame_column(line: &str, corner: char) -> Option<usize> {
    let plain = plain(line);
    let trimmed = plain.trim_start();
    let opens = corner == '╭' && trimmed.starts_with("╭─[");
    let closes = corner == '╰'
        && trimmed.starts_with('╰')
        && trimmed.trim_end().chars().skip(1).all(|c| c == '─');
    (opens || closes).then(|| plain.len() - trimmed.len())
}

/// Join consecutive excerpts of one file and align them: miette closes an excerpt
/// (`╰────`) and opens the next (`╭─[file:line:col]`); within one file an elision mark
/// `⋮` says more simply that lines were left out. Each excerpt's line-number gutter is
/// as wide as its own largest line number; all are widened to the widest.
fn join_excerpts(rendered: &str, files: &[&str]) -> String {
    let lines: Vec<&str> = rendered.split_inclusive('\n').collect();
    // The line ranges of the excerpts and the column of their frame.
    let mut blocks: Vec<(usize, usize, usize)> = Vec::new();
    let mut open: Option<(usize, usize)> = None;
    for (i, line) in lines.iter().enumerate() {
        if let Some(col) = frame_column(line, '╭') {
            open = Some((i, col));
        } else if frame_column(line, '╰').is_some()
            && let Some((start, col)) = open.take()
        {
            blocks.push((start, i, col));
        }
    }
    if blocks.len() != files.len() {
        // Not the layout this function knows: leave miette's rendering as it is.
        return rendered.to_string();
    }
    let widest = blocks.iter().map(|b| b.2).max().unwrap_or(0);
    let mut out = String::with_capacity(rendered.len());
    let mut next_block = 0;
    let mut i = 0;
    while i < lines.len() {
        let Some(&(start, end, col)) = blocks.get(next_block).filter(|b| b.0 == i) else {
            out.push_str(lines[i]);
            i += 1;
            continue;
        };
        let pad = " ".repeat(widest - col);
        let joined_to_next =
            next_block + 1 < blocks.len() && files[next_block + 1] == files[next_block];
        let joined_to_previous = next_block > 0 && files[next_block - 1] == files[next_block];
        for (k, line) in lines.iter().enumerate().take(end + 1).skip(start) {
            if (k == start && joined_to_previous) || (k == end && joined_to_next) {
                continue;
            }
            out.push_str(&pad);
            out.push_str(line);
        }
        if joined_to_next {
            out.push_str(&" ".repeat(widest));
            out.push_str("⋮\n");
        }
        next_block += 1;
        i = end + 1;
    }
    out
}

/// Words for wrapping message and help lines: split at spaces, except between a number
/// and its unit (`1.6 kHz`, `80 dB`), so a quantity never breaks across two lines.
fn keep_quantities_whole(line: &str) -> Box<dyn Iterator<Item = textwrap::core::Word<'_>> + '_> {
    // Chunks of a word and the spaces after it.
    let mut chunks: Vec<(usize, usize)> = Vec::new();
    let mut start = 0;
    let bytes = line.as_bytes();
    let mut i = 0;
    while i < bytes.len() {
        if bytes[i] == b' ' {
            while i < bytes.len() && bytes[i] == b' ' {
                i += 1;
            }
            chunks.push((start, i));
            start = i;
        } else {
            i += 1;
        }
    }
    if start < bytes.len() {
        chunks.push((start, bytes.len()));
    }
    let is_unit = |w: &str| {
        let core = w.trim_end().trim_end_matches([',', ';', ')', '.', ':']);
        matches!(
            core,
            "Hz" | "kHz"
                | "MHz"
                | "GHz"
                | "dB"
                | "deg"
                | "s"
                | "ms"
                | "us"
                | "µs"
                | "ns"
                | "min"
                | "h"
                | "d"
                | "B"
                | "kB"
                | "MB"
                | "GB"
                | "TB"
                | "B/s"
                | "kB/s"
                | "MB/s"
                | "GB/s"
                | "bits"
        )
    };
    let mut merged: Vec<(usize, usize)> = Vec::new();
    for (a, b) in chunks {
        match merged.last_mut() {
            Some(last)
                if line[last.0..last.1]
                    .trim_end()
                    .ends_with(|c: char| c.is_ascii_digit())
                    && is_unit(&line[a..b]) =>
            {
                last.1 = b;
            }
            _ => merged.push((a, b)),
        }
    }
    Box::new(
        merged
            .into_iter()
            .map(move |(a, b)| textwrap::core::Word::from(&line[a..b])),
    )
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
        .with_word_separator(textwrap::WordSeparator::Custom(keep_quantities_whole))
        .with_word_splitter(textwrap::WordSplitter::NoHyphenation)
        .with_break_words(false);
    let mut out = String::new();
    let report = build(sources, f);
    if handler.render_report(&mut out, &report).is_err() {
        return format!("{}: {}\n", f.rule, escape_control(&f.message));
    }
    let files: Vec<&str> = report
        .source
        .segments
        .iter()
        .map(|s| s.file.display.as_str())
        .collect();
    join_excerpts(&out, &files)
}

/// The summary line: counts by severity, files, channels, elapsed time.
pub fn summary(findings: &[Finding], files: usize, channels: usize, elapsed: Duration) -> String {
    summary_of(Counts::of(findings), files, channels, elapsed)
}

/// [`summary`] from the counts.
pub fn summary_of(c: Counts, files: usize, channels: usize, elapsed: Duration) -> String {
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
    for f in findings {
        if let Some(p) = piece(sources, f, color) {
            out.push_str(&p);
        }
    }
    out.push_str(&summary(findings, files, channels, elapsed));
    out
}

/// What one finding adds to the human report: its rendering and a blank line, or
/// nothing when it is suppressed.
pub fn piece(sources: &Sources, f: &Finding, color: Color) -> Option<String> {
    if f.suppressed.is_some() {
        return None;
    }
    let mut out = render_finding(sources, f, color);
    out.push('\n');
    Some(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn quantities_stay_on_one_line_when_a_message_wraps() {
        let text = "energy at 1.4 kHz folds into the 200 Hz band at decimation stage 1 (1.6 kHz) with 0.00 dB of attenuation, 80.00 dB needed";
        for width in 20..80 {
            let opts = textwrap::Options::new(width)
                .word_separator(textwrap::WordSeparator::Custom(keep_quantities_whole));
            for line in textwrap::wrap(text, opts) {
                let line = line.trim();
                for unit in ["kHz", "Hz", "dB"] {
                    assert!(
                        !line.starts_with(unit) && !line.starts_with(&format!("{unit})")),
                        "width {width}: a line starts with its unit: {line:?}"
                    );
                }
            }
        }
    }
}
