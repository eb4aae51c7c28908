//! Fuzz the whole pipeline on one in-memory rig: YAML, schema and quantities, includes,
//! resolution, every rule, suppressions, and every renderer, checking the invariants of
//! `foldcheck_fuzz::check` on every input (arbitrary bytes, read as UTF-8 lossily).

#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    foldcheck_fuzz::check(&String::from_utf8_lossy(data));
});
