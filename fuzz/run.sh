#!/usr/bin/env bash
# Fuzz foldcheck for SECONDS seconds (default 60) with one target (default: both, one
# after the other, SECONDS each):
#
#   fuzz/run.sh 1800            # lint, then extremes, 30 minutes each
#   fuzz/run.sh 1800 extremes   # only the generator target
#
# `lint` feeds arbitrary bytes through the whole pipeline (YAML, schema, quantities,
# includes, resolution, every rule, every renderer); `extremes` feeds structurally valid
# rigs with extreme values (fuzz/src/rig.rs). Both check the invariants of
# fuzz/src/lib.rs (`check`).
#
# One job at a time, niced (the build by 10, the fuzzer by 5): the machine is shared.
# (Where the kernel groups processes by session, "autogroup", nice only ranks processes
# of one session; `echo 19 > /proc/<pid>/autogroup` lowers a whole session's share.)
#
# Built for executions per second: without comparison tracing (`--no-trace-compares`)
# and run with libFuzzer's classic schedule (`-entropic=0`); side by side on this
# project's corpus the two gave 2.2× and 1.45× the executions, with the same coverage
# after 90 s (fuzz/README.md). `TRACE_COMPARES=1` builds with comparison tracing, which
# guides mutations towards the constants the code compares with (slower; the corpus
# and the dictionary carry what earlier traced runs found).
# Needs cargo-fuzz (`cargo install cargo-fuzz`) and a nightly toolchain; where only
# stable is installed the script sets RUSTC_BOOTSTRAP=1, which lets stable accept the
# flags. The targets are built without a
# sanitizer (`-s none`: the code is safe Rust, where a sanitizer finds nothing that a
# panic does not, at a third of the speed) and with debug assertions and overflow checks
# (`-a`). The build has its own target directory, fuzz/target.
#
# Seeds for `lint` (the example rigs, the catalog, every rule's failing and passing
# example) are written to fuzz/corpus/lint first; the committed, minimised corpora of
# earlier runs in fuzz/seeds/<target> are read as well; corpora grow in
# fuzz/corpus/<target> (ignored) between runs. Crashes land in fuzz/artifacts/<target>;
# libFuzzer's log is fuzz/fuzz-<target>.log. An input slower than 30 s is a crash (-timeout=30; inputs over
# 2 s are logged as slow units), as is one needing more than 2 GB (-rss_limit_mb).
set -euo pipefail
secs=${1:-60}
targets=${2:-lint extremes}
here=$(cd "$(dirname "$0")" && pwd)
root=$(dirname "$here")

toolchain=()
if rustup toolchain list 2>/dev/null | grep -q '^nightly'; then
    toolchain=(+nightly)
else
    export RUSTC_BOOTSTRAP=1
fi

mkdir -p "$here/corpus/lint"
(cd "$root" && FOLDCHECK_FUZZ_SEEDS="$here/corpus/lint" cargo test --quiet --test fuzz_seeds \
    seed_corpus_holds_every_rule_example_and_example_rig -- --nocapture | grep '^wrote' || true)

cd "$here"
trace=(--no-trace-compares)
[ "${TRACE_COMPARES:-0}" = 1 ] && trace=()
CARGO_INCREMENTAL=0 nice -n 10 cargo "${toolchain[@]}" fuzz build -O -a -s none "${trace[@]}"
bin=$here/target/x86_64-unknown-linux-gnu/release
status=0
for t in $targets; do
    corpus=$here/corpus/$t
    mkdir -p "$corpus" "$here/artifacts/$t"
    log=$here/fuzz-$t.log
    dict=()
    [ "$t" = lint ] && dict=(-dict="$here/rig.dict")
    seeds=()
    [ -d "$here/seeds/$t" ] && seeds=("$here/seeds/$t")
    # `extremes` reaches more of the format with longer inputs from the start (libFuzzer
    # otherwise grows them slowly from a few dozen bytes).
    len=(-max_len=65536)
    [ "$t" = extremes ] && len=(-len_control=0 -max_len=4096)
    nice -n 5 "$bin/$t" "$corpus" "${seeds[@]}" "${dict[@]}" "${len[@]}" \
        -max_total_time="$secs" -entropic=0 -print_final_stats=1 \
        -timeout=30 -report_slow_units=2 -rss_limit_mb=2048 \
        -artifact_prefix="$here/artifacts/$t/" >"$log" 2>&1 || status=$?
    echo "== $t (status $status)"
    # The last status line (executions, coverage, corpus) and the final stats.
    grep -E '^#[0-9]+' "$log" | tail -1 || true
    grep -E '^stat::(number_of_executed_units|average_exec_per_sec|peak_rss_mb)' "$log" || true
    grep -E 'SUMMARY|panicked|Slow unit|Test unit written' "$log" | sort | uniq -c || true
    echo "artifacts: $(find "$here/artifacts/$t" -type f | wc -l)"
done
exit "$status"
