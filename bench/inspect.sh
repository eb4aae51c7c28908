#!/usr/bin/env bash
# `inspect` of one channel on a 30- and a 3 000-channel rig, with `check` of the same
# rigs beside it, side by side in one run (bench/inspect.py; ratios only). Builds the
# release binary first. With PROFILE=1 it also records where `inspect` spends its time
# on the 3 000-channel rig (`perf record`, Debian package `linux-perf`) and prints the
# top of the report: what grows with the rig besides reading the file.
#
#   bench/inspect.sh                 # 7 runs per measurement (the median is reported)
#   bench/inspect.sh --repeats 15
#   PROFILE=1 bench/inspect.sh
set -euo pipefail
here=$(cd "$(dirname "$0")" && pwd)
root=$(dirname "$here")
cd "$root"
cargo build --release --quiet
echo "load average before: $(cut -d' ' -f1-3 /proc/loadavg)"
python3 "$here/inspect.py" "$root/target/release/foldcheck" "$@" | tee "$here/out/inspect.md"
echo "load average after: $(cut -d' ' -f1-3 /proc/loadavg)"
if [ "${PROFILE:-0}" = 1 ]; then
    rig=$here/out/inspect/rig-3000/rigs/r-00000.rig.yaml
    perf record -q -F 2000 -g -o "$here/out/inspect.perf" -- \
        sh -c "for i in 1 2 3 4 5; do '$root/target/release/foldcheck' inspect '$rig' ch-000001 >/dev/null; done"
    perf report -i "$here/out/inspect.perf" --no-children --stdio --percent-limit 2 \
        --sort symbol 2>/dev/null | grep -v '^#' | grep -v '^$' | head -60
fi
