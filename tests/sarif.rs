//! `foldcheck check --format sarif`, run as a black box on rigs written to a temp dir
//! and on `examples/`.
//!
//! Every log is parsed strictly with serde_json and validated against the OASIS SARIF
//! 2.1.0 JSON Schema (`tests/reference/sarif-schema-2.1.0.json`, the published schema as
//! carried by the serde-sarif crate, MIT). The structural checks compare the log with
//! the rule registry, with the JSON output of the same run, and with positions worked
//! out here from the rig text itself.

use foldcheck::rules::{RULES, describe};
use serde_json::Value;
use std::path::{Path, PathBuf};
use std::process::Command;
use std::sync::OnceLock;

const BIN: &str = env!("CARGO_BIN_EXE_foldcheck");

fn repo() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// Run the binary in `dir`; stdout and the exit status.
fn run(dir: &Path, args: &[&str]) -> (String, i32) {
    let out = Command::new(BIN)
        .args(args)
        .current_dir(dir)
        .env_remove("NO_COLOR")
        .output()
        .expect("the foldcheck binary runs");
    let code = out.status.code().expect("foldcheck exits with a status");
    assert!(
        code == 0 || code == 1,
        "foldcheck {args:?} exited with {code}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    (
        String::from_utf8(out.stdout).expect("stdout is UTF-8"),
        code,
    )
}

/// Parse strictly: one JSON document and nothing after it.
fn parse(text: &str) -> Value {
    serde_json::from_str(text).unwrap_or_else(|e| panic!("not JSON ({e}):\n{text}"))
}

/// `check --format sarif` and `check --format json` on the same paths.
fn sarif_and_json(dir: &Path, paths: &[&str]) -> (Value, Value, i32) {
    let mut args = vec!["check", "--format", "sarif"];
    args.extend_from_slice(paths);
    let (sarif, code_s) = run(dir, &args);
    args[2] = "json";
    let (json, code_j) = run(dir, &args);
    assert_eq!(code_s, code_j, "SARIF and JSON runs exit alike");
    let sarif = parse(&sarif);
    assert_valid(&sarif);
    (sarif, parse(&json), code_s)
}

/// The OASIS SARIF 2.1.0 schema (draft-07), with formats (`uri`, `uri-reference`,
/// `date-time`) checked too.
fn validator() -> &'static jsonschema::Validator {
    static V: OnceLock<jsonschema::Validator> = OnceLock::new();
    V.get_or_init(|| {
        let path = repo().join("tests/reference/sarif-schema-2.1.0.json");
        let text = std::fs::read_to_string(&path).expect("the SARIF schema is in the repo");
        // Known defect of the published schema (see tests/reference/README.md): the two
        // language-tag patterns carry a stray `]`, which the jsonschema crate's
        // metaschema check rejects as an invalid regular expression. Patch that one
        // pattern in memory to `...{2}?$`; nothing else in the schema is changed.
        const DEFECT: &str = r#""^[a-zA-Z]{2}|^[a-zA-Z]{2}-[a-zA-Z]{2}]?$""#;
        const PATCHED: &str = r#""^[a-zA-Z]{2}|^[a-zA-Z]{2}-[a-zA-Z]{2}?$""#;
        assert_eq!(text.matches(DEFECT).count(), 2, "the schema has changed");
        let schema = parse(&text.replace(DEFECT, PATCHED));
        jsonschema::draft7::options()
            .should_validate_formats(true)
            .build(&schema)
            .expect("the patched SARIF schema compiles")
    })
}

fn schema_errors(log: &Value) -> Vec<String> {
    validator()
        .iter_errors(log)
        .map(|e| format!("{} at {}", e, e.instance_path()))
        .collect()
}

fn assert_valid(log: &Value) {
    let errors = schema_errors(log);
    assert!(
        errors.is_empty(),
        "the log breaks the SARIF 2.1.0 schema:\n{}",
        errors.join("\n")
    );
}

/// The one run.
fn run_of(log: &Value) -> &Value {
    let runs = log["runs"].as_array().expect("runs is an array");
    assert_eq!(runs.len(), 1, "one run");
    &runs[0]
}

fn results(log: &Value) -> &Vec<Value> {
    run_of(log)["results"]
        .as_array()
        .expect("results is an array")
}

