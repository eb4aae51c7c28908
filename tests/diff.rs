//! `foldcheck diff`, black-box: the real binary on old/new pairs under `tests/diff/`.
//!
//! Every expected number is worked out by hand in the comments. Two facts carry most of
//! them:
//! - clock rates are exact: 24.576 MHz ÷ 512 = 24 576 000 / 512 = 48 000 Hz exactly, and
//!   ÷ 1024 = 24 000 Hz (worked check of docs/format.md; plain arithmetic);
//! - every test channel has the ADC-level digital filter `passband-edge: 0.45,
//!   stopband-edge: 0.5, attenuation: 100 dB`. By docs/model.md, "Filter responses" a `digital` filter gives its
//!   full attenuation from its stopband edge up, here 0.5·fs. The frequency that folds onto
//!   the band edge is fs − B (docs/model.md), and fs − B ≥ 0.5·fs exactly when fs ≥ 2B, so every
//!   rate change above twice the band sees exactly 100 dB, and none at or below it counts.
//!   Below the passband edge, 0.45·fs, the filter gives 0 dB: no passband droop when
//!   B ≤ 0.45·fs, i.e. fs/B ≥ 2.22, which holds for every ratio used here.
//!
//! Rule thresholds: `nyquist` fires when fs ≤ 2B (C. E. Shannon, 1949); `sampling-margin`
//! when 2B < fs < 2.5·B (the 2.5 margin is common practice, the built-in default, docs/format.md);
//! `oversampling` when fs > 20·B (the built-in default, docs/format.md).

use serde_json::{Value, json};
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

const BIN: &str = env!("CARGO_BIN_EXE_foldcheck");
const ROOT: &str = env!("CARGO_MANIFEST_DIR");

fn foldcheck(dir: &Path, args: &[&str]) -> Output {
    Command::new(BIN)
        .args(args)
        .current_dir(dir)
        .env("NO_COLOR", "1")
        .output()
        .expect("the binary runs")
}

/// Run in the package root, where `tests/diff/…` paths resolve.
fn run(args: &[&str]) -> (String, String, i32) {
    let out = foldcheck(Path::new(ROOT), args);
    (
        String::from_utf8(out.stdout).expect("UTF-8 stdout"),
        String::from_utf8(out.stderr).expect("UTF-8 stderr"),
        out.status.code().expect("exited"),
    )
}

fn json_of(stdout: &str) -> Value {
    serde_json::from_str(stdout).unwrap_or_else(|e| panic!("not JSON ({e}):\n{stdout}"))
}

/// The metrics object of one side of a channel.
#[allow(clippy::too_many_arguments)]
fn metrics(
    clock: &str,
    rate: f64,
    band: f64,
    ratio: f64,
    alias: Option<(f64, u64, f64)>,
    required: f64,
) -> Value {
    json!({
        "clock": clock,
        "final_rate_hz": rate,
        "band_hz": band,
        "ratio": ratio,
        "alias_attenuation_db": alias.map(|a| a.0),
        "alias_stage": alias.map(|a| a.1),
        "fold_from_hz": alias.map(|a| a.2),
        "required_db": required,
    })
}

/// (rule, severity, channel, file) of each finding in a JSON list.
fn finding_ids(list: &Value) -> Vec<(String, String, String, String)> {
    list.as_array()
        .expect("a list")
        .iter()
        .map(|f| {
            let s = |k: &str| f[k].as_str().unwrap_or("").to_string();
            (s("rule"), s("severity"), s("channel"), s("file"))
        })
        .collect()
}

fn ids(v: &[(&str, &str, &str, &str)]) -> Vec<(String, String, String, String)> {
    v.iter()
        .map(|(a, b, c, d)| (a.to_string(), b.to_string(), c.to_string(), d.to_string()))
        .collect()
}

const SHARED_OLD: &str = "tests/diff/shared-divider/old";
const SHARED_NEW: &str = "tests/diff/shared-divider/new";

