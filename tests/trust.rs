//! Trust on every input: regressions for inputs that were dropped, smuggled, shown raw,
//! located wrongly or answered differently from run to run. Each test is named after
//! what broke and pins the exact findings (`severity rule line:col-line:col message`).

mod common;

use foldcheck::campaign::lint_text;
use foldcheck::report::json;

/// The findings of one in-memory rig in the plain expected-file form (without help).
fn lint(text: &str) -> Vec<String> {
    let (sources, findings) = lint_text("/nonexistent-foldcheck-trust/probe.rig.yaml", text);
    let report: serde_json::Value =
        serde_json::from_str(&json::render(&sources, &findings, 1, 0)).unwrap();
    report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| {
            let p = common::plain(f);
            p.split("\n  help:").next().unwrap().to_string()
        })
        .collect()
}

/// A rig whose one channel samples a 2 kHz band at 3 kHz (a `nyquist` error at 8:11),
/// with `extra` put in at line 3.
fn nyquist_rig(extra: &str) -> String {
    format!(
        "format: 1\nrig: suppress-probe\n{extra}\nchannels:\n  - name: slow\n    clock: osc\n    band: 2 kHz\nclocks:\n  - name: osc\n    frequency: 3 kHz\n"
    )
}

const NYQUIST: &str = "error nyquist";

fn has_live_nyquist(findings: &[String]) -> bool {
    findings
        .iter()
        .any(|f| f.starts_with(NYQUIST) && !f.contains("[suppressed"))
}

// ---- suppressions are YAML comments, never text inside a scalar (one test per style)

#[test]
fn suppression_text_in_a_literal_block_scalar_does_not_suppress() {
    let f = lint(&nyquist_rig(
        "description: |\n  # foldcheck: allow nyquist -- hidden in a literal block",
    ));
    assert!(has_live_nyquist(&f), "{f:#?}");
    assert!(!f.iter().any(|f| f.contains("suppression")), "{f:#?}");
}

#[test]
fn suppression_text_in_a_folded_block_scalar_does_not_suppress() {
    let f = lint(&nyquist_rig(
        "description: >\n  # foldcheck: allow nyquist -- hidden in a folded block",
    ));
    assert!(has_live_nyquist(&f), "{f:#?}");
    assert!(!f.iter().any(|f| f.contains("suppression")), "{f:#?}");
}

#[test]
fn suppression_text_in_a_multi_line_double_quoted_scalar_does_not_suppress() {
    let f = lint(&nyquist_rig(
        "description: \"first line\n  # foldcheck: allow nyquist -- hidden in double quotes\"",
    ));
    assert!(has_live_nyquist(&f), "{f:#?}");
    assert!(!f.iter().any(|f| f.contains("suppression")), "{f:#?}");
}

#[test]
fn suppression_text_in_a_multi_line_single_quoted_scalar_does_not_suppress() {
    let f = lint(&nyquist_rig(
        "description: 'first line\n  # foldcheck: allow nyquist -- hidden in single quotes'",
    ));
    assert!(has_live_nyquist(&f), "{f:#?}");
    assert!(!f.iter().any(|f| f.contains("suppression")), "{f:#?}");
}

#[test]
fn suppression_text_glued_into_a_plain_scalar_does_not_suppress() {
    // `#` not preceded by a space is part of a plain scalar.
    let f = lint(&nyquist_rig(
        "description: a#foldcheck:allow nyquist -- inside a plain scalar",
    ));
    assert!(has_live_nyquist(&f), "{f:#?}");
    assert!(!f.iter().any(|f| f.contains("suppression")), "{f:#?}");
}

#[test]
fn trailing_suppression_after_an_apostrophe_in_a_plain_scalar_is_read() {
    // Regression: a `'` earlier on the line (`operator's spare`) made the raw-line
    // scanner think a quoted string was open, and the real comment was ignored.
    let text = "format: 1\nrig: suppress-probe\nchannels:\n  - x-note: operator's spare # foldcheck: allow nyquist -- agreed with the lab\n    name: slow\n    clock: osc\n    band: 2 kHz\nclocks:\n  - name: osc\n    frequency: 3 kHz\n";
    let f = lint(text);
    assert_eq!(
        f,
        [
            "error nyquist 6:12-6:15 `slow` samples at 3 kHz, which is not above twice its 2 kHz band [suppressed: agreed with the lab]"
        ],
    );
}

// ---- input rules are always errors

#[test]
fn suppression_comment_cannot_silence_an_input_rule() {
    let text = "format: 1\nrig: input-probe\nchannels:\n  # foldcheck: allow schema -- the lab wants this key\n  - name: a\n    clock: osc\n    band: 1 kHz\n    colour: red\nclocks:\n  - name: osc\n    frequency: 3 kHz\n";
    let f = lint(text);
    assert_eq!(
        f,
        [
            "warning suppression 4:3-4:54 `schema` is an input rule, which a comment cannot suppress",
            "error schema 8:5-8:11 unknown key `colour` in channel `a`",
        ],
        "{f:#?}"
    );
}

