//! Black-box tests of the real binary: exit statuses, JSON parsed strictly, output
//! order, settings precedence, colour, and the worked checks of docs/format.md through JSON values.

mod common;

use common::{check_json, rules_of, run_in};
use serde_json::Value;
use std::fs;
use std::path::Path;

fn write(dir: &Path, name: &str, text: &str) {
    let p = dir.join(name);
    fs::create_dir_all(p.parent().unwrap()).unwrap();
    fs::write(p, text).unwrap();
}

const AUDIO_44K1: &str = "\
format: 1
rig: studio
clocks:
  - { name: cd, frequency: 44.1 kHz }
channels:
  - name: left
    clock: cd
    band: 20 kHz
    filters: [{ response: digital, passband-edge: 0.454, stopband-edge: 0.546, attenuation: 100 dB }]
";

fn only(report: &Value) -> &Value {
    let f = report["findings"].as_array().unwrap();
    assert_eq!(f.len(), 1, "{report:#}");
    &f[0]
}

#[test]
fn audio_cd_rate_is_above_nyquist_but_below_the_margin() {
    // 44.1 kHz for a 20 kHz band: ratio 2.205 > 2 (Shannon 1949: no nyquist finding),
    // < 2.5 (the practical margin, common practice): a sampling-margin warning.
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "studio.rig.yaml", AUDIO_44K1);
    let (report, code) = check_json(dir.path(), &["studio.rig.yaml"]);
    let f = only(&report);
    assert_eq!(f["rule"], "sampling-margin");
    assert_eq!(f["severity"], "warning");
    assert_eq!(f["channel"], "left");
    assert_eq!(f["values"]["rate_hz"], 44100.0);
    assert_eq!(f["values"]["band_hz"], 20000.0);
    assert_eq!(f["values"]["ratio"], 2.205);
    assert_eq!(f["values"]["margin"], 2.5);
    assert_eq!(f["values"]["stage"], 0);
    assert_eq!(code, 0, "a warning does not fail by default");
    let keys: Vec<&str> = f["values"]
        .as_object()
        .unwrap()
        .keys()
        .map(String::as_str)
        .collect();
    assert_eq!(
        keys,
        ["rate_hz", "band_hz", "ratio", "margin", "stage"],
        "the documented output order, README"
    );
}

#[test]
fn fail_on_sets_the_exit_status() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "studio.rig.yaml", AUDIO_44K1);
    let status = |level: &str| {
        run_in(
            dir.path(),
            &["check", "--fail-on", level, "studio.rig.yaml"],
        )
        .status
        .code()
        .unwrap()
    };
    assert_eq!(status("error"), 0);
    assert_eq!(status("warning"), 1);
    assert_eq!(status("note"), 1);
}

#[test]
fn exact_clock_division_and_the_worked_butterworth() {
    // 24.576 MHz / 512 = 48 kHz exactly (ratio 2.4 for a 20 kHz band); a 4th-order
    // Butterworth at 20 kHz gives 11.97 dB at 48 − 20 = 28 kHz (docs/model.md; the formula
    // 10·log10(1 + (f/fc)^(2n)) agrees with scipy.signal.butter + freqs, see
    // tests/reference/filters.csv).
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        "w.rig.yaml",
        "format: 1\nrig: w\nclocks:\n  - { name: osc, frequency: 24.576 MHz }\n  - { name: frame, source: osc, divide: 512 }\nchannels:\n  - { name: mic, clock: frame, band: 20 kHz, filters: [{ response: butterworth, order: 4, cutoff: 20 kHz }] }\n",
    );
    let (report, code) = check_json(dir.path(), &["w.rig.yaml"]);
    assert_eq!(code, 1);
    let alias = report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|f| f["rule"] == "alias-rejection")
        .unwrap();
    assert_eq!(alias["values"]["rate_hz"], 48000.0);
    assert_eq!(alias["values"]["fold_from_hz"], 28000.0);
    let a = alias["values"]["attenuation_db"].as_f64().unwrap();
    assert!((a - 11.97).abs() < 0.01, "{a}");
    assert_eq!(alias["values"]["required_db"], 40.0);
    let margin = report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|f| f["rule"] == "sampling-margin")
        .unwrap();
    assert_eq!(margin["values"]["ratio"], 2.4);
}

