#!/usr/bin/env bash
# The benchmark: full lint against the YAML floor and PyYAML, side by side in one run,
# then the start-up latencies, then the ratios the targets are stated in.
#
#   bench/run.sh                  # every campaign (see below), about 20 minutes on 2 cores
#   bench/run.sh c10k shape-heavy # some of them
#
# Campaigns (bench/gen.py, made-up rigs, generated into bench/out/ when missing):
#   c1k c10k c100k c1M   shared catalog + rigs of 200 channels, ~1 channel in 50 failing
#   single-100k          one rig file of 100 000 channels
#   shape-heavy          40 rigs x 500 channels, one shared catalog, most channels fail
#                        a sampling/filter rule (the findings-heavy campaign)
#   shape-off            the same files with every physics rule set `off` (foldcheck.toml)
#   shape-clean          the twin where each channel takes the slowest clock >= 12 x band
#
# Environment: REPEATS (default 3; the median wall time is reported, the largest peak
# memory), REPEATS_LARGE for campaigns over 100 MB (default 1; only lint, tree and
# libyaml run there unless FULL=1), SIZES for bench/gen.py (default 1k,10k,100k,1M),
# LATENCY_RUNS (default 60).
#
# Tools, each on the same files:
#   lint      foldcheck check --format json DIR            (all cores, as users run it)
#   lint-1t   the same with RAYON_NUM_THREADS=1            (one core)
#   human     foldcheck check --color never DIR            (the default format)
#   tree      foldcheck's YAML stage alone (the spanned tree, from events when it can)
#   saphyr    the same tree through serde-saphyr alone (the reader it falls back to)
#   events    serde-saphyr's event parser alone, spans on every event
#   libyaml   libyaml's event parser alone, marks on every event, ONE thread
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
if [ ! -d "$out/shape-heavy" ]; then
    python3 "$here/gen.py" --out "$out" --sizes "" --single "" --shape
fi
# The findings-heavy campaign with every physics rule off: the same rig and catalog
# files under a campaign root whose foldcheck.toml turns the rules off.
if [ ! -f "$out/shape-off/foldcheck.toml" ]; then
    rm -rf "$out/shape-off"
    cp -r "$out/shape-heavy" "$out/shape-off"
    {
        echo '# Every rule that computes physics is off: what reading and resolving cost.'
        echo '[rules]'
        for r in module-rate nyquist sampling-margin alias-rejection disturbance-alias \
            passband-droop sensor-band oversampling group-clock group-phase group-incomplete \
            throughput storage unused-clock modulator-unknown; do
            echo "$r = \"off\""
        done
    } > "$out/shape-off/foldcheck.toml"
fi
all_sets=(c1k c10k c100k c1M single-100k shape-heavy shape-off shape-clean)
if [ $# -gt 0 ]; then sets=("$@"); else
    sets=(); for s in "${all_sets[@]}"; do [ -d "$out/$s" ] && sets+=("$s"); done
fi

# measure CMD...: median wall (s) and peak RSS (kB) over $reps runs -> "wall rss"
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
load_before=$(cut -d' ' -f1-3 /proc/loadavg)
for s in "${sets[@]}"; do
    dir=$out/$s
    bytes=$(find "$dir" -name '*.yaml' -printf '%s\n' | awk '{s+=$1} END {print s}')
    files=$(find "$dir" -name '*.yaml' | wc -l)
    largest=$(find "$dir" -name '*.yaml' -printf '%s\n' | sort -n | tail -1)
    reps=$repeats
    tools=(lint lint-1t human tree saphyr events libyaml pyyaml)
    if [ "$bytes" -gt 100000000 ]; then
        reps=${REPEATS_LARGE:-1}
        [ "${FULL:-0}" = 1 ] || tools=(lint tree libyaml)
    fi
    # The same files as shape-heavy: only the lint differs.
    [ "$s" = shape-off ] && tools=(lint lint-1t)
    summary=$("$fc" check --format json "$dir" | python3 -c 'import json,sys; d=json.load(sys.stdin); print(d["channels"], len(d["findings"]))' || true)
    channels=${summary% *}
    nfind=${summary#* }
    for tool in "${tools[@]}"; do
        case $tool in
            lint) m=$(measure "$fc" check --format json "$dir") ;;
            lint-1t) m=$(RAYON_NUM_THREADS=1 measure "$fc" check --format json "$dir") ;;
            human) m=$(measure "$fc" check --color never "$dir") ;;
            libyaml) m=$(RAYON_NUM_THREADS=1 measure "$floor" "$tool" "$dir") ;;
            tree|saphyr|events) m=$(measure "$floor" "$tool" "$dir") ;;
            pyyaml) m=$(measure python3 "$here/pyyaml_load.py" "$dir") ;;
        esac
        printf '%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\n' "$s" "$files" "$bytes" "$channels" "$nfind" "$largest" "$tool" "$m" | tr ' ' '\t' >> "$results"
        echo "$s $tool $m" >&2
    done