#[test]
fn settings_file_naming_an_input_rule_is_refused_with_its_location() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(
        dir.path().join("foldcheck.toml"),
        "[rules]\nschema = \"off\"\n",
    )
    .unwrap();
    std::fs::write(
        dir.path().join("a.rig.yaml"),
        "format: 1\nrig: a\nchannels:\n  - name: a\n    clock: osc\n    band: 1 kHz\n    colour: red\nclocks:\n  - name: osc\n    frequency: 30 kHz\n",
    )
    .unwrap();
    let out = common::run_in(dir.path(), &["check", "--color", "never", "."]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("`schema` is an input rule: it is always an error and cannot be configured"),
        "{err}"
    );
    assert!(err.contains("foldcheck.toml:2:10"), "{err}");
    std::fs::write(
        dir.path().join("foldcheck.toml"),
        "[rules]\nyaml-syntax = \"warning\"\n",
    )
    .unwrap();
    let out = common::run_in(dir.path(), &["check", "."]);
    assert_eq!(out.status.code(), Some(2));
}

#[test]
fn x_keys_are_free_at_every_level() {
    let text = "format: 1\nrig: x-probe\nx-owner: test lab\nclocks:\n  - name: osc\n    frequency: 48 kHz\n    x-calibrated: 2026-01-10\nmodules:\n  - name: card\n    x-serial: 42\n    filters:\n      - response: butterworth\n        order: 4\n        cutoff: 5 kHz\n        x-part: LT-77\nchannels:\n  - name: a\n    x-cable: C-12\n    clock: osc\n    module: card\n    band: 500 Hz\n    decimate:\n      - factor: 2\n        x-why: storage\n";
    let f = lint(text);
    assert!(
        !f.iter().any(|f| f.contains(" schema ")),
        "x- keys raised schema findings: {f:#?}"
    );
    // The channel is analysed exactly as without the keys: same findings, same places
    // once the removed lines are accounted for (each x- key here is on its own line).
    let without: String = text
        .lines()
        .filter(|l| !l.trim_start().starts_with("x-"))
        .map(|l| format!("{l}\n"))
        .collect();
    let strip = |v: Vec<String>| -> Vec<String> {
        v.into_iter()
            .map(|f| {
                let mut parts = f.splitn(4, ' ');
                let (sev, rule, _pos, msg) = (
                    parts.next().unwrap().to_string(),
                    parts.next().unwrap().to_string(),
                    parts.next(),
                    parts.next().unwrap_or("").to_string(),
                );
                format!("{sev} {rule} {msg}")
            })
            .collect()
    };
    let g = lint(&without);
    assert!(!g.is_empty());
    assert_eq!(strip(f), strip(g));
}

#[cfg(unix)]
#[test]
fn settings_option_naming_a_fifo_is_refused_instead_of_hanging() {
    let dir = tempfile::tempdir().unwrap();
    let fifo = dir.path().join("foldcheck.toml");
    let made = std::process::Command::new("mkfifo")
        .arg(&fifo)
        .status()
        .unwrap();
    assert!(made.success());
    std::fs::write(dir.path().join("a.rig.yaml"), "format: 1\nrig: a\n").unwrap();
    let mut child = std::process::Command::new(env!("CARGO_BIN_EXE_foldcheck"))
        .args(["check", "--settings", "foldcheck.toml", "a.rig.yaml"])
        .current_dir(dir.path())
        .stdout(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    let started = std::time::Instant::now();
    let status = loop {
        if let Some(s) = child.try_wait().unwrap() {
            break s;
        }
        if started.elapsed() > std::time::Duration::from_secs(20) {
            child.kill().unwrap();
            panic!("foldcheck hung on a settings FIFO");
        }
        std::thread::sleep(std::time::Duration::from_millis(20));
    };
    let out = child.wait_with_output().unwrap();
    assert_eq!(status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("cannot read it: is a named pipe (FIFO), not a regular file"),
        "{err}"
    );
}

// ---- the same input gives the same output

/// A campaign built to race: `rigs` rigs that include a directory, a missing file, a
/// catalog that does not parse and a shared catalog with a finding of its own, each rig
/// with a channel that raises rate findings.
fn racing_campaign(dir: &std::path::Path, rigs: usize) {
    use std::fs;
    fs::create_dir_all(dir.join("sub.yaml")).unwrap();
    fs::create_dir_all(dir.join("cat")).unwrap();
    fs::write(
        dir.join("shared.yaml"),
        "format: 1\ncatalog: shared\nclocks:\n  - name: lab-osc\n    frequency: 24.576 MHz\n  - name: lab-osc\n    frequency: 1 MHz\n",
    )
    .unwrap();
    fs::write(dir.join("broken.yaml"), "format: 1\ncatalog: [unclosed\n").unwrap();
    for i in 0..rigs {
        let sub = dir.join(format!("bay-{:02}", i % 7));
        fs::create_dir_all(&sub).unwrap();
        fs::write(
            sub.join(format!("rig-{i:03}.rig.yaml")),
            format!(
                "format: 1\nrig: rig-{i:03}\ninclude:\n  - ../sub.yaml\n  - ../cat/\n  - ../missing-{}.yaml\n  - ../broken.yaml\n  - ../shared.yaml\nclocks:\n  - name: frame\n    source: lab-osc\n    divide: {}\nchannels:\n  - name: ch-{i}\n    clock: frame\n    band: {} kHz\n",
                i % 3,
                256 + 32 * (i % 5),
                8 + i % 11,
            ),
        )
        .unwrap();
    }
}

#[test]
fn failed_include_gives_every_rig_the_same_reason() {
    // Regression: the first rig to load a failing include got "is a directory, not a
    // regular file", the others a bare "unreadable", depending on thread timing.
    let tmp = tempfile::tempdir().unwrap();
    racing_campaign(tmp.path(), 40);
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_foldcheck"))
        .args(["check", "--format", "json", "."])
        .current_dir(tmp.path())
        .env("RAYON_NUM_THREADS", "8")
        .output()
        .unwrap();
    let report: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let include: Vec<&str> = report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f["rule"] == "include" && f["line"] == 4)
        .map(|f| f["message"].as_str().unwrap())
        .collect();
    assert_eq!(include.len(), 40);
    assert!(
        include.iter().all(|m| *m
            == "the included file `../sub.yaml` cannot be read: is a directory, not a regular file"),
        "{include:#?}"
    );
    let cat: Vec<&str> = report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f["rule"] == "include" && f["line"] == 5)
        .map(|f| f["message"].as_str().unwrap())
        .collect();
    assert_eq!(cat.len(), 40);
    assert!(
        cat.iter().all(|m| *m
            == "the included file `../cat/` cannot be read: is a directory, not a regular file"),
        "{cat:#?}"
    );
}

