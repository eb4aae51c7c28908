//! `inspect` on a catalog (the rig that includes it and has the channel; several: the
//! rigs are listed and the user names one) and `inspect FILE` without a channel (every
//! channel with its final rate, band, ratio and verdict, the verdict from the same run
//! as `check`).

mod common;

use common::run_in;
use serde_json::Value;
use std::fs;
use std::path::Path;

fn write(dir: &Path, name: &str, text: &str) {
    let p = dir.join(name);
    fs::create_dir_all(p.parent().unwrap()).unwrap();
    fs::write(p, text).unwrap();
}

const CATALOG: &str = "\
format: 1
catalog: lab
clocks:
  - { name: lab-osc, frequency: 24.576 MHz }
  - { name: f48k, source: lab-osc, divide: 512 }
";

/// A channel on 24.576 MHz / 512 = 48 kHz exactly with a digital filter giving 100 dB
/// from 0.55 × 48 kHz = 26.4 kHz.
fn channel(name: &str, band: &str) -> String {
    format!(
        "  - name: {name}\n    clock: f48k\n    band: {band}\n    filters: [{{ response: digital, passband-edge: 0.45, stopband-edge: 0.55, attenuation: 100 dB }}]\n"
    )
}

fn campaign() -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    fs::create_dir(dir.path().join(".git")).unwrap();
    write(dir.path(), "catalog/lab.yaml", CATALOG);
    write(
        dir.path(),
        "rigs/bay-1.rig.yaml",
        &format!(
            "format: 1\nrig: bay-1\ninclude: [../catalog/lab.yaml]\nchannels:\n{}",
            channel("mic-1", "10 kHz")
        ),
    );
    // 48 kHz for a 20 kHz band: ratio 2.4, below the common-practice margin of 2.5.
    write(
        dir.path(),
        "rigs/bay-2.rig.yaml",
        &format!(
            "format: 1\nrig: bay-2\ninclude: [../catalog/lab.yaml]\nchannels:\n{}{}",
            channel("mic-1", "10 kHz"),
            channel("acc-2", "20 kHz")
        ),
    );
    dir
}

fn out(o: &std::process::Output) -> (String, String, i32) {
    (
        String::from_utf8_lossy(&o.stdout).into_owned(),
        String::from_utf8_lossy(&o.stderr).into_owned(),
        o.status.code().unwrap(),
    )
}

#[test]
fn a_catalog_and_a_channel_only_one_rig_has_inspects_that_rig() {
    let dir = campaign();
    let (stdout, stderr, code) = out(&run_in(
        dir.path(),
        &["inspect", "catalog/lab.yaml", "acc-2"],
    ));
    assert_eq!(code, 0, "{stderr}");
    assert!(
        stdout.starts_with("channel `acc-2` of rig `bay-2` (rigs/bay-2.rig.yaml:"),
        "{stdout}"
    );
}

#[test]
fn a_channel_several_rigs_have_is_refused_with_the_rigs_listed() {
    let dir = campaign();
    let (_, stderr, code) = out(&run_in(
        dir.path(),
        &["inspect", "catalog/lab.yaml", "mic-1"],
    ));
    assert_eq!(code, 2);
    assert_eq!(
        stderr.trim_end(),
        "foldcheck: catalog/lab.yaml is a catalog, and 2 rigs that include it have a channel `mic-1`: `bay-1` (rigs/bay-1.rig.yaml), `bay-2` (rigs/bay-2.rig.yaml); name the rig, e.g. `foldcheck inspect rigs/bay-1.rig.yaml mic-1`"
    );
    let (_, stderr, code) = out(&run_in(
        dir.path(),
        &["inspect", "catalog/lab.yaml", "acc-3"],
    ));
    assert_eq!(code, 2);
    assert!(
        stderr.contains("none of the rigs that include it has a channel `acc-3`"),
        "{stderr}"
    );
    assert!(stderr.contains("did you mean `acc-2`?"), "{stderr}");
}

#[test]
fn inspect_without_a_channel_lists_rates_bands_ratios_and_verdicts() {
    let dir = campaign();
    let (stdout, stderr, code) = out(&run_in(dir.path(), &["inspect", "rigs/bay-2.rig.yaml"]));
    assert_eq!(code, 0, "{stderr}");
    assert_eq!(
        stdout,
        "rig `bay-2` (rigs/bay-2.rig.yaml): 2 channels
  channel final rate   band ratio verdict
  mic-1       48 kHz 10 kHz   4.8 ok
  acc-2       48 kHz 20 kHz   2.4 warning: sampling-margin

details of one channel: foldcheck inspect FILE CHANNEL
"
    );
    // The verdicts are those of `check` on the same file.
    let (report, _) = common::check_json(dir.path(), &["rigs/bay-2.rig.yaml"]);
    let rules: Vec<(&str, &str)> = report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| (f["channel"].as_str().unwrap(), f["rule"].as_str().unwrap()))
        .collect();
    assert_eq!(rules, [("acc-2", "sampling-margin")]);

    let (stdout, _, code) = out(&run_in(
        dir.path(),
        &["inspect", "rigs/bay-2.rig.yaml", "--format", "json"],
    ));
    assert_eq!(code, 0);
    let v: Value = serde_json::from_str(&stdout).unwrap();
    let acc = &v["rigs"][0]["channels"][1];
    assert_eq!(acc["channel"], "acc-2");
    assert_eq!(acc["rate_hz"], 48000.0, "24.576 MHz / 512");
    assert_eq!(acc["band_hz"], 20000.0);
    assert_eq!(acc["ratio"], 2.4);
    assert_eq!(acc["verdict"], "warning");
    assert_eq!(acc["rules"], serde_json::json!(["sampling-margin"]));
}

#[test]
fn inspect_a_catalog_without_a_channel_lists_every_rig_that_includes_it() {
    let dir = campaign();
    let (stdout, stderr, code) = out(&run_in(dir.path(), &["inspect", "catalog/lab.yaml"]));
    assert_eq!(code, 0, "{stderr}");
    assert!(
        stdout.starts_with("catalog/lab.yaml is a catalog; the rigs that include it:\n\nrig `bay-1` (rigs/bay-1.rig.yaml): 1 channel\n"),
        "{stdout}"
    );
    assert!(
        stdout.contains("rig `bay-2` (rigs/bay-2.rig.yaml): 2 channels"),
        "{stdout}"
    );
    let (_, stderr, code) = out(&run_in(
        dir.path(),
        &["inspect", "catalog/lab.yaml", "--plot", "x.svg"],
    ));
    assert_eq!(code, 2);
    assert!(stderr.contains("--plot draws one channel"), "{stderr}");
}