/// The catalog's `wf-frame` goes from 24.576 MHz ÷ 512 = 48 kHz to ÷ 1024 = 24 kHz. It
/// reaches three channels of mast-a (acc-top directly, acc-mid through ÷2, strain-base
/// through ÷8) and two of mast-b (guy-acc-n directly, guy-load-n through ÷4): 5 channels
/// in 2 rigs. No rig file changes, so every channel change is derived from `wf-frame`.
#[test]
fn shared_divider_change_is_derived_fans_out_and_fails_the_gate() {
    let (out, err, code) = run(&["diff", SHARED_OLD, SHARED_NEW, "--format", "json"]);
    assert_eq!(
        code, 1,
        "an introduced nyquist error fails the gate\n{out}{err}"
    );
    let v = json_of(&out);
    assert_eq!(v["version"], 1);
    assert_eq!(v["old"], SHARED_OLD);
    assert_eq!(v["new"], SHARED_NEW);
    assert_eq!(v["rev"], Value::Null);
    assert_eq!(v["rigs"], json!([]));

    let a = format!("{SHARED_NEW}/rigs/mast-a.rig.yaml");
    let b = format!("{SHARED_NEW}/rigs/mast-b.rig.yaml");
    let clock = |name: &str, file: &str, before: f64, after: f64, follows: Option<&str>, n| {
        json!({
            "clock": name, "file": file,
            "rate_before_hz": before, "rate_after_hz": after,
            "follows": follows, "channels_before": n, "channels_after": n,
            "rigs": if name == "wf-frame" { 2 } else { 1 },
        })
    };
    assert_eq!(
        v["clocks"],
        json!([
            // 24 576 000 / 512 = 48 000; / 1024 = 24 000; 3 + 2 channels in 2 rigs
            clock(
                "wf-frame",
                &format!("{SHARED_NEW}/catalog/wrenfield-lab.yaml"),
                48_000.0,
                24_000.0,
                None,
                5
            ),
            // 48 000 / 2 = 24 000 → 24 000 / 2 = 12 000
            clock("mast-a-half", &a, 24_000.0, 12_000.0, Some("wf-frame"), 1),
            // 48 000 / 8 = 6 000 → 24 000 / 8 = 3 000
            clock("mast-a-slow", &a, 6_000.0, 3_000.0, Some("wf-frame"), 1),
            // 48 000 / 4 = 12 000 → 24 000 / 4 = 6 000
            clock("mast-b-quarter", &b, 12_000.0, 6_000.0, Some("wf-frame"), 1),
        ])
    );

    let derived = |rig: &str, name: &str, before: Value, after: Value, changed: &[&str]| {
        json!({
            "rig": rig, "channel": name, "status": "changed",
            "edited": false, "derived": true,
            "causes": [{ "kind": "clock", "name": "wf-frame" }],
            "changed": changed,
            "before": before, "after": after,
        })
    };
    let rate_ratio_fold = ["final_rate", "ratio", "alias_attenuation"];
    let rate_ratio = ["final_rate", "ratio"];
    assert_eq!(
        v["channels"],
        json!([
            // acc-mid: 24 kHz / 5 kHz = 4.8 → 12 / 5 = 2.4; folds from 24 − 5 = 19 kHz → 12 − 5 = 7 kHz
            derived(
                &a,
                "acc-mid",
                metrics(
                    "mast-a-half",
                    24_000.0,
                    5_000.0,
                    4.8,
                    Some((100.0, 0, 19_000.0)),
                    40.0
                ),
                metrics(
                    "mast-a-half",
                    12_000.0,
                    5_000.0,
                    2.4,
                    Some((100.0, 0, 7_000.0)),
                    40.0
                ),
                &rate_ratio
            ),
            // acc-top: 48 / 10 = 4.8 → 24 / 10 = 2.4; folds from 38 kHz → 14 kHz
            derived(
                &a,
                "acc-top",
                metrics(
                    "wf-frame",
                    48_000.0,
                    10_000.0,
                    4.8,
                    Some((100.0, 0, 38_000.0)),
                    40.0
                ),
                metrics(
                    "wf-frame",
                    24_000.0,
                    10_000.0,
                    2.4,
                    Some((100.0, 0, 14_000.0)),
                    40.0
                ),
                &rate_ratio
            ),
            // strain-base: 6 / 2 = 3 → 3 / 2 = 1.5; 3 kHz is not above 2 × 2 kHz, so no
            // rate change is left to fold from (alias attenuation unknown afterwards)
            derived(
                &a,
                "strain-base",
                metrics(
                    "mast-a-slow",
                    6_000.0,
                    2_000.0,
                    3.0,
                    Some((100.0, 0, 4_000.0)),
                    40.0
                ),
                metrics("mast-a-slow", 3_000.0, 2_000.0, 1.5, None, 40.0),
                &rate_ratio_fold
            ),
            derived(
                &b,
                "guy-acc-n",
                metrics(
                    "wf-frame",
                    48_000.0,
                    10_000.0,
                    4.8,
                    Some((100.0, 0, 38_000.0)),
                    40.0
                ),
                metrics(
                    "wf-frame",
                    24_000.0,
                    10_000.0,
                    2.4,
                    Some((100.0, 0, 14_000.0)),
                    40.0
                ),
                &rate_ratio
            ),
            // guy-load-n: 12 / 2 = 6 → 6 / 2 = 3 (above the 2.5 margin: no finding)
            derived(
                &b,
                "guy-load-n",
                metrics(
                    "mast-b-quarter",
                    12_000.0,
                    2_000.0,
                    6.0,
                    Some((100.0, 0, 10_000.0)),
                    40.0
                ),
                metrics(
                    "mast-b-quarter",
                    6_000.0,
                    2_000.0,
                    3.0,
                    Some((100.0, 0, 4_000.0)),
                    40.0
                ),
                &rate_ratio
            ),
        ])
    );
    // wind-speed, on its own 12.8 kHz crystal, did not move and is not listed.
    assert!(!out.contains("wind-speed"));

    // Ratios 2.4 are between 2 and 2.5 (sampling-margin); 1.5 is at most 2 (nyquist).
    assert_eq!(
        finding_ids(&v["introduced"]),
        ids(&[
            ("sampling-margin", "warning", "acc-top", &a),
            ("sampling-margin", "warning", "acc-mid", &a),
            ("nyquist", "error", "strain-base", &a),
            // 3 kHz also moves the digital filter's passband edge below the band:
            // passband-droop is reported whatever nyquist says.
            ("passband-droop", "warning", "strain-base", &a),
            ("sampling-margin", "warning", "guy-acc-n", &b),
        ])
    );
    assert_eq!(v["introduced"][2]["values"]["rate_hz"], 3_000.0);
    assert_eq!(v["introduced"][2]["values"]["ratio"], 1.5);
    assert_eq!(v["resolved"], json!([]));
    assert_eq!(
        v["summary"],
        json!({
            "channels": { "added": 0, "removed": 0, "changed": 5, "derived": 5 },
            "clocks": 4,
            "introduced": { "error": 1, "warning": 4, "note": 0 },
            "resolved": { "error": 0, "warning": 0, "note": 0 },
            "changed_findings": 0,
            "unchanged_findings": 0,
        })
    );
}

