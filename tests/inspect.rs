//! `foldcheck inspect` through the real binary: the human text, the JSON document and the
//! SVG plot of one channel, checked against the worked checks of docs/format.md and their
//! sources (named there):
//!
//! - 24.576 MHz ÷ 512 = 48 kHz exactly, and a 20 kHz band gives fs/B = 2.4 (exact
//!   arithmetic); fs > 2B holds, so no `nyquist` (C. E. Shannon, "Communication in the
//!   presence of noise", Proc. IRE 37, 1949), but 2.4 is below the practical margin of
//!   2.5 (common practice, no single source).
//! - The lowest frequency that folds into [0, B] is fs − B = 28 kHz (Shannon 1949), and a
//!   4th-order Butterworth with its −3 dB point at 20 kHz attenuates 28 kHz by 11.97 dB
//!   (scipy.signal.butter(4, 2π·20e3, analog=True) with freqs; the closed form
//!   10·log10(1 + (f/fc)^2n) is the same number).
//! - At its cutoff a Butterworth filter is down 10·log10(2) = 3.0103 dB and its phase is
//!   −n·45° (the poles of the Butterworth polynomial; from memory).
//! - A CIC (sinc) decimator of factor M running at fin has exact nulls at multiples of
//!   fin/M (E. Hogenauer, IEEE Trans. ASSP 29, 1981; from memory), so a tone there is
//!   infinitely attenuated: the JSON must carry it as the 300 dB ceiling.

use serde_json::Value;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// A fresh directory for one test.
fn scratch(name: &str) -> PathBuf {
    let dir = Path::new(env!("CARGO_TARGET_TMPDIR"))
        .join("inspect-tests")
        .join(name);
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("create a scratch directory");
    dir
}

fn foldcheck(dir: &Path, args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_foldcheck"))
        .current_dir(dir)
        .args(args)
        .output()
        .expect("run foldcheck")
}

fn stdout(o: &Output) -> String {
    String::from_utf8(o.stdout.clone()).expect("stdout is UTF-8")
}

fn stderr(o: &Output) -> String {
    String::from_utf8(o.stderr.clone()).expect("stderr is UTF-8")
}

/// The rig of the worked checks: a 48 kHz frame from a 24.576 MHz oscillator, a 20 kHz
/// band and a 4th-order Butterworth at 20 kHz. Made up for the test.
const WORKED: &str = "\
format: 1
rig: bench-audio
clocks:
  - name: osc
    frequency: 24.576 MHz
  - name: frame
    source: osc
    divide: 512
channels:
  - name: mic-left
    clock: frame
    band: 20 kHz
    filters:
      - { response: butterworth, order: 4, cutoff: 20 kHz }
";

/// 10·log10(1 + (f/fc)^(2n)): the Butterworth magnitude (scipy.signal.butter agrees).
fn butterworth_db(order: i32, fc: f64, f: f64) -> f64 {
    10.0 * (1.0 + (f / fc).powi(2 * order)).log10()
}

fn worked_dir(name: &str) -> PathBuf {
    let dir = scratch(name);
    std::fs::write(dir.join("bench.rig.yaml"), WORKED).expect("write the rig");
    dir
}

fn close(a: f64, b: f64, tol: f64) -> bool {
    (a - b).abs() <= tol
}

#[test]
fn human_output_shows_the_exact_clock_path_and_the_worked_numbers() {
    let dir = worked_dir("human");
    let o = foldcheck(&dir, &["inspect", "bench.rig.yaml", "mic-left"]);
    assert_eq!(o.status.code(), Some(0), "stderr: {}", stderr(&o));
    let text = stdout(&o);
    // The clock path, root first, with the divider and the exact rate at each step.
    assert!(
        text.contains("osc 24.576 MHz → ÷512 → frame 48 kHz"),
        "{text}"
    );
    // Ratio 2.4: above 2 (Shannon 1949), below the 2.5 margin (common practice).
    assert!(
        text.contains("2.4: above 2 (nyquist pass), below the 2.5× margin (FAIL)"),
        "{text}"
    );
    assert!(text.contains("fs − B = 28 kHz"), "{text}");
    // 11.97 dB at 28 kHz (docs/model.md; scipy.signal.butter).
    assert!(
        text.contains("channel filter: 4th-order Butterworth at 20 kHz: 11.97 dB"),
        "{text}"
    );
    assert_eq!(
        format!("{:.2}", butterworth_db(4, 20e3, 28e3)),
        "11.97",
        "the closed form and the documented value agree"
    );
    // 40 dB built-in requirement, 28.03 dB short.
    assert!(
        text.contains("40 dB required, from the built-in default"),
        "{text}"
    );
    assert!(text.contains("FAIL, 28.03 dB short"), "{text}");
    // The band edge: 3.01 dB at the −3 dB point, phase −4·45° = −180°.
    assert!(
        text.contains("3.01 dB at 20 kHz (tolerance 0.5 dB): FAIL"),
        "{text}"
    );
    assert!(text.contains("-180.00 deg at 20 kHz"), "{text}");
    // The channel's findings of the same run.
    for rule in ["sampling-margin", "alias-rejection", "passband-droop"] {
        assert!(text.contains(rule), "missing {rule}: {text}");
    }
    assert!(text.contains("findings (3)"), "{text}");
}

