//! The rule registry: unique names, and every rule's own examples behave as documented
//! (the failing example raises exactly that rule, the passing one raises nothing).

mod common;

use foldcheck::rules::RULES;
use std::collections::HashSet;

#[test]
fn rule_names_are_unique_kebab_case() {
    let mut seen = HashSet::new();
    for r in RULES {
        assert!(seen.insert(r.name), "duplicate rule name {}", r.name);
        assert!(
            r.name.chars().all(|c| c.is_ascii_lowercase() || c == '-'),
            "rule name {} is not kebab-case",
            r.name
        );
        assert!(!r.summary.is_empty() && !r.explanation.is_empty());
        assert!(
            !r.summary.ends_with('.'),
            "summary of {} ends with a period",
            r.name
        );
    }
    // The 22 rules of the first round, `group-incomplete` and `modulator-unknown`.
    assert_eq!(RULES.len(), 24, "the README lists 24 rules");
}

#[test]
fn failing_examples_raise_exactly_their_rule_and_passing_ones_nothing() {
    let dir = tempfile::tempdir().unwrap();
    for r in RULES {
        let fail = format!("{}-fail.rig.yaml", r.name);
        let pass = format!("{}-pass.rig.yaml", r.name);
        std::fs::write(dir.path().join(&fail), r.failing).unwrap();
        std::fs::write(dir.path().join(&pass), r.passing).unwrap();
        let (report, _) = common::check_json(dir.path(), &[&fail]);
        assert_eq!(
            common::rules_of(&report),
            vec![r.name.to_string()],
            "failing example of {}: {report:#}",
            r.name
        );
        let (report, code) = common::check_json(dir.path(), &[&pass]);
        assert_eq!(
            report["findings"].as_array().unwrap().len(),
            0,
            "passing example of {}: {report:#}",
            r.name
        );
        assert_eq!(code, 0);
    }
}

#[test]
fn readme_rule_table_matches_the_registry() {
    let readme =
        std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/README.md")).unwrap();
    for r in RULES {
        let row = format!("| `{}` | {} | {} |", r.name, r.severity.as_str(), r.summary);
        assert!(readme.contains(&row), "README lacks the row: {row}");
    }
}
