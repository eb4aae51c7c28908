#!/usr/bin/env bash
# Peak memory of `foldcheck check` for two builds side by side in one run: each
# campaign is checked by each build in turn, REPEATS rounds (default 3), and the
# largest maximum resident set of the rounds is reported per build, with the ratio.
# Each run's output is compared between the builds too (it must be byte-identical).
#
#   bench/mem.sh OLD_BINARY NEW_BINARY DIR...
#   FORMAT=sarif REPEATS=5 bench/mem.sh old/foldcheck target/release/foldcheck bench/out/shape-heavy
#
# Needs /usr/bin/time (Debian package `time`). Campaigns come from bench/gen.py.
set -euo pipefail
if [ $# -lt 3 ]; then
    echo "usage: $0 OLD_BINARY NEW_BINARY DIR..." >&2
    exit 2
fi
old=$1
new=$2
shift 2
format=${FORMAT:-json}
repeats=${REPEATS:-3}
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
echo "| campaign | format | old peak MB | new peak MB | new / old | output |"
echo "|---|---|---:|---:|---:|---|"
for dir in "$@"; do
    peak_old=0
    peak_new=0
    same=identical
    for _ in $(seq "$repeats"); do
        for which in old new; do
            bin=${!which}
            /usr/bin/time -f %M -o "$tmp/rss" "$bin" check --format "$format" --color never "$dir" \
                >"$tmp/out-$which" 2>/dev/null || true
            kb=$(tail -n 1 "$tmp/rss")
            if [ "$which" = old ] && [ "$kb" -gt "$peak_old" ]; then peak_old=$kb; fi
            if [ "$which" = new ] && [ "$kb" -gt "$peak_new" ]; then peak_new=$kb; fi
        done
        # The human summary ends with the elapsed time: compare without it.
        sed -i -E 's/\([0-9]+ ms\)$//' "$tmp/out-old" "$tmp/out-new"
        cmp -s "$tmp/out-old" "$tmp/out-new" || same=DIFFERENT
    done
    awk -v d="$(basename "$dir")" -v f="$format" -v o="$peak_old" -v n="$peak_new" -v s="$same" \
        'BEGIN { printf "| %s | %s | %.0f | %.0f | %.2f | %s |\n", d, f, o / 1024, n / 1024, n / o, s }'
done
