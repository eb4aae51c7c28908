#!/usr/bin/env bash
# CPU cost of `check --format json` for two or more builds, side by side: the builds run
# alternately (A B A B …) on the same campaign, on one thread (RAYON_NUM_THREADS=1), and
# the CPU time of each run (user + system, from /usr/bin/time) is kept. CPU time is
# stretched less than wall time on a shared, busy machine; read the ratios of one run.
#
#   bench/cpu_ab.sh CAMPAIGN BUILD_A BUILD_B [BUILD_C …]
#   RUNS=9 bench/cpu_ab.sh bench/out/c10k /tmp/foldcheck-before target/release/foldcheck
#
# Make the campaigns with `python3 bench/gen.py --out DIR --sizes 10k --single "" --shape`
# (c10k, shape-heavy, shape-clean). Prints each build's median CPU and wall time over RUNS
# runs (default 5), every run's CPU time, and the ratio of each build's median CPU to the
# first build's. It also checks that every build prints the same JSON (a speed change
# must not change the output): a build whose output differs is marked.
set -euo pipefail
if [ $# -lt 3 ]; then
    sed -n '2,14p' "$0" >&2
    exit 2
fi
campaign=$1
shift
runs=${RUNS:-5}
command -v /usr/bin/time >/dev/null || { echo "needs /usr/bin/time (Debian package time)" >&2; exit 2; }
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
n=0
for b in "$@"; do
    # Exit status 1 means findings, which is expected here.
    RAYON_NUM_THREADS=1 "$b" check --format json "$campaign" >"$work/out.$n.json" 2>/dev/null || [ $? -eq 1 ]
    n=$((n + 1))
done
for i in $(seq "$runs"); do
    n=0
    for b in "$@"; do
        RAYON_NUM_THREADS=1 /usr/bin/time -o "$work/t" -f "%U %S %e" \
            "$b" check --format json "$campaign" >/dev/null 2>&1 || true
        # The last line: a failing status adds a line before it.
        tail -n 1 "$work/t" | awk '{ printf "%.3f %.3f\n", $1 + $2, $3 }' >>"$work/times.$n"
        n=$((n + 1))
    done
done
python3 - "$work" "$campaign" "$@" <<'PY'
import statistics, sys, filecmp
work, campaign, builds = sys.argv[1], sys.argv[2], sys.argv[3:]
first = None
print(f"campaign {campaign}, {len(builds)} builds, alternating runs, one thread")
print("| build | median CPU s | median wall s | CPU ÷ first | CPU s of each run | output |")
print("|---|---:|---:|---:|---|---|")
for n, b in enumerate(builds):
    rows = [tuple(map(float, l.split())) for l in open(f"{work}/times.{n}")]
    cpu = statistics.median(r[0] for r in rows)
    wall = statistics.median(r[1] for r in rows)
    first = first or cpu
    same = "same" if filecmp.cmp(f"{work}/out.0.json", f"{work}/out.{n}.json", shallow=False) else "DIFFERS"
    runs = ", ".join(f"{r[0]:.2f}" for r in rows)
    print(f"| {b} | {cpu:.3f} | {wall:.3f} | {cpu / first:.2f} | {runs} | {same} |")
PY
echo "load average: $(cut -d' ' -f1-3 /proc/loadavg)"
