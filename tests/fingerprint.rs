//! Fingerprints (docs/output.md, "Fingerprints"): what keeps a finding's identity and
//! what tells two findings apart. Black-box on the real binary where the question is
//! about a run, through the library where findings are built by hand.
//!
//! Rule thresholds used by the rigs below: `nyquist` fires when fs ≤ 2·B (C. E.
//! Shannon, 1949); `sampling-margin` when 2·B < fs < 2.5·B (common practice, the
//! documented default).

mod common;

use common::check_json;
use foldcheck::finding::{Finding, Label, Severity};
use foldcheck::fingerprint::{FileInfo, Owners, assign, fingerprint};
use foldcheck::source::{Sources, Span};
use serde_json::Value;
use std::path::Path;

/// (rule, channel, fingerprint) of every finding, sorted.
fn ids(report: &Value) -> Vec<(String, String, String)> {
    let mut v: Vec<_> = report["findings"]
        .as_array()
        .expect("findings")
        .iter()
        .map(|f| {
            (
                f["rule"].as_str().unwrap().to_string(),
                f["channel"].as_str().unwrap_or("").to_string(),
                f["fingerprint"]
                    .as_str()
                    .expect("every finding has a fingerprint")
                    .to_string(),
            )
        })
        .collect();
    v.sort();
    v
}

fn fp_of(report: &Value, rule: &str, channel: &str) -> String {
    let hits: Vec<&Value> = report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f["rule"] == rule && f["channel"].as_str().unwrap_or("") == channel)
        .collect();
    assert_eq!(
        hits.len(),
        1,
        "one {rule} finding for {channel:?}: {report:#}"
    );
    hits[0]["fingerprint"].as_str().unwrap().to_string()
}

fn write(dir: &Path, name: &str, text: &str) {
    let p = dir.join(name);
    std::fs::create_dir_all(p.parent().unwrap()).unwrap();
    std::fs::write(p, text).unwrap();
}

/// Two channels: `slow` at 4 kHz for a 2 kHz band (nyquist: 4 kHz is not above
/// 2 × 2 kHz), `tight` at 4.8 kHz for 2 kHz (ratio 2.4 < 2.5: sampling-margin).
const TWO_CHANNELS: &str = "format: 1
rig: bay-3
clocks:
  - { name: osc, frequency: 48 kHz }
  - { name: c4k, source: osc, divide: 12 }
  - { name: c4k8, source: osc, divide: 10 }
channels:
  - name: slow
    clock: c4k
    band: 2 kHz
    filters: [{ response: butterworth, order: 8, cutoff: 2.2 kHz }]
  - name: tight
    clock: c4k8
    band: 2 kHz
    filters: [{ response: butterworth, order: 8, cutoff: 2.2 kHz }]
";

/// The same channels in the other order.
const TWO_CHANNELS_REORDERED: &str = "format: 1
rig: bay-3
clocks:
  - { name: osc, frequency: 48 kHz }
  - { name: c4k, source: osc, divide: 12 }
  - { name: c4k8, source: osc, divide: 10 }
channels:
  - name: tight
    clock: c4k8
    band: 2 kHz
    filters: [{ response: butterworth, order: 8, cutoff: 2.2 kHz }]
  - name: slow
    clock: c4k
    band: 2 kHz
    filters: [{ response: butterworth, order: 8, cutoff: 2.2 kHz }]
";

#[test]
fn the_same_across_two_runs_and_across_a_reordering_of_channels() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "bay.rig.yaml", TWO_CHANNELS);
    let (a, _) = check_json(dir.path(), &["bay.rig.yaml"]);
    let (b, _) = check_json(dir.path(), &["bay.rig.yaml"]);
    assert_eq!(ids(&a), ids(&b));
    assert!(
        ids(&a)
            .iter()
            .any(|(r, c, _)| r == "nyquist" && c == "slow")
    );
    assert!(
        ids(&a)
            .iter()
            .any(|(r, c, _)| r == "sampling-margin" && c == "tight")
    );
    write(dir.path(), "bay.rig.yaml", TWO_CHANNELS_REORDERED);
    let (c, _) = check_json(dir.path(), &["bay.rig.yaml"]);
    // Lines moved: the findings did not.
    let line = |r: &Value| {
        r["findings"]
            .as_array()
            .unwrap()
            .iter()
            .find(|f| f["rule"] == "nyquist")
            .map(|f| f["line"].clone())
    };
    assert_ne!(line(&a), line(&c));
    assert_eq!(ids(&a), ids(&c));
}

