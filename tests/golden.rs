//! One golden human report per rule family (`tests/golden/<family>.rig.yaml`, all
//! including `tests/golden/catalog/fen-lab.yaml`, pinned in `<family>.human`): the whole
//! rendering of findings whose labels span the rig and its catalog. Each finding must
//! open with the position of its primary span, as `--format json` gives it. Run with
//! `FOLDCHECK_UPDATE=1 cargo test --test golden` to rewrite the pinned reports; review
//! the diff before committing.

mod common;

use std::fs;
use std::path::Path;

/// The families, with the rules each golden rig must raise.
const FAMILIES: &[(&str, &[&str])] = &[
    (
        "input",
        &[
            "schema",
            "quantity",
            "unknown-reference",
            "duplicate-name",
            "clock-cycle",
        ],
    ),
    (
        "rates",
        &[
            "sampling-margin",
            "module-rate",
            "oversampling",
            "sensor-band",
        ],
    ),
    ("alias", &["alias-rejection", "disturbance-alias"]),
    (
        "filters",
        &["passband-droop", "sensor-band", "missing-band"],
    ),
    ("groups", &["group-phase", "group-clock"]),
    ("budget", &["throughput", "storage"]),
    ("housekeeping", &["unused-clock", "suppression"]),
];

#[test]
fn every_rule_family_has_a_golden_human_report() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/golden");
    let update = std::env::var_os("FOLDCHECK_UPDATE").is_some();
    let time = regex::Regex::new(r"\(\d+ ms\)\n$").unwrap();
    let mut failures = Vec::new();
    for (family, rules) in FAMILIES {
        let rig = format!("{family}.rig.yaml");
        let out = common::run_in(&root, &["check", "--color", "never", &rig]);
        let human = String::from_utf8(out.stdout).unwrap();
        let human = time.replace(&human, "(… ms)\n").into_owned();
        let (report, _) = common::check_json(&root, &[&rig]);

        let raised = common::rules_of(&report);
        for rule in *rules {
            if !raised.iter().any(|r| r == rule) {
                failures.push(format!(
                    "{family}: the golden rig no longer raises `{rule}`"
                ));
            }
        }
        let opening = common::opening_positions(&human);
        let primary = common::json_positions(&report);
        if opening != primary {
            failures.push(format!(
                "{family}: findings do not open with their primary position\n human: {opening:?}\n json:  {primary:?}"
            ));
        }
        let pinned = root.join(format!("{family}.human"));
        if update {
            fs::write(&pinned, &human).unwrap();
            continue;
        }
        let expected = fs::read_to_string(&pinned).unwrap_or_default();
        if expected != human {
            failures.push(format!(
                "{}:\n--- expected\n{expected}--- actual\n{human}",
                pinned.display()
            ));
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}