#[test]
fn shared_divider_human_and_markdown() {
    let (out, _, code) = run(&["diff", SHARED_OLD, SHARED_NEW]);
    assert_eq!(code, 1);
    assert!(out.contains(&format!(
        "  wf-frame ({SHARED_NEW}/catalog/wrenfield-lab.yaml): 48 kHz → 24 kHz, reaches 5 channels in 2 rigs\n"
    )), "{out}");
    assert!(out.contains("  changed strain-base: derived from clock `wf-frame`\n"));
    assert!(out.contains("      final rate         6 kHz → 3 kHz\n"));
    assert!(out.contains("      ratio              3 → 1.5\n"));
    assert!(out.contains("      alias attenuation  100.00 dB at the ADC → —\n"));
    assert!(out.ends_with(
        "5 channels changed (5 derived), 0 added, 0 removed; 4 clocks changed; introduced 1 error, 4 warnings, 0 notes; resolved 0 errors, 0 warnings, 0 notes; 0 findings changed, 0 unchanged\n"
    ), "{out}");
    // Deterministic: a second run prints the same bytes.
    assert_eq!(run(&["diff", SHARED_OLD, SHARED_NEW]).0, out);

    let (md, _, code) = run(&["diff", SHARED_OLD, SHARED_NEW, "--format", "markdown"]);
    assert_eq!(code, 1);
    let a = format!("{SHARED_NEW}/rigs/mast-a.rig.yaml");
    let b = format!("{SHARED_NEW}/rigs/mast-b.rig.yaml");
    for line in [
        "| rig | channel | change | clock | final rate | band | ratio | worst alias attenuation |"
            .to_string(),
        "|---|---|---|---|---|---|---|---|".to_string(),
        format!(
            "| `{a}` | `acc-top` | derived from clock `wf-frame` | `wf-frame` | 48 kHz → 24 kHz | 10 kHz | 4.8 → 2.4 | 100.00 dB |"
        ),
        format!(
            "| `{a}` | `strain-base` | derived from clock `wf-frame` | `mast-a-slow` | 6 kHz → 3 kHz | 2 kHz | 3 → 1.5 | 100.00 dB → — |"
        ),
        format!(
            "| `{b}` | `guy-load-n` | derived from clock `wf-frame` | `mast-b-quarter` | 12 kHz → 6 kHz | 2 kHz | 6 → 3 | 100.00 dB |"
        ),
        "**Introduced findings** (5)".to_string(),
        format!(
            "- **error** `nyquist` at `{a}:28:12`: `strain-base` samples at 3 kHz, which is not above twice its 2 kHz band"
        ),
        "**Resolved findings**: none".to_string(),
    ] {
        assert!(
            md.lines().any(|l| l == line),
            "missing line {line:?} in\n{md}"
        );
    }
    // One table row per changed channel.
    assert_eq!(md.lines().filter(|l| l.starts_with("| `")).count(), 5);
}