fn findings(json: &Value) -> &Vec<Value> {
    json["findings"].as_array().expect("findings is an array")
}

/// Decode an RFC 3986 percent-encoded path.
fn percent_decode(s: &str) -> String {
    let b = s.as_bytes();
    let mut out = Vec::new();
    let mut i = 0;
    while i < b.len() {
        if b[i] == b'%' {
            let hex = std::str::from_utf8(&b[i + 1..i + 3]).expect("two hex digits");
            out.push(u8::from_str_radix(hex, 16).expect("hex"));
            i += 3;
        } else {
            out.push(b[i]);
            i += 1;
        }
    }
    String::from_utf8(out).expect("UTF-8 path")
}

fn uri_of(location: &Value) -> &str {
    location["physicalLocation"]["artifactLocation"]["uri"]
        .as_str()
        .expect("a uri")
}

fn region_of(location: &Value) -> [u64; 4] {
    let r = &location["physicalLocation"]["region"];
    ["startLine", "startColumn", "endLine", "endColumn"].map(|k| {
        r[k].as_u64()
            .unwrap_or_else(|| panic!("region has {k}: {r}"))
    })
}

/// 1-based line and character column of the first `needle` in `text` after `after`.
fn position(text: &str, after: &str, needle: &str) -> (u64, u64) {
    let from = text.find(after).expect("anchor in text");
    let at = from + text[from..].find(needle).expect("needle in text");
    let line_start = text[..at].rfind('\n').map_or(0, |i| i + 1);
    let line = text[..at].matches('\n').count() + 1;
    let col = text[line_start..at].chars().count() + 1;
    (line as u64, col as u64)
}

// ---------------------------------------------------------------------------------
// Rigs (a made-up lab; every number is worked out beside it)

/// 24.576 MHz ÷ 512 = 48 kHz exactly; with a 20 kHz band the ratio is 2.4: above 2
/// (no `nyquist`) but below the default margin of 2.5, so `sampling-margin` (docs/model.md,
/// worked checks). `mic-1`: 24.576 MHz ÷ 32768 = 750 Hz, not above 2 × 400 Hz: a
/// `nyquist` error, suppressed with a reason.
const BAY3_RIG: &str = "\
format: 1
rig: bay-3
description: acoustic survey of the made-up bay 3
include:
  - catalog/lab.yaml
clocks:
  - name: slow
    source: lab-osc
    divide: 32768
channels:
  # foldcheck: allow nyquist -- accepted for the shaker survey, band is nominal
  - name: mic-1
    clock: slow
    band: 400 Hz
    filters: []
  - name: mic-2
    clock: lab-48k
    band: 20 kHz
    filters:
      - { response: digital, passband-edge: 0.4535, stopband-edge: 0.5465, attenuation: 100 dB }
";

const LAB_CATALOG: &str = "\
format: 1
catalog: lab
clocks:
  - name: lab-osc
    frequency: 24.576 MHz
  - name: lab-48k
    source: lab-osc
    divide: 512
";

/// A clock no channel uses: one `unused-clock` note and nothing else. `temp-1`:
/// 24.576 MHz ÷ 480 = 51.2 kHz for a 10 kHz band (ratio 5.12); fs − B = 41.2 kHz lies
/// past the digital stopband edge (0.5 × 51.2 kHz = 25.6 kHz), so 100 dB ≥ the 40 dB
/// fallback.
const SPARE_RIG: &str = "\
format: 1
rig: spare
clocks:
  - name: osc
    frequency: 24.576 MHz
  - name: frame
    source: osc
    divide: 480
  - name: spare
    source: osc
    divide: 960
channels:
  - name: temp-1
    clock: frame
    band: 10 kHz
    filters:
      - { response: digital, passband-edge: 0.4, stopband-edge: 0.5, attenuation: 100 dB }
";

/// A misspelt unit after non-ASCII text on the same line (`𝛆` is outside the Basic
/// Multilingual Plane: one code point, two UTF-16 code units, four UTF-8 bytes), and
/// a duplicate channel name.
const GAUGES_RIG: &str = "\
format: 1
rig: gauges
clocks:
  - name: osc
    frequency: 24.576 MHz
  - name: frame
    source: osc
    divide: 480
