//! The one finding type every stage produces and every renderer renders.

use crate::source::Span;
use serde_json::{Map, Value};

/// How serious a finding is.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Severity {
    /// Informational.
    Note,
    /// Probably wrong.
    Warning,
    /// Wrong.
    Error,
}

impl Severity {
    /// The name used in output and settings.
    pub fn as_str(self) -> &'static str {
        match self {
            Severity::Note => "note",
            Severity::Warning => "warning",
            Severity::Error => "error",
        }
    }

    /// Parse `error`, `warning` or `note`.
    pub fn parse(s: &str) -> Option<Severity> {
        match s {
            "error" => Some(Severity::Error),
            "warning" => Some(Severity::Warning),
            "note" => Some(Severity::Note),
            _ => None,
        }
    }
}

/// The input rules (README, "Limits"): they say the file could not be read
/// as a rig, so they are always errors. A settings file may not name them and a
/// suppression comment may not silence them.
pub const INPUT_RULES: &[&str] = &[
    "yaml-syntax",
    "schema",
    "quantity",
    "duplicate-name",
    "unknown-reference",
    "include",
    "clock-cycle",
    "missing-band",
];

/// Whether `rule` is one of the [`INPUT_RULES`].
pub fn is_input_rule(rule: &str) -> bool {
    INPUT_RULES.contains(&rule)
}

/// A span with a short text.
#[derive(Clone, Debug, PartialEq)]
pub struct Label {
    /// Where.
    pub span: Span,
    /// What is there, e.g. "divides 24.576 MHz by 480".
    pub text: String,
}

impl Label {
    /// A label.
    pub fn new(span: Span, text: impl Into<String>) -> Self {
        Label {
            span,
            text: text.into(),
        }
    }
}

/// One diagnostic.
#[derive(Clone, Debug, PartialEq)]
pub struct Finding {
    /// The rule's name (the interface: output, settings and suppressions use it).
    pub rule: &'static str,
    /// Severity after settings.
    pub severity: Severity,
    /// The main place.
    pub primary: Label,
    /// Places that contributed.
    pub secondary: Vec<Label>,
    /// One clause with the numbers and units; lowercase start, no final period.
    pub message: String,
    /// What to change.
    pub help: Option<String>,
    /// The channel the finding is about, if any.
    pub channel: Option<String>,
    /// Machine-readable values (docs/model.md).
    pub values: Map<String, Value>,
    /// The reason given by a suppression comment that covers this finding.
    pub suppressed: Option<String>,
    /// The subject key path this finding is about (`channel/<name>`,
    /// `group/<name>/pair/<a>/<b>`, `channels/<name>/filters/2/cutoff`, ...): with the
    /// rule and the owner it makes the finding's fingerprint (docs/output.md).
    pub subject: Option<String>,
    /// The fingerprint (16 lowercase hex digits), set once the campaign is known
    /// (`crate::fingerprint`).
    pub fingerprint: Option<String>,
    /// The file whose owner owns this finding when that is not the file of its primary
    /// span: the rig that raised a finding about something a catalog defines.
    pub owner_file: Option<crate::source::FileId>,
    /// A machine-readable fix: present only once it has been verified (applying it
    /// removes this finding and adds nothing at warning or above).
    pub fix: Option<Fix>,
    /// The help to show when the proposed [`Finding::fix`] is not verified and is
    /// dropped. A rule that proposes a fix writes `help` from the candidate (it names
    /// the change) and this from the generic advice, so the help never proposes a
    /// change that does not work. `None` with a fix proposed: the help is dropped with
    /// the fix.
    pub help_without_fix: Option<String>,
}

/// One text edit: replace the bytes of `span` (end exclusive) with `replacement`.
#[derive(Clone, Debug, PartialEq, Eq, Hash)]
pub struct Edit {
    /// The bytes to replace (file and byte range).
    pub span: Span,
    /// The new text.
    pub replacement: String,
}

impl Edit {
    /// The edit that turns the scalar at `span` of `text` from `old` into `new`,
    /// touching only the bytes of the value: the whole span for a plain scalar, the
    /// inside of the quotes for a quoted one (when the quoted text holds no escapes).
    /// `None` when the source does not spell `old` in one of these ways, or when `new`
    /// would need quoting or escaping where it goes.
    pub fn replace_value(text: &str, span: Span, old: &str, new: &str) -> Option<Edit> {
        Edit::replace_within(text, span, old, 0..old.len(), new)
    }

