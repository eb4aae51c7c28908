//! Every rule's name and default severity, declared once.
//!
//! The declarations live low in the stack so that every stage that reports a rule —
//! the YAML reader, the schema and quantity checks, the resolver, the include loader,
//! the suppression scanner and the physics rules — builds its findings from them
//! ([`Declared::finding`]). A rule's text (summary, explanation, examples) and its
//! check live in `crate::rules`, whose entries take their name and severity from here.
//! Settings change a finding's severity in one place only: the campaign's run, after
//! every finding is made.

use crate::finding::{Finding, Label, Severity};
use crate::source::Span;

/// A rule's name and default severity.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Declared {
    /// The name: it appears in output, settings and suppressions.
    pub name: &'static str,
    /// The default severity.
    pub severity: Severity,
}

impl Declared {
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

/// `yaml-syntax`.
pub const YAML_SYNTAX: Declared = Declared {
    name: "yaml-syntax",
    severity: Severity::Error,
};

/// `schema`.
pub const SCHEMA: Declared = Declared {
    name: "schema",
    severity: Severity::Error,
};

/// `quantity`.
pub const QUANTITY: Declared = Declared {
    name: "quantity",
    severity: Severity::Error,
};

/// `duplicate-name`.
pub const DUPLICATE_NAME: Declared = Declared {
    name: "duplicate-name",
    severity: Severity::Error,
};

/// `unknown-reference`.
pub const UNKNOWN_REFERENCE: Declared = Declared {
    name: "unknown-reference",
    severity: Severity::Error,
};

/// `include`.
pub const INCLUDE: Declared = Declared {
    name: "include",
    severity: Severity::Error,
};

/// `clock-cycle`.
pub const CLOCK_CYCLE: Declared = Declared {
    name: "clock-cycle",
    severity: Severity::Error,
};

/// `module-rate`.
pub const MODULE_RATE: Declared = Declared {
    name: "module-rate",
    severity: Severity::Error,
};

/// `missing-band`.
pub const MISSING_BAND: Declared = Declared {
    name: "missing-band",
    severity: Severity::Error,
};

/// `nyquist`.
pub const NYQUIST: Declared = Declared {
    name: "nyquist",
    severity: Severity::Error,
};

/// `sampling-margin`.
pub const SAMPLING_MARGIN: Declared = Declared {
    name: "sampling-margin",
    severity: Severity::Warning,
};

/// `alias-rejection`.
pub const ALIAS_REJECTION: Declared = Declared {
    name: "alias-rejection",
    severity: Severity::Error,
};

/// `disturbance-alias`.
pub const DISTURBANCE_ALIAS: Declared = Declared {
    name: "disturbance-alias",
    severity: Severity::Error,
};

/// `passband-droop`.
pub const PASSBAND_DROOP: Declared = Declared {
    name: "passband-droop",
    severity: Severity::Warning,
};

/// `sensor-band`.
pub const SENSOR_BAND: Declared = Declared {
    name: "sensor-band",
    severity: Severity::Warning,
};

/// `oversampling`.
pub const OVERSAMPLING: Declared = Declared {
    name: "oversampling",
    severity: Severity::Note,
};

/// `group-clock`.
pub const GROUP_CLOCK: Declared = Declared {
    name: "group-clock",
    severity: Severity::Error,
};

/// `group-phase`.
pub const GROUP_PHASE: Declared = Declared {
    name: "group-phase",
    severity: Severity::Warning,
};

/// `group-incomplete`.
pub const GROUP_INCOMPLETE: Declared = Declared {
    name: "group-incomplete",
    severity: Severity::Note,
};

/// `throughput`.
pub const THROUGHPUT: Declared = Declared {
    name: "throughput",
    severity: Severity::Error,
};

/// `storage`.
pub const STORAGE: Declared = Declared {
    name: "storage",
    severity: Severity::Error,
};

/// `unused-clock`.
pub const UNUSED_CLOCK: Declared = Declared {
    name: "unused-clock",
    severity: Severity::Note,
};

/// `modulator-unknown`.
pub const MODULATOR_UNKNOWN: Declared = Declared {
    name: "modulator-unknown",
    severity: Severity::Note,
};

/// `suppression`.
pub const SUPPRESSION: Declared = Declared {
    name: "suppression",
    severity: Severity::Warning,
};

/// Every declaration, in the order of the rule list.
pub const ALL: &[Declared] = &[
    YAML_SYNTAX,
    SCHEMA,
    QUANTITY,
    DUPLICATE_NAME,
    UNKNOWN_REFERENCE,
    INCLUDE,
    CLOCK_CYCLE,
    MODULE_RATE,
    MISSING_BAND,
    NYQUIST,
    SAMPLING_MARGIN,
    ALIAS_REJECTION,
    DISTURBANCE_ALIAS,
    PASSBAND_DROOP,
    SENSOR_BAND,
    OVERSAMPLING,
    GROUP_CLOCK,
    GROUP_PHASE,
    GROUP_INCOMPLETE,
    THROUGHPUT,
    STORAGE,
    UNUSED_CLOCK,
    MODULATOR_UNKNOWN,
    SUPPRESSION,
];

#[cfg(test)]
mod tests {
    #[test]
    fn every_rule_takes_its_declaration() {
        // The rule list and the declarations name the same rules in the same order, with
        // the same severities: a rule's entry reads both from its declaration.
        let rules: Vec<_> = crate::rules::RULES
            .iter()
            .map(|r| (r.name, r.severity))
            .collect();
        let declared: Vec<_> = super::ALL.iter().map(|d| (d.name, d.severity)).collect();
        assert_eq!(rules, declared);
    }
}
