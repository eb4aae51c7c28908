//! The campaign root without a settings file (docs/format.md, "Campaign root"): the
//! usual layout of sibling `rigs/` and `catalog/` directories and no `foldcheck.toml`,
//! checked the way pre-commit runs it (a file name, from the repository's top), from
//! inside `rigs/`, for a changed catalog, and for `diff --rev`.

mod common;

use common::{check_json, rules_of, run_in};
use std::fs;
use std::path::Path;
use std::process::Command;

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

/// A clean rig: 24.576 MHz / 512 = 48 kHz, a 10 kHz band (ratio 4.8), and a digital
/// filter with 100 dB from 0.55 × 48 kHz = 26.4 kHz, below 48 − 10 = 38 kHz.
fn rig(name: &str, band: &str) -> String {
    format!(
        "format: 1\nrig: {name}\ninclude: [../catalog/lab.yaml]\nchannels:\n  - name: {name}-mic\n    clock: f48k\n    sensor: mic\n    band: {band}\n    filters: [{{ response: digital, passband-edge: 0.45, stopband-edge: 0.55, attenuation: 100 dB }}]\n"
    )
}

/// A repository laid out the usual way, no foldcheck.toml; `.git` marks a work tree's
/// top (only its presence counts).
fn repo(git: bool) -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    if git {
        fs::create_dir(dir.path().join(".git")).unwrap();
    }
    write(dir.path(), "catalog/lab.yaml", CATALOG);
    write(dir.path(), "rigs/bay-1.rig.yaml", &rig("bay-1", "10 kHz"));
    dir
}

fn in_git_tree(p: &Path) -> bool {
    foldcheck::root::git_top(p).is_some()
}

#[test]
fn a_named_rig_in_a_git_tree_resolves_a_sibling_catalog_from_anywhere() {
    let dir = repo(true);
    for (cwd, file) in [
        (dir.path().to_path_buf(), "rigs/bay-1.rig.yaml"),
        (dir.path().join("rigs"), "bay-1.rig.yaml"),
        (dir.path().join("catalog"), "../rigs/bay-1.rig.yaml"),
    ] {
        let (report, code) = check_json(&cwd, &[file]);
        assert_eq!(report["findings"], serde_json::json!([]), "from {cwd:?}");
        assert_eq!((code, report["files"].as_u64()), (0, Some(1)));
    }
    // The human report says which root was used, since no foldcheck.toml chose it.
    let out = run_in(&dir.path().join("rigs"), &["check", "bay-1.rig.yaml"]);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        stderr
            .contains("no foldcheck.toml found; campaign root `..` (the top of the git work tree)"),
        "{stderr}"
    );
}

#[test]
fn without_git_the_current_directory_is_the_root_when_the_file_lies_below_it() {
    let dir = repo(false);
    if in_git_tree(dir.path()) {
        return; // this machine's temporary directory lies in a work tree
    }
    let (report, code) = check_json(dir.path(), &["rigs/bay-1.rig.yaml"]);
    assert_eq!(
        (report["findings"].clone(), code),
        (serde_json::json!([]), 0)
    );
    let out = run_in(dir.path(), &["check", "rigs/bay-1.rig.yaml"]);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        stderr.contains("campaign root `.` (the current directory)"),
        "{stderr}"
    );
}