sensors:
  - { name: sg-1, kind: \"𝛆 gauge, ±2 mV/V\", bandwidth: 10 KHz }
channels:
  - name: strain-1
    sensor: sg-1
    clock: frame
    band: 10 kHz
    filters:
      - { response: digital, passband-edge: 0.4, stopband-edge: 0.5, attenuation: 100 dB }
  - name: strain-1
    clock: frame
    band: 10 kHz
    filters:
      - { response: digital, passband-edge: 0.4, stopband-edge: 0.5, attenuation: 100 dB }
";

/// A duplicate key: the file is not valid YAML.
const BROKEN_RIG: &str = "format: 1\nrig: broken\nrig: broken-2\n";

/// A temp campaign: `bay 3/` (a warning, a suppressed error, a catalog), `notes/`
/// (one note), `gauges/` (errors), `broken/` (a YAML error), `empty/` (no rigs).
fn campaign() -> tempfile::TempDir {
    let dir = tempfile::tempdir().expect("a temp dir");
    let write = |rel: &str, text: &str| {
        let p = dir.path().join(rel);
        std::fs::create_dir_all(p.parent().expect("a parent")).expect("mkdir");
        std::fs::write(p, text).expect("write");
    };
    write("bay 3/bay-3.rig.yaml", BAY3_RIG);
    write("bay 3/catalog/lab.yaml", LAB_CATALOG);
    write("notes/spare.rig.yaml", SPARE_RIG);
    write("gauges/gauges.rig.yaml", GAUGES_RIG);
    write("broken/dup.rig.yaml", BROKEN_RIG);
    std::fs::create_dir_all(dir.path().join("empty")).expect("mkdir");
    dir
}

fn result_for<'a>(log: &'a Value, rule: &str) -> &'a Value {
    let found: Vec<&Value> = results(log)
        .iter()
        .filter(|r| r["ruleId"] == rule)
        .collect();
    assert_eq!(found.len(), 1, "one `{rule}` result in {log}");
    found[0]
}

// ---------------------------------------------------------------------------------
// Tests

#[test]
fn the_schema_check_rejects_a_broken_log() {
    // Guard: the validator must be able to fail, or every other check is empty.
    let dir = campaign();
    let (log, _, _) = sarif_and_json(dir.path(), &["."]);
    let mut bad = log.clone();
    bad["runs"][0]["results"][0]["locations"][0]["physicalLocation"]["region"]["startLine"] =
        Value::from(0);
    assert!(
        !schema_errors(&bad).is_empty(),
        "startLine 0 must be rejected"
    );
    let mut bad = log.clone();
    bad["runs"][0]["results"][0]["level"] = Value::from("fatal");
    assert!(
        !schema_errors(&bad).is_empty(),
        "level `fatal` must be rejected"
    );
    let mut bad = log;
    bad["runs"][0]["results"][0]["locations"][0]["physicalLocation"]["artifactLocation"]["uri"] =
        Value::from("bay 3/bay-3.rig.yaml");
    assert!(
        !schema_errors(&bad).is_empty(),
        "an unencoded space is not a URI reference"
    );
}

#[test]
fn the_log_has_one_run_of_foldcheck_with_character_columns() {
    let dir = campaign();
    let (log, _, _) = sarif_and_json(dir.path(), &["."]);
    assert_eq!(log["version"], "2.1.0");
    let schema = parse(
        &std::fs::read_to_string(repo().join("tests/reference/sarif-schema-2.1.0.json"))
            .expect("schema"),
    );
    assert_eq!(
        log["$schema"], schema["$id"],
        "`$schema` names the schema used"
    );
    let run = run_of(&log);
    assert_eq!(run["tool"]["driver"]["name"], "foldcheck");
    assert_eq!(run["tool"]["driver"]["version"], env!("CARGO_PKG_VERSION"));
    assert_eq!(run["columnKind"], "unicodeCodePoints");
}

