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
