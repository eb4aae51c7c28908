//! Fixes (README, "Fixing findings"): every fix the tool emits is checked
//! by applying it outside the tool, and `foldcheck fix` is checked on real files (line
//! endings, byte-order mark, dry-run patches, idempotence, shared catalogs, links).

mod common;

use serde_json::Value;
use std::collections::HashSet;
use std::fs;
use std::path::{Path, PathBuf};
use std::process::Command;

/// Copy a directory tree.
fn copy_tree(from: &Path, to: &Path) {
    fs::create_dir_all(to).unwrap();
    for e in fs::read_dir(from).unwrap() {
        let e = e.unwrap();
        let t = to.join(e.file_name());
        if e.file_type().unwrap().is_dir() {
            copy_tree(&e.path(), &t);
        } else if e.file_type().unwrap().is_file() {
            fs::copy(e.path(), &t).unwrap();
        }
    }
}

fn rigs_under(dir: &Path) -> Vec<PathBuf> {
    let mut out = Vec::new();
    for e in fs::read_dir(dir).unwrap() {
        let p = e.unwrap().path();
        if p.is_dir() {
            out.extend(rigs_under(&p));
        } else if p.to_string_lossy().ends_with(".rig.yaml") {
            out.push(p);
        }
    }
    out.sort();
    out
}

/// What makes a finding the same before and after an edit: its fingerprint when the
/// report has one, else rule, file, channel and line (lines moved by the edits).
fn identity(f: &Value, line_shift: &dyn Fn(&str, i64) -> i64) -> String {
    if let Some(fp) = f["fingerprint"].as_str() {
        return fp.to_string();
    }
    let file = f["file"].as_str().unwrap();
    format!(
        "{} {} {} {}",
        f["rule"].as_str().unwrap(),
        file,
        f["channel"].as_str().unwrap_or("-"),
        line_shift(file, f["line"].as_i64().unwrap())
    )
}

/// Apply a finding's JSON `fix` edits to the files under `dir` (paths as reported,
/// relative to `dir`), checking each edit touches only one value's bytes.
fn apply_edits(dir: &Path, fix: &Value) -> Vec<(PathBuf, Vec<u8>)> {
    let mut saved = Vec::new();
    let edits = fix["edits"].as_array().unwrap();
    let mut files: Vec<&str> = edits.iter().map(|e| e["file"].as_str().unwrap()).collect();
    files.dedup();
    for file in files {
        let path = dir.join(file);
        let before = fs::read(&path).unwrap();
        let mut mine: Vec<&Value> = edits.iter().filter(|e| e["file"] == file).collect();
        mine.sort_by_key(|e| std::cmp::Reverse(e["start"].as_u64().unwrap()));
        let mut text = before.clone();
        for e in mine {
            let (s, en) = (
                e["start"].as_u64().unwrap() as usize,
                e["end"].as_u64().unwrap() as usize,
            );
            let old = String::from_utf8(before[s..en].to_vec()).unwrap();
            let new = e["replacement"].as_str().unwrap();
            // Only the bytes of a value: never a line break, a comment or quotes.
            for part in [old.as_str(), new] {
                assert!(
                    !part.contains(['\n', '\r', '#', '"', '\'']),
                    "{file}: edit {old:?} → {new:?} reaches past a value"
                );
            }
            // Line and column agree with the byte offsets (columns count characters).
            let line = 1 + before[..s].iter().filter(|b| **b == b'\n').count();
            let line_start = before[..s]
                .iter()
                .rposition(|b| *b == b'\n')
                .map_or(0, |i| i + 1);
            let column = 1 + String::from_utf8_lossy(&before[line_start..s])
                .chars()
                .count();
            assert_eq!(
                (e["line"].as_u64().unwrap(), e["column"].as_u64().unwrap()),
                (line as u64, column as u64),
                "{file}: edit position"
            );
            text.splice(s..en, new.bytes());
        }
        fs::write(&path, &text).unwrap();
        saved.push((path, before));
    }
    saved
}

