//! `foldcheck report` through the real binary: the HTML page parsed with an HTML5 parser
//! (`scraper`, built on html5ever, which follows the WHATWG parsing algorithm), the CSV
//! table parsed back with the `csv` crate (RFC 4180), and both compared with what
//! `check --format json` and `inspect --format json` say about the same channels.
//!
//! Reference values beside the checks: 24.576 MHz ÷ 512 = 48 kHz exactly (integer
//! arithmetic); the lowest frequency that folds into a 20 kHz band at 48 kHz is
//! fs − B = 28 kHz (C. E. Shannon, Proc. IRE 37, 1949), where a 4th-order Butterworth at
//! 20 kHz attenuates 10·log10(1 + (28/20)^8) = 11.97 dB (the Butterworth magnitude
//! formula; scipy.signal.butter/freqs give the same).

mod common;

use common::run_in;
use scraper::{Html, Selector};
use serde_json::Value;
use std::path::{Path, PathBuf};

fn repo() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn scratch(name: &str) -> PathBuf {
    let dir = Path::new(env!("CARGO_TARGET_TMPDIR"))
        .join("report-tests")
        .join(name);
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("create a scratch directory");
    dir
}

fn sel(s: &str) -> Selector {
    Selector::parse(s).expect("a valid selector")
}

fn ok_stdout(dir: &Path, args: &[&str]) -> String {
    let out = run_in(dir, args);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(0), "{args:?} failed: {stderr}");
    String::from_utf8(out.stdout).expect("stdout is UTF-8")
}

/// A made-up rig whose names and texts try to break out of HTML and CSV.
const HOSTILE: &str = r#"format: 1
rig: "lab <b>bold</b> & co"
clocks:
  - name: osc
    frequency: 24.576 MHz
  - name: frame
    source: osc
    divide: 512
channels:
  - name: "<script>alert(1)</script>"
    clock: frame
    band: 20 kHz
    filters:
      - { response: butterworth, order: 4, cutoff: 20 kHz }
  - name: "strain, left"
    clock: frame
    band: 20 kHz
    filters:
      - { response: butterworth, order: 4, cutoff: 20 kHz }
  - name: 'say "hi"'
    clock: frame
    band: 20 kHz
    filters:
      - { response: butterworth, order: 4, cutoff: 20 kHz }
  - name: "line one\nline two"
    clock: frame
    band: 20 kHz
    filters:
      - { response: butterworth, order: 4, cutoff: 20 kHz }
"#;

const HOSTILE_NAMES: [&str; 4] = [
    "<script>alert(1)</script>",
    "strain, left",
    "say \"hi\"",
    "line one\nline two",
];

#[test]
fn the_examples_page_has_one_row_per_channel_and_is_self_contained() {
    let root = repo();
    let page = ok_stdout(&root, &["report", "examples", "--format", "html"]);
    let doc = Html::parse_document(&page);
    assert!(page.starts_with("<!DOCTYPE html>"), "no doctype");
    // The channel count of the same campaign, from `check`.
    let (check, _) = common::check_json(&root, &["examples"]);
    let channels = check["channels"]
        .as_u64()
        .expect("check reports its channel count");
    let rows: Vec<_> = doc.select(&sel("table.channels > tbody.ch")).collect();
    assert_eq!(rows.len() as u64, channels, "one row group per channel");
    assert_eq!(
        doc.select(&sel("table.channels tr.main")).count() as u64,
        channels
    );
    // One table per rig, each with a caption and column headers with a scope.
    let tables: Vec<_> = doc.select(&sel("table.channels")).collect();
    assert_eq!(tables.len(), 3, "three rig files in examples/");
    for t in &tables {
        assert_eq!(t.select(&sel("caption")).count(), 1);
        let heads: Vec<_> = t.select(&sel("thead th")).collect();
        assert!(heads.len() >= 10);
        assert!(heads.iter().all(|h| h.value().attr("scope") == Some("col")));
        for tr in t.select(&sel("tr.main")) {
            assert_eq!(
                tr.select(&sel("th[scope=row]")).count(),
                1,
                "each row is labelled by its channel"
            );
        }
    }
    // The header: version, caution.
    let header: String = doc.select(&sel("header")).next().unwrap().text().collect();
    assert!(header.contains(env!("CARGO_PKG_VERSION")));
    assert!(header.contains("not the rig itself"), "{header}");
    // Self-contained: nothing fetched.
    for (css, attr) in [
        ("script[src]", "src"),
        ("link", "href"),
        ("img", "src"),
        ("iframe", "src"),
    ] {
        assert_eq!(
            doc.select(&sel(css)).count(),
            0,
            "an element `{css}` would fetch its `{attr}`"
        );
    }
    for a in doc.select(&sel("a[href]")) {
        let href = a.value().attr("href").unwrap();
        assert!(href.starts_with('#'), "a link leaves the page: {href}");
    }
    // Every status cell says its status in words and with a symbol.
    for s in doc.select(&sel("tr.main td span.status")) {
        let text: String = s.text().collect();
        let word = ["pass", "unchecked", "note", "warning", "error"]
            .iter()
            .find(|w| text.ends_with(*w));
        assert!(word.is_some(), "status without a word: {text}");
        assert!(
            text.starts_with(['\u{2714}', '?', '\u{2139}', '\u{25b2}', '\u{2716}']),
            "status without a symbol: {text}"
        );
    }
}

