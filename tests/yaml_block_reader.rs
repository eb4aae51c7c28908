//! The block-style scanner (`foldcheck::source::yaml`, the first reader `parse` tries)
//! against serde-saphyr, the full reader: whenever the scanner takes a document, its
//! tree (values and byte spans) must be exactly serde-saphyr's, read sequentially or cut
//! into parallel runs of list items. Checked on every rig, catalog and example in
//! `tests/` and `examples/`, on the generated benchmark shapes, and on generated
//! block-style documents (proptest). The YAML test suite cases are in
//! `tests/yaml_test_suite.rs`.

use foldcheck::source::LineIndex;
use foldcheck::source::yaml::{self, Node};
use proptest::prelude::*;
use std::path::{Path, PathBuf};

/// The reference tree: serde-saphyr alone.
fn full(text: &str) -> Result<Node, yaml::SyntaxError> {
    yaml::parse_with_serde(0, text, &LineIndex::new(text)).map(|mut n| {
        // `parse` points an empty document at the start of the file; the scanner never
        // takes one, so nothing to adjust for a mapping or list.
        if matches!(n.kind, yaml::NodeKind::Null) {
            n.span.end = n.span.start;
        }
        n
    })
}

/// Whether the scanner takes `text`; if it does, every way of reading it must give
/// serde-saphyr's tree.
fn agree(text: &str) -> bool {
    let Some(seq) = yaml::block_reader(0, text, None) else {
        for split in [Some((0, 1)), Some((0, 3))] {
            assert_eq!(
                yaml::block_reader(0, text, split),
                None,
                "the scanner declines {text:?} read sequentially but takes it in parallel"
            );
        }
        return false;
    };
    assert_eq!(
        Ok(&seq),
        full(text).as_ref(),
        "the scanner's tree differs from serde-saphyr's on {text:?}"
    );
    for split in [Some((0, 1)), Some((0, 3))] {
        assert_eq!(
            yaml::block_reader(0, text, split).as_ref(),
            Some(&seq),
            "reading {text:?} in parallel runs ({split:?}) changes the tree"
        );
    }
    if let Some(event) = yaml::event_reader(0, text) {
        assert_eq!(event, seq, "the two fast readers differ on {text:?}");
    }
    true
}

fn yaml_files(dir: &Path, out: &mut Vec<PathBuf>) {
    let mut entries: Vec<PathBuf> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .collect();
    entries.sort();
    for p in entries {
        if p.is_dir() {
            // The YAML test suite has its own test, with its own expectations.
            if !p.ends_with("yaml-test-suite") {
                yaml_files(&p, out);
            }
        } else if p.extension().is_some_and(|e| e == "yaml" || e == "yml") {
            out.push(p);
        }
    }
}

#[test]
fn every_rig_in_the_repository_reads_as_serde_saphyr_reads_it() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let mut files = Vec::new();
    yaml_files(&root.join("tests"), &mut files);
    yaml_files(&root.join("examples"), &mut files);
    assert!(files.len() > 50, "only {} files found", files.len());
    let mut declined = Vec::new();
    for f in &files {
        // A few hostile test inputs are not UTF-8 text; no reader takes those.
        let Ok(text) = String::from_utf8(std::fs::read(f).unwrap()) else {
            continue;
        };
        if !agree(&text) {
            declined.push(f.strip_prefix(root).unwrap().display().to_string());
        }
    }
    // Some test rigs are hostile or broken on purpose; the rest of the repository is
    // the block style the scanner is for.
    assert!(
        declined.len() * 5 <= files.len(),
        "the scanner declined {} of {} files: {declined:#?}",
        declined.len(),
        files.len()
    );
    for f in [
        "examples/bay-3.rig.yaml",
        "examples/catalog/lab-equipment.yaml",
    ] {
        if root.join(f).exists() {
            assert!(!declined.contains(&f.to_string()), "{f} declined");
        }
    }
}