#[test]
fn every_fix_in_the_cases_clean_rigs_and_examples_removes_its_finding_and_adds_nothing() {
    let manifest = Path::new(env!("CARGO_MANIFEST_DIR"));
    let tmp = tempfile::tempdir().unwrap();
    let mut checked = 0;
    let mut kinds = HashSet::new();
    for tree in ["tests/cases", "tests/clean", "examples"] {
        let dir = tmp.path().join(tree.replace('/', "-"));
        copy_tree(&manifest.join(tree), &dir);
        for rig in rigs_under(&dir) {
            let rel = rig
                .strip_prefix(&dir)
                .unwrap()
                .to_string_lossy()
                .to_string();
            let (before, _) = common::check_json(&dir, &[&rel]);
            let findings = before["findings"].as_array().unwrap();
            for f in findings.iter().filter(|f| f.get("fix").is_some()) {
                let fix = &f["fix"];
                let saved = apply_edits(&dir, fix);
                // Lines move only when an edit adds or removes line breaks (it never
                // does: checked in apply_edits), so identities compare directly.
                let same = |_: &str, line: i64| line;
                let before_ids: HashSet<String> =
                    findings.iter().map(|g| identity(g, &same)).collect();
                let (after, _) = common::check_json(&dir, &[&rel]);
                let after_findings = after["findings"].as_array().unwrap();
                let me = identity(f, &same);
                assert!(
                    !after_findings.iter().any(|g| identity(g, &same) == me),
                    "{tree}/{rel}: the fix {fix} left its finding {me}"
                );
                for g in after_findings {
                    let sev = g["severity"].as_str().unwrap();
                    if (sev == "error" || sev == "warning") && g.get("suppressed").is_none() {
                        assert!(
                            before_ids.contains(&identity(g, &same)),
                            "{tree}/{rel}: the fix {fix} added {g}"
                        );
                    }
                }
                // Everything outside the edited bytes is untouched.
                for (path, original) in &saved {
                    let now = fs::read(path).unwrap();
                    let kept_lines = original
                        .split(|b| *b == b'\n')
                        .zip(now.split(|b| *b == b'\n'))
                        .filter(|(a, b)| a != b)
                        .count();
                    assert!(
                        kept_lines <= fix["edits"].as_array().unwrap().len(),
                        "{}: more lines changed than edits",
                        path.display()
                    );
                    fs::write(path, original).unwrap();
                }
                kinds.insert(f["rule"].as_str().unwrap().to_string());
                checked += 1;
            }
        }
    }
    // The corpus holds fixable findings of the input rules (unit and enum spelling,
    // misspelt names): the test cannot pass by finding nothing.
    assert!(checked >= 5, "only {checked} fixes found in the corpus");
    for rule in ["quantity", "unknown-reference"] {
        assert!(
            kinds.contains(rule),
            "no `{rule}` fix in the corpus: {kinds:?}"
        );
    }
}

/// A rig that is clean once its four spelling mistakes are fixed; a comment on every
/// line that holds one, quoting kept, and keys in no particular order.
const MISSPELT: &str = r#"format: 1
rig: bench-3
clocks:
  - name: base   # the bench oscillator
    frequency: "25.6 KHz"   # written as on the label
channels:
  - name: strain-1 # gauge on the lug
    clock: bsae # typo kept from the old sheet
    band: 5 kHz
    filters: [{ cutoff: 6 kHz, response: Butterworth, order: 8 }]  # ÆØÅ: the card's filter
    alias-rejection: 40 db
"#;

fn misspelt_fixed() -> String {
    MISSPELT
        .replace("25.6 KHz", "25.6 kHz")
        .replace("bsae", "base")
        .replace("Butterworth", "butterworth")
        .replace("40 db", "40 dB")
}