done

# Latency: one process per run, start-up included, interleaved so that the machine's
# load falls on all three alike: `--version`, a two-line rig, a 200-channel rig with its
# catalog.
small=$out/c1k/rigs/r-00000.rig.yaml
printf 'format: 1\nrig: tiny\n' > "$out/tiny.rig.yaml"
python3 - "$fc" "$small" "$out/tiny.rig.yaml" "${LATENCY_RUNS:-60}" > "$out/latency.tsv" <<'PY'
import statistics, subprocess, sys, time
fc, small, tiny, runs = sys.argv[1], sys.argv[2], sys.argv[3], int(sys.argv[4])
cmds = {
    "--version": [fc, "--version"],
    "two-line rig": [fc, "check", "--format", "json", tiny],
    "200-channel rig": [fc, "check", "--format", "json", small],
}
times = {k: [] for k in cmds}
for _ in range(5):
    for c in cmds.values():
        subprocess.run(c, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
for _ in range(runs):
    for k, c in cmds.items():
        t0 = time.perf_counter()
        subprocess.run(c, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        times[k].append(time.perf_counter() - t0)
for k, t in times.items():
    print(f"{k}\t{statistics.median(t)}\t{min(t)}\t{len(t)}")
PY
load_after=$(cut -d' ' -f1-3 /proc/loadavg)

python3 - "$results" "$out/latency.tsv" "$(nproc)" "$load_before" "$load_after" "$(git rev-parse --short HEAD)" <<'PY' | tee "$out/results.md"
import sys
rows = [l.rstrip("\n").split("\t") for l in open(sys.argv[1]) if l.strip()]
data = {}
for s, files, size, ch, nf, largest, tool, wall, rss in rows:
    d = data.setdefault(s, {"files": int(files), "bytes": int(size), "channels": int(ch or 0),
                            "findings": int(nf or 0), "largest": int(largest), "tools": {}})
    d["tools"][tool] = (float(wall), int(rss))
tools = ["lint", "lint-1t", "human", "tree", "saphyr", "events", "libyaml", "pyyaml"]
print(f"Commit {sys.argv[6]}; machine: {sys.argv[3]} cores; load average (1, 5, 15 min) "
      f"{sys.argv[4]} before, {sys.argv[5]} after; wall time: median of the runs; "
      f"peak MB: max resident set. `libyaml` runs on one thread.\n")
print("| campaign | files | MB | channels | findings | tool | wall s | MB/s | channels/s | peak MB |")
print("|---|---:|---:|---:|---:|---|---:|---:|---:|---:|")
for s, d in data.items():
    mb = d["bytes"] / 1e6
    for t in tools:
        if t not in d["tools"]:
            continue
        wall, rss = d["tools"][t]
        cps = f"{d['channels'] / wall:,.0f}" if t in ("lint", "lint-1t", "human") else ""
        print(f"| {s} | {d['files']} | {mb:.1f} | {d['channels']:,} | {d['findings']:,} | {t} | {wall:.3f} | {mb / wall:.1f} | {cps} | {rss / 1024:.0f} |")
print()
print("| campaign | lint / libyaml | lint / pyyaml | lint-1t / pyyaml | lint / tree | tree / libyaml | lint / events | human / lint | saphyr / tree | µs per channel (lint) |")
print("|---|---:|---:|---:|---:|---:|---:|---:|---:|---:|")
heavy = data.get("shape-heavy", {}).get("tools", {})
for s, d in data.items():
    t = {k: v[0] for k, v in d["tools"].items()}
    if s == "shape-off":  # same files as shape-heavy: its floors apply
        t.update({k: v[0] for k, v in heavy.items() if k not in t})
    r = lambda a, b: f"{t[a] / t[b]:.2f}" if a in t and b in t else ""
    us = f"{t['lint'] / d['channels'] * 1e6:.1f}" if d["channels"] and "lint" in t else ""
    print(f"| {s} | {r('lint','libyaml')} | {r('lint','pyyaml')} | {r('lint-1t','pyyaml')} | {r('lint','tree')} | {r('tree','libyaml')} | {r('lint','events')} | {r('human','lint')} | {r('saphyr','tree')} | {us} |")

lat = {}
for l in open(sys.argv[2]):
    k, med, mn, n = l.rstrip("\n").split("\t")
    lat[k] = (float(med), float(mn), int(n))
print()
print("| latency (one process per run, start-up included) | median ms | min ms | runs | / `--version` |")
print("|---|---:|---:|---:|---:|")
v = lat.get("--version", (0, 0, 0))[0]
for k, (med, mn, n) in lat.items():
    print(f"| {k} | {med * 1e3:.2f} | {mn * 1e3:.2f} | {n} | {med / v:.2f} |")

def get(s, tool, i=0):
    return data.get(s, {}).get("tools", {}).get(tool, (None, None))[i]
def ratio(s, a, b):
    x, y = get(s, a), get(s, b)
    return x / y if x is not None and y else None
def fmt(x, f="{:.2f}"):
    return f.format(x) if x is not None else "not measured"
print()
print("| speed target | measured in this run | met? |")
print("|---|---|---|")
def row(what, value, ok):
    print(f"| {what} | {value} | {'n/a' if ok is None else ('yes' if ok else 'no')} |")
x = ratio("c10k", "lint", "pyyaml")
row("c10k: lint / pyyaml ≤ 0.05", fmt(x), None if x is None else x <= 0.05)
x = ratio("shape-heavy", "lint", "pyyaml")
row("findings-heavy: lint / pyyaml ≤ 0.05", fmt(x), None if x is None else x <= 0.05)
m = get("shape-heavy", "lint", 1)
row("findings-heavy: peak ≤ 64 MB", fmt(m and m / 1024, "{:.0f} MB"), None if m is None else m / 1024 <= 64)
a, b, c = get("shape-off", "lint"), get("shape-heavy", "lint"), get("shape-heavy", "tree")
if a is not None and b:
    row("all physics rules off: cost nothing (shape-off / shape-heavy; shape-off / tree)",
        f"{a / b:.2f}; {fmt(c and a / c)}", None)
lm = lat.get("200-channel rig")
row("200-channel rig ≤ 5 ms", fmt(lm and lm[0] * 1e3, "{:.1f} ms"), None if lm is None else lm[0] <= 0.005)
lt = lat.get("two-line rig")
row("two-line rig ≤ 1.3 × --version", fmt(lt and v and lt[0] / v), None if not (lt and v) else lt[0] / v <= 1.3)
x = get("single-100k", "lint")
row("single 100k-channel file ≤ 1.5 s", fmt(x, "{:.2f} s"), None if x is None else x <= 1.5)
worst = [(ratio(s, "lint", "libyaml"), s) for s in data if s != "shape-off" and ratio(s, "lint", "libyaml")]
if worst:
    w = max(worst)
    row("lint / libyaml ≤ 1.0 on every campaign", f"{min(worst)[0]:.2f}–{w[0]:.2f} (worst: {w[1]})", w[0] <= 1.0)
m, d = get("c1M", "lint", 1), data.get("c1M")
if m is not None:
    lim = 3 * d["largest"] / 2**20 + 64
    row("c1M: peak ≤ 3 × largest file + 64 MB", f"{m / 1024:.0f} MB (limit {lim:.0f} MB)", m / 1024 <= lim)
PY
