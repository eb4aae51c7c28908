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

/// The fenced blocks of a Markdown file with the given info string, in order.
fn blocks(md: &str, lang: &str) -> Vec<String> {
    let open = format!("```{lang}\n");
    let mut out = Vec::new();
    let mut rest = md;
    while let Some(i) = rest.find(&open) {
        let body = &rest[i + open.len()..];
        let end = body.find("```").expect("a closed block");
        out.push(body[..end].to_string());
        rest = &body[end..];
    }
    out
}

fn format_md() -> String {
    std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("docs/format.md"))
        .expect("docs/format.md")
}

/// Every key the rig schema and the settings schema know, recursively.
fn schema_keys(v: &serde_json::Value, out: &mut std::collections::BTreeSet<String>) {
    match v {
        serde_json::Value::Object(m) => {
            if let Some(serde_json::Value::Object(props)) = m.get("properties") {
                out.extend(props.keys().cloned());
            }
            m.values().for_each(|x| schema_keys(x, out));
        }
        serde_json::Value::Array(a) => a.iter().for_each(|x| schema_keys(x, out)),
        _ => {}
    }
}

#[test]
fn docs_format_names_every_key_of_both_schemas() {
    let md = format_md();
    let mut keys = std::collections::BTreeSet::new();
    for schema in [
        foldcheck::model::schema::RIG_SCHEMA,
        foldcheck::settings::SETTINGS_SCHEMA,
    ] {
        schema_keys(&serde_json::from_str(schema).unwrap(), &mut keys);
    }
    assert!(
        keys.len() > 40,
        "the schemas were read ({} keys)",
        keys.len()
    );
    let missing: Vec<&String> = keys
        .iter()
        .filter(|k| !md.contains(&format!("`{k}`")) && !md.contains(&format!("`[{k}]`")))
        .collect();
    assert!(missing.is_empty(), "docs/format.md lacks {missing:?}");
}

#[test]
fn the_complete_example_of_docs_format_is_clean_of_input_findings() {
    let md = format_md();
    let yaml = blocks(&md, "yaml");
    let rig = &yaml[0];
    let catalog = yaml
        .iter()
        .find(|b| b.contains("catalog: quillmoor-hall"))
        .expect("the catalog example");
    let dir = tempfile::tempdir().unwrap();
    std::fs::create_dir_all(dir.path().join("rigs")).unwrap();
    std::fs::create_dir_all(dir.path().join("catalog")).unwrap();
    std::fs::write(dir.path().join("foldcheck.toml"), "").unwrap();
    std::fs::write(dir.path().join("rigs/bay2.rig.yaml"), rig).unwrap();
    std::fs::write(dir.path().join("catalog/quillmoor-hall.yaml"), catalog).unwrap();
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_foldcheck"))
        .args(["check", "--format", "json", "rigs/bay2.rig.yaml"])
        .current_dir(dir.path())
        .output()
        .unwrap();
    let report: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(report["files"], 1);
    assert_eq!(report["channels"], 3);
    let input = [
        "yaml-syntax",
        "schema",
        "quantity",
        "duplicate-name",
        "unknown-reference",
        "include",
        "clock-cycle",
        "missing-band",
    ];
    let bad: Vec<&serde_json::Value> = report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| input.contains(&f["rule"].as_str().unwrap()))
        .collect();
    assert!(bad.is_empty(), "{bad:#?}");
    // The settings example loads.
    let toml = &blocks(&md, "toml")[0];
    foldcheck::settings::parse(Path::new("foldcheck.toml"), toml).expect("valid settings");
}