#[test]
fn hand_written_cases_agree_or_are_declined() {
    let taken = [
        "a: 1\nb: -2\nc: 2.5\nd: -0.125\ne: 10 kHz\nf: ~\ng: null\nh: true\ni: false\n",
        "a: [1, 2, b]\nd: {e: f, 'g': \"h\"}\n",
        "- a\n- - b\n  - c\n-\n- {}\n- []\n",
        "# comment\na: 1 # trailing\n\n# more\n",
        "k: v",
        "a:\n  b:\n    c: 0\n",
        "x: µs and unicode ü\n",
        "a: 0.1\nb: 1.0\nc: 100.25\nd: 0\ne: -0\n",
        "a:\n- x\n-\n- # c\n  # d\nb:\n",
        "- \n-   \n- # c\n-\n  a: 1\n-\n  - q\n- 'it''s'\n",
        "\"a\": 1\n'b' : 2\nc d  : 3\n",
        "a: b#c\ne: x # y\nf: -1\ng: x-\nh: 12:30\ni: http://x.y/z\nj: a,b\n",
        "  a: 1\n  b: 2\n",
        "b:\n- k: 1\n  j:\n- z\n",
        "- a:\n  - x\n  b: 1\n",
        "x: {a: 1, b: 'z' }  \nv: [ ]\nz: [a, \"b\" ]\nw: {}\n",
        "a: [[1, 2], {b: [c]}, []]\nd: {e: {f: g}, h: [i]}\n",
        "a: >\n  one two\n  three\n\n  four\n# c\nb: 1\n",
        // Found by the `lint` fuzz target: an empty value after `key :` (space before the
        // colon) sits at the colon, not at the key's end.
        "rig :",
        "format: 1\nrig :",
        "rig :\n",
        "a :\nb: 1\n",
        "a  : # c\nb: 1\n",
        "x:\n  a :\n  b: 2\n",
        "- a :\n  b :\n",
        "a: |-\n   x  \n    y\n\n   z\n\n\nb: >-  # c\n  q\n  # not a comment\nc: |\n  w\n\n",
        "- a: >\n    text\n  b: 1\n",
        "a: >\n  last",
        "a: |\n  last\n  \n",
    ];
    for t in taken {
        assert!(agree(t), "the scanner declines {t:?}");
    }
    let declined = [
        "a: &x 1\nb: *x\n",
        "a: !!str 1\n",
        "a: 1\na: 2\n",
        "a: plain\n  continued\n",
        "a: 'two\n  lines'\n",
        "a: [1,\n  2]\n",
        "a: [[1, 2]\n",
        "a: >+\n  text\n",
        "a: >2\n   text\n",
        "a: >\n\n  text\n",
        "a: >\n  text\n    more\n",
        "a: |\n  text\n   \n",
        "a: >\nb: 1\n",
        "- >\n  text\n",
        "a: \"\\u00e9\"\n",
        "---\na: 1\n",
        "a: 1\n...\n",
        "%YAML 1.2\n---\na: 1\n",
        "? a\n: b\n",
        "a:\tb\n",
        "a: 1\r\n",
        "1: a\n",
        "<<: {a: 1}\n",
        "a: b: c\n",
        "a: - b\n",
        "a:\n  b\n",
        "plain text\n",
        "[a, b]\n",
        "",
        "# only a comment\n",
        "a: [a, b,]\n",
        "a: {b}\n",
        "a: {b: }\n",
        "a: x]\n",
        "a: 0x1F\n",
        "a: yes\n",
        "\u{feff}a: 1\n",
        "a: 1\n  b: 2\n",
        "- a\nb: 1\n",
    ];
    for t in declined {
        assert!(!agree(t), "the scanner takes {t:?}");
    }
    let deep = "a:\n".to_string()
        + &(1..40)
            .map(|i| format!("{}a:\n", "  ".repeat(i)))
            .collect::<String>();
    assert!(!agree(&deep), "40 nested mappings taken");
    let wide: String = (0..40).map(|i| format!("k{i}: {i}\n")).collect();
    assert!(agree(&wide));
    for dup in ["k3: x\n", "k30: x\n"] {
        assert!(!agree(&format!("{wide}{dup}")), "{dup}");
    }
}

