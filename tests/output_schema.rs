//! The JSON report's contract: `schemas/output.schema.json` (docs/output.md), printed by
//! `foldcheck schema --output`, holds for the shipped examples (the case folders are
//! validated in tests/cases.rs), and it is strict enough to refuse a report that breaks
//! the documented fields.

mod common;

use serde_json::Value;
use std::path::Path;

#[test]
fn schema_output_prints_the_shipped_schema() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let out = common::run_in(root, &["schema", "--output"]);
    assert_eq!(out.status.code(), Some(0));
    let printed: Value = serde_json::from_slice(&out.stdout).expect("JSON");
    let shipped: Value = serde_json::from_str(
        &std::fs::read_to_string(root.join("schemas/output.schema.json")).unwrap(),
    )
    .unwrap();
    assert_eq!(printed, shipped);
}

#[test]
fn the_examples_report_matches_the_output_schema() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let (report, code) = common::check_json(root, &["examples"]);
    assert_eq!(code, 1, "the examples hold deliberate mistakes");
    let validator = common::output_schema();
    let errors: Vec<String> = validator
        .iter_errors(&report)
        .map(|e| format!("{e} at {}", e.instance_path()))
        .collect();
    assert!(errors.is_empty(), "{errors:#?}");
    let findings = report["findings"].as_array().unwrap();
    // Rig-level findings say `channel: null` rather than leaving the key out.
    assert!(
        findings.iter().any(|f| f["channel"].is_null()),
        "the examples have rig-level findings (unused-clock, storage)"
    );
    assert!(findings.iter().all(|f| f.get("channel").is_some()));
}

/// A change to a valid report that makes it break docs/output.md.
type Breakage = fn(&mut Value);

#[test]
fn the_output_schema_refuses_what_docs_output_md_rules_out() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let (report, _) = common::check_json(root, &["examples"]);
    let validator = common::output_schema();
    assert!(validator.is_valid(&report));
    let breakages: [(&str, Breakage); 5] = [
        ("a finding without `channel`", |r| {
            r["findings"][0].as_object_mut().unwrap().remove("channel");
        }),
        ("column 0 (columns are 1-based)", |r| {
            r["findings"][0]["column"] = 0.into();
        }),
        ("an unknown severity", |r| {
            r["findings"][0]["severity"] = "fatal".into();
        }),
        ("a field the document does not describe", |r| {
            r["findings"][0]["position"] = "12:3".into();
        }),
        ("a summary without notes", |r| {
            r["summary"].as_object_mut().unwrap().remove("note");
        }),
    ];
    for (what, breaking) in breakages {
        let mut broken = report.clone();
        breaking(&mut broken);
        assert!(!validator.is_valid(&broken), "the schema accepts {what}");
    }
}
