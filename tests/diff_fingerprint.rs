//! `foldcheck diff` matches findings by fingerprint (docs/output.md, "Fingerprints" and
//! "How diff matches findings"): a finding whose numbers all move is *changed*, not
//! introduced and resolved; a new finding is introduced and fails the gate; a clock's
//! fan-out is counted over the rigs it reaches. Black-box on the real binary.
//!
//! Numbers used: 48 kHz ÷ 10 = 4.8 kHz and ÷ 11 = 4.36364 kHz (plain arithmetic);
//! `sampling-margin` fires when 2·B < fs < 2.5·B (common practice, the documented
//! default), `nyquist` when fs ≤ 2·B (C. E. Shannon, 1949).

use serde_json::Value;
use std::path::Path;
use std::process::Command;

fn write(dir: &Path, name: &str, text: &str) {
    let p = dir.join(name);
    std::fs::create_dir_all(p.parent().unwrap()).unwrap();
    std::fs::write(p, text).unwrap();
}

fn diff_json(dir: &Path, old: &str, new: &str) -> (Value, i32) {
    let out = Command::new(env!("CARGO_BIN_EXE_foldcheck"))
        .args(["diff", old, new, "--format", "json"])
        .current_dir(dir)
        .output()
        .expect("the binary runs");
    let text = String::from_utf8_lossy(&out.stdout);
    let v: Value = serde_json::from_str(&text).unwrap_or_else(|e| {
        panic!(
            "not JSON ({e}): {text}\n{}",
            String::from_utf8_lossy(&out.stderr)
        )
    });
    (v, out.status.code().expect("exited"))
}

const BAY: &str = "format: 1
rig: bay-3
clocks:
  - { name: osc, frequency: 48 kHz }
  - { name: c-tight, source: osc, divide: 10 }
channels:
  - name: tight
    clock: c-tight
    band: 2 kHz
    filters: [{ response: butterworth, order: 8, cutoff: 2.2 kHz }]
";

#[test]
fn a_divider_change_that_moves_every_number_is_a_changed_finding_and_passes_the_gate() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "old/bay.rig.yaml", BAY);
    write(
        dir.path(),
        "new/bay.rig.yaml",
        &BAY.replace("divide: 10", "divide: 11"),
    );
    let (v, code) = diff_json(dir.path(), "old", "new");
    assert_eq!(code, 0, "{v:#}");
    assert_eq!(v["introduced"], Value::Array(vec![]), "{v:#}");
    assert_eq!(v["resolved"], Value::Array(vec![]), "{v:#}");
    let changed = v["changed"].as_array().unwrap();
    let margin = changed
        .iter()
        .find(|c| c["after"]["rule"] == "sampling-margin")
        .expect("sampling-margin is changed");
    // Every number of the message moved: rate 4.8 kHz → 4.36364 kHz, ratio 2.4 → 2.182.
    assert_eq!(margin["before"]["values"]["rate_hz"], 4800.0);
    assert_eq!(margin["before"]["values"]["ratio"], 2.4);
    assert_eq!(margin["after"]["values"]["ratio"], 2.1818);
    assert!((margin["after"]["values"]["rate_hz"].as_f64().unwrap() - 48000.0 / 11.0).abs() < 1e-6);
    assert_ne!(margin["before"]["message"], margin["after"]["message"]);
    assert_eq!(
        margin["before"]["fingerprint"],
        margin["after"]["fingerprint"]
    );
    assert_eq!(margin["fingerprint"], margin["after"]["fingerprint"]);
}

#[test]
fn a_new_finding_is_introduced_and_fails_the_gate() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "old/bay.rig.yaml", BAY);
    // A second channel at 4 kHz for a 2 kHz band: nyquist (4 kHz is not above 2 × 2 kHz).
    let added = format!(
        "{BAY}  - name: slow\n    clock: c-slow\n    band: 2 kHz\n    filters: [{{ response: butterworth, order: 8, cutoff: 2.2 kHz }}]\n"
    )
    .replace(
        "  - { name: c-tight, source: osc, divide: 10 }\n",
        "  - { name: c-tight, source: osc, divide: 10 }\n  - { name: c-slow, source: osc, divide: 12 }\n",
    );
    write(dir.path(), "new/bay.rig.yaml", &added);
    let (v, code) = diff_json(dir.path(), "old", "new");
    assert_eq!(code, 1, "{v:#}");
    let introduced: Vec<(&str, &str)> = v["introduced"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| {
            (
                f["rule"].as_str().unwrap(),
                f["channel"].as_str().unwrap_or(""),
            )
        })
        .collect();
    assert!(introduced.contains(&("nyquist", "slow")), "{introduced:?}");
    assert!(
        introduced.iter().all(|(_, ch)| *ch == "slow"),
        "only the new channel's findings are new: {introduced:?}"
    );
    assert_eq!(v["resolved"], Value::Array(vec![]));
    // `tight`'s findings are on both sides, untouched.
    assert_eq!(v["changed"], Value::Array(vec![]));
    assert!(v["summary"]["unchanged_findings"].as_u64().unwrap() >= 2);
}

/// A catalog clock `hall` (48 kHz ÷ 10 = 4.8 kHz) included by three rigs; `users` of
/// them sample on it, the others on `osc`. The catalog's divider changes to 12.
fn fan_out(users: usize) -> Value {
    let dir = tempfile::tempdir().unwrap();
    let catalog = "format: 1\ncatalog: lab\nclocks:\n  - { name: osc, frequency: 48 kHz }\n  - { name: hall, source: osc, divide: 10 }\n";
    for side in ["old", "new"] {
        let cat = if side == "new" {
            catalog.replace("divide: 10", "divide: 12")
        } else {
            catalog.to_string()
        };
        write(dir.path(), &format!("{side}/catalog/lab.yaml"), &cat);
        for r in 0..3 {
            let clock = if r < users { "hall" } else { "osc" };
            write(
                dir.path(),
                &format!("{side}/rigs/r{r}.rig.yaml"),
                &format!(
                    "format: 1\nrig: r{r}\ninclude: [../catalog/lab.yaml]\nchannels:\n  - name: ch-{r}\n    clock: {clock}\n    band: 1 kHz\n    filters: [{{ response: butterworth, order: 8, cutoff: 1.2 kHz }}]\n"
                ),
            );
        }
    }
    let (v, _) = diff_json(dir.path(), "old", "new");
    let hall: Vec<&Value> = v["clocks"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|c| c["clock"] == "hall")
        .collect();
    assert_eq!(hall.len(), 1, "{v:#}");
    hall[0].clone()
}

#[test]
fn fan_out_counts_the_rigs_a_catalog_clock_reaches() {
    let one = fan_out(1);
    assert_eq!(
        (one["channels_after"].as_u64(), one["rigs"].as_u64()),
        (Some(1), Some(1)),
        "one rig of three samples on the catalog clock: {one:#}"
    );
    let three = fan_out(3);
    assert_eq!(
        (three["channels_after"].as_u64(), three["rigs"].as_u64()),
        (Some(3), Some(3)),
        "{three:#}"
    );
}