/// The output with the elapsed time of the human summary masked.
fn masked(bytes: &[u8]) -> String {
    let text = String::from_utf8_lossy(bytes);
    let re = regex::Regex::new(r"\(\d+ ms\)").unwrap();
    re.replace_all(&text, "(… ms)").into_owned()
}

#[test]
fn output_is_byte_identical_across_runs_and_thread_counts() {
    // 20 runs of every output format of `check` (and of `diff` against a copy), with
    // 1, 2 and 8 rayon threads in turn, on a campaign of 40 rigs with failing includes.
    let tmp = tempfile::tempdir().unwrap();
    let old = tmp.path().join("old");
    let new = tmp.path().join("new");
    racing_campaign(&old, 40);
    racing_campaign(&new, 40);
    let runs: Vec<(&str, Vec<&str>)> = vec![
        ("check human", vec!["check", "--color", "never", "old"]),
        ("check json", vec!["check", "--format", "json", "old"]),
        ("check sarif", vec!["check", "--format", "sarif", "old"]),
        ("diff human", vec!["diff", "old", "new"]),
        ("diff json", vec!["diff", "--format", "json", "old", "new"]),
        (
            "diff markdown",
            vec!["diff", "--format", "markdown", "old", "new"],
        ),
    ];
    for (what, args) in &runs {
        let mut first: Option<(String, Option<i32>)> = None;
        for run in 0..20 {
            let threads = ["1", "2", "8"][run % 3];
            let out = std::process::Command::new(env!("CARGO_BIN_EXE_foldcheck"))
                .args(args)
                .current_dir(tmp.path())
                .env("RAYON_NUM_THREADS", threads)
                .env_remove("NO_COLOR")
                .output()
                .unwrap();
            let got = (masked(&out.stdout), out.status.code());
            assert!(!got.0.is_empty(), "{what}: no output");
            match &first {
                None => first = Some(got),
                Some(f) => assert!(
                    *f == got,
                    "{what}: run {run} with {threads} threads differs from run 0"
                ),
            }
        }
        let (_, code) = first.unwrap();
        if what.starts_with("diff") {
            // A copy of a campaign introduces nothing.
            assert_eq!(code, Some(0), "{what}");
        } else {
            assert_eq!(code, Some(1), "{what}");
        }
    }
}

#[test]
fn include_chain_deeper_than_the_limit_is_a_finding_not_a_stack_overflow() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    std::fs::write(
        dir.join("d.rig.yaml"),
        "format: 1\nrig: d\ninclude: [c0.yaml]\n",
    )
    .unwrap();
    for i in 0..3000 {
        let inc = if i + 1 < 3000 {
            format!("include: [c{}.yaml]\n", i + 1)
        } else {
            String::new()
        };
        std::fs::write(
            dir.join(format!("c{i}.yaml")),
            format!("format: 1\ncatalog: c{i}\n{inc}"),
        )
        .unwrap();
    }
    let (report, code) = common::check_json(dir, &["d.rig.yaml"]);
    assert_eq!(code, 1);
    let f: Vec<String> = report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| format!("{} {}", f["file"].as_str().unwrap(), common::plain(f)))
        .collect();
    assert_eq!(
        f,
        [
            "c63.yaml error include 3:11-3:19 includes nest more than 64 deep, over the limit for reading a campaign safely\n  help: include the catalogs from fewer levels (a rig may include many catalogs directly)"
        ]
    );
}

