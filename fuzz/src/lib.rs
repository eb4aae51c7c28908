//! What both fuzz targets check on every input, and the generator of structurally valid
//! rigs with extreme values used by the `extremes` target.

use foldcheck::campaign::{lint_text_keeping_rig, silently_skipped};
use foldcheck::report::{human, json, sarif};
use std::time::Duration;

pub mod rig;

/// A campaign root that does not exist: includes resolve outside it or to nothing, so
/// the fuzzer never reads the machine's files.
pub const NAME: &str = "/nonexistent-foldcheck-fuzz/input.rig.yaml";

/// The directory SARIF's `%SRCROOT%` stands for in the fuzz targets.
pub const ROOT: &str = "/nonexistent-foldcheck-fuzz";

/// Lint `text` and check the invariants every input must keep: the fast YAML reader
/// builds exactly serde-saphyr's tree whenever it takes a document, every span lies
/// inside its file's text on character boundaries, no message carries a position, every
/// renderer runs, the JSON report parses, and no channel is silently skipped (each is
/// analysed or named in a finding). Returns the number of findings.
pub fn check(text: &str) -> usize {
    if let Some((fast, full)) = foldcheck::source::yaml::both_readers(0, text) {
        assert_eq!(
            Ok(fast),
            full,
            "the fast YAML reader disagrees with serde-saphyr"
        );
    }
    let (sources, findings, rig) = lint_text_keeping_rig(NAME, text);
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
    if let Some(rig) = &rig {
        let skipped = silently_skipped(rig, &findings);
        assert!(
            skipped.is_empty(),
            "channels neither analysed nor named in a finding: {skipped:?}"
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
    // A fixed base: `sarif::render` would look for the git work tree of the current
    // directory on every input.
    let mut out = Vec::new();
    sarif::write(&mut out, &sources, &findings, std::path::Path::new(ROOT))
        .expect("writing SARIF to memory does not fail");
    findings.len()
}

/// Whether a message ends in the parser's "at line N, column M".
pub fn ends_with_position(message: &str) -> bool {
    let Some(idx) = message.rfind(" at line ") else {
        return false;
    };
    let tail = &message[idx + " at line ".len()..];
    let mut parts = tail.split(", column ");
    let digits = |s: &str| !s.is_empty() && s.bytes().all(|b| b.is_ascii_digit());
    matches!((parts.next(), parts.next(), parts.next()), (Some(l), Some(c), None) if digits(l) && digits(c))
}