fn variants() -> Vec<(&'static str, String, String)> {
    let crlf = |s: &str| s.replace('\n', "\r\n");
    let bom = |s: &str| format!("\u{feff}{s}");
    vec![
        ("lf", MISSPELT.to_string(), misspelt_fixed()),
        ("crlf", crlf(MISSPELT), crlf(&misspelt_fixed())),
        ("bom", bom(MISSPELT), bom(&misspelt_fixed())),
        (
            "bom-crlf",
            bom(&crlf(MISSPELT)),
            bom(&crlf(&misspelt_fixed())),
        ),
    ]
}

#[test]
fn fix_changes_only_the_values_whatever_the_line_endings_and_a_second_run_is_a_no_op() {
    for (name, text, expected) in variants() {
        let tmp = tempfile::tempdir().unwrap();
        let file = tmp.path().join("bench.rig.yaml");
        fs::write(&file, &text).unwrap();
        // The rig has four errors before the fix.
        let (report, code) = common::check_json(tmp.path(), &["bench.rig.yaml"]);
        assert_eq!(code, 1, "{name}");
        assert_eq!(report["summary"]["error"], 4, "{name}: {report}");
        let out = common::run_in(tmp.path(), &["fix", "--color", "never", "bench.rig.yaml"]);
        let stdout = String::from_utf8_lossy(&out.stdout);
        assert_eq!(
            out.status.code(),
            Some(0),
            "{name}: clean after fixing\n{stdout}"
        );
        assert!(
            stdout.contains("4 fixes applied in 1 file"),
            "{name}: {stdout}"
        );
        assert_eq!(
            fs::read(&file).unwrap(),
            expected.as_bytes(),
            "{name}: byte-identical outside the edited values"
        );
        // Idempotent: nothing left to do, the file stays as it is.
        let again = common::run_in(tmp.path(), &["fix", "--color", "never", "bench.rig.yaml"]);
        assert_eq!(again.status.code(), Some(0), "{name}");
        assert!(
            String::from_utf8_lossy(&again.stdout).contains("0 fixes applied in 0 files"),
            "{name}: {}",
            String::from_utf8_lossy(&again.stdout)
        );
        assert_eq!(fs::read(&file).unwrap(), expected.as_bytes(), "{name}");
        // Nothing but the rig was left in the directory (no temporary files).
        let names: Vec<_> = fs::read_dir(tmp.path())
            .unwrap()
            .map(|e| e.unwrap().file_name())
            .collect();
        assert_eq!(
            names,
            vec![std::ffi::OsString::from("bench.rig.yaml")],
            "{name}"
        );
    }
}

#[test]
fn dry_run_prints_a_patch_that_git_apply_accepts_and_writes_nothing() {
    for (name, text, expected) in variants() {
        let tmp = tempfile::tempdir().unwrap();
        let file = tmp.path().join("bench.rig.yaml");
        fs::write(&file, &text).unwrap();
        let out = common::run_in(tmp.path(), &["fix", "--dry-run", "bench.rig.yaml"]);
        assert_eq!(
            out.status.code(),
            Some(0),
            "{name}: exit as check on the result"
        );
        assert_eq!(
            fs::read(&file).unwrap(),
            text.as_bytes(),
            "{name}: not written"
        );
        let patch = tmp.path().join("fix.patch");
        fs::write(&patch, &out.stdout).unwrap();
        assert!(
            String::from_utf8_lossy(&out.stdout)
                .starts_with("--- a/bench.rig.yaml\n+++ b/bench.rig.yaml\n@@ "),
            "{name}: {}",
            String::from_utf8_lossy(&out.stdout)
        );
        // git's patch reader, outside any repository (git apply works on plain files).
        for args in [
            &["apply", "--check", "fix.patch"][..],
            &["apply", "fix.patch"][..],
        ] {
            let git = Command::new("git")
                .args(args)
                .current_dir(tmp.path())
                .output()
                .expect("git runs");
            assert!(
                git.status.success(),
                "{name}: git {args:?}: {}",
                String::from_utf8_lossy(&git.stderr)
            );
        }
        assert_eq!(
            fs::read(&file).unwrap(),
            expected.as_bytes(),
            "{name}: the patch does what `fix` does"
        );
    }
}

