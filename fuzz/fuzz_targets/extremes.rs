//! Fuzz the model and the rules with structurally valid rigs whose values sit at the
//! extremes (`foldcheck_fuzz::rig`), checking the same invariants as the `lint` target,
//! among them that every channel is analysed or named in a finding.

#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|rig: foldcheck_fuzz::rig::Rig| {
    foldcheck_fuzz::check(&rig.text());
});