#[test]
fn from_inside_rigs_without_git_the_include_leaves_the_root_and_the_help_says_what_to_do() {
    let dir = repo(false);
    if in_git_tree(dir.path()) {
        return;
    }
    let (report, code) = check_json(&dir.path().join("rigs"), &["bay-1.rig.yaml"]);
    let findings = report["findings"].as_array().unwrap();
    // One finding: no unknown-reference cascade for the clock and sensor it would define.
    assert_eq!(findings.len(), 1, "{findings:#?}");
    assert_eq!(code, 1);
    let f = &findings[0];
    assert_eq!(f["rule"], "include");
    assert_eq!(
        f["message"],
        "the included file `../catalog/lab.yaml` lies outside the campaign root; 2 references to clocks, sensors or modules it may define could not be checked, so 1 channel was not checked: `bay-1-mic`"
    );
    assert_eq!(f["values"]["unchecked_references"], 2);
    assert_eq!(
        f["help"],
        "no foldcheck.toml was found, so the campaign root is the current directory (`.`): create a foldcheck.toml (it may be empty) in `..`, the campaign's top directory, which holds both files"
    );
    // Following the help fixes it.
    write(dir.path(), "foldcheck.toml", "");
    let (report, code) = check_json(&dir.path().join("rigs"), &["bay-1.rig.yaml"]);
    assert_eq!(
        (report["findings"].clone(), code),
        (serde_json::json!([]), 0)
    );
}

#[test]
fn a_changed_catalog_lints_the_rigs_that_include_it_under_the_git_top() {
    let dir = repo(true);
    write(dir.path(), "rigs/bay-2.rig.yaml", &rig("bay-2", "10 kHz"));
    write(dir.path(), "rigs/other.rig.yaml", "format: 1\nrig: other\n");
    // 48 kHz with a 20 kHz band is ratio 2.4: sampling-margin (below 2.5, common
    // practice) once the catalog's sensor bandwidth becomes the band.
    write(dir.path(), "rigs/bay-3.rig.yaml", &rig("bay-3", "20 kHz"));
    // Run from inside catalog/, as a hook might: the rigs are found all the same.
    let (report, code) = check_json(&dir.path().join("catalog"), &["lab.yaml"]);
    assert_eq!(report["files"], 3, "bay-1, bay-2 and bay-3 include it");
    assert_eq!(rules_of(&report), ["sampling-margin"]);
    assert_eq!(report["findings"][0]["file"], "../rigs/bay-3.rig.yaml");
    assert_eq!(
        code, 0,
        "a warning does not fail the default --fail-on error"
    );
}

fn git(dir: &Path, args: &[&str]) {
    let out = Command::new("git")
        .args([
            "-c",
            "user.name=Test",
            "-c",
            "user.email=test@example.invalid",
            "-c",
            "commit.gpgsign=false",
        ])
        .args(args)
        .current_dir(dir)
        .output()
        .expect("git runs");
    assert!(
        out.status.success(),
        "git {args:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
}

#[test]
fn diff_rev_resolves_sibling_catalog_includes_on_both_sides() {
    let dir = tempfile::tempdir().unwrap();
    git(dir.path(), &["init", "--quiet"]);
    write(dir.path(), "catalog/lab.yaml", CATALOG);
    write(dir.path(), "rigs/bay-1.rig.yaml", &rig("bay-1", "10 kHz"));
    git(dir.path(), &["add", "."]);
    git(dir.path(), &["commit", "--quiet", "-m", "first"]);
    // Divide by 1024 instead: 24 kHz, a 10 kHz band is ratio 2.4 (sampling-margin).
    write(
        dir.path(),
        "catalog/lab.yaml",
        &CATALOG.replace("divide: 512", "divide: 1024"),
    );
    let out = run_in(
        &dir.path().join("rigs"),
        &["diff", "--rev", "HEAD", "--format", "json", "."],
    );
    let stderr = String::from_utf8_lossy(&out.stderr);
    let v: serde_json::Value =
        serde_json::from_slice(&out.stdout).unwrap_or_else(|e| panic!("{e}: {stderr}"));
    let text = v.to_string();
    // Neither side reports an include outside its campaign root.
    assert!(!text.contains("outside the campaign root"), "{text}");
    assert!(!text.contains("unknown-reference"), "{text}");
    assert!(
        text.contains("sampling-margin"),
        "the change is seen: {text}"
    );
    assert!(text.contains("48 kHz") || text.contains("48000"), "{text}");
}

/// The 200-channel rig of the benchmark campaign (`bench/gen.py`, rig 0), whose shared
/// catalog `../catalog/bench-hall.yaml` is missing here on purpose.
fn bench_rig_dir() -> std::path::PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/campaigns/missing-catalog")
}

