//! Regressions found by the benchmark, named after what broke.

use foldcheck::campaign::{self, Options};
use std::path::PathBuf;

#[test]
fn sharing_count_in_help_equals_the_channels_under_each_clock() {
    // Regression: the rate help counted the channels sharing a clock by walking every
    // channel for every finding (quadratic on a large rig: a 20 000-channel rig spent a
    // third of its time there). The count is now worked out once per rig; it must equal
    // the list it replaces, for every clock of the example rigs.
    let dir = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("examples");
    let opts = Options {
        keep_rigs: true,
        ..Options::default()
    };
    let out = campaign::run(&[dir], &opts).unwrap();
    let mut clocks = 0;
    for r in &out.rigs {
        let rig = r.rig.as_ref().expect("the example rigs resolve");
        for clock in 0..rig.clocks.len() {
            assert_eq!(rig.fanout[clock], rig.channels_under(clock).len());
            clocks += 1;
        }
    }
    assert!(clocks > 10, "only {clocks} clocks checked");
}

#[test]
fn human_report_locates_findings_deep_in_a_large_file() {
    // Regression: the human report handed miette a copy of the whole file for every
    // finding, and miette scanned it from the start to find the lines (a 100 000-channel
    // rig took 281 s in the human format, 7 s in JSON). The renderer now reads a window
    // of lines; every report must still point where the JSON report points.
    use foldcheck::campaign::lint_text;
    use foldcheck::report::{human, json};
    let mut text = String::from(
        "format: 1\nrig: deep\nclocks:\n  - name: osc\n    frequency: 44.1 kHz\nchannels:\n",
    );
    for i in 0..400 {
        // a 20 kHz band at 44.1 kHz: a sampling-margin warning on every channel
        text.push_str(&format!(
            "  - name: ch-{i}\n    clock: osc\n    band: 20 kHz\n"
        ));
    }
    let (sources, findings) = lint_text("deep.rig.yaml", &text);
    assert!(findings.len() >= 400, "{} findings", findings.len());
    let v: serde_json::Value =
        serde_json::from_str(&json::render(&sources, &findings, 1, 400)).unwrap();
    let from_json: Vec<String> = v["findings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| format!("deep.rig.yaml:{}:{}", f["line"], f["column"]))
        .collect();
    let out = human::render(
        &sources,
        &findings,
        1,
        400,
        std::time::Duration::ZERO,
        human::Color::Never,
    );
    let from_human: Vec<String> = out
        .lines()
        .filter_map(|l| {
            l.split_once("╭─[")
                .map(|(_, r)| r.trim_end_matches(']').to_string())
        })
        .collect();
    // Each report starts with its primary place; a label far from it gets an excerpt of
    // its own. So the primaries appear in order, and every excerpt is at some label.
    let mut rest = from_human.iter();
    for want in &from_json {
        assert!(rest.any(|h| h == want), "{want} missing or out of order");
    }
    let file = sources.get(findings[0].primary.span.file);
    let labels: std::collections::HashSet<String> = findings
        .iter()
        .flat_map(|f| std::iter::once(&f.primary).chain(&f.secondary))
        .map(|l| {
            let (line, col) = file.line_col(l.span.start);
            format!("deep.rig.yaml:{line}:{col}")
        })
        .collect();
    for h in &from_human {
        assert!(labels.contains(h), "an excerpt at {h}, where no label is");
    }
    // The excerpt under the last report shows the line it points at, numbered.
    let last = findings.last().unwrap();
    let (line, _) = sources
        .get(last.primary.span.file)
        .line_col(last.primary.span.start);
    let want = text.lines().nth(line - 1).unwrap();
    assert!(
        out.contains(&format!("{line} │ {want}")),
        "no excerpt of line {line}"
    );
}
