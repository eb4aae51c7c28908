//! Helpers shared by the black-box tests: run the real binary and read its JSON.
#![allow(dead_code)]

use serde_json::Value;
use std::path::Path;
use std::process::{Command, Output};

/// Run `foldcheck` with arguments in a working directory.
pub fn run_in(dir: &Path, args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_foldcheck"))
        .args(args)
        .current_dir(dir)
        .env_remove("NO_COLOR")
        .output()
        .expect("the binary runs")
}

/// Run `foldcheck check --format json` on paths and parse the report strictly.
pub fn check_json(dir: &Path, paths: &[&str]) -> (Value, i32) {
    let mut args = vec!["check", "--format", "json"];
    args.extend_from_slice(paths);
    let out = run_in(dir, &args);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        !stderr.contains("panicked"),
        "the binary panicked: {stderr}"
    );
    let v: Value = serde_json::from_slice(&out.stdout).unwrap_or_else(|e| {
        panic!(
            "stdout is not JSON ({e}): {}\nstderr: {stderr}",
            String::from_utf8_lossy(&out.stdout)
        )
    });
    (v, out.status.code().expect("exited normally"))
}

/// The rule names of a JSON report's findings, sorted and deduplicated.
pub fn rules_of(report: &Value) -> Vec<String> {
    let mut v: Vec<String> = report["findings"]
        .as_array()
        .expect("findings array")
        .iter()
        .map(|f| f["rule"].as_str().expect("rule").to_string())
        .collect();
    v.sort();
    v.dedup();
    v
}

/// One finding in the plain expected-file form:
/// `severity rule line:col-line:col message`, then `  help: …` when there is help.
pub fn plain(f: &Value) -> String {
    format!(
        "{} {} {}:{}-{}:{} {}{}{}",
        f["severity"].as_str().unwrap(),
        f["rule"].as_str().unwrap(),
        f["line"],
        f["column"],
        f["end_line"],
        f["end_column"],
        f["message"].as_str().unwrap(),
        f["suppressed"]
            .as_str()
            .map(|r| format!(" [suppressed: {r}]"))
            .unwrap_or_default(),
        f["help"]
            .as_str()
            .map(|h| format!("\n  help: {h}"))
            .unwrap_or_default()
    )
}
