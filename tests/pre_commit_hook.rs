//! `.pre-commit-hooks.yaml`: the hook the pre-commit framework runs.
//!
//! pre-commit appends the changed files whose repository-relative path (forward
//! slashes) matches `files` to `entry`, matching with Python's `re.search`; the pattern
//! uses only syntax that Python's `re` and the `regex` crate read alike (alternation,
//! groups, `?`, `.*`, anchors, escaped dots), so the `regex` crate stands in for it here.

use regex::Regex;
use serde::Deserialize;
use std::path::PathBuf;
use std::process::Command;

const BIN: &str = env!("CARGO_BIN_EXE_foldcheck");

/// The keys of a hook definition this test reads.
#[derive(Debug, Deserialize)]
struct Hook {
    id: String,
    name: String,
    entry: String,
    language: String,
    files: String,
    pass_filenames: bool,
    #[serde(default)]
    require_serial: bool,
}

fn repo() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn hook() -> Hook {
    let text = std::fs::read_to_string(repo().join(".pre-commit-hooks.yaml"))
        .expect(".pre-commit-hooks.yaml is in the repository root");
    let hooks: Vec<Hook> = serde_saphyr::from_str(&text).expect("a list of hook definitions");
    assert_eq!(hooks.len(), 1, "one hook");
    hooks.into_iter().next().expect("one hook")
}

#[test]
fn the_hook_is_a_rust_hook_that_takes_file_names() {
    let h = hook();
    assert_eq!(h.id, "foldcheck");
    assert_eq!(h.name, "foldcheck");
    assert_eq!(h.language, "rust", "pre-commit builds the crate with cargo");
    assert!(h.pass_filenames);
    assert!(
        h.require_serial,
        "one process, so shared catalogs are read once"
    );
}

#[test]
fn the_entry_names_the_binary_and_a_real_subcommand() {
    let h = hook();
    let words: Vec<&str> = h.entry.split_whitespace().collect();
    assert_eq!(words, ["foldcheck", "check"]);
    // The binary cargo builds is the one named.
    assert_eq!(
        std::path::Path::new(BIN)
            .file_stem()
            .and_then(|s| s.to_str()),
        Some(words[0])
    );
    // clap exits 2 on an unknown subcommand; `--help` of a real one exits 0.
    let help = Command::new(BIN)
        .args([words[1], "--help"])
        .output()
        .expect("the binary runs");
    assert_eq!(
        help.status.code(),
        Some(0),
        "`{}` is a subcommand",
        words[1]
    );
    let bogus = Command::new(BIN)
        .args(["no-such-subcommand", "--help"])
        .output()
        .expect("the binary runs");
    assert_eq!(bogus.status.code(), Some(2), "the probe can fail");
    // Run as pre-commit runs it: entry words, then file names. A rig with errors
    // fails the commit (exit status 1, docs/output.md, "Exit status"); a clean rig passes (0).
    let with_errors = Command::new(BIN)
        .args(&words[1..])
        .arg("examples/blade-fatigue.rig.yaml")
        .current_dir(repo())
        .output()
        .expect("the binary runs");
    assert_eq!(with_errors.status.code(), Some(1));
    let dir = tempfile::tempdir().expect("a temp dir");
    std::fs::write(
        dir.path().join("bench-7.rig.yaml"),
        // 24.576 MHz ÷ 480 = 51.2 kHz for a 10 kHz band: ratio 5.12, and fs − B =
        // 41.2 kHz lies past the digital stopband edge (25.6 kHz), 100 dB ≥ 40 dB.
        "format: 1\nrig: bench-7\nclocks:\n  - name: osc\n    frequency: 24.576 MHz\n  \
         - name: frame\n    source: osc\n    divide: 480\nchannels:\n  - name: temp-1\n    \
         clock: frame\n    band: 10 kHz\n    filters:\n      - { response: digital, \
         passband-edge: 0.4, stopband-edge: 0.5, attenuation: 100 dB }\n",
    )
    .expect("write");
    let clean = Command::new(BIN)
        .args(&words[1..])
        .arg("bench-7.rig.yaml")
        .current_dir(dir.path())
        .output()
        .expect("the binary runs");
    assert_eq!(
        clean.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&clean.stdout)
    );
}

#[test]
fn files_takes_rigs_and_catalogs_and_leaves_other_yaml_alone() {
    let h = hook();
    let files = Regex::new(&h.files).expect("`files` is a regular expression");
    for path in [
        "bay-3.rig.yaml",
        "rigs/bay-3.rig.yaml",
        "rigs/bay-3.rig.yml",
        "catalog/lab.yaml",
        "catalogs/sensors.yml",
        "lab/catalog/sensors/strain.yaml",
        "examples/catalog/quillmoor-hall.yaml",
    ] {
        assert!(files.is_match(path), "`files` takes {path}");
    }
    for path in [
        ".pre-commit-config.yaml",
        ".pre-commit-hooks.yaml",
        "docker-compose.yml",
        "ci/workflows/lint.yaml",
        "foldcheck.toml",
        "bay-3.rig.yaml.orig",
        "notes/catalog.md",
        "mycatalog/lab.yaml",
    ] {
        assert!(!files.is_match(path), "`files` leaves {path} alone");
    }
    // Every YAML file of the example campaign is a rig or a catalog, and is taken.
    let mut seen = 0;
    let mut stack = vec![repo().join("examples")];
    while let Some(dir) = stack.pop() {
        for entry in std::fs::read_dir(&dir).expect("read examples") {
            let path = entry.expect("entry").path();
            if path.is_dir() {
                stack.push(path);
            } else if path.extension().is_some_and(|e| e == "yaml" || e == "yml") {
                let rel = path
                    .strip_prefix(repo())
                    .expect("under the repo")
                    .to_string_lossy()
                    .replace('\\', "/");
                assert!(files.is_match(&rel), "`files` takes {rel}");
                seen += 1;
            }
        }
    }
    assert!(seen >= 4, "the examples hold rigs and a catalog");
}