#[test]
fn fix_json_lists_each_fix_with_its_edits() {
    let tmp = tempfile::tempdir().unwrap();
    fs::write(tmp.path().join("bench.rig.yaml"), MISSPELT).unwrap();
    let out = common::run_in(
        tmp.path(),
        &[
            "fix",
            "--dry-run",
            "--format",
            "json",
            "--rule",
            "quantity",
            "bench.rig.yaml",
        ],
    );
    let v: Value = serde_json::from_slice(&out.stdout).unwrap();
    let fixes = v["fixes"].as_array().unwrap();
    let descriptions: Vec<&str> = fixes
        .iter()
        .map(|f| f["description"].as_str().unwrap())
        .collect();
    assert_eq!(
        descriptions,
        [
            "write the unit `KHz` as `kHz`",
            "write the unit `db` as `dB`"
        ],
        "only the chosen rule"
    );
    // `"25.6 KHz"` on line 5: the unit's bytes inside the quotes.
    let e = &fixes[0]["edits"][0];
    let start = MISSPELT.find("KHz").unwrap();
    assert_eq!(e["start"], start);
    assert_eq!(e["end"], start + 3);
    assert_eq!(
        (e["line"].as_u64(), e["column"].as_u64()),
        (Some(5), Some(22))
    );
    assert_eq!(e["replacement"], "kHz");
    assert_eq!(v["files"][0]["file"], "bench.rig.yaml");
    assert_eq!(v["files"][0]["written"], false);
    // The other two errors are left (the rule was not chosen): exit 1.
    assert_eq!(v["summary"]["error"], 2);
    assert_eq!(out.status.code(), Some(1));
    // Not written.
    assert_eq!(
        fs::read_to_string(tmp.path().join("bench.rig.yaml")).unwrap(),
        MISSPELT
    );
}

/// A shared catalog with a unit in the wrong case, included by two rigs.
fn catalog_campaign(dir: &Path) {
    fs::create_dir_all(dir.join("catalog")).unwrap();
    fs::write(dir.join("foldcheck.toml"), "").unwrap();
    fs::write(
        dir.join("catalog/hall.yaml"),
        "format: 1\ncatalog: hall\nclocks:\n  # the hall's reference\n  - name: hall-25k6\n    frequency: 25.6 KHz\n  - name: west-12k8\n    frequency: 12.8 KHz # the west bay's card\n",
    )
    .unwrap();
    for (rig, channels) in [("east", 2), ("west", 1)] {
        let mut text = format!("format: 1\nrig: {rig}\ninclude: [catalog/hall.yaml]\nchannels:\n");
        for i in 0..channels {
            text.push_str(&format!(
                "  - name: {rig}-{i}\n    clock: hall-25k6\n    band: 5 kHz\n    filters: [{{ response: butterworth, order: 8, cutoff: 6 kHz }}]\n    alias-rejection: 40 dB\n"
            ));
        }
        if rig == "west" {
            // 12.8 kHz for a 2 kHz band: an 8th-order Butterworth at 6 kHz gives
            // 10·log10(1 + (10.8/6)^16) = 40.8 dB at fs − B (closed form).
            text.push_str("  - { name: west-slow, clock: west-12k8, band: 2 kHz, filters: [{ response: butterworth, order: 8, cutoff: 6 kHz }], alias-rejection: 40 dB }\n");
        }
        fs::write(dir.join(format!("{rig}.rig.yaml")), text).unwrap();
    }
}

