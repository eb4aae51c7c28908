//! Hostile input on the real binary: every case must end with a located finding (exit 1)
//! or a clear error (exit 2), quickly, and never with a panic, an abort or a stack
//! overflow.
//!
//! The wall-clock bound is a hang guard only (30 s, generous for a debug build on a busy
//! machine), not a performance claim: performance is measured by `bench/run.sh`.

use serde_json::Value;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};
use std::time::{Duration, Instant};

const BIN: &str = env!("CARGO_BIN_EXE_foldcheck");
const HANG_GUARD: Duration = Duration::from_secs(30);

/// A fresh, empty directory for one test.
fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("foldcheck-hostile-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

/// Run the binary in `dir` and check it ended on its own terms: quickly, with an exit
/// status (not a signal: an abort or a stack overflow kills by signal), and no panic.
fn run_in(dir: &Path, args: &[&str]) -> Output {
    run_cmd(Command::new(BIN).args(args).current_dir(dir))
}

fn run_cmd(cmd: &mut Command) -> Output {
    let start = Instant::now();
    let out = cmd.output().expect("the binary runs");
    let elapsed = start.elapsed();
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        !stderr.contains("panicked"),
        "the binary panicked:\n{stderr}"
    );
    assert!(
        out.status.code().is_some(),
        "the binary was killed by a signal ({:?}); stderr:\n{stderr}",
        out.status
    );
    assert!(
        elapsed < HANG_GUARD,
        "the binary took {elapsed:?}, past the hang guard"
    );
    out
}

/// `check --format json` on one file: exit 1 and the findings as (rule, line, column,
/// message).
fn findings_of(dir: &Path, file: &str, extra: &[&str]) -> Vec<(String, u64, u64, String)> {
    let mut args = vec!["check", "--format", "json"];
    args.extend_from_slice(extra);
    args.push(file);
    let out = run_in(dir, &args);
    assert_eq!(
        out.status.code(),
        Some(1),
        "expected findings; stderr: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: Value = serde_json::from_slice(&out.stdout).expect("valid JSON on stdout");
    v["findings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| {
            (
                f["rule"].as_str().unwrap().to_string(),
                f["line"].as_u64().unwrap(),
                f["column"].as_u64().unwrap(),
                f["message"].as_str().unwrap().to_string(),
            )
        })
        .collect()
}

/// The single finding of a file.
fn only_finding(dir: &Path, file: &str, extra: &[&str]) -> (String, u64, u64, String) {
    let mut f = findings_of(dir, file, extra);
    assert_eq!(f.len(), 1, "expected exactly one finding, got {f:?}");
    f.remove(0)
}

fn one(rule: &str, line: u64, column: u64, message: &str) -> (String, u64, u64, String) {
    (rule.to_string(), line, column, message.to_string())
}

/// Exit 2 and the one line on stderr.
fn fatal(dir: &Path, args: &[&str]) -> String {
    let out = run_in(dir, args);
    assert_eq!(out.status.code(), Some(2), "expected exit status 2");
    assert!(out.stdout.is_empty(), "nothing on stdout for a fatal error");
    String::from_utf8(out.stderr)
        .unwrap()
        .trim_end()
        .to_string()
}

fn write(dir: &Path, name: &str, bytes: impl AsRef<[u8]>) {
    let path = dir.join(name);
    if let Some(parent) = path.parent() {
        std::fs::create_dir_all(parent).unwrap();
    }
    std::fs::write(path, bytes).unwrap();
}

/// The classic "billion laughs": nine levels of nine aliases each would expand to 9^9
/// (about 387 million) strings.
fn billion_laughs() -> String {
    let names = ["a", "b", "c", "d", "e", "f", "g", "h", "i"];
    let mut s = String::from(
        "a: &a [\"lol\",\"lol\",\"lol\",\"lol\",\"lol\",\"lol\",\"lol\",\"lol\",\"lol\"]\n",
    );
    for w in names.windows(2) {
        let items = vec![format!("*{}", w[0]); 9].join(",");
        s.push_str(&format!("{n}: &{n} [{items}]\n", n = w[1]));
    }
    s
}