// ---- nothing dropped in silence: the schema's bounds are the model's

/// A rig with one derived clock and one channel on it; `clock_extra` and `chan_extra`
/// are put into the derived clock and the channel.
fn bounds_rig(clock_extra: &str, chan_extra: &str) -> String {
    format!(
        "format: 1\nrig: bounds\nclocks:\n  - name: osc\n    frequency: 48 kHz\n  - name: frame\n    source: osc\n{clock_extra}channels:\n  - name: ch\n    clock: frame\n    band: 20 kHz\n{chan_extra}"
    )
}

#[test]
fn divider_of_two_to_the_32_is_a_schema_finding_not_a_silently_skipped_channel() {
    // Regression: the schema took it, the model marked the channel broken without a
    // finding: no `nyquist`, exit 0, and a false `unused-clock` on `osc`.
    let f = lint(&bounds_rig("    divide: 4294967296\n", ""));
    assert_eq!(
        f,
        [
            "error schema 8:13-8:23 `divide: 4294967296` in clock `frame` is out of range: it must be a whole number from 1 to 4294967295"
        ]
    );
    let f = lint(&bounds_rig("    multiply: 4294967296\n", ""));
    assert_eq!(
        f,
        [
            "error schema 8:15-8:25 `multiply: 4294967296` in clock `frame` is out of range: it must be a whole number from 1 to 4294967295"
        ]
    );
    let f = lint(&bounds_rig(
        "",
        "    decimate:\n      - factor: 4294967296\n",
    ));
    assert_eq!(
        f,
        [
            "error schema 13:17-13:27 `factor: 4294967296` in decimation stage 1 of channel `ch` is out of range: it must be a whole number from 2 to 4294967295"
        ]
    );
}

#[test]
fn adc_bits_above_32_is_a_schema_finding_not_a_silent_fall_to_40_db() {
    // Regression: `adc-bits: 65` was dropped and the required rejection fell from the
    // 6.02·N + 1.76 dB of the module to the built-in 40 dB without a word.
    let text = "format: 1\nrig: bits\nclocks:\n  - name: osc\n    frequency: 48 kHz\nmodules:\n  - name: card\n    adc-bits: 65\nchannels:\n  - name: ch\n    clock: osc\n    module: card\n    band: 20 kHz\n";
    assert_eq!(
        lint(text),
        [
            "error schema 8:15-8:17 `adc-bits: 65` in module `card` is out of range: it must be a whole number from 1 to 32",
            // The channel is still analysed against the next requirement in line (the
            // built-in 40 dB), and the schema finding above says why.
            "error alias-rejection 11:12-11:15 energy at 28 kHz folds into the 20 kHz band of `ch` at the ADC (48 kHz) with 0.00 dB of attenuation, 40.00 dB needed",
            "warning sampling-margin 11:12-11:15 `ch` samples at 48 kHz, only 2.4× its 20 kHz band (the margin is 2.5×)",
        ]
    );
}

#[test]
fn alias_and_merge_onto_a_bare_number_frequency_are_read_as_the_number() {
    // Regression: the quantity was re-read from the alias's text: "`*f` is not a
    // frequency", and the clock then got a false `unused-clock`.
    let text = "format: 1\nrig: alias\nclocks:\n  - name: osc\n    frequency: &f 48000\n  - name: copy\n    frequency: *f\n  - &base\n    name: base\n    frequency: 12000\n  - <<: *base\n    name: merged\nchannels:\n  - name: a\n    clock: copy\n    band: 4 kHz\n    filters: [{ response: butterworth, order: 8, cutoff: 5 kHz }]\n  - name: b\n    clock: merged\n    band: 4 kHz\n    filters: [{ response: butterworth, order: 8, cutoff: 5 kHz }]\n  - name: c\n    clock: osc\n    band: 4 kHz\n    filters: [{ response: butterworth, order: 8, cutoff: 5 kHz }]\n  - name: d\n    clock: base\n    band: 4 kHz\n    filters: [{ response: butterworth, order: 8, cutoff: 5 kHz }]\n";
    let f = lint(text);
    assert!(
        !f.iter()
            .any(|f| f.contains(" quantity ") || f.contains("unused-clock")),
        "{f:#?}"
    );
    // `copy` runs at 48 kHz like `osc`, `merged` at 12 kHz like `base`: the channels on
    // them get exactly the findings of their twins.
    let of = |ch: &str| -> Vec<String> {
        f.iter()
            .filter(|l| l.contains(&format!("`{ch}`")))
            .map(|l| {
                l.splitn(4, ' ')
                    .nth(3)
                    .unwrap()
                    .replace(&format!("`{ch}`"), "`x`")
            })
            .collect()
    };
    assert!(!of("b").is_empty(), "{f:#?}");
    assert_eq!(of("a"), of("c"));
    assert_eq!(of("b"), of("d"));
}