#[test]
fn names_from_the_input_render_as_text() {
    let dir = scratch("hostile");
    std::fs::write(dir.join("a.rig.yaml"), HOSTILE).unwrap();
    let out = run_in(
        &dir,
        &["report", ".", "--plots", "all", "--output", "sheet.html"],
    );
    assert_eq!(out.status.code(), Some(0), "{out:?}");
    assert!(out.stdout.is_empty(), "the page goes to the file");
    let page = std::fs::read_to_string(dir.join("sheet.html")).unwrap();
    assert!(!page.contains("<script>alert"), "the name is inserted raw");
    assert!(!page.contains("<b>bold"), "the rig name is inserted raw");
    let doc = Html::parse_document(&page);
    // Only the page's own script: the channel name did not become one.
    let scripts: Vec<_> = doc.select(&sel("script")).collect();
    assert_eq!(scripts.len(), 1);
    assert!(
        !scripts[0].text().collect::<String>().contains("alert"),
        "the page's script holds the channel name"
    );
    assert_eq!(doc.select(&sel("b")).count(), 0);
    let names: Vec<String> = doc
        .select(&sel("tr.main th[scope=row]"))
        .map(|t| t.text().collect())
        .collect();
    assert_eq!(names, HOSTILE_NAMES);
    // The spectrum is drawn for every channel with --plots all, its text escaped too.
    assert_eq!(doc.select(&sel("figure.plot svg")).count(), 4);
}

#[test]
fn the_csv_quotes_names_and_parses_back() {
    let dir = scratch("csv");
    std::fs::write(dir.join("a.rig.yaml"), HOSTILE).unwrap();
    let text = ok_stdout(&dir, &["report", ".", "--format", "csv"]);
    let mut r = csv::Reader::from_reader(text.as_bytes());
    let headers: Vec<String> = r.headers().unwrap().iter().map(String::from).collect();
    let expected: Vec<&str> = foldcheck::sheet::table::COLUMNS
        .iter()
        .map(|(n, _)| *n)
        .collect();
    assert_eq!(headers, expected);
    let col = |n: &str| headers.iter().position(|h| h == n).unwrap();
    let records: Vec<csv::StringRecord> = r.records().map(|x| x.unwrap()).collect();
    assert_eq!(records.len(), 4, "one record per channel");
    let names: Vec<&str> = records.iter().map(|x| &x[col("channel")]).collect();
    assert_eq!(names, HOSTILE_NAMES);
    assert!(
        records
            .iter()
            .all(|x| &x[col("rig")] == "lab <b>bold</b> & co")
    );
    // The worked example: 48 kHz exactly, fs/B = 2.4, 11.97 dB at fs − B = 28 kHz.
    let first = &records[0];
    assert_eq!(
        first[col("final_rate_hz")].parse::<f64>().unwrap(),
        48_000.0
    );
    assert_eq!(&first[col("final_rate_exact_hz")], "48000");
    assert_eq!(first[col("final_ratio")].parse::<f64>().unwrap(), 2.4);
    assert_eq!(&first[col("worst_alias_at")], "ADC");
    assert_eq!(
        first[col("worst_alias_from_hz")].parse::<f64>().unwrap(),
        28_000.0
    );
    let db: f64 = first[col("worst_alias_db")].parse().unwrap();
    let butterworth = 10.0 * (1.0 + (28.0_f64 / 20.0).powi(8)).log10();
    assert!((db - butterworth).abs() < 1e-9, "{db} vs {butterworth}");
    assert_eq!(&first[col("status")], "error");
    assert!(first[col("failing_rules")].contains("alias-rejection (ADC)"));
}