const ALIAS_LIMIT: &str =
    "aliases expand to more than 100000 copied nodes, over the limit for reading a file safely";
const DEPTH_LIMIT: &str =
    "collections nest more than 64 deep, over the limit for reading a file safely";

#[test]
fn alias_bomb_is_refused_at_the_alias_that_breaks_the_budget() {
    let dir = scratch("bomb");
    write(&dir, "bomb.rig.yaml", billion_laughs());
    // Level f holds 9 copies of e (7381 nodes each after expansion): the copies cross
    // 100 000 while f's list is read, at its first alias (line 6, column 8).
    assert_eq!(
        only_finding(&dir, "bomb.rig.yaml", &[]),
        one("yaml-syntax", 6, 8, ALIAS_LIMIT)
    );
}

#[test]
fn alias_bomb_is_answered_within_a_128_mib_address_space() {
    // Bounded memory: the same bomb under an address-space cap. Without the alias
    // budget the parser copied a million nodes (about 290 MB resident) before stopping.
    let prlimit = Path::new("/usr/bin/prlimit");
    if !prlimit.exists() {
        println!("skipped: /usr/bin/prlimit (util-linux) is not installed");
        return;
    }
    let dir = scratch("bomb-capped");
    write(&dir, "bomb.rig.yaml", billion_laughs());
    let out = run_cmd(
        Command::new(prlimit)
            .args(["--as=134217728", "--", BIN, "check", "--format", "json"])
            .arg("bomb.rig.yaml")
            .current_dir(&dir),
    );
    assert_eq!(out.status.code(), Some(1));
    let v: Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["findings"][0]["message"], ALIAS_LIMIT);
}

#[test]
fn alias_bomb_with_mapping_merges_is_refused() {
    // The same explosion through nested mappings and merge keys instead of lists.
    let dir = scratch("bomb-merge");
    let mut s = String::from(
        "a: &a {x0: lol, x1: lol, x2: lol, x3: lol, x4: lol, x5: lol, x6: lol, x7: lol}\n",
    );
    let names = ["a", "b", "c", "d", "e", "f", "g", "h"];
    for w in names.windows(2) {
        let items: Vec<String> = (0..8).map(|k| format!("k{k}: *{}", w[0])).collect();
        s.push_str(&format!("{n}: &{n} {{{}}}\n", items.join(", "), n = w[1]));
    }
    write(&dir, "merge.rig.yaml", s);
    let (rule, line, _, message) = only_finding(&dir, "merge.rig.yaml", &[]);
    assert_eq!(
        (rule.as_str(), message.as_str()),
        ("yaml-syntax", ALIAS_LIMIT)
    );
    // 8 + 8*9 + 8*81 ... nodes: level f (line 6) is the first past 100 000 copies.
    assert_eq!(line, 6);
}

#[test]
fn flow_nesting_200000_deep_is_refused() {
    let dir = scratch("flow-deep");
    write(&dir, "deep.rig.yaml", "[".repeat(200_000));
    // The 65th bracket opens the 65th level.
    assert_eq!(
        only_finding(&dir, "deep.rig.yaml", &[]),
        one("yaml-syntax", 1, 65, DEPTH_LIMIT)
    );
}

#[test]
fn flow_mapping_nesting_200000_deep_is_refused() {
    let dir = scratch("flow-map-deep");
    write(&dir, "deep.rig.yaml", "{a: ".repeat(200_000));
    // Each level is 4 characters: the 65th `{` is at column 4*64 + 1.
    assert_eq!(
        only_finding(&dir, "deep.rig.yaml", &[]),
        one("yaml-syntax", 1, 257, DEPTH_LIMIT)
    );
}

#[test]
fn block_nesting_200000_deep_is_refused() {
    // Block sequences nest on one line ("- - - x"): 200 000 levels in 400 kB. (Indented
    // block nesting that deep would need a 20 GB file: see the next test.)
    let dir = scratch("block-deep");
    let mut s = "- ".repeat(200_000);
    s.push_str("x\n");
    write(&dir, "deep.rig.yaml", s);
    assert_eq!(
        only_finding(&dir, "deep.rig.yaml", &[]),
        one("yaml-syntax", 1, 129, DEPTH_LIMIT)
    );
}