/// The fingerprint of `nyquist` on channel `acc-1` of rig `bay-3`, outside any git work
/// tree, computed independently with Python's standard library:
/// `hashlib.sha256(b"\0".join([b"foldcheck/v1", b"nyquist", b".", b"rig:bay-3",
/// b"channel/acc-1"])).hexdigest()[:16]`.
const PY_NYQUIST_BAY3_ACC1: &str = "f495e43de9ccb956";

#[test]
fn a_run_writes_the_fingerprint_python_hashlib_computes() {
    let dir = tempfile::tempdir().unwrap();
    assert!(
        foldcheck::root::git_top(dir.path()).is_none(),
        "the temporary directory must lie outside any git work tree for this check"
    );
    write(
        dir.path(),
        "bay.rig.yaml",
        &TWO_CHANNELS.replace("name: slow", "name: acc-1"),
    );
    let (r, code) = check_json(dir.path(), &["bay.rig.yaml"]);
    assert_eq!(code, 1);
    assert_eq!(fp_of(&r, "nyquist", "acc-1"), PY_NYQUIST_BAY3_ACC1);
}

#[test]
fn moving_the_worst_stage_keeps_the_fingerprint() {
    // Old: the ADC samples at 4 kHz for a 2 kHz band (nyquist at the ADC, stage 0).
    // New: the ADC samples at 48 kHz and a decimation by 12 ends at 4 kHz (nyquist at
    // stage 1). Same rule, same channel: one finding whose stage moved.
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "bay.rig.yaml", TWO_CHANNELS);
    let (a, _) = check_json(dir.path(), &["bay.rig.yaml"]);
    let moved = TWO_CHANNELS.replace(
        "  - name: slow\n    clock: c4k\n",
        "  - name: slow\n    clock: osc\n    decimate:\n      - { factor: 12, filter: { response: digital, passband-edge: 0.4, stopband-edge: 0.5, attenuation: 120 dB } }\n",
    );
    write(dir.path(), "bay.rig.yaml", &moved);
    let (b, _) = check_json(dir.path(), &["bay.rig.yaml"]);
    let stage = |r: &Value| {
        r["findings"]
            .as_array()
            .unwrap()
            .iter()
            .find(|f| f["rule"] == "nyquist")
            .map(|f| f["values"]["stage"].clone())
    };
    assert_eq!(stage(&a), Some(Value::from(0)));
    assert_eq!(stage(&b), Some(Value::from(1)));
    assert_eq!(fp_of(&a, "nyquist", "slow"), fp_of(&b, "nyquist", "slow"));
}

#[test]
fn two_channels_differ() {
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        "bay.rig.yaml",
        &TWO_CHANNELS.replace("clock: c4k8", "clock: c4k"),
    );
    let (r, _) = check_json(dir.path(), &["bay.rig.yaml"]);
    assert_ne!(fp_of(&r, "nyquist", "slow"), fp_of(&r, "nyquist", "tight"));
}

#[test]
fn two_unparseable_files_differ() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "a.rig.yaml", "format: 1\nrig: [unclosed\n");
    write(dir.path(), "b.rig.yaml", "format: 1\nrig: [unclosed\n");
    let (r, _) = check_json(dir.path(), &["."]);
    let fps: Vec<&str> = r["findings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| {
            assert_eq!(f["rule"], "yaml-syntax");
            f["fingerprint"].as_str().unwrap()
        })
        .collect();
    assert_eq!(fps.len(), 2);
    assert_ne!(fps[0], fps[1]);
}