// ---- `digital` edges: 0 < passband < stopband, and below half the input rate

#[test]
fn reversed_digital_edges_are_a_schema_finding_instead_of_a_100_db_pass() {
    let text = "format: 1\nrig: edges\nclocks:\n  - name: osc\n    frequency: 48 kHz\nchannels:\n  - name: ch\n    clock: osc\n    band: 2 kHz\n    decimate:\n      - factor: 4\n        filter: { response: digital, passband-edge: 0.3, stopband-edge: 0.1, attenuation: 100 dB }\n";
    assert_eq!(
        lint(text),
        [
            "error schema 12:73-12:76 the stopband edge 0.1 of a `digital` filter is not above its passband edge 0.3"
        ]
    );
}

#[test]
fn digital_stopband_at_half_the_stage_input_rate_is_a_schema_finding() {
    let text = "format: 1\nrig: edges\nclocks:\n  - name: osc\n    frequency: 48 kHz\nchannels:\n  - name: ch\n    clock: osc\n    band: 2 kHz\n    decimate:\n      - factor: 2\n        filter: { response: digital, passband-edge: 0.3, stopband-edge: 1, attenuation: 100 dB }\n";
    assert_eq!(
        lint(text),
        [
            "error schema 12:73-12:74 the stopband edge 1 of a `digital` filter is not below half its input rate (1 in units of its output rate)"
        ]
    );
}

// ---- smaller ones

#[test]
fn underscored_integer_is_refused_as_an_underscored_frequency_is() {
    // Regression: `4_0` was read as 40 (YAML 1.1) while `48_000` was refused as a
    // frequency; YAML 1.2 reads both as text.
    let f = lint(&bounds_rig("    divide: 4_0\n", ""));
    assert_eq!(
        f,
        [
            "error schema 8:13-8:16 `divide` of clock `frame` takes a whole number, not the text `4_0`"
        ]
    );
}

#[test]
fn infinite_frequency_is_a_quantity_finding_not_a_parser_policy() {
    // Regression: `.inf` was "rejected by the configured policy" (a parser option the
    // user never set).
    let text = "format: 1\nrig: inf\nclocks:\n  - name: osc\n    frequency: .inf\nchannels:\n  - name: ch\n    clock: osc\n    band: 20 kHz\n";
    let f = lint(text);
    assert_eq!(f.len(), 1, "{f:#?}");
    assert!(
        f[0].starts_with("error quantity 5:16-5:20 `.inf` is not a frequency"),
        "{f:#?}"
    );
}

#[test]
fn document_that_is_null_is_not_called_empty() {
    assert_eq!(
        lint("null\n"),
        [
            "error schema 1:1-1:1 the document is null, where a rig file is a mapping with at least `format` and `rig`"
        ]
    );
    assert_eq!(
        lint("# nothing yet\n\n"),
        ["error schema 1:1-1:1 the file is empty; a rig file needs at least `format` and `rig`"]
    );
}

#[test]
fn duplicate_name_between_a_rig_and_its_catalog_is_filed_against_the_rig() {
    let tmp = tempfile::tempdir().unwrap();
    std::fs::write(
        tmp.path().join("lab.yaml"),
        "format: 1\ncatalog: lab\nclocks:\n  - name: osc\n    frequency: 48 kHz\n",
    )
    .unwrap();
    std::fs::write(
        tmp.path().join("bay.rig.yaml"),
        "format: 1\nrig: bay\ninclude: [lab.yaml]\nclocks:\n  - name: osc\n    frequency: 96 kHz\nchannels:\n  - name: ch\n    clock: osc\n    band: 20 kHz\n    filters: [{ response: butterworth, order: 8, cutoff: 22 kHz }]\n",
    )
    .unwrap();
    let (report, _) = common::check_json(tmp.path(), &["bay.rig.yaml"]);
    let dup: Vec<String> = report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f["rule"] == "duplicate-name")
        .map(|f| format!("{} {}", f["file"].as_str().unwrap(), common::plain(f)))
        .collect();
    assert_eq!(
        dup,
        [
            "bay.rig.yaml error duplicate-name 5:11-5:14 the clock name `osc` is defined twice\n  help: rename one of them; clock names must be unique across a rig and its includes"
        ]
    );
}

// ---- no terminal injection: control characters from the input are shown escaped

