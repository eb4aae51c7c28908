//! Fuzz the whole pipeline on one in-memory rig: YAML, schema and quantities, includes,
//! resolution, every rule, suppressions, and every renderer. Besides crashes, it checks
//! that the fast YAML reader builds exactly serde-saphyr's tree whenever it takes a
//! document, and what a renderer relies on: every span lies inside its file's text on
//! character boundaries, the JSON report parses, and no message carries a position.

#![no_main]

use foldcheck::campaign::lint_text;
use foldcheck::report::{human, json, sarif};
use libfuzzer_sys::fuzz_target;
use std::time::Duration;

/// A campaign root that does not exist: includes resolve outside it or to nothing, so
/// the fuzzer never reads the machine's files.
const NAME: &str = "/nonexistent-foldcheck-fuzz/input.rig.yaml";

fuzz_target!(|data: &[u8]| {
    let text = String::from_utf8_lossy(data);
    if let Some((fast, full)) = foldcheck::source::yaml::both_readers(0, &text) {
        assert_eq!(
            Ok(fast),
            full,
            "the fast YAML reader disagrees with serde-saphyr"
        );
    }
    let (sources, findings) = lint_text(NAME, &text);
    for f in &findings {
        for label in std::iter::once(&f.primary).chain(&f.secondary) {
            let file = sources.get(label.span.file);
            let (start, end) = (label.span.start as usize, label.span.end as usize);
            assert!(
                start <= end && end <= file.text.len(),
                "{}: span {start}..{end} outside a {}-byte file",
                f.rule,
                file.text.len()
            );
            assert!(
                file.text.is_char_boundary(start) && file.text.is_char_boundary(end),
                "{}: span {start}..{end} splits a character",
                f.rule
            );
        }
        assert!(
            !ends_with_position(&f.message),
            "{}: a message carries a position: {}",
            f.rule,
            f.message
        );
    }
    let _ = human::render(
        &sources,
        &findings,
        1,
        0,
        Duration::ZERO,
        human::Color::Never,
    );
    let j = json::render(&sources, &findings, 1, 0);
    serde_json::from_str::<serde_json::Value>(&j).expect("the JSON report parses");
    let _ = sarif::render(&sources, &findings);
});

/// Whether a message ends in the parser's "at line N, column M".
fn ends_with_position(message: &str) -> bool {
    let Some(idx) = message.rfind(" at line ") else {
        return false;
    };
    let tail = &message[idx + " at line ".len()..];
    let mut parts = tail.split(", column ");
    let digits = |s: &str| !s.is_empty() && s.bytes().all(|b| b.is_ascii_digit());
    matches!((parts.next(), parts.next(), parts.next()), (Some(l), Some(c), None) if digits(l) && digits(c))
}
