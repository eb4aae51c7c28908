//! Case folders: `tests/cases/<rule>/<case>.rig.yaml` beside `<case>.expected`, one
//! finding per line as `severity rule line:col-line:col message`. Run with
//! `FOLDCHECK_UPDATE=1 cargo test --test cases` to rewrite the expected files; review
//! the diff before committing.

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

#[test]
fn every_case_matches_its_expected_findings() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/cases");
    let update = std::env::var_os("FOLDCHECK_UPDATE").is_some();
    let mut failures = Vec::new();
    let cases = case_files(&root);
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
        let mut actual: String = report["findings"]
            .as_array()
            .unwrap()
            .iter()
            .map(|f| common::plain(f) + "\n")
            .collect();
        actual.push_str(&format!("exit {code}\n"));
        let expected_path = PathBuf::from(case.to_string_lossy().replace(".rig.yaml", ".expected"));
        if update {
            fs::write(&expected_path, &actual).unwrap();
            continue;
        }
        let expected = fs::read_to_string(&expected_path).unwrap_or_default();
        if expected != actual {
            failures.push(format!(
                "{rel}:\n--- expected\n{expected}--- actual\n{actual}"
            ));
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