/// 24.576 MHz ÷ 1024 = 24 kHz is not above 2 × 20 kHz (nyquist, ratio 1.2); the fix
/// divides by 256 instead: 24 576 000 / 256 = 96 000 Hz, ratio 4.8, folding from
/// 96 − 20 = 76 kHz, above the 48 kHz stopband edge: 100 dB.
#[test]
fn a_fix_resolves_the_finding_and_passes() {
    let old = "tests/diff/fix-nyquist/old/bench.rig.yaml";
    let new = "tests/diff/fix-nyquist/new/bench.rig.yaml";
    let (out, err, code) = run(&["diff", old, new, "--format", "json", "--fail-on", "note"]);
    assert_eq!(
        code, 0,
        "nothing introduced, even at --fail-on note\n{out}{err}"
    );
    let v = json_of(&out);
    assert_eq!(v["introduced"], json!([]));
    assert_eq!(
        finding_ids(&v["resolved"]),
        // At 24 kHz the digital filter's passband edge (0.45 × 24 kHz) also lies below
        // the 20 kHz band: the droop is reported beside nyquist, and goes with it.
        ids(&[
            ("nyquist", "error", "mic-left", old),
            ("passband-droop", "warning", "mic-left", old)
        ])
    );
    assert_eq!(v["resolved"][0]["line"], 13);
    assert_eq!(
        v["channels"],
        json!([{
            "rig": new, "channel": "mic-left", "status": "changed",
            "edited": false, "derived": true,
            "causes": [{ "kind": "clock", "name": "bench-frame" }],
            "changed": ["final_rate", "ratio", "alias_attenuation"],
            "before": metrics("bench-frame", 24_000.0, 20_000.0, 1.2, None, 40.0),
            "after": metrics("bench-frame", 96_000.0, 20_000.0, 4.8, Some((100.0, 0, 76_000.0)), 40.0),
        }])
    );
    assert_eq!(v["clocks"][0]["rate_before_hz"], 24_000.0);
    assert_eq!(v["clocks"][0]["rate_after_hz"], 96_000.0);
}