#[cfg(unix)]
#[test]
fn control_characters_in_values_comments_and_file_names_are_escaped_in_every_format() {
    // Regression: `clock: "\e]0;pwned\a\e[31mRED"` was printed raw in the
    // `unknown-reference` message even with `--color never`; raw ESC bytes in a comment
    // reached the source excerpt; file names were printed raw.
    let tmp = tempfile::tempdir().unwrap();
    let new = tmp.path().join("new");
    std::fs::create_dir_all(&new).unwrap();
    std::fs::create_dir_all(tmp.path().join("old")).unwrap();
    let name = "bay\u{1b}[2Jx\u{9b}1m.rig.yaml";
    std::fs::write(
        new.join(name),
        "format: 1\nrig: bay\nclocks:\n  - name: osc\n    frequency: 48 kHz\nchannels:\n  - name: ch\n    clock: \"\\e]0;pwned\\a\\e[31mRED\\x7f\"\n    band: 2 kHz\n",
    )
    .unwrap();
    // YAML refuses a raw ESC even in a comment: a `yaml-syntax` finding whose excerpt
    // shows the line.
    std::fs::write(
        new.join("comment.rig.yaml"),
        "format: 1\nrig: comment\n# \u{1b}[31mred comment\u{7}\n",
    )
    .unwrap();
    let shown_value = "\\u{1b}]0;pwned\\u{7}\\u{1b}[31mRED\\u{7f}";
    let raw = |b: &[u8]| {
        let text = String::from_utf8_lossy(b);
        text.chars()
            .find(|c| foldcheck::source::is_hidden_control(*c) && *c != '\r')
    };
    for args in [
        vec!["check", "--color", "never", "new"],
        vec!["check", "--format", "json", "new"],
        vec!["check", "--format", "sarif", "new"],
        vec!["diff", "old", "new"],
        vec!["diff", "--format", "json", "old", "new"],
        vec!["diff", "--format", "markdown", "old", "new"],
    ] {
        let out = common::run_in(tmp.path(), &args);
        assert_eq!(
            raw(&out.stdout),
            None,
            "{args:?} printed a raw control character"
        );
        assert_eq!(
            raw(&out.stderr),
            None,
            "{args:?} printed a raw control character"
        );
        let text = String::from_utf8_lossy(&out.stdout);
        let text = if args.contains(&"json") || args.contains(&"sarif") {
            // JSON strings carry the backslash escaped.
            text.replace("\\\\", "\\")
        } else {
            text.into_owned()
        };
        assert!(
            text.contains(shown_value),
            "{args:?} does not show the value escaped:\n{text}"
        );
    }
    let human = common::run_in(tmp.path(), &["check", "--color", "never", "new"]);
    let human = String::from_utf8_lossy(&human.stdout);
    // The excerpt shows the comment escaped, and the header the file name.
    assert!(
        human.contains(" 3 │ # \\u{1b}[31mred comment\\u{7}"),
        "{human}"
    );
    assert!(human.contains("comment.rig.yaml:3:3"), "{human}");
    assert!(
        human.contains("bay\\u{1b}[2Jx\\u{9b}1m.rig.yaml:8:12"),
        "{human}"
    );
}

/// A rig including a missing catalog, with `n` channels on a clock only that catalog
/// could define.
fn rig_with_missing_catalog(n: usize) -> String {
    let mut text =
        String::from("format: 1\nrig: left-out\ninclude:\n  - missing-hall.yaml\nchannels:\n");
    for i in 0..n {
        text.push_str(&format!(
            "  - {{ name: ch-{i:02}, clock: hall-frame, band: 1 kHz }}\n"
        ));
    }
    text
}

#[test]
fn channels_named_only_in_a_failed_include_message_are_not_silently_skipped() {
    // Regression: `silently_skipped` did not read the failed include's message, so the
    // channels it names (the first ten, then a count) looked silently dropped.
    for n in [1, 10, 12] {
        let (_, findings, rig) = foldcheck::campaign::lint_text_keeping_rig(
            "/nonexistent-foldcheck-trust/left-out.rig.yaml",
            &rig_with_missing_catalog(n),
        );
        let rig = rig.expect("the rig reads");
        assert_eq!(findings.len(), 1, "{findings:#?}");
        assert_eq!(findings[0].rule, "include");
        assert_eq!(
            foldcheck::campaign::silently_skipped(&rig, &findings),
            Vec::<String>::new(),
            "{n} channels: {}",
            findings[0].message
        );
        // Without that finding every channel is silently skipped: the check can fail.
        assert_eq!(foldcheck::campaign::silently_skipped(&rig, &[]).len(), n);
        // A finding that counts one channel fewer than it leaves out leaves one skipped.
        let mut short = findings.clone();
        let total = short[0].values["unchecked_channels"].as_u64().unwrap();
        assert_eq!(total, n as u64);
        short[0]
            .values
            .insert("unchecked_channels".into(), (total - 1).into());
        if n <= 10 {
            // All listed by name: the count does not matter.
            assert!(foldcheck::campaign::silently_skipped(&rig, &short).is_empty());
        } else {
            assert_eq!(
                foldcheck::campaign::silently_skipped(&rig, &short),
                ["ch-11"]
            );
        }
    }
}