#[test]
fn a_catalog_fix_needs_include_catalogs_and_says_what_it_reaches() {
    let tmp = tempfile::tempdir().unwrap();
    catalog_campaign(tmp.path());
    let catalog = tmp.path().join("catalog/hall.yaml");
    let original = fs::read_to_string(&catalog).unwrap();
    // Linting one rig is enough to verify the edit in both rigs that include it.
    let (report, _) = common::check_json(tmp.path(), &["east.rig.yaml"]);
    let f = &report["findings"][0];
    assert_eq!(f["rule"], "quantity", "{report}");
    assert_eq!(
        f["fix"]["description"],
        "write the unit `KHz` as `kHz` (in a shared catalog: reaches 3 channels in 2 rigs: `east`, `west`)"
    );
    // The second clock's fix, verified in the same run of both rigs, counts its own.
    let g = &report["findings"][1];
    assert_eq!(g["line"], 8, "{report}");
    assert_eq!(
        g["fix"]["description"],
        "write the unit `KHz` as `kHz` (in a shared catalog: reaches 1 channel in 1 rig: `west`)"
    );
    // Without --include-catalogs: not applied, and said so.
    let out = common::run_in(tmp.path(), &["fix", "--color", "never", "east.rig.yaml"]);
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert!(
        stdout.contains("not fixed (edits a shared catalog; pass --include-catalogs): catalog/hall.yaml:6:16 quantity: write the unit `KHz` as `kHz` (in a shared catalog: reaches 3 channels in 2 rigs: `east`, `west`)"),
        "{stdout}"
    );
    assert_eq!(out.status.code(), Some(1));
    assert_eq!(fs::read_to_string(&catalog).unwrap(), original);
    // With it: applied, comment kept, and both rigs are clean.
    let out = common::run_in(
        tmp.path(),
        &[
            "fix",
            "--include-catalogs",
            "--color",
            "never",
            "east.rig.yaml",
        ],
    );
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stdout)
    );
    assert_eq!(
        fs::read_to_string(&catalog).unwrap(),
        original
            .replace("25.6 KHz", "25.6 kHz")
            .replace("12.8 KHz", "12.8 kHz")
    );
    let (report, code) = common::check_json(tmp.path(), &["."]);
    assert_eq!(code, 0, "{report}");
}

/// A catalog clock (24.576 MHz / 2048 = 12 kHz) shared by two rigs: `bay-east` samples a
/// 10 kHz band on it (not above twice the band), `bay-west` two 2 kHz channels, behind a
/// card that accepts at most `west_max_rate` when one is given.
fn catalog_clock_campaign(dir: &Path, west_max_rate: Option<&str>) {
    fs::create_dir_all(dir.join("catalog")).unwrap();
    fs::write(dir.join("foldcheck.toml"), "").unwrap();
    fs::write(
        dir.join("catalog/bay.yaml"),
        "format: 1\ncatalog: bay\nclocks:\n  - { name: bay-osc, frequency: 24.576 MHz }\n  # the frame clock of both bays\n  - { name: bay-frame, source: bay-osc, divide: 2048 }\n",
    )
    .unwrap();
    fs::write(
        dir.join("east.rig.yaml"),
        "format: 1\nrig: bay-east\ninclude: [catalog/bay.yaml]\nchannels:\n  - name: east-strain\n    clock: bay-frame\n    band: 10 kHz\n    alias-rejection: 40 dB\n    filters: [{ response: butterworth, order: 8, cutoff: 12 kHz }]\n",
    )
    .unwrap();
    let mut west = String::from("format: 1\nrig: bay-west\ninclude: [catalog/bay.yaml]\n");
    if let Some(max) = west_max_rate {
        west.push_str(&format!(
            "modules:\n  - {{ name: west-card, max-rate: {max} }}\n"
        ));
    }
    west.push_str("channels:\n");
    for i in 0..2 {
        west.push_str(&format!(
            "  - {{ name: west-{i}, clock: bay-frame, band: 2 kHz, alias-rejection: 40 dB, filters: [{{ response: butterworth, order: 8, cutoff: 3 kHz }}]{} }}\n",
            if west_max_rate.is_some() { ", module: west-card" } else { "" }
        ));
    }
    fs::write(dir.join("west.rig.yaml"), west).unwrap();
}

