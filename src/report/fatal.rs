//! Errors that stop a run (exit status 2), for stderr. A settings file error with a
//! place is rendered like a finding (the same excerpt, label and help layout as the
//! human report), under the rule-like code `settings`; every command prints it so.

use super::human::{self, Color};
use crate::campaign::{self, Fatal};
use crate::finding::{Finding, Label, Severity};
use crate::settings::SettingsError;
use crate::source::{Sources, Span};
use std::path::Path;

/// The error as text, without the `foldcheck: ` prefix the command adds: a settings
/// error with a place as "invalid settings file" and the finding's rendering, any other
/// error as its one-line message.
pub fn render(e: &Fatal, color: Color) -> String {
    match e {
        Fatal::Settings(s) => match settings_finding(s) {
            Some((sources, f)) => format!(
                "invalid settings file\n{}",
                human::render_finding(&sources, &f, color).trim_end()
            ),
            None => e.to_string(),
        },
        other => other.to_string(),
    }
}

/// A settings error as a finding in its own one-file [`Sources`], when it has a place.
pub fn settings_finding(s: &SettingsError) -> Option<(Sources, Finding)> {
    let span = s.span.as_ref()?;
    let mut sources = Sources::new();
    let cwd = campaign::absolute(Path::new("."));
    let shown = if s.path.is_absolute() {
        campaign::relative_path(&cwd, &s.path)
    } else {
        s.path.to_string_lossy().replace('\\', "/")
    };
    let file = sources.add(&s.path, shown, s.text.clone());
    let len = u32::try_from(s.text.len()).ok()?;
    let start = u32::try_from(span.start).ok()?.min(len);
    let end = u32::try_from(span.end).ok()?.clamp(start, len);
    let f = Finding::new(
        "settings",
        Severity::Error,
        Label::new(Span { file, start, end }, "here"),
        s.message.clone(),
    )
    .with_help(
        "see docs/format.md (settings) or `foldcheck schema --settings` for what the file may hold",
    );
    Some((sources, f))
}