#[test]
fn two_rigs_of_one_name_differ_by_path() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "a/bay.rig.yaml", TWO_CHANNELS);
    write(dir.path(), "b/bay.rig.yaml", TWO_CHANNELS);
    let (r, _) = check_json(dir.path(), &["."]);
    let nyq: Vec<&str> = r["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f["rule"] == "nyquist")
        .map(|f| f["fingerprint"].as_str().unwrap())
        .collect();
    assert_eq!(nyq.len(), 2);
    assert_ne!(nyq[0], nyq[1]);
}

#[test]
fn a_modules_and_the_loggers_throughput_differ() {
    let case = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/cases/throughput/module-and-logger.rig.yaml");
    let out = foldcheck::campaign::run(&[case], &Default::default()).unwrap();
    let mut t: Vec<(String, String)> = out
        .findings
        .iter()
        .filter(|f| f.rule == "throughput")
        .map(|f| (f.subject.clone().unwrap(), f.fingerprint.clone().unwrap()))
        .collect();
    t.sort();
    assert_eq!(t.len(), 2);
    assert_eq!(t[0].0, "logger");
    assert_eq!(t[1].0, "module/card-a");
    assert_ne!(t[0].1, t[1].1);
}

/// Findings built by hand in one registered file, fingerprinted as a run does it.
fn fingerprinted(findings: Vec<Finding>) -> Vec<String> {
    let mut sources = Sources::new();
    let file = sources.add(
        Path::new("bay.rig.yaml"),
        "bay.rig.yaml".into(),
        "format: 1\nrig: bay-3\n".into(),
    );
    let owners = Owners::new(
        &[FileInfo {
            file,
            named: Some("rig:bay-3".into()),
            root: std::env::temp_dir(),
            path: Path::new("bay.rig.yaml").into(),
        }],
        None,
    );
    let mut findings: Vec<Finding> = findings
        .into_iter()
        .map(|mut f| {
            f.primary.span.file = file;
            f
        })
        .collect();
    assign(&mut findings, &owners, &sources);
    findings
        .into_iter()
        .map(|f| f.fingerprint.unwrap())
        .collect()
}

fn alias(message: &str, stage: u32) -> Finding {
    Finding::new(
        "alias-rejection",
        Severity::Error,
        Label::new(Span::new(0, 11, 20), "folds"),
        message,
    )
    .with_channel("acc-1")
    .with_value("stage", stage)
}

#[test]
fn the_modulator_and_the_ordinary_alias_finding_of_one_channel_differ() {
    let fps = fingerprinted(vec![
        alias("energy at 28 kHz folds into the band", 0),
        alias("energy near the modulator rate folds into the band", 0)
            .with_subject("channel/acc-1/at/modulator"),
    ]);
    assert_ne!(fps[0], fps[1]);
    // Without a subject, a physics rule about a channel is about `channel/<name>`.
    assert_eq!(
        fps[0],
        fingerprint("alias-rejection", ".", "rig:bay-3", "channel/acc-1", None)
    );
}

#[test]
fn a_change_of_wording_numbers_or_stage_keeps_the_fingerprint() {
    let fps = fingerprinted(vec![alias(
        "energy at 28 kHz folds into the 20 kHz band with 11.97 dB of attenuation",
        0,
    )]);
    let reworded = fingerprinted(vec![alias(
        "28 kHz lands in the 20 kHz band, only 11.97 dB down",
        0,
    )]);
    let renumbered = fingerprinted(vec![alias(
        "energy at 27.9 kHz folds into the 20 kHz band with 11.5 dB of attenuation",
        2,
    )]);
    assert_eq!(fps, reworded);
    assert_eq!(fps, renumbered);
}

/// Pinned fingerprints of a fixture rig: a later change of a message's wording (in the
/// rules' code) must leave these values alone. `tests/fingerprint/wording.rig.yaml`
/// and its expected file; regenerate with FOLDCHECK_UPDATE=1 only for a deliberate
/// change of the fingerprint scheme. The rig is linted in a temporary directory outside
/// any git work tree, so the campaign-root field is `.` wherever the tests run.
#[test]
fn pinned_fingerprints_of_a_fixture_survive_rewording() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fingerprint");
    let tmp = tempfile::tempdir().unwrap();
    std::fs::copy(
        dir.join("wording.rig.yaml"),
        tmp.path().join("wording.rig.yaml"),
    )
    .unwrap();
    let (r, _) = check_json(tmp.path(), &["wording.rig.yaml"]);
    let got: String = ids(&r)
        .iter()
        .map(|(rule, ch, fp)| format!("{fp} {rule} {ch}\n"))
        .collect();
    let expected_path = dir.join("wording.expected");
    if std::env::var_os("FOLDCHECK_UPDATE").is_some() {
        std::fs::write(&expected_path, &got).unwrap();
    }
    let expected = std::fs::read_to_string(&expected_path).unwrap();
    assert_eq!(got, expected);
}