#[test]
fn a_rate_that_six_digits_cannot_show_is_printed_exactly() {
    let dir = scratch("exact");
    let rig = "\
format: 1
rig: bench-odd
clocks:
  - name: osc
    frequency: 24.576 MHz
  - name: odd
    source: osc
    divide: 7
  - name: pll
    source: odd
    multiply: 3
    divide: 2
channels:
  - name: probe
    clock: pll
    band: 100 kHz
    filters:
      - { response: butterworth, order: 8, cutoff: 200 kHz }
";
    std::fs::write(dir.join("odd.rig.yaml"), rig).unwrap();
    let o = foldcheck(&dir, &["inspect", "odd.rig.yaml", "probe"]);
    assert_eq!(o.status.code(), Some(0), "stderr: {}", stderr(&o));
    let text = stdout(&o);
    // 24.576 MHz / 7 = 24576000/7 Hz; × 3 / 2 = 36864000/7 Hz (exact rationals).
    assert!(
        text.contains(
            "osc 24.576 MHz → ÷7 → odd 3.51086 MHz (exactly 24576000/7 Hz) → ×3 ÷2 → pll 5.26629 MHz (exactly 36864000/7 Hz)"
        ),
        "{text}"
    );
    let o = foldcheck(
        &dir,
        &["inspect", "odd.rig.yaml", "probe", "--format", "json"],
    );
    let v: Value = serde_json::from_str(&stdout(&o)).expect("valid JSON");
    assert_eq!(v["clock"]["path"][2]["rate_exact_hz"], "36864000/7");
    assert_eq!(v["clock"]["path"][2]["multiply"], 3);
    assert_eq!(v["clock"]["path"][2]["divide"], 2);
}

