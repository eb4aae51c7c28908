//! The project's own files cite its own documents (README, docs/format.md,
//! docs/model.md, docs/output.md, docs/workflow.md), never an outside specification a
//! user does not have: no file the repository ships cites it by name (see [`needle`]). Skipped:
//! the CHANGELOG's history, and vendored or generated data (fuzz corpora and
//! artifacts, build output; `.gitignore` is honoured).

use std::path::{Path, PathBuf};

/// The word searched for, spelt in two parts so this file does not hold it.
fn needle() -> String {
    ["SP", "EC"].concat()
}

/// Byte offsets where `word` stands as a whole word (no letter, digit or `_` around).
fn whole_word_hits(text: &str, word: &str) -> Vec<usize> {
    let is_word = |c: char| c.is_alphanumeric() || c == '_';
    text.match_indices(word)
        .filter(|(i, _)| {
            let before = text[..*i].chars().next_back();
            let after = text[i + word.len()..].chars().next();
            !before.is_some_and(is_word) && !after.is_some_and(is_word)
        })
        .map(|(i, _)| i)
        .collect()
}

fn skipped(rel: &Path) -> bool {
    let s = rel.to_string_lossy().replace('\\', "/");
    s == "CHANGELOG.md"
        || s.starts_with("fuzz/corpus")
        || s.starts_with("fuzz/artifacts")
        || s.split('/').any(|c| c == "target" || c == ".git")
}

#[test]
fn the_word_matcher_finds_whole_words_only() {
    let w = needle();
    assert_eq!(whole_word_hits(&format!("see {w} §5."), &w), [4]);
    assert!(whole_word_hits("FOLDCHECK INSPECT", &w).is_empty());
    assert!(whole_word_hits(&format!("{w}IAL {w}_X"), &w).is_empty());
}

#[test]
fn no_shipped_file_cites_the_outside_specification() {
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR"));
    let word = needle();
    let mut hits = Vec::new();
    let mut files = 0;
    let walk = ignore::WalkBuilder::new(&root)
        .hidden(false)
        .require_git(false)
        .filter_entry(|e| e.file_name() != ".git")
        .build();
    for entry in walk {
        let entry = entry.expect("the repository can be walked");
        if !entry.file_type().is_some_and(|t| t.is_file()) {
            continue;
        }
        let rel = entry.path().strip_prefix(&root).unwrap().to_path_buf();
        if skipped(&rel) {
            continue;
        }
        let Ok(text) = std::fs::read_to_string(entry.path()) else {
            continue; // not text (an image)
        };
        files += 1;
        for at in whole_word_hits(&text, &word) {
            let line = text[..at].matches('\n').count() + 1;
            hits.push(format!("{}:{line}", rel.display()));
        }
    }
    assert!(files > 50, "the walk saw the repository ({files} files)");
    assert!(
        hits.is_empty(),
        "cite the project's docs instead (docs/format.md, docs/model.md, docs/output.md, README): {hits:?}"
    );
}