#[test]
fn indented_block_nesting_is_refused() {
    // 3000 levels of indented mappings ("a:\n a:\n  a:" …), 4.5 MB.
    let dir = scratch("block-indent");
    let s: String = (0..3000)
        .map(|i| format!("{}a:\n", " ".repeat(i)))
        .collect();
    write(&dir, "deep.rig.yaml", s);
    // The 65th key, on line 65, indented by 64.
    assert_eq!(
        only_finding(&dir, "deep.rig.yaml", &[]),
        one("yaml-syntax", 65, 65, DEPTH_LIMIT)
    );
}

/// Deterministic junk: a linear congruential generator (Knuth's MMIX constants).
fn junk(n: usize, seed: u64) -> Vec<u8> {
    let mut x = seed;
    (0..n)
        .map(|_| {
            x = x
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (x >> 56) as u8
        })
        .collect()
}

#[test]
fn binary_junk_is_a_located_encoding_finding() {
    let dir = scratch("junk");
    for seed in 1..=20 {
        let bytes = junk(4096, seed);
        let at = std::str::from_utf8(&bytes).unwrap_err().valid_up_to();
        write(&dir, "junk.rig.yaml", &bytes);
        let (rule, line, column, message) = only_finding(&dir, "junk.rig.yaml", &[]);
        assert_eq!(rule, "yaml-syntax");
        assert_eq!(
            message,
            format!("the file is not valid UTF-8 (byte {at} starts an invalid sequence)")
        );
        // The location is that byte: its line is one more than the newlines before it.
        let newlines = bytes[..at].iter().filter(|&&b| b == b'\n').count() as u64;
        assert_eq!(line, newlines + 1, "seed {seed}");
        assert!(column >= 1);
    }
}

#[test]
fn valid_utf8_junk_is_a_syntax_or_schema_finding() {
    // Random ASCII control and punctuation characters: valid UTF-8, rarely valid YAML.
    let dir = scratch("ascii-junk");
    let alphabet = b"\x01\x02\x07\x1b\t\r\n :-?[]{},&*!|>'\"%@`#";
    for seed in 1..=30 {
        let text: Vec<u8> = junk(2048, seed)
            .into_iter()
            .map(|b| alphabet[b as usize % alphabet.len()])
            .collect();
        write(&dir, "junk.rig.yaml", &text);
        let found = findings_of(&dir, "junk.rig.yaml", &[]);
        assert!(!found.is_empty());
        for (rule, _, _, message) in &found {
            assert!(
                ["yaml-syntax", "schema"].contains(&rule.as_str()),
                "seed {seed}: {rule}: {message}"
            );
            assert!(
                !message.contains("at line") && !message.chars().any(char::is_control),
                "seed {seed}: a message carries a position or a control character: {message:?}"
            );
        }
    }
}

#[test]
fn latin1_file_is_located_at_its_first_non_utf8_byte() {
    let dir = scratch("latin1");
    write(&dir, "latin1.rig.yaml", b"format: 1\nrig: caf\xe9\n");
    assert_eq!(
        only_finding(&dir, "latin1.rig.yaml", &[]),
        one(
            "yaml-syntax",
            2,
            9,
            "the file is not valid UTF-8 (byte 18 starts an invalid sequence)"
        )
    );
}

#[test]
fn nul_byte_is_located_and_escaped_in_the_message() {
    let dir = scratch("nul");
    write(&dir, "nul.rig.yaml", b"format: 1\nrig: a\x00b\n");
    assert_eq!(
        only_finding(&dir, "nul.rig.yaml", &[]),
        one("yaml-syntax", 2, 7, "unexpected character: `\\u{0}'")
    );
}