/// `inlet-pressure` is deleted, `outlet-pressure` renamed to `discharge-pressure` (a
/// rename is a removal and an addition: channels are matched by name), `coolant-temp`
/// added, and `pump-acc`'s own band edited from 2 kHz to 2.5 kHz. Clock: 24.576 MHz ÷
/// 2048 = 12 kHz. coolant-temp: 12 kHz / 100 Hz = 120 > 20: an oversampling note.
#[test]
fn added_removed_renamed_and_edited_channels() {
    let old = "tests/diff/channels-added-removed/old";
    let new = "tests/diff/channels-added-removed/new";
    let (out, err, code) = run(&["diff", old, new, "--format", "json"]);
    assert_eq!(code, 0, "a note does not fail the default gate\n{out}{err}");
    let v = json_of(&out);
    let rig = format!("{new}/pump.rig.yaml");
    let one = |name: &str, status: &str, before: Value, after: Value| {
        json!({
            "rig": rig, "channel": name, "status": status,
            "edited": true, "derived": false, "causes": [], "changed": [],
            "before": before, "after": after,
        })
    };
    // 12 kHz − 1 kHz = 11 kHz folds; 12 − 0.1 = 11.9 kHz; 12 − 2.5 = 9.5 kHz
    let pressure = metrics(
        "loop-frame",
        12_000.0,
        1_000.0,
        12.0,
        Some((100.0, 0, 11_000.0)),
        40.0,
    );
    assert_eq!(
        v["channels"],
        json!([
            one("coolant-temp", "added", Value::Null,
                metrics("loop-frame", 12_000.0, 100.0, 120.0, Some((100.0, 0, 11_900.0)), 40.0)),
            one("discharge-pressure", "added", Value::Null, pressure.clone()),
            one("inlet-pressure", "removed", pressure.clone(), Value::Null),
            one("outlet-pressure", "removed", pressure, Value::Null),
            {
                "rig": rig, "channel": "pump-acc", "status": "changed",
                "edited": true, "derived": false, "causes": [],
                // 12 / 2 = 6 → 12 / 2.5 = 4.8; folds from 10 kHz → 9.5 kHz, both above
                // the 6 kHz stopband edge: 100 dB either way, so the attenuation is unchanged
                "changed": ["band", "ratio"],
                "before": metrics("loop-frame", 12_000.0, 2_000.0, 6.0, Some((100.0, 0, 10_000.0)), 40.0),
                "after": metrics("loop-frame", 12_000.0, 2_500.0, 4.8, Some((100.0, 0, 9_500.0)), 40.0),
            },
        ])
    );
    assert_eq!(
        finding_ids(&v["introduced"]),
        ids(&[("oversampling", "note", "coolant-temp", &rig)])
    );
    assert_eq!(v["introduced"][0]["values"]["ratio"], 120.0);
    assert_eq!(v["clocks"], json!([]));
    // The same change fails a gate that counts notes.
    let (_, _, code) = run(&["diff", old, new, "--fail-on", "note"]);
    assert_eq!(code, 1);

    let (md, _, _) = run(&["diff", old, new, "--format", "markdown"]);
    assert!(md.lines().any(|l| l == format!(
        "| `{rig}` | `coolant-temp` | added | `loop-frame` | 12 kHz | 100 Hz | 120 | 100.00 dB |"
    )), "{md}");
    assert!(md.lines().any(|l| l == format!(
        "| `{rig}` | `outlet-pressure` | removed | `loop-frame` | 12 kHz | 1 kHz | 12 | 100.00 dB |"
    )), "{md}");
    let (text, _, _) = run(&["diff", old, new]);
    assert!(text.contains("  changed pump-acc: edited\n"), "{text}");
    assert!(
        text.contains("      band               2 kHz → 2.5 kHz\n"),
        "{text}"
    );
}

/// The old rig already has a nyquist error (24 kHz for a 20 kHz band) and a
/// sampling-margin warning (44.1 kHz for 20 kHz: ratio 2.205, worked check of docs/format.md). The
/// change adds a clean channel at the top (24 kHz / 2 kHz = 12), which moves both findings
/// down and changes the nyquist help ("no other channel shares it" becomes "also changes 1
/// other channel"): neither is introduced or resolved.
#[test]
fn old_findings_and_an_unrelated_change_pass() {
    let old = "tests/diff/old-findings/old";
    let new = "tests/diff/old-findings/new";
    // First make sure the two sides really differ in lines and help.
    let check = |dir: &str| json_of(&run(&["check", dir, "--format", "json"]).0);
    let (co, cn) = (check(old), check(new));
    let rules = |v: &Value| -> Vec<String> {
        v["findings"]
            .as_array()
            .unwrap()
            .iter()
            .map(|f| f["rule"].as_str().unwrap().to_string())
            .collect()
    };
    // The 24 kHz channel's digital filter also droops the band (reported whatever
    // nyquist says).
    assert_eq!(rules(&co), ["nyquist", "passband-droop", "sampling-margin"]);
    assert_eq!(rules(&cn), ["nyquist", "passband-droop", "sampling-margin"]);
    assert_ne!(co["findings"][0]["line"], cn["findings"][0]["line"]);
    assert_ne!(co["findings"][2]["line"], cn["findings"][2]["line"]);
    assert_ne!(co["findings"][0]["help"], cn["findings"][0]["help"]);
    assert_eq!(co["findings"][2]["values"]["ratio"], 2.205);

    let (out, err, code) = run(&["diff", old, new, "--format", "json", "--fail-on", "warning"]);
    assert_eq!(code, 0, "nothing introduced\n{out}{err}");
    let v = json_of(&out);
    assert_eq!(v["introduced"], json!([]));
    assert_eq!(v["resolved"], json!([]));
    let chans: Vec<(&str, &str)> = v["channels"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| {
            (
                c["channel"].as_str().unwrap(),
                c["status"].as_str().unwrap(),
            )
        })
        .collect();
    // press-mic gained a comment on its name line: not an edit, and no number moved.
    assert_eq!(chans, [("ram-position", "added")]);
}