#[test]
fn a_divider_in_a_shared_catalog_is_verified_in_every_rig_and_applied_only_with_include_catalogs() {
    let tmp = tempfile::tempdir().unwrap();
    catalog_clock_campaign(tmp.path(), None);
    let catalog = tmp.path().join("catalog/bay.yaml");
    let original = fs::read_to_string(&catalog).unwrap();
    let (before, code) = common::check_json(tmp.path(), &["."]);
    assert_eq!(code, 1, "{before}");
    // Linting `bay-east` alone: the edit is still verified in `bay-west`, which includes
    // the catalog, and the fix says which rigs and how many channels it reaches.
    let (report, _) = common::check_json(tmp.path(), &["east.rig.yaml"]);
    let f = report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|f| f["rule"] == "nyquist")
        .unwrap_or_else(|| panic!("no nyquist finding: {report}"));
    // 40 dB from an 8th-order Butterworth at 12 kHz needs fs − 10 kHz ≥ 12 kHz ×
    // 10^(40/160) (closed form): fs ≥ 31.34 kHz (÷ 784 at most); the round rate just
    // above, 24.576 MHz / 768 = 32 kHz, is proposed.
    let description = "divide `bay-osc` by 768 instead of 2048 in clock `bay-frame` to sample at 32 kHz (in a shared catalog: reaches 3 channels in 2 rigs: `bay-east`, `bay-west`)";
    assert_eq!(f["fix"]["description"], description, "{f}");
    assert_eq!(
        f["help"], description,
        "the help says what the fix does: {f}"
    );
    let edits = f["fix"]["edits"].as_array().unwrap();
    assert_eq!(edits.len(), 1);
    assert!(
        edits[0]["file"].as_str().unwrap().ends_with("bay.yaml"),
        "{f}"
    );
    assert_eq!(edits[0]["replacement"], "768");
    // Without --include-catalogs: not applied, and said so with the reach.
    let out = common::run_in(tmp.path(), &["fix", "--color", "never", "."]);
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert!(
        stdout.contains("not fixed (edits a shared catalog; pass --include-catalogs)")
            && stdout.contains(description),
        "{stdout}"
    );
    assert_eq!(fs::read_to_string(&catalog).unwrap(), original);
    // With it: the divider is the only byte change, and both rigs are clean.
    let out = common::run_in(
        tmp.path(),
        &["fix", "--include-catalogs", "--color", "never", "."],
    );
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stdout)
    );
    assert_eq!(
        fs::read_to_string(&catalog).unwrap(),
        original.replace("divide: 2048", "divide: 768")
    );
    let (after, code) = common::check_json(tmp.path(), &["."]);
    assert_eq!(code, 0, "{after}");
}

#[test]
fn a_catalog_divider_that_would_break_another_rig_is_not_proposed() {
    // `bay-west`'s card accepts at most 20 kHz: the 32 kHz that fixes `bay-east`
    // would raise a `module-rate` error there, so verification drops the edit and the
    // help falls back to advice that proposes no edit.
    let tmp = tempfile::tempdir().unwrap();
    catalog_clock_campaign(tmp.path(), Some("20 kHz"));
    let (report, _) = common::check_json(tmp.path(), &["east.rig.yaml"]);
    let f = report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|f| f["rule"] == "nyquist")
        .unwrap_or_else(|| panic!("no nyquist finding: {report}"));
    assert!(f.get("fix").is_none(), "{f}");
    let help = f["help"].as_str().unwrap_or("");
    assert!(!help.contains("768") && !help.contains("divide `"), "{f}");
}