#[test]
fn file_over_a_small_size_limit_is_a_finding_not_read() {
    let dir = scratch("size");
    let text = "format: 1\nrig: a\nrig: b\n"; // 24 bytes, and a duplicate key
    write(&dir, "big.rig.yaml", text);
    assert_eq!(
        only_finding(&dir, "big.rig.yaml", &["--max-file-size", "23"]),
        one(
            "yaml-syntax",
            1,
            1,
            "the file is 24 bytes, over the 23-byte limit for one rig or catalog"
        )
    );
    // At exactly the limit the file is read, and its real problem is found.
    assert_eq!(
        only_finding(&dir, "big.rig.yaml", &["--max-file-size", "24"]),
        one("yaml-syntax", 3, 1, "duplicate mapping key: rig")
    );
}

#[test]
fn file_over_the_default_size_limit_is_a_finding() {
    // A sparse file one byte over 64 MiB: the size alone refuses it, nothing is read.
    let dir = scratch("size-default");
    let f = std::fs::File::create(dir.join("huge.rig.yaml")).unwrap();
    f.set_len(64 * 1024 * 1024 + 1).unwrap();
    assert_eq!(
        only_finding(&dir, "huge.rig.yaml", &[]),
        one(
            "yaml-syntax",
            1,
            1,
            "the file is 67108865 bytes, over the 67108864-byte limit for one rig or catalog"
        )
    );
}

#[test]
fn included_catalog_over_the_limit_is_a_finding_in_the_catalog() {
    let dir = scratch("size-include");
    write(
        &dir,
        "r.rig.yaml",
        "format: 1\nrig: r\ninclude: [cat.yaml]\n",
    );
    write(
        &dir,
        "cat.yaml",
        format!("format: 1\ncatalog: c\n{}", "#".repeat(200)),
    );
    let out = run_in(
        &dir,
        &["check", "--format", "json", "--max-file-size", "150", "."],
    );
    assert_eq!(out.status.code(), Some(1));
    let v: Value = serde_json::from_slice(&out.stdout).unwrap();
    let f = &v["findings"];
    assert_eq!(f.as_array().unwrap().len(), 1, "{f}");
    assert_eq!(f[0]["file"], "cat.yaml");
    assert_eq!(
        f[0]["message"],
        "the file is 221 bytes, over the 150-byte limit for one rig or catalog"
    );
}

#[test]
fn empty_file_asks_for_format_and_rig() {
    let dir = scratch("empty");
    write(&dir, "empty.rig.yaml", "");
    assert_eq!(
        only_finding(&dir, "empty.rig.yaml", &[]),
        one(
            "schema",
            1,
            1,
            "the file is empty; a rig file needs at least `format` and `rig`"
        )
    );
}

#[test]
fn directory_symlink_loop_is_walked_once() {
    let dir = scratch("dir-loop");
    write(&dir, "camp/a.rig.yaml", "format: 1\nrig: a\nrig: b\n");
    std::fs::create_dir_all(dir.join("camp/sub")).unwrap();
    std::os::unix::fs::symlink("..", dir.join("camp/sub/up")).unwrap();
    std::os::unix::fs::symlink("../sub", dir.join("camp/sub/self")).unwrap();
    let out = run_in(&dir, &["check", "--format", "json", "camp"]);
    assert_eq!(out.status.code(), Some(1));
    let v: Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(
        v["files"], 1,
        "the rig is linted once, the loop not followed"
    );
    assert_eq!(v["findings"][0]["message"], "duplicate mapping key: rig");
}

#[test]
fn rig_file_symlink_loop_is_a_clear_error() {
    let dir = scratch("file-loop");
    std::fs::create_dir_all(dir.join("camp")).unwrap();
    std::os::unix::fs::symlink("b.rig.yaml", dir.join("camp/a.rig.yaml")).unwrap();
    std::os::unix::fs::symlink("a.rig.yaml", dir.join("camp/b.rig.yaml")).unwrap();
    assert_eq!(
        fatal(&dir, &["check", "camp"]),
        "foldcheck: camp/a.rig.yaml: Too many levels of symbolic links (os error 40)"
    );
}