/// Every number of the CSV and JSON tables equals the number `inspect --format json`
/// shows for the same channel (they read the same analysis).
#[test]
fn the_table_has_the_numbers_of_inspect() {
    let root = repo();
    let rig = "examples/gearbox-nvh.rig.yaml";
    let text = ok_stdout(&root, &["report", rig, "--format", "csv"]);
    let json: Value =
        serde_json::from_str(&ok_stdout(&root, &["report", rig, "--format", "json"])).unwrap();
    let mut r = csv::Reader::from_reader(text.as_bytes());
    let headers: Vec<String> = r.headers().unwrap().iter().map(String::from).collect();
    let records: Vec<csv::StringRecord> = r.records().map(|x| x.unwrap()).collect();
    let rows = json["channels"].as_array().unwrap();
    assert_eq!(records.len(), rows.len());
    assert!(records.len() > 5);
    let mut compared = 0;
    for (rec, row) in records.iter().zip(rows) {
        let name = &rec[headers.iter().position(|h| h == "channel").unwrap()];
        assert_eq!(row["channel"], name);
        let ins: Value = serde_json::from_str(&ok_stdout(
            &root,
            &["inspect", rig, name, "--format", "json"],
        ))
        .unwrap();
        let a = &ins["analysis"];
        let pairs = [
            ("final_rate_hz", a["final_rate_hz"].clone()),
            ("final_ratio", a["final_ratio"].clone()),
            ("band_hz", ins["band"]["hz"].clone()),
            ("adc_rate_hz", a["rate_changes"][0]["rate_hz"].clone()),
            ("data_rate_bytes_per_s", a["data_rate_bytes_per_s"].clone()),
            ("droop_db", a["passband"]["attenuation_db"].clone()),
            ("droop_tolerance_db", a["passband"]["tolerance_db"].clone()),
        ];
        for (key, want) in pairs {
            let cell = &rec[headers.iter().position(|h| h == key).unwrap()];
            if want.is_null() {
                assert_eq!(cell, "", "{name} {key}");
                assert!(row[key].is_null(), "{name} {key}");
                continue;
            }
            let want = want.as_f64().unwrap();
            assert_eq!(cell.parse::<f64>().unwrap(), want, "{name} {key} (CSV)");
            assert_eq!(row[key].as_f64().unwrap(), want, "{name} {key} (JSON)");
            compared += 1;
        }
        // The worst alias check is the lowest attenuation among inspect's checks.
        let lowest = a["rate_changes"]
            .as_array()
            .into_iter()
            .flatten()
            .filter_map(|s| s["alias"]["attenuation_db"].as_f64())
            .fold(f64::INFINITY, f64::min);
        if let Some(w) = row["worst_alias_db"].as_f64() {
            assert!(w <= lowest, "{name}: worst {w} above inspect's {lowest}");
        }
        // The status is the worst active finding inspect lists.
        let sev: Vec<&str> = ins["findings"]
            .as_array()
            .unwrap()
            .iter()
            .filter(|f| f["suppressed"].is_null())
            .filter_map(|f| f["severity"].as_str())
            .collect();
        let want = ["error", "warning", "note"]
            .into_iter()
            .find(|s| sev.contains(s))
            .unwrap_or("pass");
        assert_eq!(row["status"], want, "{name}");
    }
    assert!(compared > 20);
}