#[test]
fn adc_bits_set_the_default_rejection() {
    // Ideal ADC dynamic range 6.02·N + 1.76 dB (W. Kester, Analog Devices MT-001, from
    // memory): 16 bits → 98.08 dB, used when nothing else sets a rejection.
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        "b.rig.yaml",
        "format: 1\nrig: b\nclocks:\n  - { name: base, frequency: 51.2 kHz }\nmodules:\n  - { name: sar, adc-bits: 16 }\nchannels:\n  - { name: s, clock: base, module: sar, band: 10 kHz, filters: [{ response: butterworth, order: 8, cutoff: 13 kHz }] }\n",
    );
    let (report, _) = check_json(dir.path(), &["b.rig.yaml"]);
    let f = only(&report);
    assert_eq!(f["rule"], "alias-rejection");
    let r = f["values"]["required_db"].as_f64().unwrap();
    assert!((r - 98.08).abs() < 1e-9, "{r}");
}

#[test]
fn a_missing_path_exits_2_and_says_which() {
    let dir = tempfile::tempdir().unwrap();
    let out = run_in(dir.path(), &["check", "no-such-dir"]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("no-such-dir: no such file or directory"),
        "{err}"
    );
    assert!(out.stdout.is_empty());
}

#[test]
fn bad_arguments_exit_2() {
    let dir = tempfile::tempdir().unwrap();
    assert_eq!(
        run_in(dir.path(), &["check", "--format", "xml"])
            .status
            .code(),
        Some(2)
    );
    assert_eq!(run_in(dir.path(), &["frobnicate"]).status.code(), Some(2));
}

#[test]
fn directories_are_walked_for_rig_files_only_and_output_is_sorted() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "b/second.rig.yml", AUDIO_44K1);
    write(dir.path(), "a/first.rig.yaml", AUDIO_44K1);
    write(dir.path(), "a/notes.yaml", "this: is not a rig\n");
    write(dir.path(), "a/ignored/x.rig.yaml", "{{{ not yaml");
    write(dir.path(), ".gitignore", "ignored/\n");
    let (report, _) = check_json(dir.path(), &["."]);
    assert_eq!(report["files"], 2, "{report:#}");
    assert_eq!(report["channels"], 2);
    let files: Vec<&str> = report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["file"].as_str().unwrap())
        .collect();
    assert_eq!(files, ["a/first.rig.yaml", "b/second.rig.yml"]);
    // A file named on the command line is linted whatever its name.
    let (report, _) = check_json(dir.path(), &["a/notes.yaml"]);
    assert_eq!(rules_of(&report), ["schema"]);
}

#[test]
fn json_report_has_the_documented_shape() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "studio.rig.yaml", AUDIO_44K1);
    let (report, _) = check_json(dir.path(), &["studio.rig.yaml"]);
    assert_eq!(report["version"], 1);
    assert_eq!(report["files"], 1);
    assert_eq!(report["channels"], 1);
    assert_eq!(
        report["summary"],
        serde_json::json!({ "error": 0, "warning": 1, "note": 0 })
    );
    let f = only(&report);
    for key in [
        "rule",
        "severity",
        "file",
        "line",
        "column",
        "end_line",
        "end_column",
        "channel",
        "message",
        "help",
        "values",
    ] {
        assert!(f.get(key).is_some(), "missing {key}");
    }
    // The primary span is the channel's `clock: cd` value, line 7, columns 12–14.
    assert_eq!(
        (f["line"].as_u64(), f["column"].as_u64()),
        (Some(7), Some(12))
    );
    assert_eq!(
        (f["end_line"].as_u64(), f["end_column"].as_u64()),
        (Some(7), Some(14))
    );
    assert_eq!(f["file"], "studio.rig.yaml", "relative paths stay relative");
}

#[test]
fn human_output_ends_with_one_summary_line_and_honours_no_color() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "studio.rig.yaml", AUDIO_44K1);
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_foldcheck"))
        .args(["check", "--color", "auto", "studio.rig.yaml"])
        .current_dir(dir.path())
        .env("NO_COLOR", "1")
        .output()
        .unwrap();
    let text = String::from_utf8(out.stdout).unwrap();
    assert!(!text.contains('\u{1b}'), "no escape codes with NO_COLOR");
    let last = text.lines().last().unwrap();
    assert!(
        last.starts_with("0 errors, 1 warning, 0 notes in 1 file, 1 channel ("),
        "{last}"
    );
    assert!(text.contains("studio.rig.yaml:7:12"), "{text}");
    let colored = run_in(
        dir.path(),
        &["check", "--color", "always", "studio.rig.yaml"],
    );
    assert!(String::from_utf8_lossy(&colored.stdout).contains('\u{1b}'));
}