#[test]
fn json_parses_strictly_and_carries_the_worked_numbers() {
    let dir = worked_dir("json");
    let o = foldcheck(
        &dir,
        &["inspect", "bench.rig.yaml", "mic-left", "--format", "json"],
    );
    assert_eq!(o.status.code(), Some(0), "stderr: {}", stderr(&o));
    let v: Value = serde_json::from_str(&stdout(&o)).expect("strict JSON");
    assert_eq!(v["version"], 1);
    assert_eq!(v["rig"], "bench-audio");
    assert_eq!(v["channel"], "mic-left");
    assert_eq!(v["resolved"], true);
    let path = v["clock"]["path"].as_array().expect("a clock path");
    assert_eq!(path.len(), 2);
    assert_eq!(path[0]["clock"], "osc");
    assert_eq!(path[0]["rate_hz"].as_f64(), Some(24_576_000.0));
    assert_eq!(path[1]["clock"], "frame");
    assert_eq!(path[1]["divide"], 512);
    // 24.576 MHz ÷ 512 = 48 kHz exactly.
    assert_eq!(path[1]["rate_hz"].as_f64(), Some(48_000.0));
    assert_eq!(path[1]["rate_exact_hz"], "48000");
    assert_eq!(v["clock"]["rate_hz"].as_f64(), Some(48_000.0));
    assert_eq!(v["band"]["hz"].as_f64(), Some(20_000.0));
    assert_eq!(v["rejection"]["required_db"].as_f64(), Some(40.0));

    let a = &v["analysis"];
    assert_eq!(a["band_hz"].as_f64(), Some(20_000.0));
    let stages = a["rate_changes"].as_array().expect("rate changes");
    assert_eq!(stages.len(), 1);
    let adc = &stages[0];
    assert_eq!(adc["stage"], 0);
    assert_eq!(adc["rate_hz"].as_f64(), Some(48_000.0));
    assert!(close(adc["ratio"].as_f64().unwrap(), 2.4, 1e-12));
    assert_eq!(adc["nyquist"], true);
    assert_eq!(adc["margin"]["pass"], false);
    let alias = &adc["alias"];
    assert_eq!(alias["fold_from_hz"].as_f64(), Some(28_000.0));
    let att = alias["attenuation_db"].as_f64().unwrap();
    assert!(close(att, 11.97, 0.005), "{att}");
    assert!(close(att, butterworth_db(4, 20e3, 28e3), 1e-9), "{att}");
    assert_eq!(alias["pass"], false);
    let contributions = alias["contributions"].as_array().unwrap();
    assert_eq!(contributions.len(), 1);
    assert!(close(
        contributions[0]["attenuation_db"].as_f64().unwrap(),
        att,
        1e-12
    ));
    // Band edge: 10·log10(2) and −180°.
    let pb = a["passband"]["attenuation_db"].as_f64().unwrap();
    assert!(close(pb, 10.0 * 2f64.log10(), 1e-9), "{pb}");
    assert_eq!(a["passband"]["pass"], false);
    let phase = a["phase_at_band_deg"].as_f64().unwrap();
    assert!(close(phase, -180.0, 1e-6), "{phase}");
    assert_eq!(a["final_rate_hz"].as_f64(), Some(48_000.0));
    // 48 kHz × 32 bits (no module: 32 stored bits) = 192 kB/s.
    assert_eq!(a["data_rate_bytes_per_s"].as_f64(), Some(192_000.0));

    let rules: Vec<&str> = v["findings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["rule"].as_str().unwrap())
        .collect();
    assert_eq!(rules.len(), 3, "{rules:?}");
    for rule in ["sampling-margin", "alias-rejection", "passband-droop"] {
        assert!(rules.contains(&rule), "missing {rule}: {rules:?}");
    }
    assert_eq!(v["plot"], Value::Null);
}

/// The SVG's own axis mapping, read from its tick labels: pixel x of a frequency from two
/// decade labels, pixel y of an attenuation from two y labels.
struct Axes {
    x10k: f64,
    x100k: f64,
    y0: f64,
    y20: f64,
}

impl Axes {
    fn x(&self, hz: f64) -> f64 {
        self.x10k + ((hz / 1e4).log10()) * (self.x100k - self.x10k)
    }
    fn y(&self, db: f64) -> f64 {
        self.y0 + db / 20.0 * (self.y20 - self.y0)
    }
}

fn attr(n: &roxmltree::Node, name: &str) -> f64 {
    n.attribute(name)
        .unwrap_or_else(|| panic!("<{}> has no {name}", n.tag_name().name()))
        .parse()
        .expect("a number")
}

fn points(n: &roxmltree::Node) -> Vec<(f64, f64)> {
    n.attribute("points")
        .unwrap_or("")
        .split_whitespace()
        .map(|p| {
            let (x, y) = p.split_once(',').expect("x,y");
            (x.parse().unwrap(), y.parse().unwrap())
        })
        .collect()
}

#[test]
fn the_svg_plot_shows_curve_band_fold_requirement_images_and_legend_in_place() {
    let dir = worked_dir("svg");
    let o = foldcheck(
        &dir,
        &["inspect", "bench.rig.yaml", "mic-left", "--plot", "out.svg"],
    );
    assert_eq!(o.status.code(), Some(0), "stderr: {}", stderr(&o));
    assert!(stdout(&o).contains("plot written to out.svg"));
    // Written atomically: nothing but the rig and the plot in the directory.
    let mut names: Vec<String> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    assert_eq!(names, ["bench.rig.yaml", "out.svg"]);

    let svg = std::fs::read_to_string(dir.join("out.svg")).unwrap();
    let doc = roxmltree::Document::parse(&svg).expect("the plot is well-formed XML");
    assert_eq!(doc.root_element().tag_name().name(), "svg");
    let texts: Vec<(String, roxmltree::Node)> = doc
        .descendants()
        .filter(|n| n.has_tag_name("text"))
        .map(|n| (n.text().unwrap_or("").trim().to_string(), n))
        .collect();
    let text_at = |s: &str| -> roxmltree::Node {
        texts
            .iter()
            .find(|(t, _)| t == s)
            .unwrap_or_else(|| {
                panic!(
                    "no text {s:?} in {:?}",
                    texts.iter().map(|t| &t.0).collect::<Vec<_>>()
                )
            })
            .1
    };
    let axes = Axes {
        x10k: attr(&text_at("10 kHz"), "x"),
        x100k: attr(&text_at("100 kHz"), "x"),
        y0: attr(&text_at("0"), "y"),
        y20: attr(&text_at("20"), "y"),
    };
    // Title, legend and labels as text.
    text_at("bench-audio / mic-left");
    text_at("band 0 – 20 kHz");
    text_at("required rejection 40 dB (the built-in default)");
    text_at("fs − B = 28 kHz: 11.97 dB");
    text_at("fs ± B");
    text_at("2fs ± B");
    text_at("chain up to the ADC (sensor response and the ADC's filters)");

    // The curve: one polyline with many points, rising frequency, attenuation that
    // only grows (a Butterworth low-pass), at the right height at the band edge.
    let curve = doc
        .descendants()
        .filter(|n| n.has_tag_name("polyline"))
        .map(|n| points(&n))
        .max_by_key(Vec::len)
        .expect("a polyline");
    assert!(curve.len() >= 300, "only {} points", curve.len());
    assert!(curve.windows(2).all(|w| w[1].0 >= w[0].0), "x rises");
    assert!(
        curve.windows(2).all(|w| w[1].1 >= w[0].1),
        "attenuation grows"
    );
    let near = |x: f64| {
        curve
            .iter()
            .min_by(|a, b| (a.0 - x).abs().total_cmp(&(b.0 - x).abs()))
            .copied()
            .unwrap()
    };
    let at_band = near(axes.x(20e3));
    assert!(
        close(at_band.1, axes.y(10.0 * 2f64.log10()), 2.0),
        "3.01 dB at 20 kHz, drawn at {at_band:?}"
    );

    // The fold marker: a dot at (28 kHz, 11.97 dB), on the curve.
    let dot = doc
        .descendants()
        .filter(|n| n.has_tag_name("circle"))
        .find(|c| close(attr(c, "cx"), axes.x(28e3), 2.0))
        .expect("a marker at 28 kHz");
    assert!(
        close(attr(&dot, "cy"), axes.y(11.97), 2.0),
        "the fs − B dot at 11.97 dB"
    );

    // The band: a shaded rectangle ending at 20 kHz.
    let rects: Vec<roxmltree::Node> = doc
        .descendants()
        .filter(|n| n.has_tag_name("rect"))
        .collect();
    let right = |r: &roxmltree::Node| attr(r, "x") + attr(r, "width");
    assert!(
        rects.iter().any(|r| close(right(r), axes.x(20e3), 2.0)),
        "a band rectangle ending at 20 kHz"
    );
    // The images of the band around fs and 2fs: [28, 68] kHz and [76, 116] kHz.
    for (lo, hi) in [(28e3, 68e3), (76e3, 116e3)] {
        assert!(
            rects
                .iter()
                .any(|r| close(attr(r, "x"), axes.x(lo), 2.0) && close(right(r), axes.x(hi), 2.0)),
            "an image rectangle from {lo} to {hi} Hz"
        );
    }

    // The required rejection: a dashed horizontal line at 40 dB (many short segments).
    let y40 = axes.y(40.0);
    let dashes = doc
        .descendants()
        .filter(|n| n.has_tag_name("polyline"))
        .map(|n| points(&n))
        .filter(|p| p.len() == 2 && p.iter().all(|q| close(q.1, y40, 1.5)))
        .count();
    assert!(dashes >= 20, "only {dashes} dashes at 40 dB");
}

#[test]
fn an_unknown_channel_is_fatal_and_names_the_closest_one() {
    let dir = worked_dir("unknown");
    let o = foldcheck(&dir, &["inspect", "bench.rig.yaml", "mic-lfet"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(o.stdout.is_empty());
    let err = stderr(&o);
    assert!(
        err.contains("the rig `bench-audio` has no channel `mic-lfet`; did you mean `mic-left`?"),
        "{err}"
    );
    // A directory is not a rig file: fatal too, rather than picking one of its rigs.
    let o = foldcheck(&dir, &["inspect", ".", "mic-left"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("is a directory"), "{}", stderr(&o));
}

#[test]
fn an_infinitely_deep_sinc_null_stays_valid_json_and_prints_as_above_300_db() {
    // 25.6 kHz, then a 3rd-order sinc ÷4 to 6.4 kHz: nulls at multiples of 6.4 kHz
    // (Hogenauer 1981). A 12.8 kHz tone is at fs0/2 (no fold at the ADC), then folds to
    // 0 Hz at stage 1, exactly on a null.
    let dir = scratch("sinc-null");
    let rig = "\
format: 1
rig: bench-cic
clocks:
  - name: mod
    frequency: 25.6 kHz
channels:
  - name: strain
    clock: mod
    band: 400 Hz
    filters:
      - { response: butterworth, order: 6, cutoff: 2 kHz }
    decimate:
      - factor: 4
        filter: { response: sinc, order: 3 }
disturbances:
  - name: chopper
    frequency: 12.8 kHz
    level: 20 dB
";
    std::fs::write(dir.join("cic.rig.yaml"), rig).unwrap();
    let o = foldcheck(
        &dir,
        &[
            "inspect",
            "cic.rig.yaml",
            "strain",
            "--format",
            "json",
            "--plot",
            "cic.svg",
        ],
    );
    assert_eq!(o.status.code(), Some(0), "stderr: {}", stderr(&o));
    let out = stdout(&o);
    let v: Value = serde_json::from_str(&out).expect("valid JSON despite the null");
    let d = &v["analysis"]["disturbances"][0];
    assert_eq!(d["name"], "chopper");
    assert_eq!(d["outcome"], "folds-in");
    assert_eq!(d["stage"], 1);
    assert_eq!(d["pass"], true);
    let step = &d["steps"][1];
    assert_eq!(step["lands_at_hz"].as_f64(), Some(0.0));
    // The sinc null is infinite; JSON carries the 300 dB ceiling.
    assert_eq!(step["attenuation_db"].as_f64(), Some(300.0));
    // Stage 1 at fs − B = 6 kHz: the sinc gives the Hogenauer value.
    let stage = &v["analysis"]["rate_changes"][1];
    assert_eq!(stage["rate_hz"].as_f64(), Some(6_400.0));
    let sinc = stage["alias"]["contributions"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["what"].as_str().unwrap().contains("sinc"))
        .expect("the sinc's share")["attenuation_db"]
        .as_f64()
        .unwrap();
    let (m, fin, f) = (4.0, 25_600.0, 6_000.0);
    let x = std::f64::consts::PI * f / fin;
    let hogenauer = -20.0 * 3.0 * ((m * x).sin() / (m * x.sin())).abs().log10();
    assert!(close(sinc, hogenauer, 1e-9), "{sinc} vs {hogenauer}");
    // The plot has no non-numbers in it.
    let svg = std::fs::read_to_string(dir.join("cic.svg")).unwrap();
    roxmltree::Document::parse(&svg).expect("well-formed XML");
    assert!(
        !svg.contains("NaN") && !svg.contains("inf"),
        "no NaN or inf in the SVG"
    );

    // The text form prints the ceiling.
    let o = foldcheck(&dir, &["inspect", "cic.rig.yaml", "strain"]);
    let text = stdout(&o);
    assert!(
        text.contains("12.8 kHz folds to 0 Hz, inside the band; attenuation > 300 dB"),
        "{text}"
    );
}

#[test]
fn an_unresolved_channel_shows_what_is_known_and_its_findings() {
    let dir = scratch("unresolved");
    let rig = "\
format: 1
rig: bench-broken
clocks:
  - name: frame
    frequency: 48 kHz
channels:
  - name: mic-left
    clock: frmae
    band: 10 kHz
    filters: [{ response: digital, passband-edge: 0.45, stopband-edge: 0.55, attenuation: 100 dB }]
";
    // Renamed to `frame`, the channel would be clean (48 kHz for a 10 kHz band, 100 dB
    // from 26.4 kHz), so `check` verifies the rename and proposes it. `inspect` analyses
    // only the channel it shows and verifies no fix, so its help never proposes an edit:
    // it lists the names that exist instead.
    std::fs::write(dir.join("broken.rig.yaml"), rig).unwrap();
    let o = foldcheck(&dir, &["inspect", "broken.rig.yaml", "mic-left"]);
    assert_eq!(o.status.code(), Some(0), "stderr: {}", stderr(&o));
    let text = stdout(&o);
    assert!(text.contains("`frmae`, which is not defined"), "{text}");
    assert!(text.contains("10 kHz, from the channel's `band`"), "{text}");
    assert!(text.contains("the channel did not resolve"), "{text}");
    assert!(text.contains("unknown-reference"), "{text}");
    assert!(text.contains("help: defined clocks: frame"), "{text}");
    assert!(!text.contains("did you mean"), "{text}");

    let o = foldcheck(
        &dir,
        &["inspect", "broken.rig.yaml", "mic-left", "--format", "json"],
    );
    let v: Value = serde_json::from_str(&stdout(&o)).expect("valid JSON");
    assert_eq!(v["resolved"], false);
    assert_eq!(v["analysis"], Value::Null);
    assert_eq!(v["clock"]["found"], false);
    assert_eq!(v["findings"][0]["rule"], "unknown-reference");

    // Nothing to draw: fatal, and no file written.
    let o = foldcheck(
        &dir,
        &["inspect", "broken.rig.yaml", "mic-left", "--plot", "p.svg"],
    );
    assert_eq!(o.status.code(), Some(2));
    assert!(
        stderr(&o).contains("cannot draw `mic-left`"),
        "{}",
        stderr(&o)
    );
    assert!(!dir.join("p.svg").exists());
}

#[test]
fn the_plot_never_overwrites_a_file_it_reads_or_a_non_svg_name() {
    let dir = scratch("no-overwrite");
    // A rig named like an SVG, named on the command line (any YAML file may be).
    std::fs::write(dir.join("rig.svg"), WORKED).unwrap();
    std::fs::write(dir.join("bench.rig.yaml"), WORKED).unwrap();
    for (file, target, why) in [
        (
            "rig.svg",
            "rig.svg",
            "refusing to write the plot over a file foldcheck reads",
        ),
        (
            "bench.rig.yaml",
            "bench.rig.yaml",
            "name a file ending in .svg",
        ),
    ] {
        let o = foldcheck(&dir, &["inspect", file, "mic-left", "--plot", target]);
        assert_eq!(o.status.code(), Some(2), "{target}");
        assert!(stderr(&o).contains(why), "{}", stderr(&o));
        assert_eq!(
            std::fs::read_to_string(dir.join(target)).unwrap(),
            WORKED,
            "{target} is unchanged"
        );
    }
    let mut names: Vec<String> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    assert_eq!(
        names,
        ["bench.rig.yaml", "rig.svg"],
        "no temporary files left"
    );
}

#[test]
fn a_clock_loop_on_the_channels_path_is_listed_with_its_findings() {
    let dir = scratch("clock-loop");
    let rig = "\
format: 1
rig: bench-loop
clocks:
  - name: a
    source: b
    divide: 2
  - name: b
    source: a
    multiply: 4
channels:
  - name: x
    clock: a
    band: 1 kHz
";
    std::fs::write(dir.join("loop.rig.yaml"), rig).unwrap();
    let o = foldcheck(&dir, &["inspect", "loop.rig.yaml", "x"]);
    assert_eq!(o.status.code(), Some(0), "stderr: {}", stderr(&o));
    let text = stdout(&o);
    assert!(text.contains("a (rate unknown)"), "{text}");
    assert!(text.contains("does not reach a root oscillator"), "{text}");
    assert!(text.contains("clock-cycle"), "{text}");
    assert!(text.contains("a → b → a"), "{text}");
}

/// A delta-sigma card at 102.4 kHz (modulator 64 × 102.4 kHz = 6.5536 MHz) decimated by
/// 2 and then by 4, with a 2 kHz band: three rate changes, each with its own images.
/// Made up for the test.
const STAGED: &str = "\
format: 1
rig: bench-staged
clocks:
  - { name: osc, frequency: 102.4 kHz }
modules:
  - name: ds-card
    modulator:
      oversampling-ratio: 64
      filter: { response: digital, passband-edge: 0.45, stopband-edge: 0.55, attenuation: 110 dB }
channels:
  - name: strain-7
    module: ds-card
    clock: osc
    band: 2 kHz
    filters: [{ response: butterworth, order: 4, cutoff: 20 kHz }]
    decimate:
      - { factor: 2, filter: { response: sinc, order: 4 } }
      - { factor: 4, filter: { response: digital, passband-edge: 0.2, stopband-edge: 0.5, attenuation: 100 dB } }
";

#[test]
fn the_plot_draws_every_rate_changes_images_and_half_rate_in_its_own_colour() {
    use foldcheck::inspect::plot::{colour_hex, stage_colour};
    let dir = scratch("staged-svg");
    std::fs::write(dir.join("staged.rig.yaml"), STAGED).unwrap();
    let o = foldcheck(
        &dir,
        &[
            "inspect",
            "staged.rig.yaml",
            "strain-7",
            "--plot",
            "out.svg",
        ],
    );
    assert_eq!(o.status.code(), Some(0), "stderr: {}", stderr(&o));
    let svg = std::fs::read_to_string(dir.join("out.svg")).unwrap();
    let doc = roxmltree::Document::parse(&svg).expect("the plot is well-formed XML");
    let text_x = |s: &str| -> f64 {
        let n = doc
            .descendants()
            .find(|n| n.has_tag_name("text") && n.text().map(str::trim) == Some(s))
            .unwrap_or_else(|| panic!("no text {s:?}"));
        attr(&n, "x")
    };
    // The log axis from two decade labels.
    let (x10k, x100k) = (text_x("10 kHz"), text_x("100 kHz"));
    let x = |hz: f64| x10k + (hz / 1e4).log10() * (x100k - x10k);
    let rects: Vec<roxmltree::Node> = doc
        .descendants()
        .filter(|n| n.has_tag_name("rect"))
        .collect();
    let lines: Vec<roxmltree::Node> = doc
        .descendants()
        .filter(|n| n.has_tag_name("polyline"))
        .collect();
    // Rate changes: the ADC at 102.4 kHz, stage 1 at 51.2 kHz, stage 2 at 12.8 kHz.
    for (stage, fs) in [(0usize, 102_400.0), (1, 51_200.0), (2, 12_800.0)] {
        let colour = colour_hex(stage_colour(Some(stage)));
        // Its first image band [fs − B, fs + B], in its colour.
        let (lo, hi) = (fs - 2e3, fs + 2e3);
        let bands = rects
            .iter()
            .filter(|r| r.attribute("fill") == Some(colour.as_str()))
            .filter(|r| {
                close(attr(r, "x"), x(lo), 2.0)
                    && close(attr(r, "x") + attr(r, "width"), x(hi), 2.0)
            })
            .count();
        assert_eq!(
            bands, 1,
            "stage {stage}: one image band at {lo}..{hi} Hz in {colour}"
        );
        // Its fs/2 line: a vertical polyline in its colour.
        let half = lines
            .iter()
            .filter(|l| l.attribute("stroke") == Some(colour.as_str()))
            .filter(|l| {
                let p = points(l);
                p.len() == 2 && p.iter().all(|q| close(q.0, x(fs / 2.0), 1.5)) && p[0].1 != p[1].1
            })
            .count();
        assert!(
            half >= 1,
            "stage {stage}: an fs/2 line at {} Hz in {colour}",
            fs / 2.0
        );
        // Stage 1's images leave out the multiples of 2 (the ADC's own), stage 2's the
        // multiples of 4: no stage-1 band around 2 × 51.2 kHz.
        if stage == 1 {
            assert!(
                !rects
                    .iter()
                    .any(|r| r.attribute("fill") == Some(colour.as_str())
                        && close(attr(r, "x"), x(102_400.0 - 2e3), 2.0)),
                "stage 1 redraws the ADC's image"
            );
        }
    }
    // The modulator images, in their own colour, from 6.5536 MHz − 2 kHz.
    let grey = colour_hex(stage_colour(None));
    assert!(
        rects
            .iter()
            .any(|r| r.attribute("fill") == Some(grey.as_str())
                && close(attr(r, "x"), x(6_553_600.0 - 2e3), 2.0)),
        "a modulator image band"
    );
    // The worst modulator image has its own marker: a square at 6.5536 MHz − 2 kHz,
    // labelled with the analog chain's attenuation there, 10·log10(1 + (f/20 kHz)^8) =
    // 201.23 dB (4th-order Butterworth, closed form).
    let closed = 10.0 * (1.0 + (6_551_600.0f64 / 20e3).powi(8)).log10();
    assert!((closed - 201.23).abs() < 0.005, "{closed}");
    text_x("modulator: f_mod − B = 6.5516 MHz: 201.23 dB (analog chain alone)");
    let square = rects
        .iter()
        .filter(|r| r.attribute("fill") == Some("#3C3C3C"))
        .filter(|r| close(attr(r, "width"), 12.0, 0.5) && close(attr(r, "height"), 12.0, 0.5))
        .filter(|r| close(attr(r, "x") + 6.0, x(6_551_600.0), 2.0))
        .count();
    assert_eq!(square, 1, "one modulator marker at 6.5516 MHz");
    // One legend entry per rate change and one for the modulator images.
    for legend in [
        "ADC at 102.4 kHz: images k·fs ± B fold into the band; solid line fs/2",
        "stage 1 (÷2) at 51.2 kHz: images k·fs ± B fold into the band; solid line fs/2",
        "stage 2 (÷4) at 12.8 kHz: images k·fs ± B fold into the band; solid line fs/2",
        "modulator images k·f_mod ± B: only the analog chain protects there",
        "worst modulator image: what the analog chain alone gives there (red: too little)",
    ] {
        text_x(legend);
    }
}

fn case_path(rel: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/cases")
        .join(rel)
}

#[test]
fn inspect_shows_each_digital_delay_the_analog_group_delay_and_the_latency() {
    // tests/cases/group-phase/sinc-vs-direct: `span-sinc` samples at 25.6 kHz through an
    // 8th-order Butterworth at 500 Hz and decimates by 8 through a 5th-order sinc.
    let dir = scratch("delays");
    let rig = case_path("group-phase/sinc-vs-direct.rig.yaml");
    let rig = rig.to_str().unwrap();
    let o = foldcheck(&dir, &["inspect", rig, "span-sinc", "--format", "json"]);
    assert_eq!(o.status.code(), Some(0), "stderr: {}", stderr(&o));
    let v: Value = serde_json::from_str(&stdout(&o)).expect("valid JSON");
    let a = &v["analysis"];
    // The sinc delays by N·(M − 1)/2 = 17.5 samples of its 25.6 kHz input rate
    // (Hogenauer 1981, from memory; numpy centroid check in tests/reference/cic_delay.py).
    let d = &a["rate_changes"][1]["delays"][0];
    assert_eq!(d["samples"].as_f64(), Some(17.5));
    assert_eq!(d["samples_rate_hz"].as_f64(), Some(25_600.0));
    assert!(close(
        d["delay_s"].as_f64().unwrap(),
        17.5 / 25_600.0,
        1e-15
    ));
    assert_eq!(
        a["rate_changes"][0]["delays"].as_array().map(Vec::len),
        Some(0)
    );
    // Group delay of butter(8, 2π·500, analog=True, output='zpk') from scipy's poles
    // (Σ −Re p / (Re p² + (ω − Im p)²)), cross-checked against a numerical derivative
    // of the unwrapped freqs_zpk phase (agreement 1e-11 s), computed with scipy 1.17.1
    // when this test was written. At DC it is also the closed form
    // 1 / (2π·fc·sin(π/2n)) of a Butterworth filter (from memory).
    let lat = &a["latency"];
    let dc = lat["analog_group_delay_dc_s"].as_f64().unwrap();
    let closed = 1.0 / (2.0 * std::f64::consts::PI * 500.0 * (std::f64::consts::PI / 16.0).sin());
    assert!(close(dc, 0.001_631_602_648_938_555_7, 1e-15), "{dc}");
    assert!(close(dc, closed, 1e-15), "{dc} vs {closed}");
    let edge = lat["analog_group_delay_band_edge_s"].as_f64().unwrap();
    assert!(close(edge, 0.002_379_869_309_684_910_3, 1e-15), "{edge}");
    assert_eq!(lat["digital_delays_known"].as_bool(), Some(true));
    assert!(close(
        lat["digital_delay_s"].as_f64().unwrap(),
        17.5 / 25_600.0,
        1e-15
    ));
    assert!(close(
        lat["latency_s"].as_f64().unwrap(),
        17.5 / 25_600.0 + 0.001_631_602_648_938_555_7,
        1e-15
    ));
    // The text shows the same numbers.
    let o = foldcheck(&dir, &["inspect", rig, "span-sinc"]);
    let text = stdout(&o);
    assert!(
        text.contains(
            "  delay             683.594 µs (17.5 samples at 25.6 kHz), decimation stage 1: 5th-order sinc\n"
        ),
        "{text}"
    );
    assert!(
        text.contains("  group delay       1.6316 ms at DC, 2.37987 ms at 400 Hz"),
        "{text}"
    );
    assert!(
        text.contains(
            "  latency           2.3152 ms (digital 683.594 µs + analog at DC 1.6316 ms)"
        ),
        "{text}"
    );
}

#[test]
fn a_delta_sigma_converter_has_its_own_modulator_row() {
    // tests/cases/alias-rejection/delta-sigma-first-order: 64 × 51.2 kHz = 3.2768 MHz;
    // the first image starts at 3.2568 MHz, where a 1st-order Butterworth at 100 kHz
    // gives 10·log10(1 + (3.2568 MHz / 100 kHz)²) = 30.26 dB (closed form,
    // docs/model.md §4). An unnamed digital filter gives no delay.
    let dir = scratch("modulator-row");
    let rig = case_path("alias-rejection/delta-sigma-first-order.rig.yaml");
    let rig = rig.to_str().unwrap();
    let o = foldcheck(&dir, &["inspect", rig, "hull-accel", "--format", "json"]);
    assert_eq!(o.status.code(), Some(0), "stderr: {}", stderr(&o));
    let v: Value = serde_json::from_str(&stdout(&o)).expect("valid JSON");
    assert_eq!(
        v["module"]["modulator"].as_str(),
        Some("64 × the ADC rate = 3.2768 MHz")
    );
    let m = &v["analysis"]["rate_changes"][0]["modulator"];
    assert_eq!(m["rate_hz"].as_f64(), Some(3_276_800.0));
    assert_eq!(m["fold_from_hz"].as_f64(), Some(3_256_800.0));
    let closed = 10.0 * (1.0 + (3_256_800.0f64 / 100e3).powi(2)).log10();
    assert!(close(m["attenuation_db"].as_f64().unwrap(), closed, 1e-9));
    assert_eq!(m["pass"].as_bool(), Some(false));
    let d = &v["analysis"]["rate_changes"][0]["delays"][0];
    assert!(d["delay_s"].is_null() && d["samples"].is_null());
    assert_eq!(
        v["analysis"]["latency"]["digital_delays_known"].as_bool(),
        Some(false)
    );
    let o = foldcheck(&dir, &["inspect", rig, "hull-accel"]);
    let text = stdout(&o);
    for want in [
        "delta-sigma modulator at 64 × the ADC rate = 3.2768 MHz",
        "  folds from        f_mod − B = 3.2568 MHz\n",
        "  attenuation       30.26 dB (analog chain alone)\n",
        "  modulator images  FAIL, 29.74 dB short\n",
        "converter filter: digital filter (100 dB stopband)",
        "  delay             unknown (no `delay` or `delay-samples`: counted as 0)",
    ] {
        assert!(text.contains(want), "{want:?} missing from\n{text}");
    }
}