#[test]
fn every_rule_of_the_registry_is_listed_in_driver_rules() {
    let dir = campaign();
    let (log, _, _) = sarif_and_json(dir.path().join("empty").as_path(), &[]);
    let rules = run_of(&log)["tool"]["driver"]["rules"]
        .as_array()
        .expect("rules is an array");
    assert_eq!(rules.len(), RULES.len());
    for (descriptor, rule) in rules.iter().zip(RULES) {
        assert_eq!(descriptor["id"], rule.name);
        assert_eq!(descriptor["shortDescription"]["text"], rule.summary);
        assert_eq!(
            descriptor["defaultConfiguration"]["level"],
            rule.severity.as_str()
        );
        // The explanation, unwrapped: same words in the same order.
        let words = |s: &str| s.split_whitespace().collect::<Vec<_>>().join(" ");
        let full = descriptor["fullDescription"]["text"]
            .as_str()
            .expect("fullDescription");
        assert_eq!(words(full), words(rule.explanation), "{}", rule.name);
        assert_eq!(descriptor["help"]["text"], describe(rule));
        let md = descriptor["help"]["markdown"].as_str().expect("markdown");
        assert!(
            md.contains(&format!("```yaml\n{}```", rule.failing)),
            "{}: the failing example is in the help",
            rule.name
        );
    }
    // `foldcheck rules` lists the same names, in the same order.
    let (listing, code) = run(&repo(), &["rules"]);
    assert_eq!(code, 0);
    let listed: Vec<&str> = listing
        .lines()
        .filter_map(|l| l.split_whitespace().next())
        .collect();
    let ids: Vec<&str> = rules
        .iter()
        .map(|d| d["id"].as_str().expect("id"))
        .collect();
    assert_eq!(listed, ids);
}

#[test]
fn results_match_the_json_output_of_the_same_run() {
    let dir = campaign();
    for (cwd, paths) in [
        (dir.path().to_path_buf(), vec!["."]),
        (repo(), vec!["examples/"]),
    ] {
        let (log, json, _) = sarif_and_json(&cwd, &paths);
        let results = results(&log);
        let findings = findings(&json);
        assert!(!findings.is_empty(), "the rigs raise findings");
        assert_eq!(results.len(), findings.len(), "one result per finding");
        let rules = run_of(&log)["tool"]["driver"]["rules"]
            .as_array()
            .expect("rules");
        for (r, f) in results.iter().zip(findings) {
            assert_eq!(r["ruleId"], f["rule"]);
            let index = r["ruleIndex"].as_u64().expect("ruleIndex") as usize;
            assert_eq!(
                rules[index]["id"], r["ruleId"],
                "ruleIndex points at its rule"
            );
            assert_eq!(r["level"], f["severity"]);
            let locations = r["locations"].as_array().expect("locations");
            assert_eq!(locations.len(), 1);
            assert_eq!(
                percent_decode(uri_of(&locations[0])),
                f["file"].as_str().expect("file")
            );
            let [l, c, el, ec] = region_of(&locations[0]);
            assert_eq!(
                [l, c, el, ec],
                ["line", "column", "end_line", "end_column"]
                    .map(|k| f[k].as_u64().expect("position")),
                "region of {f}"
            );
            // The message, then the help as a second sentence.
            let message = f["message"].as_str().expect("message");
            let expected = match f["help"].as_str() {
                Some(h) => format!("{message}. {h}."),
                None => message.to_string(),
            };
            assert_eq!(r["message"]["text"], expected.as_str());
            assert_eq!(r["properties"]["channel"], f["channel"]);
            assert_eq!(r["properties"]["values"], f["values"]);
            match f["suppressed"].as_str() {
                Some(reason) => assert_eq!(
                    r["suppressions"],
                    serde_json::json!([{ "kind": "inSource", "justification": reason }])
                ),
                None => assert!(r.get("suppressions").is_none(), "{r}"),
            }
            if let Some(related) = r.get("relatedLocations") {
                let ids: Vec<u64> = related
                    .as_array()
                    .expect("relatedLocations")
                    .iter()
                    .map(|l| l["id"].as_u64().expect("id"))
                    .collect();
                assert_eq!(ids, (0..ids.len() as u64).collect::<Vec<_>>());
            }
        }
    }
}

#[test]
fn columns_count_characters_not_bytes_or_utf16_units() {
    let dir = campaign();
    let (log, _, _) = sarif_and_json(dir.path(), &["gauges"]);
    let r = result_for(&log, "quantity");
    let line = GAUGES_RIG
        .lines()
        .find(|l| l.contains("10 KHz"))
        .expect("line");
    let prefix = &line[..line.find("10 KHz").expect("value")];
    let chars = prefix.chars().count() as u64 + 1;
    let utf16 = prefix.encode_utf16().count() as u64 + 1;
    let bytes = prefix.len() as u64 + 1;
    assert!(
        chars < utf16 && utf16 < bytes,
        "the line tells the three apart"
    );
    let [l, c, el, ec] = region_of(&r["locations"][0]);
    assert_eq!((l, c), position(GAUGES_RIG, "sensors:", "10 KHz"));
    assert_eq!(c, chars);
    assert_eq!(
        (el, ec),
        (l, c + "10 KHz".len() as u64),
        "endColumn is one past the end"
    );
}