/// Every finding of every case rig carries the subject its rule defines (the key path
/// of docs/output.md), never one that depends on a line or a stage.
#[test]
fn every_case_finding_has_its_rules_subject() {
    let cases = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/cases");
    let mut dirs: Vec<_> = std::fs::read_dir(&cases)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.is_dir())
        .collect();
    dirs.sort();
    let mut checked = 0;
    for dir in dirs {
        let out =
            foldcheck::campaign::run(std::slice::from_ref(&dir), &Default::default()).unwrap();
        for f in &out.findings {
            let s = f.subject.as_deref().expect("a subject");
            let ch = f.channel.as_deref().unwrap_or("");
            let ok = match f.rule {
                "nyquist" | "sampling-margin" | "passband-droop" | "sensor-band"
                | "oversampling" | "module-rate" | "missing-band" => s == format!("channel/{ch}"),
                "alias-rejection" => {
                    s == format!("channel/{ch}") || s == format!("channel/{ch}/at/modulator")
                }
                "disturbance-alias" => {
                    s.starts_with("disturbance/") && s.ends_with(&format!("/channel/{ch}"))
                }
                "group-clock" => s.starts_with("group/") && s.matches('/').count() == 1,
                "group-phase" => {
                    let parts: Vec<&str> = s.split('/').collect();
                    parts.len() == 5
                        && parts[0] == "group"
                        && parts[2] == "pair"
                        && parts[3] <= parts[4]
                }
                "throughput" => s == "logger" || s.starts_with("module/"),
                "storage" => s == "logger",
                "unused-clock" => s.starts_with("clock/"),
                "group-incomplete" => s.starts_with("group/") && s.ends_with("/incomplete"),
                "modulator-unknown" => s.starts_with("module/") && s.ends_with("/modulator"),
                "suppression" => s.starts_with("suppression/"),
                // Input rules: the key path of the value concerned.
                "yaml-syntax" | "schema" | "quantity" | "duplicate-name" | "unknown-reference"
                | "include" | "clock-cycle" => !s.starts_with("channel/"),
                _ => continue,
            };
            assert!(ok, "{}: subject {s:?} for {} ({ch})", dir.display(), f.rule);
            checked += 1;
        }
    }
    assert!(checked > 50, "only {checked} findings checked");
}

/// SARIF carries the same fingerprints as JSON, under `partialFingerprints
/// ["foldcheck/v1"]`, and each rule a PascalCase `name`.
#[test]
fn sarif_partial_fingerprints_are_the_json_fingerprints() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fingerprint");
    let (j, _) = check_json(&dir, &["wording.rig.yaml"]);
    let out = common::run_in(&dir, &["check", "--format", "sarif", "wording.rig.yaml"]);
    let s: Value = serde_json::from_slice(&out.stdout).expect("SARIF is JSON");
    let run = &s["runs"][0];
    let from_sarif: Vec<&str> = run["results"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| r["partialFingerprints"]["foldcheck/v1"].as_str().unwrap())
        .collect();
    let from_json: Vec<&str> = j["findings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["fingerprint"].as_str().unwrap())
        .collect();
    assert!(from_json.len() > 10);
    assert_eq!(from_sarif, from_json);
    let names: Vec<&str> = run["tool"]["driver"]["rules"]
        .as_array()
        .unwrap()
        .iter()
        .filter_map(|r| r["name"].as_str())
        .collect();
    // A one-word rule has no `name`: it would only repeat the id (SARIF1001).
    assert!(names.contains(&"AliasRejection") && !names.contains(&"Nyquist"));
}
