#!/usr/bin/env bash
# The benchmark: full lint against the YAML floor and PyYAML, side by side in one run.
#
#   bench/run.sh            # all campaigns (1k, 10k, 100k, 1M channels, one 100k file)
#   bench/run.sh c1k c10k   # some of them
#
# Environment: REPEATS (default 3; the median wall time is reported, the largest peak
# memory), REPEATS_LARGE for campaigns over 100 MB (default 1), SIZES for bench/gen.py
# (default 1k,10k,100k,1M).
#
# Tools, each on the same files:
#   lint      foldcheck check --format json DIR            (all cores, as users run it)
#   lint-1t   the same with RAYON_NUM_THREADS=1            (one core)
#   human     foldcheck check --color never DIR            (the default format)
#   tree      foldcheck's YAML stage alone (the spanned tree, from events when it can)
#   saphyr    the same tree through serde-saphyr alone (the reader it falls back to)
#   events    serde-saphyr's event parser alone, spans on every event
#   libyaml   libyaml's event parser alone, marks on every event
#   pyyaml    python3: yaml.load(f, Loader=yaml.CSafeLoader) per file, one core
# Wall time is measured around the whole process (start-up included); peak memory is
# the maximum resident set from /usr/bin/time. Results: stdout and bench/out/results.md.
set -euo pipefail
here=$(cd "$(dirname "$0")" && pwd)
root=$(dirname "$here")
out=$here/out
repeats=${REPEATS:-3}
cd "$root"

command -v /usr/bin/time >/dev/null || { echo "needs /usr/bin/time (apt-get install time)" >&2; exit 2; }
python3 -c 'import yaml; yaml.CSafeLoader' 2>/dev/null || pip install --quiet pyyaml
python3 -c 'import yaml; yaml.CSafeLoader' || { echo "PyYAML has no C loader (libyaml)" >&2; exit 2; }

cargo build --release --quiet
cargo bench --bench yaml_floor --no-run --quiet 2>/dev/null
floor=$(cargo bench --bench yaml_floor --no-run --message-format=json 2>/dev/null \
    | python3 -c 'import json,sys
for l in sys.stdin:
    m = json.loads(l)
    if m.get("reason") == "compiler-artifact" and m["target"]["name"] == "yaml_floor" and m.get("executable"):
        print(m["executable"])')
fc=$root/target/release/foldcheck

if [ ! -d "$out/c1k" ]; then
    python3 "$here/gen.py" --out "$out" --sizes "${SIZES:-1k,10k,100k,1M}" --single 100k
fi
if [ $# -gt 0 ]; then sets=("$@"); else
    sets=(); for s in c1k c10k c100k c1M single-100k; do [ -d "$out/$s" ] && sets+=("$s"); done
fi

# run NAME DIR CMD...: median wall (s) and peak RSS (kB) over $repeats runs -> "wall rss"
measure() {
    local walls=() rss=0 t0 t1 r code
    for _ in $(seq "$reps"); do
        t0=$(date +%s%N)
        set +e
        /usr/bin/time -f %M -o "$out/.rss" "$@" > "$out/.stdout" 2> "$out/.stderr"
        code=$?
        set -e
        t1=$(date +%s%N)
        if [ "$code" -ne 0 ] && [ "$code" -ne 1 ]; then
            echo "failed ($code): $*" >&2; cat "$out/.stderr" >&2; exit 2
        fi
        walls+=("$(( t1 - t0 ))")
        r=$(tail -1 "$out/.rss"); [ "$r" -gt "$rss" ] && rss=$r
    done
    local median
    median=$(printf '%s\n' "${walls[@]}" | sort -n | sed -n "$(( (reps + 1) / 2 ))p")
    echo "$(python3 -c "print($median / 1e9)") $rss"
}

results=$out/results.tsv
: > "$results"
for s in "${sets[@]}"; do
    dir=$out/$s
    bytes=$(find "$dir" -name '*.yaml' -printf '%s\n' | awk '{s+=$1} END {print s}')
    files=$(find "$dir" -name '*.yaml' | wc -l)
    reps=$repeats
    [ "$bytes" -gt 100000000 ] && reps=${REPEATS_LARGE:-1}
    channels=$("$fc" check --format json "$dir" | python3 -c 'import json,sys; print(json.load(sys.stdin)["channels"])' || true)
    for tool in lint lint-1t human tree saphyr events libyaml pyyaml; do
        case $tool in
            lint) m=$(measure "$fc" check --format json "$dir") ;;
            lint-1t) m=$(RAYON_NUM_THREADS=1 measure "$fc" check --format json "$dir") ;;
            human) m=$(measure "$fc" check --color never "$dir") ;;
            tree|saphyr|events|libyaml) m=$(measure "$floor" "$tool" "$dir") ;;
            pyyaml) m=$(measure python3 "$here/pyyaml_load.py" "$dir") ;;
        esac
        printf '%s\t%s\t%s\t%s\t%s\t%s\n' "$s" "$files" "$bytes" "$channels" "$tool" "$m" | tr ' ' '\t' >> "$results"
        echo "$s $tool $m" >&2
    done