#[test]
fn suppressed_findings_carry_the_suppression_with_its_reason() {
    let dir = campaign();
    let (log, _, code) = sarif_and_json(dir.path(), &["bay 3"]);
    let r = result_for(&log, "nyquist");
    assert_eq!(r["level"], "error");
    assert_eq!(
        r["suppressions"],
        serde_json::json!([{
            "kind": "inSource",
            "justification": "accepted for the shaker survey, band is nominal"
        }])
    );
    assert_eq!(r["properties"]["channel"], "mic-1");
    assert_eq!(r["properties"]["values"]["rate_hz"], 750.0);
    assert_eq!(r["properties"]["values"]["band_hz"], 400.0);
    // The suppressed error does not fail the run; the warning does not either.
    assert_eq!(code, 0);
    let margin = result_for(&log, "sampling-margin");
    assert!(margin.get("suppressions").is_none());
}

#[test]
fn secondary_labels_become_related_locations_in_their_own_files() {
    let dir = campaign();
    let (log, _, _) = sarif_and_json(dir.path(), &["bay 3"]);
    let r = result_for(&log, "sampling-margin");
    assert_eq!(r["properties"]["values"]["ratio"], 2.4);
    assert_eq!(r["properties"]["values"]["rate_hz"], 48000.0);
    let primary = &r["locations"][0];
    assert_eq!(uri_of(primary), "bay%203/bay-3.rig.yaml");
    let [l, c, ..] = region_of(primary);
    assert_eq!((l, c), position(BAY3_RIG, "name: mic-2", "lab-48k"));
    assert!(primary["message"]["text"].is_string(), "the primary label");

    let related = r["relatedLocations"].as_array().expect("relatedLocations");
    let find = |uri: &str, text: &str| {
        related
            .iter()
            .find(|l| uri_of(l) == uri && l["message"]["text"] == text)
            .unwrap_or_else(|| panic!("a related location `{text}` in {uri}: {related:?}"))
    };
    // The band, in the rig; the root frequency and the divider, in the catalog.
    let band = find("bay%203/bay-3.rig.yaml", "band 20 kHz");
    let [l, c, ..] = region_of(band);
    assert_eq!((l, c), position(BAY3_RIG, "name: mic-2", "20 kHz"));
    let divider = find(
        "bay%203/catalog/lab.yaml",
        "divides 24.576 MHz by 512 to 48 kHz",
    );
    let [l, c, el, ec] = region_of(divider);
    assert_eq!((l, c), position(LAB_CATALOG, "lab-48k", "512"));
    assert_eq!((el, ec), (l, c + 3));
    let root = find("bay%203/catalog/lab.yaml", "`lab-osc` runs at 24.576 MHz");
    let [l, c, ..] = region_of(root);
    assert_eq!((l, c), position(LAB_CATALOG, "lab-osc", "24.576 MHz"));

    // The duplicate name labels the first definition.
    let (log, _, _) = sarif_and_json(dir.path(), &["gauges"]);
    let dup = result_for(&log, "duplicate-name");
    let related = dup["relatedLocations"]
        .as_array()
        .expect("relatedLocations");
    assert_eq!(related.len(), 1);
    assert_eq!(related[0]["id"], 0);
    let [l, c, ..] = region_of(&related[0]);
    assert_eq!((l, c), position(GAUGES_RIG, "channels:", "strain-1"));
    let [l2, ..] = region_of(&dup["locations"][0]);
    assert!(l2 > l, "the second definition is the primary location");
}