#[test]
fn a_missing_catalog_gives_one_finding_for_the_200_channel_rig() {
    let (report, code) = check_json(&bench_rig_dir(), &["rigs/r-00000.rig.yaml"]);
    let findings = report["findings"].as_array().unwrap();
    assert_eq!(findings.len(), 1, "{findings:#?}");
    assert_eq!(code, 1);
    assert_eq!(report["channels"], 200);
    let f = &findings[0];
    assert_eq!(f["rule"], "include");
    let msg = f["message"].as_str().unwrap();
    assert!(
        msg.starts_with("the included file `../catalog/bench-hall.yaml` does not exist; "),
        "{msg}"
    );
    // Every channel names a catalog sensor and a module (2 × 200), and 80 channels sample
    // on catalog clocks directly (kinds 4, 5, 6 and 9 of every ten, bench/gen.py); the
    // rig's own two clocks derive from the catalog's `hall-25k6` (2 more references).
    assert_eq!(f["values"]["unchecked_references"], 482);
    assert_eq!(f["values"]["unchecked_channels"], 200);
    assert!(
        msg.ends_with(
            "so 200 channels were not checked: `ch-000000`, `ch-000001`, `ch-000002`, `ch-000003`, `ch-000004`, `ch-000005`, `ch-000006`, `ch-000007`, `ch-000008`, `ch-000009` and 190 more"
        ),
        "{msg}"
    );
}

#[test]
fn a_misspelt_include_gives_one_finding_that_names_the_right_file() {
    let dir = tempfile::tempdir().unwrap();
    fs::create_dir(dir.path().join(".git")).unwrap();
    let rig = fs::read_to_string(bench_rig_dir().join("rigs/r-00000.rig.yaml")).unwrap();
    write(
        dir.path(),
        "rigs/r-00000.rig.yaml",
        &rig.replace("bench-hall.yaml", "bench-hal.yaml"),
    );
    write(dir.path(), "catalog/bench-hall.yaml", CATALOG);
    let (report, code) = check_json(dir.path(), &["rigs/r-00000.rig.yaml"]);
    let findings = report["findings"].as_array().unwrap();
    assert_eq!(findings.len(), 1, "{findings:#?}");
    assert_eq!(code, 1);
    assert_eq!(
        findings[0]["help"],
        "did you mean `../catalog/bench-hall.yaml`? (the path is relative to the including file)"
    );
}

#[test]
fn a_catalog_that_does_not_parse_gives_its_syntax_finding_and_one_include_finding() {
    let dir = repo(true);
    write(dir.path(), "catalog/lab.yaml", "format: 1\ncatalog: [lab\n");
    let (report, code) = check_json(dir.path(), &["rigs/bay-1.rig.yaml"]);
    let rules: Vec<&str> = report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["rule"].as_str().unwrap())
        .collect();
    assert_eq!(rules, ["yaml-syntax", "include"], "{report:#}");
    assert_eq!(code, 1);
    assert_eq!(
        report["findings"][1]["message"],
        "the included file `../catalog/lab.yaml` does not parse; 2 references to clocks, sensors or modules it may define could not be checked, so 1 channel was not checked: `bay-1-mic`"
    );
}

#[test]
fn channels_left_out_by_a_failed_include_still_use_the_rigs_own_clocks() {
    // The rig's own clock drives the channel; the channel's sensor was in the missing
    // catalog. No `unused-clock` note for `frame`.
    let dir = tempfile::tempdir().unwrap();
    fs::create_dir(dir.path().join(".git")).unwrap();
    write(
        dir.path(),
        "rigs/a.rig.yaml",
        "format: 1\nrig: a\ninclude: [../catalog/gone.yaml]\nclocks:\n  - { name: osc, frequency: 24.576 MHz }\n  - { name: frame, source: osc, divide: 512 }\nchannels:\n  - { name: mic-1, clock: frame, sensor: mic, band: 5 kHz }\n",
    );
    let (report, _) = check_json(dir.path(), &["--fail-on", "note", "rigs/a.rig.yaml"]);
    assert_eq!(rules_of(&report), ["include"], "{report:#}");
    assert_eq!(report["findings"].as_array().unwrap().len(), 1);
}