#[test]
fn settings_levels_thresholds_and_rig_defaults_take_precedence_in_order() {
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        "foldcheck.toml",
        "[rules]\nsampling-margin = \"error\"\n[thresholds]\nmargin = 2.1\n",
    );
    write(dir.path(), "studio.rig.yaml", AUDIO_44K1);
    // margin 2.1 from settings: 2.205 passes.
    let (report, code) = check_json(dir.path(), &["."]);
    assert_eq!(
        report["findings"].as_array().unwrap().len(),
        0,
        "{report:#}"
    );
    assert_eq!(code, 0);
    // The rig's own margin (3) beats the settings; the settings make it an error.
    write(
        dir.path(),
        "studio.rig.yaml",
        &AUDIO_44K1.replace("rig: studio\n", "rig: studio\ndefaults: { margin: 3 }\n"),
    );
    let (report, code) = check_json(dir.path(), &["."]);
    let f = only(&report);
    assert_eq!(
        (f["rule"].as_str(), f["severity"].as_str()),
        (Some("sampling-margin"), Some("error"))
    );
    assert_eq!(f["values"]["margin"], 3.0);
    assert_eq!(code, 1);
    // A rule turned off disappears.
    write(
        dir.path(),
        "foldcheck.toml",
        "[rules]\nsampling-margin = \"off\"\n",
    );
    let (report, _) = check_json(dir.path(), &["."]);
    assert_eq!(report["findings"].as_array().unwrap().len(), 0);
}

#[test]
fn nearest_settings_file_wins_and_exclusions_apply() {
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        "foldcheck.toml",
        "exclude = [\"archive/**\"]\n[rules]\nsampling-margin = \"off\"\n",
    );
    write(
        dir.path(),
        "bay/foldcheck.toml",
        "[rules]\nsampling-margin = \"note\"\n",
    );
    write(dir.path(), "bay/studio.rig.yaml", AUDIO_44K1);
    write(dir.path(), "top.rig.yaml", AUDIO_44K1);
    write(dir.path(), "archive/old.rig.yaml", "{{ broken");
    let (report, _) = check_json(dir.path(), &["."]);
    assert_eq!(report["files"], 2, "archive/ is excluded: {report:#}");
    let f = only(&report);
    assert_eq!(f["file"], "bay/studio.rig.yaml");
    assert_eq!(f["severity"], "note");
}

#[test]
fn an_invalid_settings_file_is_fatal_with_its_span() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "foldcheck.toml", "[rules]\nnyquits = \"off\"\n");
    write(dir.path(), "studio.rig.yaml", AUDIO_44K1);
    let out = run_in(dir.path(), &["check", "."]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("unknown rule `nyquits`; did you mean `nyquist`?"),
        "{err}"
    );
    assert!(err.contains("foldcheck.toml:2:11"), "{err}");
    // --settings names a file explicitly; a missing one is fatal too.
    let out = run_in(dir.path(), &["check", "--settings", "nope.toml", "."]);
    assert_eq!(out.status.code(), Some(2));
}

#[test]
fn clean_realistic_rigs_stay_silent() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests");
    let (report, code) = check_json(&root, &["clean"]);
    assert_eq!(
        report["findings"].as_array().unwrap().len(),
        0,
        "{report:#}"
    );
    assert_eq!(code, 0);
    assert!(report["channels"].as_u64().unwrap() >= 10);
}

