//! Renderers: they render findings, never work them out.

pub mod fatal;
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