/// The catalog sensor `acc-a` widens from 10 kHz to 12 kHz; `vib` has no band of its own,
/// so its band follows (48 kHz / 10 kHz = 4.8 → 48 / 12 = 4; folds from 38 kHz → 36 kHz,
/// above the 24 kHz stopband edge either way: 100 dB). `mic-b` only gets a new `kind`,
/// which moves no number: `snd` is not listed.
#[test]
fn a_sensor_change_is_a_derived_change_named_after_the_sensor() {
    let old = "tests/diff/sensor-change/old";
    let new = "tests/diff/sensor-change/new";
    let (out, err, code) = run(&["diff", old, new, "--format", "json"]);
    assert_eq!(code, 0, "{out}{err}");
    let v = json_of(&out);
    assert_eq!(
        v["channels"],
        json!([{
            "rig": format!("{new}/rig.rig.yaml"), "channel": "vib", "status": "changed",
            "edited": false, "derived": true,
            "causes": [{ "kind": "sensor", "name": "acc-a" }],
            "changed": ["band", "ratio"],
            "before": metrics("wf-frame", 48_000.0, 10_000.0, 4.8, Some((100.0, 0, 38_000.0)), 40.0),
            "after": metrics("wf-frame", 48_000.0, 12_000.0, 4.0, Some((100.0, 0, 36_000.0)), 40.0),
        }])
    );
    assert_eq!(
        (v["introduced"].clone(), v["resolved"].clone()),
        (json!([]), json!([]))
    );
}

/// A temporary directory for one test, removed afterwards.
struct Scratch(PathBuf);