#[test]
fn the_example_campaign_shows_each_documented_mistake() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let (report, code) = check_json(root, &["examples"]);
    assert_eq!(code, 1);
    assert_eq!(report["files"], 3);
    let found: Vec<(String, String)> = report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| {
            (
                f["rule"].as_str().unwrap().to_string(),
                f["channel"].as_str().unwrap_or("").to_string(),
            )
        })
        .collect();
    for (rule, channel) in [
        ("alias-rejection", "root-bolt-07"),
        ("passband-droop", "act-b-force"),
        ("oversampling", "flange-gap"),
        ("sensor-band", "gb-hss-acc-axial"),
        ("alias-rejection", "gb-ims-acc"),
        ("disturbance-alias", "motor-u-current"),
        ("sampling-margin", "mic-near-north"),
        ("alias-rejection", "race-acc-270"),
        ("nyquist", "hub-acc"),
        ("module-rate", "arm-c-force"),
        ("modulator-unknown", "act-b-force"),
    ] {
        assert!(
            found.contains(&(rule.to_string(), channel.to_string())),
            "missing {rule} on {channel}: {found:?}"
        );
    }
    for rule in ["group-phase", "group-clock", "unused-clock", "storage"] {
        assert!(found.iter().any(|(r, _)| r == rule), "missing {rule}");
    }
    // The delta-sigma card's two decimation paths (examples/README.md, P5): 40.78 deg.
    let torque = report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|f| {
            f["rule"] == "group-phase" && f["message"].as_str().unwrap().contains("torque-compare")
        })
        .expect("group-phase on torque-compare");
    let deg = torque["values"]["phase_difference_deg"].as_f64().unwrap();
    // 360° × 200 Hz × (4 / 3.2 kHz − 17.5 / 25.6 kHz), closed form.
    let want = -360.0 * 200.0 * (4.0 / 3200.0 - 17.5 / 25600.0);
    assert!((deg - want).abs() < 1e-3, "{deg} vs {want}");
}

#[test]
fn rules_and_schema_commands() {
    let dir = tempfile::tempdir().unwrap();
    let out = run_in(dir.path(), &["rules"]);
    assert_eq!(out.status.code(), Some(0));
    let text = String::from_utf8(out.stdout).unwrap();
    assert_eq!(text.lines().count(), foldcheck::rules::RULES.len());
    let out = run_in(dir.path(), &["rules", "nyquist"]);
    let text = String::from_utf8(out.stdout).unwrap();
    assert!(
        text.contains("Shannon") && text.contains("Raises it:"),
        "{text}"
    );
    let out = run_in(dir.path(), &["rules", "nyqist"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("did you mean `nyquist`"));
    let out = run_in(dir.path(), &["schema"]);
    let schema: Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(
        schema["$schema"],
        "https://json-schema.org/draft/2020-12/schema"
    );
    let out = run_in(dir.path(), &["schema", "--settings"]);
    let schema: Value = serde_json::from_slice(&out.stdout).unwrap();
    assert!(schema["properties"]["rules"].is_object());
}

#[test]
fn every_example_and_clean_file_is_valid_under_the_schema() {
    let schema: Value = serde_json::from_str(foldcheck::model::schema::RIG_SCHEMA).unwrap();
    let validator = jsonschema::draft202012::new(&schema).unwrap();
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let mut n = 0;
    for dir in [
        "examples",
        "examples/catalog",
        "tests/clean",
        "tests/clean/catalog",
    ] {
        for entry in fs::read_dir(root.join(dir)).unwrap() {
            let p = entry.unwrap().path();
            if p.extension().is_some_and(|e| e == "yaml") {
                let text = fs::read_to_string(&p).unwrap();
                let value: Value = serde_saphyr::from_str(&text).unwrap();
                let errors: Vec<String> = validator
                    .iter_errors(&value)
                    .map(|e| e.to_string())
                    .collect();
                assert!(errors.is_empty(), "{}: {errors:?}", p.display());
                n += 1;
            }
        }
    }
    assert!(n >= 8, "{n} files checked");
}

#[test]
fn budget_arithmetic_by_hand() {
    // throughput: 3 channels × 25 600 Hz × 24 bit / 8 = 230 400 B/s on the card, limit
    // 200 kB/s; plus one channel at 51 200 Hz × 32 bit / 8 = 204 800 B/s elsewhere: the
    // logger sees 435 200 B/s against 400 kB/s.
    // storage: 435 200 B/s × 2 h (7 200 s) = 3 133 440 000 B against 3 GB.
    let dir = tempfile::tempdir().unwrap();
    let filt = "filters: [{ response: butterworth, order: 8, cutoff: 6.5 kHz }]";
    write(
        dir.path(),
        "budget.rig.yaml",
        &format!(
            "format: 1\nrig: budget\nclocks:\n  - {{ name: f25k6, frequency: 25.6 kHz }}\n  - {{ name: f51k2, frequency: 51.2 kHz }}\nmodules:\n  - {{ name: bridge, adc-bits: 24, alias-rejection: 60 dB, throughput: 200 kB/s }}\nchannels:\n  - {{ name: a, clock: f25k6, module: bridge, band: 5 kHz, {filt} }}\n  - {{ name: b, clock: f25k6, module: bridge, band: 5 kHz, {filt} }}\n  - {{ name: c, clock: f25k6, module: bridge, band: 5 kHz, {filt} }}\n  - {{ name: d, clock: f51k2, band: 10 kHz, sample-bits: 32, filters: [{{ response: butterworth, order: 8, cutoff: 13 kHz }}] }}\nlogger: {{ throughput: 400 kB/s, storage: 3 GB, duration: 2 h }}\n"
        ),
    );
    let (report, code) = check_json(dir.path(), &["budget.rig.yaml"]);
    assert_eq!(code, 1);
    let values: Vec<(&str, f64, f64)> = report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| {
            let v = &f["values"];
            let (a, b) = if f["rule"] == "storage" {
                ("bytes", "limit_bytes")
            } else {
                ("data_rate_bytes_per_s", "limit_bytes_per_s")
            };
            (
                f["rule"].as_str().unwrap(),
                v[a].as_f64().unwrap(),
                v[b].as_f64().unwrap(),
            )
        })
        .collect();
    assert!(
        values.contains(&("throughput", 230_400.0, 200_000.0)),
        "{values:?}"
    );
    assert!(
        values.contains(&("throughput", 435_200.0, 400_000.0)),
        "{values:?}"
    );
    assert!(
        values.contains(&("storage", 3_133_440_000.0, 3_000_000_000.0)),
        "{values:?}"
    );
    assert_eq!(values.len(), 3, "{report:#}");
}