#[test]
fn a_channel_name_with_backticks_in_a_failed_include_message_is_read_whole() {
    // Found by the `lint` fuzz target: `silently_skipped` split the include's list of
    // unchecked channels at backticks, so a name that itself holds a backtick (one the
    // schema refuses, but still the channel's name) cut the list wrong and the channels
    // after it looked silently dropped. Minimised input, with `format` and `rig` added.
    let text = "format: 1\nrig: x\ninclude:\n- m\nchannels:\n  - name: t`\n    clock: H\n  - name: s\n    clock: a\n    band: 2\n";
    let (_, findings, rig) = foldcheck::campaign::lint_text_keeping_rig(
        "/nonexistent-foldcheck-trust/backtick.rig.yaml",
        text,
    );
    let rig = rig.expect("the rig reads");
    let include = findings
        .iter()
        .find(|f| f.rule == "include")
        .expect("the missing include is a finding");
    assert!(
        include
            .message
            .ends_with("so 2 channels were not checked: `t``, `s`"),
        "{}",
        include.message
    );
    assert_eq!(
        foldcheck::campaign::silently_skipped(&rig, &findings),
        Vec::<String>::new()
    );
    // Without the include finding, `s` is skipped silently (`t`` is still named by its
    // schema findings): the check can fail.
    let others: Vec<_> = findings
        .iter()
        .filter(|f| f.rule != "include")
        .cloned()
        .collect();
    assert_eq!(foldcheck::campaign::silently_skipped(&rig, &others), ["s"]);
}

// ---- positions (line:col, columns in characters, a BOM is not a column)

#[test]
fn block_scalar_span_ends_at_its_last_character_not_in_the_next_node() {
    // Regression: the span ran over the final line break to 4:1, the start of `channels`.
    let f = lint("format: 1\nrig: >\n  Not A Name\nchannels: []\n");
    assert_eq!(
        f,
        [
            "error schema 3:3-3:13 `rig: Not A Name\\n` is not a valid name: names use lowercase letters, digits, `.`, `_` and `-`, starting with a letter or digit"
        ]
    );
    // Kept blank lines and a literal block too: the span stops at `Name`.
    let f = lint("format: 1\nrig: |+\n  Not A Name\n\n\nchannels: []\n");
    assert_eq!(f.len(), 1, "{f:#?}");
    assert!(f[0].starts_with("error schema 3:3-3:13 "), "{f:#?}");
}

#[test]
fn tab_in_block_indentation_is_reported_at_the_tab() {
    // Regression: the parser's position was the node before the tab (4:11, the end of
    // `osc`) or just after it (4:2).
    assert_eq!(
        lint("format: 1\nrig: tabs\nclocks:\n  - name: osc\n\t  frequency: 3 kHz\n"),
        ["error yaml-syntax 5:1-5:1 while scanning a plain scalar, found a tab"]
    );
    assert_eq!(
        lint(
            "format: 1\nrig: tabs\nclocks:\n  - name: osc\n    frequency: 3 kHz\n  \t  divide: 2\n"
        ),
        ["error yaml-syntax 6:3-6:3 while scanning a plain scalar, found a tab"]
    );
    assert_eq!(
        lint("format: 1\nrig: tabs\nclocks:\n\t- name: osc\n"),
        ["error yaml-syntax 4:1-4:1 tabs disallowed within this context (block indentation)"]
    );
}

#[test]
fn parser_error_on_a_byte_order_mark_line_is_not_one_column_early() {
    // The BOM (U+FEFF) is not a column: `format: 1: 2` has its second `:` at column 10
    // with or without it.
    for bom in ["", "\u{feff}"] {
        assert_eq!(
            lint(&format!("{bom}format: 1: 2\nrig: bom\n")),
            ["error yaml-syntax 1:10-1:10 mapping values are not allowed in this context"],
            "BOM: {}",
            !bom.is_empty()
        );
        assert_eq!(
            lint(&format!("{bom}rig: \"bom\n")),
            ["error yaml-syntax 1:6-1:6 unclosed quote"],
            "BOM: {}",
            !bom.is_empty()
        );
    }
}

// ---- a converter filter's edges against a modulator given by `rate`

/// A rig with a delta-sigma module whose modulator is described by `modulator` and
/// whose converter filter stops at `stopband`, sampled at 51.2 kHz.
fn modulator_rig(modulator: &str, stopband: &str) -> String {
    format!(
        "format: 1\nrig: dsm\nclocks:\n  - {{ name: frame, frequency: 51.2 kHz }}\nmodules:\n  - name: dsa\n    adc-bits: 24\n    modulator:\n      {modulator}\n      filter: {{ response: digital, passband-edge: 0.45, stopband-edge: {stopband}, attenuation: 110 dB }}\nchannels:\n  - {{ name: ch, clock: frame, module: dsa, band: 20 kHz, filters: [] }}\n"
    )
}