#[test]
fn a_settings_error_is_rendered_like_a_finding() {
    let dir = repo(true);
    write(dir.path(), "foldcheck.toml", "[rules]\nnyquits = \"off\"\n");
    let out = run_in(
        dir.path(),
        &["check", "--color", "never", "rigs/bay-1.rig.yaml"],
    );
    assert_eq!(out.status.code(), Some(2));
    // The whole rendering is pinned: the same excerpt, label and help layout as a
    // finding (compare tests/cases/*/*.human), under the code `settings`.
    assert_eq!(
        String::from_utf8_lossy(&out.stderr),
        "foldcheck: invalid settings file
settings

  × unknown rule `nyquits`; did you mean `nyquist`?
   ╭─[foldcheck.toml:2:11]
 1 │ [rules]
 2 │ nyquits = \"off\"
   ·           ──┬──
   ·             ╰── here
   ╰────
  help: see docs/format.md (settings) or `foldcheck schema --settings` for what the file may hold
"
    );
}

#[test]
fn a_file_named_on_the_command_line_is_linted_even_when_settings_exclude_it() {
    // docs/format.md, "exclude": a named file is what the user asked for; the run says
    // that the settings would have left it out. Walking a directory still skips it.
    let dir = repo(true);
    write(dir.path(), "foldcheck.toml", "exclude = [\"archive/**\"]\n");
    write(dir.path(), "archive/old.rig.yaml", &rig("old", "20 kHz"));
    let (report, code) = check_json(dir.path(), &["archive/old.rig.yaml"]);
    assert_eq!(report["files"], 1);
    assert_eq!(rules_of(&report), ["sampling-margin"]);
    assert_eq!(code, 0);
    let out = run_in(dir.path(), &["check", "archive/old.rig.yaml"]);
    assert_eq!(
        String::from_utf8_lossy(&out.stderr).trim_end(),
        "foldcheck: note: archive/old.rig.yaml is linted because it was named, although the settings exclude it (`archive/**` in foldcheck.toml)"
    );
    let (report, _) = check_json(dir.path(), &["."]);
    assert_eq!(report["files"], 1, "only rigs/bay-1.rig.yaml when walking");
}

#[test]
fn inspect_and_diff_render_a_settings_error_like_a_finding_too() {
    let dir = repo(true);
    write(dir.path(), "foldcheck.toml", "[rules]\nnyquits = \"off\"\n");
    let finding = "settings

  × unknown rule `nyquits`; did you mean `nyquist`?
   ╭─[foldcheck.toml:2:11]
 1 │ [rules]
 2 │ nyquits = \"off\"
   ·           ──┬──
   ·             ╰── here
   ╰────
  help: see docs/format.md (settings) or `foldcheck schema --settings` for what the file may hold
";
    for (args, prefix) in [
        (
            vec!["inspect", "rigs/bay-1.rig.yaml"],
            "foldcheck: invalid settings file\n",
        ),
        (
            vec!["inspect", "rigs/bay-1.rig.yaml", "bay-1-mic"],
            "foldcheck: invalid settings file\n",
        ),
        (
            vec!["diff", "rigs/bay-1.rig.yaml", "rigs/bay-1.rig.yaml"],
            "foldcheck: OLD: invalid settings file\n",
        ),
    ] {
        let out = run_in(dir.path(), &args);
        assert_eq!(out.status.code(), Some(2), "{args:?}");
        assert_eq!(
            String::from_utf8_lossy(&out.stderr),
            format!("{prefix}{finding}"),
            "{args:?}"
        );
    }
}