#[test]
fn exit_status_follows_fail_on_exactly_as_for_json() {
    let dir = campaign();
    // (path, exit status for --fail-on error, warning, note), worked out from the rigs:
    // `bay 3` has a warning and a suppressed error, `notes` one note, `gauges` errors,
    // `broken` a YAML error (a file that does not parse counts), `empty` nothing.
    let cases = [
        ("bay 3", [0, 1, 1]),
        ("notes", [0, 0, 1]),
        ("gauges", [1, 1, 1]),
        ("broken", [1, 1, 1]),
        ("empty", [0, 0, 0]),
    ];
    for (path, expected) in cases {
        for (level, want) in ["error", "warning", "note"].iter().zip(expected) {
            let (sarif, code_s) = run(
                dir.path(),
                &["check", "--format", "sarif", "--fail-on", level, path],
            );
            let (_, code_j) = run(
                dir.path(),
                &["check", "--format", "json", "--fail-on", level, path],
            );
            assert_valid(&parse(&sarif));
            assert_eq!(code_s, want, "{path} --fail-on {level}");
            assert_eq!(code_s, code_j, "{path} --fail-on {level}: SARIF as JSON");
        }
    }
}

#[test]
fn a_file_that_does_not_parse_is_a_valid_result() {
    let dir = campaign();
    let (log, _, code) = sarif_and_json(dir.path(), &["broken"]);
    assert_eq!(code, 1);
    let r = result_for(&log, "yaml-syntax");
    assert_eq!(r["level"], "error");
    assert_eq!(uri_of(&r["locations"][0]), "broken/dup.rig.yaml");
    let [l, ..] = region_of(&r["locations"][0]);
    assert_eq!(l, 3, "the duplicate `rig` key is on line 3");
}

#[test]
fn an_empty_campaign_gives_an_empty_results_array() {
    let dir = campaign();
    let (log, _, code) = sarif_and_json(dir.path(), &["empty"]);
    assert_eq!(code, 0);
    // An empty array, not a missing one: SARIF reads a missing `results` as "the tool
    // did not run".
    assert_eq!(run_of(&log)["results"], serde_json::json!([]));
}

#[test]
fn absolute_paths_below_the_base_become_relative_uris() {
    let dir = campaign();
    let abs = dir.path().join("notes");
    let abs = abs.to_str().expect("a UTF-8 temp path");
    let (log, json, _) = sarif_and_json(dir.path(), &[abs]);
    let loc = &result_for(&log, "unused-clock")["locations"][0];
    let file = findings(&json)[0]["file"].as_str().expect("file");
    assert!(
        Path::new(file).is_absolute(),
        "JSON keeps the path as given"
    );
    assert_eq!(uri_of(loc), "notes/spare.rig.yaml");
    assert_eq!(resolve(&log, loc), PathBuf::from(file));
}

/// The file a location names: `%SRCROOT%` from `originalUriBaseIds` joined with the
/// percent-decoded relative URI (RFC 3986 §5.2 for a path-only reference).
fn resolve(log: &Value, location: &Value) -> PathBuf {
    let art = location
        .get("physicalLocation")
        .map_or(&location["artifactLocation"], |p| &p["artifactLocation"]);
    assert_eq!(art["uriBaseId"], "%SRCROOT%", "{art}");
    let base = run_of(log)["originalUriBaseIds"]["%SRCROOT%"]["uri"]
        .as_str()
        .expect("a base URI");
    assert!(base.ends_with('/'), "a base URI ends in `/`: {base}");
    let base = percent_decode(base.strip_prefix("file://").expect("a file URI"));
    let rel = art["uri"].as_str().expect("a uri");
    PathBuf::from(format!("{base}{}", percent_decode(rel)))
}

// SARIF 2.1.0 §3.4.4 (uriBaseId) and §3.14.14 (originalUriBaseIds): artifact URIs are
// relative to %SRCROOT%, declared as the top of the git work tree holding the current
// directory (docs/output.md), even when foldcheck runs in a subdirectory.
#[test]
fn uris_are_relative_to_the_git_top_declared_as_srcroot() {
    let dir = campaign();
    std::fs::create_dir(dir.path().join(".git")).expect("mkdir .git");
    let sub = dir.path().join("bay 3");
    let (log, json, _) = sarif_and_json(&sub, &["bay-3.rig.yaml"]);
    assert_valid(&log);
    let top = dir.path().to_str().expect("a UTF-8 temp path");
    let base = run_of(&log)["originalUriBaseIds"]["%SRCROOT%"]["uri"]
        .as_str()
        .expect("a base URI");
    assert_eq!(percent_decode(base), format!("file://{top}/"));
    let loc = &results(&log)[0]["locations"][0];
    assert_eq!(uri_of(loc), "bay%203/bay-3.rig.yaml");
    assert_eq!(
        resolve(&log, loc),
        sub.join(findings(&json)[0]["file"].as_str().expect("file"))
    );
}

