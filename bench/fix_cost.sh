#!/usr/bin/env bash
# What verifying fixes costs: one rig of N channels, K of them with a misspelt clock
# name (each a fix to verify), against the same rig spelt right, timed side by side.
#
#   bench/fix_cost.sh                 # N=2000 K=200, release build
#   N=20000 K=2000 bench/fix_cost.sh
#   FC=target/debug/foldcheck bench/fix_cost.sh   # another binary
#
# Prints the median wall time of `check --format json` on each rig over REPEATS runs
# (default 5) and their ratio. Verification tries a rig's fixes together (one extra run
# of the rig) and splits only when the combination adds a finding, so the ratio should
# stay near 2, whatever K is.
set -euo pipefail
here=$(cd "$(dirname "$0")" && pwd)
root=$(dirname "$here")
n=${N:-2000}
k=${K:-200}
repeats=${REPEATS:-5}
if [ -z "${FC:-}" ]; then
    (cd "$root" && cargo build --release --quiet)
    FC=$root/target/release/foldcheck
fi
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
mkdir -p "$work/typos" "$work/clean"
python3 - "$n" "$k" "$work" <<'PY'
import sys
n, k, work = int(sys.argv[1]), int(sys.argv[2]), sys.argv[3]
def rig(typos):
    s = "format: 1\nrig: bench-fix\nclocks:\n  - { name: base, frequency: 25.6 kHz }\nchannels:\n"
    step = max(1, n // typos) if typos else 0
    for i in range(n):
        clock = "bsae" if typos and i % step == 0 and i // step < typos else "base"
        s += (f"  - {{ name: c{i}, clock: {clock}, band: 5 kHz, filters: "
              "[{ response: butterworth, order: 8, cutoff: 6 kHz }] }\n")
    return s
open(f"{work}/typos/bench.rig.yaml", "w").write(rig(k))
open(f"{work}/clean/bench.rig.yaml", "w").write(rig(0))
PY
median() { sort -n | awk '{a[NR]=$1} END {print a[int((NR+1)/2)]}'; }
time_one() {
    for _ in $(seq "$repeats"); do
        local t0 t1
        t0=$(date +%s%N)
        "$FC" check --format json "$1" > "$work/out.json" || true
        t1=$(date +%s%N)
        echo $(( (t1 - t0) / 1000000 ))
    done | median
}
fixes=$("$FC" check --format json "$work/typos/bench.rig.yaml" | grep -c '"fix"' || true)
clean=$(time_one "$work/clean/bench.rig.yaml")
typos=$(time_one "$work/typos/bench.rig.yaml")
echo "channels=$n misspelt=$k verified-fixes=$fixes"
echo "clean rig:         ${clean} ms"
echo "rig with fixes:    ${typos} ms"
python3 -c "print(f'ratio:             {$typos / max($clean, 1):.2f}')"