#[test]
fn symlinked_rig_file_in_a_directory_is_linted_not_skipped() {
    let dir = scratch("file-link");
    write(&dir, "store/real.yaml", "format: 1\nrig: a\nrig: b\n");
    std::fs::create_dir_all(dir.join("camp")).unwrap();
    std::os::unix::fs::symlink("../store/real.yaml", dir.join("camp/linked.rig.yaml")).unwrap();
    let out = run_in(&dir, &["check", "--format", "json", "camp"]);
    assert_eq!(out.status.code(), Some(1));
    let v: Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["files"], 1);
    assert_eq!(v["findings"][0]["file"], "camp/linked.rig.yaml");
    assert_eq!(v["findings"][0]["message"], "duplicate mapping key: rig");
}

fn is_root() -> bool {
    std::fs::read_to_string("/proc/self/status")
        .ok()
        .and_then(|s| {
            s.lines()
                .find(|l| l.starts_with("Uid:"))
                .map(|l| l.split_whitespace().nth(2) == Some("0"))
        })
        .unwrap_or(false)
}

#[test]
fn unreadable_rig_file_is_a_clear_error() {
    let dir = scratch("unreadable");
    if is_root() {
        // Root reads through chmod 000, so use a file whose read itself fails: the
        // process's own memory at address 0 (`/proc/self/mem` reports a regular file,
        // and reading offset 0 fails with EIO). This is the same code path as EACCES.
        std::os::unix::fs::symlink("/proc/self/mem", dir.join("mem.rig.yaml")).unwrap();
        assert_eq!(
            fatal(&dir, &["check", "mem.rig.yaml"]),
            "foldcheck: mem.rig.yaml: Input/output error (os error 5)"
        );
    } else {
        use std::os::unix::fs::PermissionsExt;
        write(&dir, "locked.rig.yaml", "format: 1\nrig: a\n");
        let p = dir.join("locked.rig.yaml");
        std::fs::set_permissions(&p, std::fs::Permissions::from_mode(0o000)).unwrap();
        assert_eq!(
            fatal(&dir, &["check", "locked.rig.yaml"]),
            "foldcheck: locked.rig.yaml: Permission denied (os error 13)"
        );
    }
}

#[test]
fn proc_file_reporting_size_zero_is_read_within_the_limit() {
    // /proc files report size 0 but hold text: the limit applies to what is read.
    let dir = scratch("proc");
    let found = findings_of(&dir, "/proc/self/status", &["--max-file-size", "16"]);
    assert_eq!(
        found,
        vec![one(
            "yaml-syntax",
            1,
            1,
            "the file holds more than 16 bytes, over the 16-byte limit for one rig or catalog"
        )]
    );
}

fn mkfifo(path: &Path) {
    let status = Command::new("mkfifo")
        .arg(path)
        .status()
        .expect("mkfifo runs");
    assert!(status.success());
}

#[test]
fn fifo_named_on_the_command_line_is_a_clear_error() {
    let dir = scratch("fifo-arg");
    mkfifo(&dir.join("pipe.rig.yaml"));
    assert_eq!(
        fatal(&dir, &["check", "pipe.rig.yaml"]),
        "foldcheck: pipe.rig.yaml: is a named pipe (FIFO), not a regular file"
    );
}

#[test]
fn fifo_inside_a_linted_directory_is_a_clear_error_not_skipped() {
    let dir = scratch("fifo-dir");
    write(&dir, "camp/ok.rig.yaml", "format: 1\nrig: a\n");
    mkfifo(&dir.join("camp/pipe.rig.yaml"));
    assert_eq!(
        fatal(&dir, &["check", "camp"]),
        "foldcheck: camp/pipe.rig.yaml: is a named pipe (FIFO), not a regular file"
    );
}