#[test]
fn a_report_never_overwrites_a_rig_and_a_missing_path_is_fatal() {
    let dir = scratch("guard");
    std::fs::write(dir.join("a.rig.yaml"), HOSTILE).unwrap();
    let out = run_in(&dir, &["report", "a.rig.yaml", "--output", "a.rig.yaml"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("refusing to write"));
    assert_eq!(
        std::fs::read_to_string(dir.join("a.rig.yaml")).unwrap(),
        HOSTILE
    );
    let out = run_in(&dir, &["report", "nowhere"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("no such file"));
}

/// docs/output.md lists every column of the table, in order.
#[test]
fn the_columns_are_documented() {
    let doc = std::fs::read_to_string(repo().join("docs/output.md")).unwrap();
    let section = doc
        .split("## The channel table of `report")
        .nth(1)
        .expect("docs/output.md has the table's section");
    let section = section.split("\n## ").next().unwrap();
    let listed: Vec<&str> = section
        .lines()
        .filter_map(|l| l.strip_prefix("| `"))
        .filter_map(|l| l.split('`').next())
        .filter(|n| foldcheck::sheet::table::COLUMNS.iter().any(|(c, _)| c == n))
        .collect();
    let want: Vec<&str> = foldcheck::sheet::table::COLUMNS
        .iter()
        .map(|(n, _)| *n)
        .collect();
    assert_eq!(listed, want);
}

/// A delta-sigma converter whose worst alias check is a modulator image: the table says
/// `modulator`, with the frequency and attenuation `check` reports for the same channel
/// (the case's expected file pins them: 3.2568 MHz, 30.26 dB).
#[test]
fn a_modulator_image_is_reported_as_such() {
    let root = repo();
    let rig = "tests/cases/alias-rejection/delta-sigma-first-order.rig.yaml";
    let table: Value =
        serde_json::from_str(&ok_stdout(&root, &["report", rig, "--format", "json"])).unwrap();
    let row = &table["channels"][0];
    assert_eq!(row["worst_alias_at"], "modulator");
    let (check, _) = common::check_json(&root, &[rig]);
    let f = check["findings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|f| f["rule"] == "alias-rejection")
        .expect("the case raises alias-rejection");
    assert_eq!(f["values"]["at"], "modulator");
    assert_eq!(row["worst_alias_from_hz"], f["values"]["fold_from_hz"]);
    let (ours, theirs) = (
        row["worst_alias_db"].as_f64().unwrap(),
        f["values"]["attenuation_db"].as_f64().unwrap(),
    );
    assert!((ours - theirs).abs() < 0.005, "{ours} vs {theirs}");
}

#[test]
fn a_group_or_logger_finding_is_shown_once_under_its_group_or_budget() {
    let root = repo();
    for (case, rule, section, expected) in [
        (
            "tests/cases/group-phase/different-filters.rig.yaml",
            "group-phase",
            "section.group",
            2,
        ),
        (
            "tests/cases/storage/one-day.rig.yaml",
            "storage",
            "section.budget",
            1,
        ),
    ] {
        let page = ok_stdout(&root, &["report", case]);
        let doc = Html::parse_document(&page);
        let items = |scope: &str| {
            doc.select(&sel(&format!("{scope} ul.findings li")))
                .filter(|li| {
                    li.select(&sel("code"))
                        .any(|c| c.text().collect::<String>() == rule)
                })
                .count()
        };
        // `check` reports `expected` findings of the rule: each is listed exactly once,
        // in its group's (or the logger budget's) section and nowhere else.
        let (check, _) = common::check_json(&root, &[case]);
        let reported = check["findings"]
            .as_array()
            .unwrap()
            .iter()
            .filter(|f| f["rule"] == rule)
            .count();
        assert_eq!(reported, expected, "{check}");
        assert_eq!(
            items("body"),
            expected,
            "{case}: listed {} times",
            items("body")
        );
        assert_eq!(items(section), expected, "{case}");
    }
}