#[test]
fn converter_stopband_beyond_half_the_modulator_rate_is_one_schema_finding_with_a_rate_or_a_ratio()
{
    // The filter runs at the modulator rate and its edges are fractions of the ADC
    // rate: with the modulator at 51.2 kHz (1 × the ADC rate) a stopband edge at or
    // above 0.5 cannot be, nor one at 1 with the modulator at 102.4 kHz (2 ×). With a
    // `rate` the ratio is known only once the channel's clock is; it was accepted
    // silently. With an `oversampling-ratio` the filter was dropped and the channel
    // analysed without it, which added an `alias-rejection` error after the `schema`
    // one (two findings for one mistake). Now both read alike: one finding on the
    // module's filter that names the channel, which is not analysed further.
    let expected = "error schema 10:72-10:76 the stopband edge 0.55 of module `dsa`'s converter filter is not below half its input rate (0.5 in units of the 51.2 kHz ADC rate of channel `ch`, with the modulator at 51.2 kHz)";
    assert_eq!(
        lint(&modulator_rig("oversampling-ratio: 1", "0.55")),
        [expected]
    );
    assert_eq!(lint(&modulator_rig("rate: 51.2 kHz", "0.55")), [expected]);
    let at_one = "error schema 10:72-10:73 the stopband edge 1 of module `dsa`'s converter filter is not below half its input rate (1 in units of the 51.2 kHz ADC rate of channel `ch`, with the modulator at 102.4 kHz)";
    assert_eq!(lint(&modulator_rig("rate: 102.4 kHz", "1")), [at_one]);
    assert_eq!(lint(&modulator_rig("oversampling-ratio: 2", "1")), [at_one]);
    // Just below half is taken, and the channel is analysed exactly as with the ratio.
    let below = lint(&modulator_rig("rate: 102.4 kHz", "0.99"));
    assert!(!below.iter().any(|f| f.contains(" schema ")), "{below:#?}");
    assert_eq!(below, lint(&modulator_rig("oversampling-ratio: 2", "0.99")));
}

#[test]
fn continuation_lines_at_the_parent_indentation_are_a_yaml_syntax_finding() {
    // Regression: the event parser accepted these (YAML test suite 9C9N, QB6E, DK95-1):
    // a flow list or quoted value inside a block mapping, continued at column 1 or after
    // a tab. YAML 1.2 wants the continuation indented by more than the mapping.
    let expected = |line: usize, col: usize| {
        vec![format!(
            "error yaml-syntax {line}:{col}-{line}:{col} this continuation line of a multi-line value is indented by 0 spaces; it must be indented by more than the 0 of the mapping or list holding the value (a tab is not indentation)"
        )]
    };
    assert_eq!(lint("format: 1\nrig: [a,\nb]\n"), expected(3, 1));
    assert_eq!(lint("format: 1\ndescription: \"a\nb\"\n"), expected(3, 1));
    assert_eq!(lint("format: 1\ndescription: \"a\n\tb\"\n"), expected(3, 1));
    // Indented by one space more than the mapping, they are read.
    let f = lint("format: 1\nrig: probe\ndescription: \"a\n b\"\nx-list: [a,\n b]\n");
    assert!(!f.iter().any(|f| f.contains("yaml-syntax")), "{f:#?}");
}

#[test]
fn sinc_droop_help_with_a_factor_of_two_to_the_32_minus_1_answers_at_once() {
    // Regression (found by tests/schema_model_props.rs): the `passband-droop` help
    // looked for a smaller sinc factor within the tolerance by trying every factor
    // below 4 294 967 295, one at a time: a schema-valid rig hung the linter. Now
    // bisection over the factors that keep the band below the output rate.
    let text = "format: 1\nrig: wide-sinc\nclocks:\n  - { name: fast, frequency: 1e18 Hz }\nchannels:\n  - name: ch\n    clock: fast\n    band: 50 MHz\n    filters: []\n    decimate: [{ factor: 4294967295, filter: { response: sinc, order: 3 } }]\n";
    let (tx, rx) = std::sync::mpsc::channel();
    std::thread::spawn(move || {
        let (_, findings) = lint_text("/nonexistent-foldcheck-trust/wide.rig.yaml", text);
        tx.send(findings).unwrap()
    });
    let findings = rx
        .recv_timeout(std::time::Duration::from_secs(60))
        .expect("linting a rig with a sinc factor of 2^32 - 1 hung");
    let droop = findings
        .iter()
        .find(|f| f.rule == "passband-droop")
        .unwrap_or_else(|| panic!("{findings:#?}"));
    // The help names the largest factor whose droop fits: by the sinc formula
    // (Hogenauer 1981), 3 · 20·log10|M sin(π B/fin) / sin(π B M/fin)| ≤ 0.5 dB.
    let help = droop.help.clone().unwrap_or_default();
    let k: u64 = help
        .split("`factor: ")
        .nth(1)
        .and_then(|r| r.split('`').next())
        .and_then(|n| n.parse().ok())
        .unwrap_or_else(|| panic!("no factor in the help: {help}"));
    let droop_db = |m: f64| {
        let x = std::f64::consts::PI * 50e6 / 1e18;
        -3.0 * 20.0 * ((x * m).sin() / (m * x.sin())).abs().log10()
    };
    assert!(
        droop_db(k as f64) <= 0.5 + 1e-6,
        "{k}: {}",
        droop_db(k as f64)
    );
    assert!(
        droop_db((k + 1) as f64) > 0.5 - 1e-6,
        "{k}: {}",
        droop_db((k + 1) as f64)
    );
}