impl Scratch {
    fn new(name: &str) -> Scratch {
        let dir =
            std::env::temp_dir().join(format!("foldcheck-test-{name}-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).unwrap();
        Scratch(dir)
    }
    fn write(&self, rel: &str, text: &str) {
        let p = self.0.join(rel);
        std::fs::create_dir_all(p.parent().unwrap()).unwrap();
        std::fs::write(p, text).unwrap();
    }
}

impl Drop for Scratch {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

fn git(dir: &Path, args: &[&str]) {
    let out = Command::new("git")
        .args([
            "-c",
            "user.name=foldcheck test",
            "-c",
            "user.email=test@example.invalid",
        ])
        .args([
            "-c",
            "commit.gpgsign=false",
            "-c",
            "init.defaultBranch=main",
        ])
        .args(args)
        .current_dir(dir)
        .env("GIT_CONFIG_NOSYSTEM", "1")
        .env("GIT_CONFIG_GLOBAL", "/dev/null")
        .output()
        .expect("git runs");
    assert!(
        out.status.success(),
        "git {args:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
}

const LAB_CATALOG: &str = "\
format: 1
catalog: wrenfield-lab
clocks:
  - name: wf-osc
    frequency: 24.576 MHz
  # 24.576 MHz / 512 = 48 kHz
  - name: wf-frame
    source: wf-osc
    divide: 512
modules:
  - name: daq-16
    adc-bits: 16
    filters:
      - { response: digital, passband-edge: 0.45, stopband-edge: 0.5, attenuation: 100 dB }
";

const CELL_RIG: &str = "\
format: 1
rig: wrenfield-cell
include:
  - ../catalog/wrenfield-lab.yaml
channels:
  - name: vib-1
    module: daq-16
    clock: wf-frame
    band: 10 kHz
  - name: vib-2
    module: daq-16
    clock: wf-frame
    band: 20 kHz
";

/// `--rev HEAD` against a repository made here. The working tree lowers the catalog
/// module's filter from 100 dB to 90 dB, edits vib-2's band from 20 kHz to 15 kHz, and
/// adds an untracked rig. The module's 16-bit ADC sets the required rejection,
/// 6.02 × 16 + 1.76 = 96.32 + 1.76 = 98.08 dB (ideal quantisation dynamic range, docs/model.md;
/// W. Kester, MT-001, from memory). Both channels fold from above the 24 kHz stopband edge (48 − 10 = 38 kHz,
/// 48 − 15 = 33 kHz), so each sees 90 dB < 98.08 dB: two alias-rejection errors. vib-2 at
/// HEAD had 48 / 20 = 2.4 < 2.5 (sampling-margin); now 48 / 15 = 3.2: resolved.
#[test]
fn rev_compares_the_working_tree_with_a_commit() {
    let repo = Scratch::new("rev");
    repo.write("catalog/wrenfield-lab.yaml", LAB_CATALOG);
    repo.write("rigs/cell.rig.yaml", CELL_RIG);
    repo.write("notes.txt", "not a rig\n");
    // The campaign root is the checkout (the rigs include `../catalog`), on both sides.
    repo.write("foldcheck.toml", "[thresholds]\nmargin = 2.5\n");
    git(&repo.0, &["init", "-q"]);
    git(&repo.0, &["add", "."]);
    git(&repo.0, &["commit", "-q", "-m", "cell rig"]);
    repo.write(
        "catalog/wrenfield-lab.yaml",
        &LAB_CATALOG.replace("attenuation: 100 dB", "attenuation: 90 dB"),
    );
    repo.write(
        "rigs/cell.rig.yaml",
        &CELL_RIG.replace("band: 20 kHz", "band: 15 kHz"),
    );
    repo.write(
        "rigs/spare.rig.yaml",
        "format: 1\nrig: spare\nchannels: []\n",
    );
    let before = std::fs::read_to_string(repo.0.join("rigs/cell.rig.yaml")).unwrap();

    // The snapshot goes into TMPDIR; give the run its own, to see it cleaned up.
    let tmp = repo.0.join("tmp-for-foldcheck");
    std::fs::create_dir(&tmp).unwrap();
    let out = Command::new(BIN)
        .args(["diff", "--rev", "HEAD", "--format", "json", "rigs"])
        .current_dir(&repo.0)
        .env("TMPDIR", &tmp)
        .output()
        .unwrap();
    let (stdout, stderr) = (
        String::from_utf8_lossy(&out.stdout),
        String::from_utf8_lossy(&out.stderr),
    );
    assert_eq!(out.status.code(), Some(1), "{stdout}{stderr}");
    assert_eq!(
        std::fs::read_dir(&tmp).unwrap().count(),
        0,
        "the snapshot is removed"
    );
    assert_eq!(
        std::fs::read_to_string(repo.0.join("rigs/cell.rig.yaml")).unwrap(),
        before
    );

    let v = json_of(&stdout);
    assert_eq!(v["old"], "HEAD");
    assert_eq!(v["new"], "the working tree");
    assert_eq!(v["rev"]["name"], "HEAD");
    let commit = v["rev"]["commit"].as_str().unwrap();
    assert!(
        commit.len() >= 40 && commit.chars().all(|c| c.is_ascii_hexdigit()),
        "{commit}"
    );
    assert_eq!(
        v["rigs"],
        json!([{ "file": "rigs/spare.rig.yaml", "status": "added" }])
    );
    assert_eq!(v["clocks"], json!([]));
    let rig = "rigs/cell.rig.yaml";
    assert_eq!(
        v["channels"],
        json!([
            {
                "rig": rig, "channel": "vib-1", "status": "changed",
                "edited": false, "derived": true,
                "causes": [{ "kind": "module", "name": "daq-16" }],
                "changed": ["alias_attenuation"],
                "before": metrics("wf-frame", 48_000.0, 10_000.0, 4.8, Some((100.0, 0, 38_000.0)), 98.08),
                "after": metrics("wf-frame", 48_000.0, 10_000.0, 4.8, Some((90.0, 0, 38_000.0)), 98.08),
            },
            {
                "rig": rig, "channel": "vib-2", "status": "changed",
                "edited": true, "derived": false,
                "causes": [{ "kind": "module", "name": "daq-16" }],
                "changed": ["band", "ratio", "alias_attenuation"],
                "before": metrics("wf-frame", 48_000.0, 20_000.0, 2.4, Some((100.0, 0, 28_000.0)), 98.08),
                "after": metrics("wf-frame", 48_000.0, 15_000.0, 3.2, Some((90.0, 0, 33_000.0)), 98.08),
            },
        ])
    );
    assert_eq!(
        finding_ids(&v["introduced"]),
        ids(&[
            ("alias-rejection", "error", "vib-1", rig),
            ("alias-rejection", "error", "vib-2", rig),
        ])
    );
    assert_eq!(v["introduced"][0]["values"]["attenuation_db"], 90.0);
    // The old side's finding is shown at the checkout's path, not the snapshot's.
    assert_eq!(
        finding_ids(&v["resolved"]),
        ids(&[("sampling-margin", "warning", "vib-2", rig)])
    );
    assert_eq!(v["resolved"][0]["line"], 12); // vib-2's `clock: wf-frame`

    // Without paths, the whole checkout is compared: the same result here.
    let out = foldcheck(&repo.0, &["diff", "--rev", "HEAD", "--format", "json"]);
    assert_eq!(
        json_of(&String::from_utf8_lossy(&out.stdout))["channels"],
        v["channels"]
    );

    // Committing the working tree leaves nothing to report.
    git(&repo.0, &["add", "."]);
    git(&repo.0, &["commit", "-q", "-m", "lower the filter"]);
    let out = foldcheck(&repo.0, &["diff", "--rev", "HEAD"]);
    let text = String::from_utf8_lossy(&out.stdout);
    assert_eq!(out.status.code(), Some(0), "{text}");
    assert!(text.contains("introduced findings: none"), "{text}");
    assert!(text.ends_with("0 channels changed (0 derived), 0 added, 0 removed; 0 clocks changed; introduced 0 errors, 0 warnings, 0 notes; resolved 0 errors, 0 warnings, 0 notes; 0 findings changed, 3 unchanged\n"), "{text}");

    // An unknown revision is fatal.
    let out = foldcheck(&repo.0, &["diff", "--rev", "no-such-branch"]);
    assert_eq!(out.status.code(), Some(2));
    assert_eq!(
        String::from_utf8_lossy(&out.stderr).trim(),
        "foldcheck: unknown git revision `no-such-branch`"
    );
}

#[test]
fn rev_outside_a_checkout_is_fatal() {
    let dir = Scratch::new("no-git");
    dir.write("a.rig.yaml", CELL_RIG);
    let out = Command::new(BIN)
        .args(["diff", "--rev", "HEAD", "a.rig.yaml"])
        .current_dir(&dir.0)
        // keep git from finding a repository above the scratch directory
        .env("GIT_CEILING_DIRECTORIES", dir.0.parent().unwrap())
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.starts_with("foldcheck: --rev compares with a git revision, but "),
        "{err}"
    );
    assert!(
        err.trim_end().ends_with("is not inside a git checkout"),
        "{err}"
    );
    assert!(out.stdout.is_empty());
}

#[test]
fn bad_paths_are_fatal() {
    let (out, err, code) = run(&["diff", "tests/diff/no-such-dir", SHARED_NEW]);
    assert_eq!((code, out.as_str()), (2, ""));
    assert_eq!(
        err.trim(),
        "foldcheck: tests/diff/no-such-dir: no such file or directory"
    );

    let file = "tests/diff/fix-nyquist/new/bench.rig.yaml";
    let (_, err, code) = run(&["diff", SHARED_OLD, file]);
    assert_eq!(code, 2);
    assert_eq!(
        err.trim(),
        format!(
            "foldcheck: cannot compare {SHARED_OLD} (a directory) with {file} (a file): give two files or two directories"
        )
    );

    let (_, err, code) = run(&["diff", SHARED_OLD]);
    assert_eq!(code, 2);
    assert!(
        err.contains("diff compares two paths, OLD and NEW"),
        "{err}"
    );
    assert!(err.trim_end().ends_with("1 given"), "{err}");
}