done

# A 200-channel rig (with its catalog), process start included; and a two-line rig for
# the fixed cost of starting.
small=$out/c1k/rigs/r-00000.rig.yaml
printf 'format: 1\nrig: tiny\n' > "$out/tiny.rig.yaml"
if command -v hyperfine >/dev/null && [ -f "$small" ]; then
    hyperfine -N -i --warmup 5 --runs 100 --export-json "$out/small.json" \
        "$fc check --format json $small" "$fc check --format json $out/tiny.rig.yaml" \
        > /dev/null 2>&1 || true
fi

python3 - "$results" "$out/small.json" "$(nproc)" <<'PY' | tee "$out/results.md"
import json, os, sys
rows = [l.rstrip("\n").split("\t") for l in open(sys.argv[1]) if l.strip()]
data = {}
for s, files, size, ch, tool, wall, rss in rows:
    d = data.setdefault(s, {"files": int(files), "bytes": int(size), "channels": int(ch or 0), "tools": {}})
    d["tools"][tool] = (float(wall), int(rss))
tools = ["lint", "lint-1t", "human", "tree", "saphyr", "events", "libyaml", "pyyaml"]
print(f"Machine: {sys.argv[3]} cores; wall time: median of the runs; peak MB: max resident set.\n")
print("| campaign | files | MB | channels | tool | wall s | MB/s | channels/s | peak MB |")
print("|---|---:|---:|---:|---|---:|---:|---:|---:|")
for s, d in data.items():
    mb = d["bytes"] / 1e6
    for t in tools:
        if t not in d["tools"]:
            continue
        wall, rss = d["tools"][t]
        cps = f"{d['channels'] / wall:,.0f}" if t in ("lint", "lint-1t", "human") else ""
        print(f"| {s} | {d['files']} | {mb:.1f} | {d['channels']:,} | {t} | {wall:.3f} | {mb / wall:.1f} | {cps} | {rss / 1024:.0f} |")
print()
print("| campaign | lint / tree | lint / events | lint / libyaml | lint / pyyaml | lint-1t / pyyaml | human / lint | tree / events | saphyr / tree | µs per channel (lint) |")
print("|---|---:|---:|---:|---:|---:|---:|---:|---:|---:|")
for s, d in data.items():
    t = {k: v[0] for k, v in d["tools"].items()}
    r = lambda a, b: f"{t[a] / t[b]:.2f}" if a in t and b in t else ""
    us = f"{t['lint'] / d['channels'] * 1e6:.1f}" if d["channels"] else ""
    print(f"| {s} | {r('lint','tree')} | {r('lint','events')} | {r('lint','libyaml')} | {r('lint','pyyaml')} | {r('lint-1t','pyyaml')} | {r('human','lint')} | {r('tree','events')} | {r('saphyr','tree')} | {us} |")
if os.path.exists(sys.argv[2]):
    print()
    for h, what in zip(json.load(open(sys.argv[2]))["results"], ["200-channel rig", "two-line rig"]):
        print(f"{what}, one process per run (hyperfine, {len(h['times'])} runs): "
              f"mean {h['mean'] * 1e3:.2f} ms ± {h['stddev'] * 1e3:.2f} ms, "
              f"median {h['median'] * 1e3:.2f} ms, min {h['min'] * 1e3:.2f} ms\n")
PY
