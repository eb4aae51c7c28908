//! The rules. Each rule lives in its own file and describes itself; [`RULES`] lists
//! them all. Rules read the resolved [`Rig`]; they never parse, print or keep state.
//!
//! Some rules are emitted by an earlier stage (the YAML reader, the schema check, the
//! resolver, the include loader, the suppression scanner): their entries here carry the
//! description, and `check` is `None`.

mod alias_rejection;
mod budget;
mod delta_sigma;
mod disturbance_alias;
mod groups;
mod misc;
mod rates;
mod stage_rules;

pub use budget::channel_rates;
pub use groups::{PairComparison, compare_pair};

use crate::analysis::{self, RigAnalysis};
use crate::finding::{Finding, Label, Severity};
use crate::resolve::Rig;
use crate::source::Span;

/// The stage that emits a rule's findings.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Stage {
    /// Reading YAML.
    Syntax,
    /// Schema and quantities.
    Shape,
    /// Names, references, includes, the clock graph.
    Resolution,
    /// Checks on the resolved rig.
    Physics,
    /// Suppression comments.
    Suppression,
}

/// A rule's description and check.
pub struct Rule {
    /// The name: it appears in output, settings and suppressions.
    pub name: &'static str,
    /// Default severity.
    pub severity: Severity,
    /// One line.
    pub summary: &'static str,
    /// The long explanation (plain text, may span lines).
    pub explanation: &'static str,
    /// A rig file that raises exactly this rule (and nothing else).
    pub failing: &'static str,
    /// The same rig, fixed: it raises nothing.
    pub passing: &'static str,
    /// The stage that emits it.
    pub stage: Stage,
    /// The check, for physics rules: it reads the rig's analysis.
    pub check: Option<fn(&RigAnalysis, &mut Vec<Finding>)>,
}

impl Rule {
    /// A finding of this rule at its default severity.
    pub fn finding(
        &self,
        span: Span,
        label: impl Into<String>,
        message: impl Into<String>,
    ) -> Finding {
        Finding::new(self.name, self.severity, Label::new(span, label), message)
    }
}

/// Every rule, in the order `foldcheck rules` lists them.
pub static RULES: &[&Rule] = &[
    &stage_rules::YAML_SYNTAX,
    &stage_rules::SCHEMA,
    &stage_rules::QUANTITY,
    &stage_rules::DUPLICATE_NAME,
    &stage_rules::UNKNOWN_REFERENCE,
    &stage_rules::INCLUDE,
    &stage_rules::CLOCK_CYCLE,
    &misc::MODULE_RATE,
    &misc::MISSING_BAND,
    &rates::NYQUIST,
    &rates::SAMPLING_MARGIN,
    &alias_rejection::ALIAS_REJECTION,
    &disturbance_alias::DISTURBANCE_ALIAS,
    &misc::PASSBAND_DROOP,
    &misc::SENSOR_BAND,
    &misc::OVERSAMPLING,
    &groups::GROUP_CLOCK,
    &groups::GROUP_PHASE,
    &groups::GROUP_INCOMPLETE,
    &budget::THROUGHPUT,
    &budget::STORAGE,
    &misc::UNUSED_CLOCK,
    &delta_sigma::MODULATOR_UNKNOWN,
    &stage_rules::SUPPRESSION,
];

/// Look a rule up by name.
pub fn rule(name: &str) -> Option<&'static Rule> {
    RULES.iter().copied().find(|r| r.name == name)
}

/// Run every physics rule on a rig (every rule on, fixes searched).
pub fn check_rig(rig: &Rig) -> Vec<Finding> {
    let a = analysis::analyse_rig(rig, &analysis::Context::default());
    check_analysis(&a, |_| true)
}

/// Turn a rig's analysis into findings: every physics rule for which `on(name)` holds.
pub fn check_analysis(a: &RigAnalysis, on: impl Fn(&str) -> bool) -> Vec<Finding> {
    let mut out = Vec::new();
    for r in RULES {
        if let Some(check) = r.check
            && on(r.name)
        {
            check(a, &mut out);
        }
    }
    out
}

/// A rule's full text for `foldcheck rules RULE` (and generated docs).
pub fn describe(r: &Rule) -> String {
    let indent = |s: &str| s.lines().map(|l| format!("    {l}\n")).collect::<String>();
    format!(
        "{} ({} by default)\n\n{}\n\n{}\n\nRaises it:\n\n{}\nPasses:\n\n{}",
        r.name,
        r.severity.as_str(),
        r.summary,
        r.explanation.trim_end(),
        indent(r.failing),
        indent(r.passing)
    )
}
