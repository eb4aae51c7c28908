//! Campaign trees: shared catalogs, findings in included files, the changed-catalog
//! mode of pre-commit, and include boundaries.

mod common;

use common::{check_json, rules_of};
use std::fs;
use std::path::Path;

fn write(dir: &Path, name: &str, text: &str) {
    let p = dir.join(name);
    fs::create_dir_all(p.parent().unwrap()).unwrap();
    fs::write(p, text).unwrap();
}

const CATALOG: &str = "\
format: 1
catalog: lab
clocks:
  - { name: lab-osc, frequency: 24.576 MHz }
  - { name: f48k, source: lab-osc, divide: 512 }
sensors:
  - { name: mic, bandwidth: 20 kHz }
";

fn rig(name: &str, band: &str) -> String {
    format!(
        "format: 1\nrig: {name}\ninclude: [../catalog/lab.yaml]\nchannels:\n  - name: {name}-mic\n    clock: f48k\n    sensor: mic\n    band: {band}\n    filters: [{{ response: digital, passband-edge: 0.45, stopband-edge: 0.55, attenuation: 100 dB }}]\n"
    )
}

fn campaign() -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "foldcheck.toml", "");
    write(dir.path(), "catalog/lab.yaml", CATALOG);
    write(dir.path(), "rigs/bay-1.rig.yaml", &rig("bay-1", "10 kHz"));
    write(dir.path(), "rigs/bay-2.rig.yaml", &rig("bay-2", "10 kHz"));
    write(
        dir.path(),
        "other/unrelated.rig.yaml",
        "format: 1\nrig: unrelated\n",
    );
    dir
}

#[test]
fn a_shared_catalog_is_linted_once_and_its_findings_carry_its_own_spans() {
    let dir = campaign();
    // A mistake in the catalog: a near-miss unit. Both rigs include it; one finding.
    write(
        dir.path(),
        "catalog/lab.yaml",
        &CATALOG.replace("bandwidth: 20 kHz", "bandwidth: 20 khz"),
    );
    let (report, _) = check_json(dir.path(), &["."]);
    let q: Vec<&serde_json::Value> = report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f["rule"] == "quantity")
        .collect();
    assert_eq!(q.len(), 1, "{report:#}");
    // The include path `../catalog/lab.yaml` from `rigs/`, normalised.
    assert_eq!(q[0]["file"], "catalog/lab.yaml");
    // `  - { name: mic, bandwidth: 20 khz }`: the value starts at column 29.
    assert_eq!(
        (q[0]["line"].as_u64(), q[0]["column"].as_u64()),
        (Some(7), Some(29))
    );
}

#[test]
fn duplicate_names_across_files_label_both() {
    let dir = campaign();
    write(
        dir.path(),
        "rigs/bay-1.rig.yaml",
        &rig("bay-1", "10 kHz").replace(
            "channels:",
            "clocks:\n  - { name: f48k, frequency: 48 kHz }\nchannels:",
        ),
    );
    let out = common::run_in(
        dir.path(),
        &["check", "--color", "never", "rigs/bay-1.rig.yaml"],
    );
    let text = String::from_utf8(out.stdout).unwrap();
    assert!(
        text.contains("the clock name `f48k` is defined twice"),
        "{text}"
    );
    assert!(text.contains("rigs/bay-1.rig.yaml:5:"), "{text}");
    assert!(
        text.contains("catalog/lab.yaml"),
        "the first definition, in the catalog, is labelled: {text}"
    );
}

#[test]
fn a_changed_catalog_lints_the_rigs_that_include_it() {
    let dir = campaign();
    // What pre-commit does when only the catalog changed: pass just that file.
    write(
        dir.path(),
        "catalog/lab.yaml",
        &CATALOG.replace("divide: 512", "divide: 1024"),
    );
    let (report, code) = check_json(dir.path(), &["catalog/lab.yaml"]);
    assert_eq!(
        report["files"], 2,
        "bay-1 and bay-2, not the unrelated rig: {report:#}"
    );
    // 24.576 MHz / 1024 = 24 kHz exactly: above 2 × 10 kHz, but the ratio 2.4 is below
    // the 2.5 margin (common practice).
    let channels: Vec<&str> = report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["channel"].as_str().unwrap())
        .collect();
    assert_eq!(channels, ["bay-1-mic", "bay-2-mic"]);
    assert_eq!(rules_of(&report), ["sampling-margin"]);
    assert_eq!(code, 0);
}

#[test]
fn a_catalog_no_rig_includes_is_checked_on_its_own() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "foldcheck.toml", "");
    write(
        dir.path(),
        "catalog/spare.yaml",
        "format: 1\ncatalog: spare\nclocks:\n  - { name: a, source: b }\n  - { name: b, source: a }\n",
    );
    let (report, code) = check_json(dir.path(), &["catalog/spare.yaml"]);
    assert_eq!(rules_of(&report), ["clock-cycle"], "{report:#}");
    assert_eq!(report["channels"], 0);
    assert_eq!(code, 1);
}

#[test]
fn includes_may_not_leave_the_campaign_root_even_through_a_symlink() {
    let outside = tempfile::tempdir().unwrap();
    write(outside.path(), "lab.yaml", CATALOG);
    let dir = campaign();
    std::os::unix::fs::symlink(
        outside.path().join("lab.yaml"),
        dir.path().join("catalog/linked.yaml"),
    )
    .unwrap();
    write(
        dir.path(),
        "rigs/bay-1.rig.yaml",
        &rig("bay-1", "10 kHz").replace("lab.yaml", "linked.yaml"),
    );
    let (report, _) = check_json(dir.path(), &["rigs/bay-1.rig.yaml"]);
    let f = &report["findings"][0];
    assert_eq!(f["rule"], "include", "{report:#}");
    assert!(
        f["message"]
            .as_str()
            .unwrap()
            .contains("outside the campaign root")
    );
    // The rig's references into the catalog left out are counted on that one finding
    // (docs/format.md, "include"), not reported one by one nor crashed on.
    assert_eq!(
        report["findings"].as_array().unwrap().len(),
        1,
        "{report:#}"
    );
    assert_eq!(f["values"]["unchecked_references"], 2);
}