#[test]
fn human_columns_count_characters_like_json() {
    // Regression: the human header once counted bytes, so text like "Prüfstand" before
    // a value moved its column away from the JSON output's.
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        "u.rig.yaml",
        "{ format: 1, rig: u, description: \"Prüfstand für Mikrofone\", clocks: [{ name: cd, frequency: 44.1 kHz }], channels: [{ name: left, clock: cd, band: 20 kHz, filters: [{ response: digital, passband-edge: 0.454, stopband-edge: 0.546, attenuation: 100 dB }] }] }\n",
    );
    let (report, _) = check_json(dir.path(), &["u.rig.yaml"]);
    let f = &report["findings"][0];
    assert_eq!(f["rule"], "sampling-margin", "{report:#}");
    let (line, col) = (f["line"].as_u64().unwrap(), f["column"].as_u64().unwrap());
    let human =
        String::from_utf8(run_in(dir.path(), &["check", "--color", "never", "u.rig.yaml"]).stdout)
            .unwrap();
    assert!(
        human.contains(&format!("u.rig.yaml:{line}:{col}]")),
        "{human}\nJSON says {line}:{col}"
    );
}

#[test]
fn the_readme_settings_example_is_valid_under_the_settings_schema_and_loads() {
    let readme = fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/README.md")).unwrap();
    let start = readme.find("```toml\n").expect("a toml block") + 8;
    let text = &readme[start..start + readme[start..].find("```").unwrap()];
    let value: toml::Value = toml::from_str(text).unwrap();
    let json = serde_json::to_value(&value).unwrap();
    let schema: Value = serde_json::from_str(foldcheck::settings::SETTINGS_SCHEMA).unwrap();
    let validator = jsonschema::draft202012::new(&schema).unwrap();
    let errors: Vec<String> = validator
        .iter_errors(&json)
        .map(|e| e.to_string())
        .collect();
    assert!(errors.is_empty(), "{errors:?}");
    let s = foldcheck::settings::parse(Path::new("foldcheck.toml"), text).unwrap();
    assert_eq!(s.thresholds.margin, Some(2.56));
    assert_eq!(s.thresholds.alias_rejection, Some(90.0));
    // And the schema refuses what the loader refuses.
    let bad = serde_json::json!({ "rules": { "nyquist": "loud" } });
    assert!(!validator.is_valid(&bad));
}

#[test]
fn an_empty_directory_is_clean_but_says_so() {
    let dir = tempfile::tempdir().unwrap();
    let out = run_in(dir.path(), &["check", "."]);
    assert_eq!(out.status.code(), Some(0));
    assert!(String::from_utf8_lossy(&out.stderr).contains("no rig files"));
    assert!(
        String::from_utf8_lossy(&out.stdout)
            .starts_with("0 errors, 0 warnings, 0 notes in 0 files")
    );
}