// RFC 3986 §2.1: a backslash is not a URI delimiter; on Unix it is a character of
// the file name and is written %5C, never turned into `/`.
#[cfg(unix)]
#[test]
fn a_backslash_in_a_file_name_is_percent_encoded() {
    let dir = campaign();
    std::fs::write(dir.path().join("odd\\name.rig.yaml"), SPARE_RIG).expect("write");
    let (log, _, _) = sarif_and_json(dir.path(), &["odd\\name.rig.yaml"]);
    assert_valid(&log);
    let loc = &result_for(&log, "unused-clock")["locations"][0];
    assert_eq!(uri_of(loc), "odd%5Cname.rig.yaml");
    assert_eq!(resolve(&log, loc), dir.path().join("odd\\name.rig.yaml"));
}

// The log is streamed; its bytes are exactly serde_json's pretty form of the same
// document (what building the whole tree and printing it gave before).
#[test]
fn streamed_output_equals_the_pretty_printed_tree() {
    let (text, _) = run(&repo(), &["check", "--format", "sarif", "examples/"]);
    let tree: Value = serde_json::from_str(&text).expect("JSON");
    let mut pretty = serde_json::to_string_pretty(&tree).expect("serialise");
    pretty.push('\n');
    assert_eq!(text, pretty);
}

#[test]
fn output_is_deterministic() {
    let dir = campaign();
    let first = run(dir.path(), &["check", "--format", "sarif", "."]);
    let second = run(dir.path(), &["check", "--format", "sarif", "."]);
    assert_eq!(first, second);
}

#[test]
fn examples_validate_and_carry_findings_the_readme_names() {
    let (log, json, code) = sarif_and_json(&repo(), &["examples/"]);
    assert_eq!(code, 1, "the examples have errors");
    assert_eq!(results(&log).len(), findings(&json).len());
    // Findings named in examples/README.md appear by rule and channel.
    for (rule, channel) in [
        ("alias-rejection", "root-bolt-07"),
        ("passband-droop", "act-b-force"),
        ("sensor-band", "gb-hss-acc-axial"),
        ("module-rate", "arm-c-force"),
    ] {
        assert!(
            results(&log)
                .iter()
                .any(|r| r["ruleId"] == rule && r["properties"]["channel"] == channel),
            "{rule} on {channel}"
        );
    }
}

#[test]
fn verified_fixes_are_sarif_fixes_with_the_json_edits() {
    // The units case: three unit spellings, each with a verified fix.
    let dir = repo().join("tests/cases/quantity");
    let (sarif, json, _) = sarif_and_json(&dir, &["near-miss-units.rig.yaml"]);
    let with_fix: Vec<&Value> = findings(&json)
        .iter()
        .filter(|f| f.get("fix").is_some())
        .collect();
    assert_eq!(with_fix.len(), 3, "{json}");
    let results = results(&sarif);
    assert_eq!(results.len(), findings(&json).len());
    for (r, f) in results.iter().zip(findings(&json)) {
        let Some(fix) = f.get("fix") else {
            assert!(r.get("fixes").is_none(), "{r}");
            continue;
        };
        let sfix = &r["fixes"][0];
        assert_eq!(sfix["description"]["text"], fix["description"]);
        let change = &sfix["artifactChanges"][0];
        // Relative to the git top (%SRCROOT%), which lies above the directory run in.
        assert_eq!(
            resolve(&sarif, change),
            dir.join(fix["edits"][0]["file"].as_str().unwrap())
        );
        let rep = &change["replacements"][0];
        let edit = &fix["edits"][0];
        assert_eq!(rep["deletedRegion"]["byteOffset"], edit["start"]);
        assert_eq!(
            rep["deletedRegion"]["byteLength"].as_u64().unwrap(),
            edit["end"].as_u64().unwrap() - edit["start"].as_u64().unwrap()
        );
        assert_eq!(rep["deletedRegion"]["startLine"], edit["line"]);
        assert_eq!(rep["deletedRegion"]["startColumn"], edit["column"]);
        assert_eq!(rep["insertedContent"]["text"], edit["replacement"]);
    }
}
