//! Case folders: `tests/cases/<rule>/<case>.rig.yaml` beside `<case>.expected`, one
//! finding per line as `severity rule line:col-line:col message` (from the JSON
//! report), and `<case>.human`, the whole human report as a person reads it (every
//! excerpt, label and help line; the elapsed time in the summary is masked). Run with
//! `FOLDCHECK_UPDATE=1 cargo test --test cases` to rewrite the expected files; review
//! the diff before committing. Every JSON report is also validated against
//! `schemas/output.schema.json` (docs/output.md).

mod common;

use std::fs;
use std::path::{Path, PathBuf};

fn case_files(root: &Path) -> Vec<PathBuf> {
    let mut out = Vec::new();
    for rule_dir in fs::read_dir(root).unwrap() {
        let rule_dir = rule_dir.unwrap().path();
        if !rule_dir.is_dir() {
            continue;
        }
        for f in fs::read_dir(&rule_dir).unwrap() {
            let p = f.unwrap().path();
            if p.to_string_lossy().ends_with(".rig.yaml") {
                out.push(p);
            }
        }
    }
    out.sort();
    out
}

/// The human report of one case, without colour, the elapsed time masked.
fn human_report(root: &Path, rel: &str) -> String {
    let out = common::run_in(root, &["check", "--color", "never", rel]);
    let text = String::from_utf8(out.stdout).expect("the human report is UTF-8");
    let time = regex::Regex::new(r"\(\d+ ms\)\n$").unwrap();
    let mut text = time.replace(&text, "(… ms)\n").into_owned();
    text.push_str(&format!(
        "exit {}\n",
        out.status.code().expect("exited normally")
    ));
    text
}

#[test]
fn every_case_matches_its_expected_findings() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/cases");
    let update = std::env::var_os("FOLDCHECK_UPDATE").is_some();
    let mut failures = Vec::new();
    let cases = case_files(&root);
    let output_schema = common::output_schema();
    assert!(
        cases.len() >= 22,
        "expected a case for every rule, found {} cases",
        cases.len()
    );
    for case in cases {
        let rel = case
            .strip_prefix(&root)
            .unwrap()
            .to_string_lossy()
            .replace('\\', "/");
        let (report, code) = common::check_json(&root, &[&rel]);
        if let Err(e) = output_schema.validate(&report) {
            failures.push(format!(
                "{rel}: the JSON report breaks schemas/output.schema.json: {e} at {}",
                e.instance_path()
            ));
        }
        let mut actual: String = report["findings"]
            .as_array()
            .unwrap()
            .iter()
            .map(|f| common::plain(f) + "\n")
            .collect();
        actual.push_str(&format!("exit {code}\n"));
        let human = human_report(&root, &rel);
        let opening = common::opening_positions(&human);
        let primary = common::json_positions(&report);
        if opening != primary {
            failures.push(format!(
                "{rel}: findings do not open with their primary position\n human: {opening:?}\n json:  {primary:?}"
            ));
        }
        for (ext, actual) in [(".expected", actual), (".human", human)] {
            let expected_path = PathBuf::from(case.to_string_lossy().replace(".rig.yaml", ext));
            if update {
                fs::write(&expected_path, &actual).unwrap();
                continue;
            }
            let expected = fs::read_to_string(&expected_path).unwrap_or_default();
            if expected != actual {
                failures.push(format!(
                    "{}:\n--- expected\n{expected}--- actual\n{actual}",
                    expected_path.display()
                ));
            }
        }
    }
    assert!(
        failures.is_empty(),
        "{} case(s) differ:\n{}",
        failures.len(),
        failures.join("\n")
    );
}

#[test]
fn every_rule_has_a_case_folder_that_raises_it() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/cases");
    for rule in foldcheck::rules::RULES {
        let dir = root.join(rule.name);
        assert!(dir.is_dir(), "rule `{}` has no case folder", rule.name);
        let raised = fs::read_dir(&dir).unwrap().any(|f| {
            let p = f.unwrap().path();
            p.extension().is_some_and(|e| e == "expected")
                && fs::read_to_string(&p)
                    .unwrap()
                    .lines()
                    .any(|l| l.split(' ').nth(1) == Some(rule.name))
        });
        assert!(raised, "no case of `{}` raises it", rule.name);
    }
}