    /// Like [`Edit::replace_value`], but replaces only the bytes `part` of the value
    /// `old` (e.g. the unit of `3 KHz`).
    pub fn replace_within(
        text: &str,
        span: Span,
        old: &str,
        part: std::ops::Range<usize>,
        new: &str,
    ) -> Option<Edit> {
        let written = text.get(span.start as usize..span.end as usize)?;
        let offset = if written == old && plain_safe(new) {
            0
        } else if written.len() == old.len() + 2
            && (written.starts_with('"') && written.ends_with('"')
                || written.starts_with('\'') && written.ends_with('\''))
            && &written[1..written.len() - 1] == old
            && !old.contains(['\\', '"', '\''])
            && !new.contains(['\\', '"', '\'', '\n', '\r'])
        {
            1
        } else {
            return None;
        };
        old.get(part.clone())?;
        let start = span.start as usize + offset + part.start;
        let end = span.start as usize + offset + part.end;
        Some(Edit {
            span: Span::new(span.file, start, end),
            replacement: new.to_string(),
        })
    }
}

impl Edit {
    /// Like [`Edit::replace_value`] when the source text is not at hand: a span exactly
    /// as long as `old` holds it plain; two bytes longer, inside quotes (a quoted value
    /// with escapes is longer still and gets no edit). Verification re-reads the edited
    /// text, so a wrong guess is dropped, never written.
    pub fn replace_spanned(span: Span, old: &str, new: &str) -> Option<Edit> {
        let inner = if span.len() == old.len() && plain_safe(new) {
            span
        } else if span.len() == old.len() + 2 && !new.contains(['\\', '"', '\'', '\n', '\r']) {
            Span::new(span.file, span.start as usize + 1, span.end as usize - 1)
        } else {
            return None;
        };
        Some(Edit {
            span: inner,
            replacement: new.to_string(),
        })
    }
}

/// Whether `s` can stand as a plain YAML scalar inside a block or flow mapping
/// unchanged (a conservative test: letters, digits, spaces inside, `.-+/_`).
fn plain_safe(s: &str) -> bool {
    !s.is_empty()
        && !s.starts_with(' ')
        && !s.ends_with(' ')
        && s.chars()
            .all(|c| c.is_alphanumeric() || matches!(c, ' ' | '.' | '-' | '+' | '/' | '_' | 'µ'))
}

/// A change that removes a finding: byte-exact edits and what they do in words.
#[derive(Clone, Debug, PartialEq)]
pub struct Fix {
    /// What the edits do, e.g. "divide `osc` by 256 instead of 512".
    pub description: String,
    /// The edits, in no particular order; they never overlap.
    pub edits: Vec<Edit>,
}

impl Finding {
    /// A finding with no secondary labels, help, channel or values yet.
    pub fn new(
        rule: &'static str,
        severity: Severity,
        primary: Label,
        message: impl Into<String>,
    ) -> Self {
        Finding {
            rule,
            severity,
            primary,
            secondary: Vec::new(),
            message: message.into(),
            help: None,
            channel: None,
            values: Map::new(),
            suppressed: None,
            subject: None,
            fingerprint: None,
            owner_file: None,
            fix: None,
            help_without_fix: None,
        }
    }

    /// Add a secondary label.
    pub fn with_label(mut self, span: Span, text: impl Into<String>) -> Self {
        self.secondary.push(Label::new(span, text));
        self
    }

    /// Set the help line.
    pub fn with_help(mut self, help: impl Into<String>) -> Self {
        self.help = Some(help.into());
        self
    }

    /// Set the help line if there is one.
    pub fn with_help_opt(mut self, help: Option<String>) -> Self {
        self.help = help;
        self
    }

    /// Name the channel.
    pub fn with_channel(mut self, channel: &str) -> Self {
        self.channel = Some(channel.to_string());
        self
    }

    /// Set the subject key path (see [`Finding::subject`]).
    pub fn with_subject(mut self, subject: impl Into<String>) -> Self {
        self.subject = Some(subject.into());
        self
    }

    /// Attach a proposed fix (it is kept only if verification confirms it).
    pub fn with_fix(mut self, fix: Fix) -> Self {
        self.fix = Some(fix);
        self
    }

    /// Propose a fix together with the two help lines: `help` names the change (shown
    /// when the fix is verified), `generic` is the advice shown when it is not.
    pub fn with_fix_and_help(
        mut self,
        fix: Fix,
        help: impl Into<String>,
        generic: Option<String>,
    ) -> Self {
        self.fix = Some(fix);
        self.help = Some(help.into());
        self.help_without_fix = generic;
        self
    }

    /// Drop the proposed fix (it did not pass verification) and fall back to the help
    /// that does not propose it.
    pub fn drop_fix(&mut self) {
        if self.fix.take().is_some() {
            self.help = self.help_without_fix.take();
        }
    }

    /// Add a machine-readable value. Non-finite numbers are clamped (JSON has no
    /// infinity): see [`crate::words::finite`].
    pub fn with_value(mut self, key: &str, value: impl Into<Value>) -> Self {
        self.values.insert(key.to_string(), value.into());
        self
    }

    /// Add a floating-point value, clamped to stay valid JSON.
    pub fn with_f64(mut self, key: &str, value: f64) -> Self {
        self.values
            .insert(key.to_string(), Value::from(crate::words::finite(value)));
        self
    }
}
