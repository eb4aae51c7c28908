#!/usr/bin/env bash
# `foldcheck report` on a 5 000-channel campaign (bench/gen.py, 25 rig files of 200
# channels), side by side with `check` on the same campaign in the same run: wall time
# of each (best of REPEATS), the ratio, and the size of the HTML file with the default
# plots (channels with an error or warning) and of the CSV. Target: under 2 s and under
# 10 MB on the development machine (a release build).
#
#   bench/report.sh             # builds the release binary if needed
#   REPEATS=5 bench/report.sh
set -euo pipefail
here=$(cd "$(dirname "$0")" && pwd)
root=$(dirname "$here")
cd "$root"
bin=${FOLDCHECK:-target/release/foldcheck}
[ -x "$bin" ] || cargo build --release --quiet
camp=$here/out/c5k
[ -d "$camp" ] || python3 "$here/gen.py" --out "$here/out" --sizes 5k --single ''
out=$here/out/report
mkdir -p "$out"
best() { # best wall time in seconds of "$@", REPEATS times
  local b=
  for _ in $(seq "${REPEATS:-3}"); do
    local s e t
    s=$(date +%s.%N)
    "$@" > /dev/null 2>&1 || true
    e=$(date +%s.%N)
    t=$(echo "$e - $s" | bc -l)
    if [ -z "$b" ] || [ "$(echo "$t < $b" | bc -l)" = 1 ]; then b=$t; fi
  done
  printf '%.3f' "$b"
}
t_check=$(best "$bin" check "$camp" --format json)
t_html=$(best "$bin" report "$camp" --output "$out/c5k.html")
t_csv=$(best "$bin" report "$camp" --format csv --output "$out/c5k.csv")
size_html=$(stat -c %s "$out/c5k.html")
size_csv=$(stat -c %s "$out/c5k.csv")
rows=$(($(wc -l < "$out/c5k.csv") - 1))
{
  echo "| 5 000 channels, 25 rigs | wall time (best of ${REPEATS:-3}) | ÷ check | size |"
  echo "|---|---|---|---|"
  echo "| check --format json | ${t_check} s | 1 | |"
  echo "| report (HTML, default plots) | ${t_html} s | $(printf '%.2f' "$(echo "$t_html / $t_check" | bc -l)") | $((size_html / 1000)) kB |"
  echo "| report --format csv | ${t_csv} s | $(printf '%.2f' "$(echo "$t_csv / $t_check" | bc -l)") | $((size_csv / 1000)) kB, $rows rows |"
} | tee "$out/report.md"