/// A generated document: its shape, and style choices for the rendering.
#[derive(Debug, Clone)]
enum G {
    Scalar(&'static str, bool),
    /// A block scalar: its header (`|`, `>-`, …) and lines.
    Block(&'static str, Vec<&'static str>),
    Flow(bool, Vec<(&'static str, &'static str)>),
    Map(Vec<(&'static str, G)>, u8),
    Seq(Vec<G>, u8),
}

/// Scalars: plain ones of every type, quoted, empty (null).
const SCALARS: &[&str] = &[
    "",
    "x",
    "ch-001",
    "10 kHz",
    "24.576 MHz",
    "a,b",
    "12:30",
    "b#c",
    "µs ü",
    "1",
    "-2",
    "2.5",
    "0",
    "-0.125",
    "007",
    "1e3",
    "~",
    "null",
    "true",
    "false",
    "'a b'",
    "'it''s'",
    "\"q\"",
    "\"\"",
    "''",
    "http://x.y/z",
];

/// Scalars the scanner must decline, or type exactly as serde-saphyr does.
const ODD_SCALARS: &[&str] = &[
    "0x1F", "yes", "True", ".inf", "&a x", "*a", "!t x", "|", "x]", "'open", "-", "- x", "a: b",
    "-x", "?x", "-x",
];

const KEYS: &[&str] = &[
    "a", "b", "name", "clock", "c d", "'q'", "\"dq\"", "k#x", "-k", "a:b", "band", "sensor",
];

const ODD_KEYS: &[&str] = &["1", "<<", "y", "true", "~", "? a", "&k a"];

fn scalar() -> impl Strategy<Value = &'static str> {
    prop_oneof![
        30 => prop::sample::select(SCALARS),
        1 => prop::sample::select(ODD_SCALARS),
    ]
}

fn key() -> impl Strategy<Value = &'static str> {
    prop_oneof![
        30 => prop::sample::select(KEYS),
        1 => prop::sample::select(ODD_KEYS),
    ]
}

/// Lines of a block scalar (after its indentation): text, blank, more indented.
const BLOCK_LINES: &[&str] = &["text", "two words", "", "  more", "# not a comment", "x  "];

fn doc() -> impl Strategy<Value = G> {
    let leaf = prop_oneof![
        8 => (scalar(), any::<bool>()).prop_map(|(s, c)| G::Scalar(s, c)),
        1 => (
            prop::sample::select(&["|", ">", "|-", ">-", ">+", "| # c"][..]),
            prop::collection::vec(prop::sample::select(BLOCK_LINES), 1..5)
        )
            .prop_map(|(h, l)| G::Block(h, l)),
        1 => (any::<bool>(), prop::collection::vec((key(), scalar()), 0..4))
            .prop_map(|(m, e)| G::Flow(m, e)),
    ];
    leaf.prop_recursive(5, 40, 5, |inner| {
        prop_oneof![
            (
                prop::collection::vec((key(), inner.clone()), 1..5),
                any::<u8>()
            )
                .prop_map(|(e, s)| G::Map(e, s)),
            (prop::collection::vec(inner, 1..5), any::<u8>()).prop_map(|(i, s)| G::Seq(i, s)),
        ]
    })
}

fn pad(out: &mut String, col: usize) {
    out.extend(std::iter::repeat_n(' ', col));
}

/// The line end of a scalar or flow value, with a trailing comment sometimes.
fn end_line(out: &mut String, comment: bool) {
    if comment {
        out.push_str("  # note");
    }
    out.push('\n');
}

fn flow(out: &mut String, map: bool, entries: &[(&str, &str)]) {
    out.push(if map { '{' } else { '[' });
    for (i, (k, v)) in entries.iter().enumerate() {
        if i > 0 {
            out.push_str(", ");
        }
        if map {
            out.push_str(k);
            out.push_str(": ");
        }
        out.push_str(v);
    }
    out.push(if map { '}' } else { ']' });
}

fn block(out: &mut String, header: &str, lines: &[&str], col: usize) {
    out.push(' ');
    out.push_str(header);
    out.push('\n');
    for l in lines {
        if !l.is_empty() {
            pad(out, col);
        }
        out.push_str(l);
        out.push('\n');
    }
}

/// A mapping at `col`; `inline`: its first key follows a `- ` already written.
fn map(out: &mut String, entries: &[(&str, G)], col: usize, style: u8, inline: bool) {
    for (i, (k, v)) in entries.iter().enumerate() {
        if !(inline && i == 0) {
            if style & 8 != 0 && i > 0 {
                out.push_str("\n  # between\n");
            }
            pad(out, col);
        }
        out.push_str(k);
        out.push(':');
        match v {
            G::Scalar(s, c) => {
                if !s.is_empty() {
                    out.push(' ');
                    out.push_str(s);
                } else if *c {
                    out.push(' ');
                }
                end_line(out, *c);
            }
            G::Flow(m, e) => {
                out.push(' ');
                flow(out, *m, e);
                end_line(out, false);
            }
            G::Block(header, lines) => block(out, header, lines, col + 2),
            G::Map(e, s) => {
                end_line(out, s & 16 != 0);
                map(out, e, col + 2 + 2 * (s & 1) as usize, *s, false);
            }
            G::Seq(items, s) => {
                end_line(out, s & 16 != 0);
                let indent = if s & 1 != 0 { 0 } else { 2 };
                seq(out, items, col + indent, *s, false);
            }
        }
    }
}

/// A sequence at `col`; `inline`: its first `-` follows a `- ` already written.
fn seq(out: &mut String, items: &[G], col: usize, style: u8, inline: bool) {
    for (i, item) in items.iter().enumerate() {
        if !(inline && i == 0) {
            pad(out, col);
        }
        out.push('-');
        match item {
            G::Scalar(s, c) => {
                if !s.is_empty() {
                    out.push(' ');
                    out.push_str(s);
                }
                end_line(out, *c);
            }
            G::Flow(m, e) => {
                out.push(' ');
                flow(out, *m, e);
                end_line(out, style & 4 != 0);
            }
            G::Block(header, lines) => block(out, header, lines, col + 2),
            G::Map(e, s) if s & 2 != 0 => {
                out.push(' ');
                map(out, e, col + 2, *s, true);
            }
            G::Seq(items, s) if s & 2 != 0 => {
                out.push(' ');
                seq(out, items, col + 2, *s, true);
            }
            G::Map(e, s) => {
                end_line(out, false);
                map(out, e, col + 2, *s, false);
            }
            G::Seq(items, s) => {
                end_line(out, false);
                seq(out, items, col + 2, *s, false);
            }
        }
    }
}

fn render(g: &G, col: usize) -> String {
    let mut out = String::new();
    match g {
        G::Map(e, s) => map(&mut out, e, col, *s, false),
        G::Seq(items, s) => seq(&mut out, items, col, *s, false),
        G::Scalar(s, _) => out.push_str(s),
        G::Block(header, lines) => block(&mut out, header, lines, col),
        G::Flow(m, e) => flow(&mut out, *m, e),
    }
    out
}

/// The generated documents are not all declined: a fixed run of the generator must see
/// the scanner take a good share of them (and agree on each).
#[test]
fn the_generator_gives_the_scanner_documents_it_takes() {
    use proptest::strategy::ValueTree;
    use proptest::test_runner::{Config, RngAlgorithm, TestRng, TestRunner};
    let mut runner = TestRunner::new_with_rng(
        Config::default(),
        TestRng::from_seed(RngAlgorithm::ChaCha, &[7; 32]),
    );
    let (mut taken, total) = (0, 1000);
    for _ in 0..total {
        let g = doc().new_tree(&mut runner).unwrap().current();
        if agree(&render(&g, 0)) {
            taken += 1;
        }
    }
    assert!(
        taken * 5 >= total,
        "the scanner took only {taken} of {total}"
    );
    eprintln!("the scanner took {taken} of {total} generated documents");
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(3000))]

    #[test]
    fn generated_block_documents_read_as_serde_saphyr_reads_them(g in doc(), col in 0usize..3) {
        let text = render(&g, col);
        agree(&text);
    }
}