#[cfg(unix)]
#[test]
fn fix_refuses_to_write_through_a_link_that_leads_outside_the_campaign_root() {
    let tmp = tempfile::tempdir().unwrap();
    let root = tmp.path().join("campaign");
    let outside = tmp.path().join("elsewhere");
    fs::create_dir_all(&root).unwrap();
    fs::create_dir_all(&outside).unwrap();
    fs::write(root.join("foldcheck.toml"), "").unwrap();
    let target = outside.join("bench.rig.yaml");
    fs::write(&target, MISSPELT).unwrap();
    std::os::unix::fs::symlink(&target, root.join("bench.rig.yaml")).unwrap();
    let out = common::run_in(&root, &["fix", "--color", "never", "bench.rig.yaml"]);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        stderr.contains("bench.rig.yaml: not written: it leads to")
            && stderr.contains("outside the campaign root"),
        "{stderr}"
    );
    assert_eq!(
        fs::read_to_string(&target).unwrap(),
        MISSPELT,
        "the file outside is untouched"
    );
    assert!(
        fs::symlink_metadata(root.join("bench.rig.yaml"))
            .unwrap()
            .file_type()
            .is_symlink()
    );
    assert_eq!(out.status.code(), Some(1), "the findings are still there");
}

#[cfg(unix)]
#[test]
fn fix_writes_through_a_link_inside_the_campaign_to_its_target_and_keeps_the_link() {
    let tmp = tempfile::tempdir().unwrap();
    fs::write(tmp.path().join("foldcheck.toml"), "").unwrap();
    fs::create_dir_all(tmp.path().join("rigs")).unwrap();
    let target = tmp.path().join("rigs/bench.rig.yaml");
    fs::write(&target, MISSPELT).unwrap();
    std::os::unix::fs::symlink("rigs/bench.rig.yaml", tmp.path().join("current.rig.yaml")).unwrap();
    let out = common::run_in(tmp.path(), &["fix", "--color", "never", "current.rig.yaml"]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert_eq!(fs::read_to_string(&target).unwrap(), misspelt_fixed());
    assert!(
        fs::symlink_metadata(tmp.path().join("current.rig.yaml"))
            .unwrap()
            .file_type()
            .is_symlink()
    );
}

#[test]
fn a_fix_that_would_add_an_error_is_not_proposed_and_the_help_does_not_propose_it() {
    // Spelt right, the clock runs at 3 kHz: below twice the 2 kHz band (a `nyquist`
    // error the broken clock hides today). The unit fix is therefore not verified.
    let tmp = tempfile::tempdir().unwrap();
    let text = "format: 1\nrig: slow\nclocks:\n  - { name: base, frequency: 3 KHz }\n  - { name: fast, frequency: 25.6 KHz }\nchannels:\n  - { name: c1, clock: base, band: 2 kHz }\n  - { name: c2, clock: fast, band: 2 kHz, filters: [{ response: butterworth, order: 4, cutoff: 4 kHz }] }\n";
    fs::write(tmp.path().join("slow.rig.yaml"), text).unwrap();
    let (report, _) = common::check_json(tmp.path(), &["slow.rig.yaml"]);
    let findings = report["findings"].as_array().unwrap();
    assert_eq!(findings.len(), 2, "{report}");
    // The 3 kHz clock: no fix, and the help names the units, not the edit.
    assert_eq!(findings[0]["line"], 4);
    assert!(findings[0].get("fix").is_none(), "{}", findings[0]);
    assert_eq!(
        findings[0]["help"],
        "units are case-sensitive: use one of Hz kHz MHz GHz"
    );
    // The 25.6 kHz clock: fixing it leaves c2 clean (ratio 12.8, 4th-order
    // Butterworth at 4 kHz gives 10·log10(1 + (23.6/4)^8) = 61.7 dB at fs − B, and
    // 10·log10(1 + 0.5^8) = 0.02 dB of droop at the band edge: the closed form).
    assert_eq!(findings[1]["line"], 5);
    assert_eq!(findings[1]["help"], "write `25.6 kHz`");
    assert_eq!(findings[1]["fix"]["edits"][0]["replacement"], "kHz");
}

/// Two microphones on one divided clock: 24.576 MHz / 512 = 48 kHz, below 2.5 times
/// either band (the sampling margin, common practice). Each channel's fix is another
/// divider on `frame`, and the two dividers differ: the same three bytes, two texts.
const SHARED_DIVIDER: &str = "\
format: 1
rig: bay-4
clocks:
  - { name: osc, frequency: 24.576 MHz }
  - { name: frame, source: osc, divide: 512 }
channels:
  - name: mic-north
    clock: frame
    band: 20 kHz
    filters: [{ response: digital, passband-edge: 0.45, stopband-edge: 0.55, attenuation: 100 dB }]
  - name: mic-south
    clock: frame
    band: 21 kHz
    filters: [{ response: digital, passband-edge: 0.45, stopband-edge: 0.55, attenuation: 100 dB }]
";

#[test]
fn two_fixes_that_edit_the_same_value_differently_are_both_reported_and_neither_applied() {
    let tmp = tempfile::tempdir().unwrap();
    fs::write(tmp.path().join("foldcheck.toml"), "").unwrap();
    let rig = tmp.path().join("bay.rig.yaml");
    fs::write(&rig, SHARED_DIVIDER).unwrap();
    let (before, check_status) = common::check_json(tmp.path(), &["bay.rig.yaml"]);
    // `check` proposes both fixes, each verified on its own.
    let proposed: Vec<(String, String)> = before["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter_map(|f| {
            let e = &f["fix"]["edits"][0];
            Some((
                f["channel"].as_str()?.to_string(),
                e["replacement"].as_str()?.to_string(),
            ))
        })
        .collect();
    assert_eq!(proposed.len(), 2, "{before:#}");
    let span = SHARED_DIVIDER.find("512").unwrap();
    for f in before["findings"].as_array().unwrap() {
        let e = &f["fix"]["edits"][0];
        assert_eq!(
            (e["start"].as_u64(), e["end"].as_u64()),
            (Some(span as u64), Some(span as u64 + 3))
        );
    }
    // Each divider gives its own channel 2.5 times its band: 24.576 MHz / d >= 2.5 band.
    for (channel, d) in &proposed {
        let band = if channel == "mic-north" { 20e3 } else { 21e3 };
        let d: f64 = d.parse().unwrap();
        assert!(24.576e6 / d >= 2.5 * band, "{channel}: {d}");
    }
    assert_ne!(proposed[0].1, proposed[1].1, "the two fixes differ");

    // `fix --format json`: no fix applied, the pair reported as one conflict, nothing
    // written, and the exit status that `check` gives the unchanged file.
    let out = common::run_in(tmp.path(), &["fix", "--format", "json", "bay.rig.yaml"]);
    let v: Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["fixes"], serde_json::json!([]), "{v:#}");
    let conflicts = v["conflicts"].as_array().unwrap();
    assert_eq!(conflicts.len(), 1, "{v:#}");
    let mut pair: Vec<(String, String)> = conflicts[0]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| {
            (
                c["channel"].as_str().unwrap().to_string(),
                c["edits"][0]["replacement"].as_str().unwrap().to_string(),
            )
        })
        .collect();
    pair.sort();
    let mut want = proposed.clone();
    want.sort();
    assert_eq!(pair, want);
    assert_eq!(fs::read_to_string(&rig).unwrap(), SHARED_DIVIDER);
    assert_eq!(out.status.code(), Some(check_status));

    // The human form names both, and a second run is the same (nothing was written).
    for _ in 0..2 {
        let out = common::run_in(tmp.path(), &["fix", "--color", "never", "bay.rig.yaml"]);
        let text = String::from_utf8(out.stdout).unwrap();
        assert!(
            text.contains("not fixed: these fixes edit the same text differently:"),
            "{text}"
        );
        for (channel, d) in &proposed {
            let line = if channel == "mic-north" { 8 } else { 12 };
            assert!(
                text.contains(&format!(
                    "bay.rig.yaml:{line}:12 sampling-margin: divide `osc` by {d} instead of 512"
                )),
                "{text}"
            );
        }
        assert!(text.contains("0 fixes applied in 0 files"), "{text}");
        assert_eq!(fs::read_to_string(&rig).unwrap(), SHARED_DIVIDER);
    }
}
