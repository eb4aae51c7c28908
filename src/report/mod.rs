//! Renderers: they render findings, never work them out.

pub mod human;
pub mod json;
pub mod sarif;

use crate::finding::{Finding, Severity};

/// Counts by severity of the findings that are not suppressed.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Counts {
    /// Errors.
    pub error: usize,
    /// Warnings.
    pub warning: usize,
    /// Notes.
    pub note: usize,
    /// Suppressed findings (any severity).
    pub suppressed: usize,
}

impl Counts {
    /// Count a list of findings.
    pub fn of(findings: &[Finding]) -> Counts {
        let mut c = Counts::default();
        for f in findings {
            if f.suppressed.is_some() {
                c.suppressed += 1;
                continue;
            }
            match f.severity {
                Severity::Error => c.error += 1,
                Severity::Warning => c.warning += 1,
                Severity::Note => c.note += 1,
            }
        }
        c
    }

    /// Whether any unsuppressed finding is at or above `level`.
    pub fn reaches(&self, level: Severity) -> bool {
        match level {
            Severity::Error => self.error > 0,
            Severity::Warning => self.error + self.warning > 0,
            Severity::Note => self.error + self.warning + self.note > 0,
        }
    }
}

/// A duration for messages: `72 h`, `1.5 min`, `40 s`, `3 d`.
pub fn format_duration(seconds: f64) -> String {
    use crate::model::quantity::sig6;
    let s = seconds;
    if s >= 2.0 * 86_400.0 {
        format!("{} d", sig6((s / 86_400.0 * 100.0).round() / 100.0))
    } else if s >= 3_600.0 {
        format!("{} h", sig6((s / 3_600.0 * 100.0).round() / 100.0))
    } else if s >= 60.0 {
        format!("{} min", sig6((s / 60.0 * 100.0).round() / 100.0))
    } else {
        format!("{} s", sig6((s * 100.0).round() / 100.0))
    }
}

/// "3 errors, 1 warning, 0 notes".
pub fn plural(n: usize, word: &str) -> String {
    if n == 1 {
        format!("1 {word}")
    } else {
        format!("{n} {word}s")
    }
}
