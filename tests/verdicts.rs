//! One analysis, read twice: for every rig under `tests/cases`, `tests/clean` and
//! `examples`, the rule verdicts `inspect --format json` shows for each channel fail
//! exactly where `check --format json` reports a finding of that rule for the channel
//! (same rule, same rate change). The two commands read the same per-channel analysis
//! (docs/model.md); this keeps anyone from re-deriving a verdict in one of them.

mod common;

use foldcheck::campaign::{self, Options};
use serde_json::Value;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

/// The rules whose verdicts the per-channel analysis computes.
const RATE_RULES: &[&str] = &[
    "module-rate",
    "nyquist",
    "sampling-margin",
    "alias-rejection",
    "disturbance-alias",
    "passband-droop",
    "sensor-band",
    "oversampling",
];

fn rigs_under(dir: &Path, out: &mut Vec<PathBuf>) {
    let mut entries: Vec<PathBuf> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .collect();
    entries.sort();
    for p in entries {
        if p.is_dir() {
            rigs_under(&p, out);
        } else if p.to_string_lossy().ends_with(".rig.yaml") {
            out.push(p);
        }
    }
}

/// (rule, stage) of each failing rate verdict, sorted.
type Fails = Vec<(String, Option<u64>)>;

fn stage_of(v: &Value) -> Option<u64> {
    v.as_u64()
}

#[test]
fn inspect_verdicts_equal_check_findings_for_every_rig() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let mut checked_channels = 0;
    let mut failing_verdicts = 0;
    let mut mismatches = Vec::new();
    for top in ["tests/cases", "tests/clean", "examples"] {
        let mut rigs = Vec::new();
        rigs_under(&root.join(top), &mut rigs);
        for rig_path in rigs {
            let dir = rig_path.parent().unwrap();
            let name = rig_path.file_name().unwrap().to_str().unwrap();
            // The channels of the rig, from the library's own run.
            let opts = Options {
                keep_rigs: true,
                ..Default::default()
            };
            let Ok(out) = campaign::run(std::slice::from_ref(&rig_path), &opts) else {
                continue;
            };
            let Some(rig) = out.rigs.first().and_then(|r| r.rig.as_ref()) else {
                continue;
            };
            let channels: Vec<String> = rig
                .channels
                .iter()
                .map(|c| c.def.name.value.clone())
                .collect();
            let (report, _) = common::check_json(dir, &[name]);
            let mut from_check: BTreeMap<String, Fails> = BTreeMap::new();
            for f in report["findings"].as_array().unwrap() {
                let rule = f["rule"].as_str().unwrap();
                let (Some(ch), true) = (f["channel"].as_str(), RATE_RULES.contains(&rule)) else {
                    continue;
                };
                if !f["file"].as_str().unwrap().ends_with(name) {
                    continue;
                }
                from_check
                    .entry(ch.to_string())
                    .or_default()
                    .push((rule.to_string(), stage_of(&f["values"]["stage"])));
            }
            for ch in &channels {
                let o = common::run_in(dir, &["inspect", name, ch, "--format", "json"]);
                let v: Value = match serde_json::from_slice(&o.stdout) {
                    Ok(v) => v,
                    // A channel inspect cannot show (the rig does not resolve) has no
                    // analysis; check then reports no rate finding for it.
                    Err(_) => Value::Null,
                };
                let mut shown: Fails = v["verdicts"]
                    .as_array()
                    .map(|a| {
                        a.iter()
                            .filter(|x| x["pass"] == Value::Bool(false))
                            .map(|x| {
                                (
                                    x["rule"].as_str().unwrap().to_string(),
                                    stage_of(&x["stage"]),
                                )
                            })
                            .collect()
                    })
                    .unwrap_or_default();
                shown.sort();
                failing_verdicts += shown.len();
                let mut reported = from_check.remove(ch).unwrap_or_default();
                reported.sort();
                checked_channels += 1;
                if shown != reported {
                    mismatches.push(format!(
                        "{}: `{ch}`: inspect fails {shown:?}, check reports {reported:?}",
                        rig_path.strip_prefix(root).unwrap().display()
                    ));
                }
            }
        }
    }
    assert!(
        mismatches.is_empty(),
        "{} channel(s) differ:\n{}",
        mismatches.len(),
        mismatches.join("\n")
    );
    // The walk must have seen the case rigs' channels and their failing verdicts.
    assert!(checked_channels > 60, "only {checked_channels} channels");
    assert!(
        failing_verdicts > 20,
        "only {failing_verdicts} failing verdicts"
    );
}

/// The fixes of the two fix case folders are pinned: the resonance case needs the gain
/// covered (97 dB, not the 80 dB required alone); in the decimation case the largest
/// factor that leaves the channel clean is ÷ 9 (5.33 kHz; ÷ 10 would be 2.4 × the
/// band, under the 2.5 × margin, common practice), and ÷ 8 is proposed instead because
/// its rate is round (6 kHz) and it is within reach (README, "Fixing findings").
#[test]
fn resonance_and_decimation_fixes_are_the_ones_the_analysis_confirms() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/cases");
    for (case, rule, replacement) in [
        (
            "alias-rejection/resonance-fix.rig.yaml",
            "alias-rejection",
            "97 dB",
        ),
        ("nyquist/decimation-fix.rig.yaml", "nyquist", "8"),
    ] {
        let (report, _) = common::check_json(&root, &[case]);
        let f = report["findings"]
            .as_array()
            .unwrap()
            .iter()
            .find(|f| f["rule"] == rule)
            .unwrap_or_else(|| panic!("{case}: no {rule} finding"));
        let edits = f["fix"]["edits"].as_array().expect("a verified fix");
        assert_eq!(edits.len(), 1, "{case}");
        assert_eq!(edits[0]["replacement"], replacement, "{case}");
        // The help names the same change as the fix.
        assert_eq!(f["help"], f["fix"]["description"], "{case}");
    }
}
