#!/usr/bin/env python3
"""How `inspect` scales with the size of the rig: the same channel shown from a rig of
30 channels and from one of 3 000, side by side in one run, with `check` of both rigs
beside it for contrast. Ratios only (the rigs come from bench/gen.py's generator).

    python3 bench/inspect.py [BINARY] [--repeats 7] [--channel ch-000001]
    python3 bench/inspect.py --stages [--repeats 15]

With --stages, each stage of the pipeline `inspect` runs is timed in one process
(benches/inspect_stages.rs, built here with `cargo bench --no-run`) on both rigs, and
the table says which stages grow with the rig and how much of the large rig's time
each takes.

BINARY defaults to target/release/foldcheck (build it with `cargo build --release`).
The rigs are written to bench/out/inspect/ (gitignored). The channel shown is a member
of a group and of a disturbance's channel list, so its group and tone are analysed too.
"""

import argparse
import json
import os
import random
import statistics
import subprocess
import sys
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import gen  # noqa: E402  (the benchmark's rig generator)


def write_rig(root: str, channels: int) -> str:
    os.makedirs(os.path.join(root, "catalog"), exist_ok=True)
    os.makedirs(os.path.join(root, "rigs"), exist_ok=True)
    with open(os.path.join(root, "catalog", "bench-hall.yaml"), "w") as f:
        f.write(gen.CATALOG)
    path = os.path.join(root, "rigs", "r-00000.rig.yaml")
    with open(path, "w") as f:
        f.write(gen.rig_text(0, channels, random.Random(0)))
    return path


def median_seconds(cmd: list, repeats: int, ok=(0, 1)) -> float:
    times = []
    for _ in range(repeats):
        t = time.perf_counter()
        p = subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
        times.append(time.perf_counter() - t)
        if p.returncode not in ok:
            sys.exit(f"{' '.join(cmd)} exited {p.returncode}: {p.stderr.decode()}")
    return statistics.median(times)


def stage_binary(root: str) -> str:
    """Build benches/inspect_stages.rs (release profile) and return its executable."""
    out = subprocess.run(
        ["cargo", "bench", "--bench", "inspect_stages", "--no-run", "--message-format=json"],
        cwd=root, check=True, capture_output=True, text=True).stdout
    for line in out.splitlines():
        msg = json.loads(line)
        if msg.get("reason") == "compiler-artifact" and msg["target"]["name"] == "inspect_stages" \
                and msg.get("executable"):
            return msg["executable"]
    sys.exit("cargo did not report the inspect_stages executable")


def stages(rigs: dict, channel: str, repeats: int, root: str) -> None:
    """Print the stage table for the rigs (size -> (rig, catalog)), sizes interleaved."""
    exe = stage_binary(root)
    got = {}
    for _ in range(2):
        for size, (rig, catalog) in rigs.items():
            out = subprocess.run([exe, rig, channel, str(repeats), catalog],
                                 check=True, capture_output=True, text=True).stdout
            for line in out.splitlines():
                name, ms = line.split("\t")
                prev = got.setdefault(size, {}).get(name)
                got[size][name] = float(ms) if prev is None else min(prev, float(ms))
    small, large = list(rigs)
    total = got[large]["total of the stages inspect runs"]
    print(f"stages of `inspect {channel}`, in one process; best of two medians of {repeats} runs")
    print(f"| stage | {small} channels | {large} channels | ratio | share of the {large}-channel total |")
    print("|---|---|---|---|---|")
    for name, a in got[small].items():
        b = got[large][name]
        ratio = f"{b / a:.0f}" if a > 0 else "—"
        share = "" if name in ("inspect::run", "analysis (whole rig)") or name.startswith("total") \
            else f"{100 * b / total:.0f} %"
        print(f"| {name} | {a:.3f} ms | {b:.3f} ms | {ratio} | {share} |")


def main() -> None:
    here = os.path.dirname(os.path.abspath(__file__))
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("binary", nargs="?", default=os.path.join(here, "..", "target", "release", "foldcheck"))
    ap.add_argument("--repeats", type=int, default=7)
    ap.add_argument("--channel", default="ch-000001")
    ap.add_argument("--stages", action="store_true", help="time each stage in one process")
    args = ap.parse_args()
    out = os.path.join(here, "out", "inspect")
    small = write_rig(os.path.join(out, "rig-30"), 30)
    large = write_rig(os.path.join(out, "rig-3000"), 3000)
    if args.stages:
        catalog = lambda rig: os.path.join(os.path.dirname(os.path.dirname(rig)), "catalog", "bench-hall.yaml")
        stages({"30": (small, catalog(small)), "3000": (large, catalog(large))},
               args.channel, args.repeats, os.path.dirname(here))
        return
    rows = []
    for what, sub in [("inspect", ["inspect", None, args.channel]), ("check", ["check", "--format", "json", None])]:
        t = {}
        # Interleave the two sizes so that load on the machine hits both alike.
        for _ in range(2):
            for size, rig in (("30", small), ("3000", large)):
                cmd = [args.binary] + [rig if a is None else a for a in sub]
                t.setdefault(size, []).append(median_seconds(cmd, args.repeats))
        s30, s3000 = min(t["30"]), min(t["3000"])
        rows.append((what, s30, s3000, s3000 / s30))
    print(f"binary: {args.binary}; channel shown: {args.channel}; best of two medians of {args.repeats} runs")
    print("| command | 30 channels | 3 000 channels | ratio 3 000 / 30 |")
    print("|---|---|---|---|")
    for what, a, b, r in rows:
        print(f"| `{what}` | {a * 1000:.0f} ms | {b * 1000:.0f} ms | {r:.2f} |")


if __name__ == "__main__":
    main()