#[test]
fn fifo_as_an_include_is_an_include_finding() {
    let dir = scratch("fifo-include");
    write(
        &dir,
        "r.rig.yaml",
        "format: 1\nrig: r\ninclude: [pipe.yaml]\n",
    );
    mkfifo(&dir.join("pipe.yaml"));
    assert_eq!(
        only_finding(&dir, "r.rig.yaml", &[]),
        one(
            "include",
            3,
            11,
            "the included file `pipe.yaml` cannot be read: is a named pipe (FIFO), not a regular file"
        )
    );
}

#[test]
fn unclosed_brackets_and_quotes_are_located() {
    let dir = scratch("unclosed");
    let cases: &[(&str, u64, u64, &str)] = &[
        (
            "format: 1\nrig: a\nclocks: [ {name: osc\n",
            3,
            11,
            "unclosed bracket '{'",
        ),
        ("format: 1\nrig: [a, b\n", 2, 6, "unclosed bracket '['"),
        ("format: 1\nrig: \"abc\n", 2, 6, "unclosed quote"),
    ];
    for (text, line, column, message) in cases {
        write(&dir, "u.rig.yaml", text);
        assert_eq!(
            only_finding(&dir, "u.rig.yaml", &[]),
            one("yaml-syntax", *line, *column, message),
            "{text:?}"
        );
    }
}

#[test]
fn duplicate_keys_are_located_at_the_second_key() {
    let dir = scratch("dup");
    write(&dir, "top.rig.yaml", "format: 1\nrig: a\nrig: b\n");
    assert_eq!(
        only_finding(&dir, "top.rig.yaml", &[]),
        one("yaml-syntax", 3, 1, "duplicate mapping key: rig")
    );
    write(
        &dir,
        "nested.rig.yaml",
        "format: 1\nrig: a\nclocks:\n  - name: osc\n    frequency: 1 MHz\n    frequency: 2 MHz\n",
    );
    assert_eq!(
        only_finding(&dir, "nested.rig.yaml", &[]),
        one("yaml-syntax", 6, 5, "duplicate mapping key: frequency")
    );
}

#[test]
fn tab_indentation_is_located() {
    let dir = scratch("tab");
    write(
        &dir,
        "tab.rig.yaml",
        "format: 1\nrig: a\nclocks:\n\t- name: osc\n",
    );
    assert_eq!(
        only_finding(&dir, "tab.rig.yaml", &[]),
        one(
            "yaml-syntax",
            4,
            1,
            "tabs disallowed within this context (block indentation)"
        )
    );
}

#[test]
fn second_yaml_document_is_refused() {
    let dir = scratch("two-docs");
    write(
        &dir,
        "two.rig.yaml",
        "---\nformat: 1\nrig: a\n---\nformat: 1\nrig: b\n",
    );
    assert_eq!(
        only_finding(&dir, "two.rig.yaml", &[]),
        one(
            "yaml-syntax",
            4,
            1,
            "the file holds more than one YAML document, where a rig or catalog is one"
        )
    );
}

#[test]
fn no_syntax_message_carries_a_position() {
    // Regression: parser messages ended in "at line N, column M", which the report
    // already shows from the span.
    let dir = scratch("no-position");
    write(
        &dir,
        "t.rig.yaml",
        "format: 1\nrig: a\nclocks:\n\t- name: osc\n",
    );
    let (_, _, _, message) = only_finding(&dir, "t.rig.yaml", &[]);
    assert!(!message.contains("line"), "{message}");
}

#[test]
fn million_digit_quantity_is_answered_in_one_pass() {
    // Regression: the quantity parser tried every prefix of the value (quadratic: 20 000
    // digits took 35 s, a million would take days).
    let dir = scratch("long-number");
    let text = format!(
        "format: 1\nrig: a\nclocks:\n  - name: osc\n    frequency: {} Hz\n",
        "1".repeat(1_000_000)
    );
    write(&dir, "long.rig.yaml", text);
    let found = findings_of(&dir, "long.rig.yaml", &[]);
    assert_eq!(
        found.iter().find(|f| f.0 == "quantity").cloned(),
        Some(one(
            "quantity",
            5,
            16,
            "`111111111111111111111111…111111111 Hz` is out of the range this tool can represent exactly as a frequency"
        )),
        "{found:?}"
    );
}
