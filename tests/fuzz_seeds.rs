//! The in-memory entry point the fuzzer drives ([`lint_text`]) against the file path it
//! stands for, and the seed corpus: the example rigs and every rule's failing and
//! passing example. With `FOLDCHECK_FUZZ_SEEDS=DIR` set, the seeds are written to DIR
//! (`fuzz/run.sh` does this).

use foldcheck::campaign::{self, Options, lint_text};
use foldcheck::finding::Finding;
use foldcheck::report::{human, json, sarif};
use foldcheck::rules::RULES;
use foldcheck::source::Sources;
use std::path::{Path, PathBuf};
use std::time::Duration;

fn example_rigs() -> Vec<PathBuf> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("examples");
    let mut rigs: Vec<PathBuf> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.to_string_lossy().ends_with(".rig.yaml"))
        .collect();
    rigs.sort();
    assert!(!rigs.is_empty(), "no example rigs in {}", dir.display());
    rigs
}

/// What a finding says and where, with the file by its display name.
fn key(sources: &Sources, f: &Finding) -> (String, &'static str, String, u32, u32, String) {
    (
        sources.get(f.primary.span.file).display.clone(),
        f.rule,
        f.severity.as_str().to_string(),
        f.primary.span.start,
        f.primary.span.end,
        f.message.clone(),
    )
}

#[test]
fn lint_text_finds_what_linting_the_file_finds() {
    for rig in example_rigs() {
        let out = campaign::run(std::slice::from_ref(&rig), &Options::default()).unwrap();
        let text = std::fs::read_to_string(&rig).unwrap();
        let (sources, findings) = lint_text(&rig.to_string_lossy(), &text);
        let from_file: Vec<_> = out.findings.iter().map(|f| key(&out.sources, f)).collect();
        let from_text: Vec<_> = findings.iter().map(|f| key(&sources, f)).collect();
        assert_eq!(from_text, from_file, "{}", rig.display());
    }
}

#[test]
fn lint_text_reports_a_seeded_fault_like_the_file() {
    // The same comparison on a rig with findings from several stages.
    let dir = std::env::temp_dir().join(format!("foldcheck-seed-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join("faulty.rig.yaml");
    let text = "format: 1\nrig: faulty\ninclude: [missing.yaml]\nclocks:\n  - name: osc\n    frequency: 44.1 kHz\nchannels:\n  - name: mic\n    clock: osc\n    band: 20 kHz\n  - name: spare\n    clock: oscc\n    band: 1 KHz\ngroups:\n  - { name: pair, channels: [mic, spar] }\n";
    std::fs::write(&path, text).unwrap();
    let out = campaign::run(std::slice::from_ref(&path), &Options::default()).unwrap();
    let (sources, findings) = lint_text(&path.to_string_lossy(), text);
    let from_file: Vec<_> = out.findings.iter().map(|f| key(&out.sources, f)).collect();
    let from_text: Vec<_> = findings.iter().map(|f| key(&sources, f)).collect();
    assert_eq!(from_text, from_file);
    let rules: Vec<&str> = findings.iter().map(|f| f.rule).collect();
    for expected in [
        "include",
        "quantity",
        "sampling-margin",
        "unknown-reference",
    ] {
        assert!(
            rules.contains(&expected),
            "{expected} missing from {rules:?}"
        );
    }
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn rule_examples_pass_every_renderer_in_memory() {
    for r in RULES {
        for (which, text) in [("failing", r.failing), ("passing", r.passing)] {
            let (sources, findings) = lint_text("example.rig.yaml", text);
            let j = json::render(&sources, &findings, 1, 0);
            let v: serde_json::Value = serde_json::from_str(&j).unwrap();
            assert_eq!(
                v["findings"].as_array().unwrap().len(),
                findings.len(),
                "{} {which}",
                r.name
            );
            let h = human::render(
                &sources,
                &findings,
                1,
                0,
                Duration::ZERO,
                human::Color::Never,
            );
            assert!(h.ends_with(" ms)\n"), "{} {which}: {h}", r.name);
            let _ = sarif::render(&sources, &findings);
        }
    }
}

/// The seed corpus: every rule's failing and passing example, the example rigs and the
/// catalog they include, as (file name, text).
fn seeds() -> Vec<(String, String)> {
    let mut out = Vec::new();
    for r in RULES {
        for (which, text) in [("failing", r.failing), ("passing", r.passing)] {
            out.push((format!("rule-{}-{which}.yaml", r.name), text.to_string()));
        }
    }
    for rig in example_rigs() {
        let name = rig.file_name().unwrap().to_string_lossy().into_owned();
        out.push((
            format!("example-{name}"),
            std::fs::read_to_string(&rig).unwrap(),
        ));
    }
    let catalogs = Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/catalog");
    let mut paths: Vec<PathBuf> = std::fs::read_dir(catalogs)
        .unwrap()
        .map(|e| e.unwrap().path())
        .collect();
    paths.sort();
    for p in paths {
        let name = p.file_name().unwrap().to_string_lossy().into_owned();
        out.push((
            format!("catalog-{name}"),
            std::fs::read_to_string(&p).unwrap(),
        ));
    }
    out
}

#[test]
fn seed_corpus_holds_every_rule_example_and_example_rig() {
    // With FOLDCHECK_FUZZ_SEEDS=DIR the seeds are also written there (fuzz/run.sh).
    let seeds = seeds();
    let names: std::collections::HashSet<&str> = seeds.iter().map(|(n, _)| n.as_str()).collect();
    assert_eq!(names.len(), seeds.len(), "seed names are unique");
    assert!(seeds.len() > 2 * RULES.len() + example_rigs().len());
    for r in RULES {
        assert!(names.contains(format!("rule-{}-failing.yaml", r.name).as_str()));
    }
    assert!(seeds.iter().all(|(_, text)| !text.is_empty()));
    if let Some(dir) = std::env::var_os("FOLDCHECK_FUZZ_SEEDS") {
        let dir = PathBuf::from(dir);
        std::fs::create_dir_all(&dir).unwrap();
        for (name, text) in &seeds {
            std::fs::write(dir.join(name), text).unwrap();
        }
        println!("wrote {} seeds to {}", seeds.len(), dir.display());
    }
}
