#!/usr/bin/env bash
# Fuzz the whole pipeline (YAML, schema, quantities, includes, resolution, every rule,
# every renderer) for SECONDS seconds (default 60).
#
#   fuzz/run.sh 1800
#
# One job, niced: the machine is shared. Needs cargo-fuzz (`cargo install cargo-fuzz`)
# and a nightly toolchain for the sanitizer flags; where only stable is installed the
# script sets RUSTC_BOOTSTRAP=1, which lets stable accept them.
#
# Seeds (the example rigs, the catalog, every rule's failing and passing example) are
# written to fuzz/corpus/lint first; the corpus grows there between runs. Crashes land in
# fuzz/artifacts/lint; libFuzzer's log is fuzz/fuzz-0.log. An input slower than 30 s is a
# crash (-timeout=30: instrumented with ASan the human renderer is slow; inputs over
# 2 s are logged as slow units), as is one needing more than 2 GB (-rss_limit_mb).
set -euo pipefail
secs=${1:-60}
here=$(cd "$(dirname "$0")" && pwd)
root=$(dirname "$here")
corpus=$here/corpus/lint
mkdir -p "$corpus" "$here/artifacts/lint"

(cd "$root" && FOLDCHECK_FUZZ_SEEDS="$corpus" cargo test --quiet --test fuzz_seeds \
    seed_corpus_holds_every_rule_example_and_example_rig -- --nocapture | grep '^wrote' || true)

toolchain=()
if rustup toolchain list 2>/dev/null | grep -q '^nightly'; then
    toolchain=(+nightly)
else
    export RUSTC_BOOTSTRAP=1
fi

cd "$here"
nice -n 10 cargo "${toolchain[@]}" fuzz build lint
nice -n 10 cargo "${toolchain[@]}" fuzz run lint "$corpus" -- \
    -max_total_time="$secs" -jobs=1 -workers=1 \
    -dict="$here/rig.dict" -max_len=65536 \
    -timeout=30 -report_slow_units=2 -rss_limit_mb=2048 \
    -artifact_prefix="$here/artifacts/lint/" || status=$?
log=$here/fuzz-0.log
if [ -f "$log" ]; then
    # The last status line: executions, coverage, corpus size.
    grep -E '^#[0-9]+' "$log" | tail -1
    grep -E 'SUMMARY|panicked|Slow unit|Test unit written' "$log" | sort | uniq -c || true
fi
echo "artifacts: $(find "$here/artifacts/lint" -type f | wc -l)"
exit "${status:-0}"
