#!/usr/bin/env python3
"""How `inspect` scales with the size of the rig: the same channel shown from a rig of
30 channels and from one of 3 000, side by side in one run, with `check` of both rigs
beside it for contrast. Ratios only (the rigs come from bench/gen.py's generator).

    python3 bench/inspect.py [BINARY] [--repeats 7] [--channel ch-000001]

BINARY defaults to target/release/foldcheck (build it with `cargo build --release`).
The rigs are written to bench/out/inspect/ (gitignored). The channel shown is a member
of a group and of a disturbance's channel list, so its group and tone are analysed too.
"""

import argparse
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


def main() -> None:
    here = os.path.dirname(os.path.abspath(__file__))
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("binary", nargs="?", default=os.path.join(here, "..", "target", "release", "foldcheck"))
    ap.add_argument("--repeats", type=int, default=7)
    ap.add_argument("--channel", default="ch-000001")
    args = ap.parse_args()
    out = os.path.join(here, "out", "inspect")
    small = write_rig(os.path.join(out, "rig-30"), 30)
    large = write_rig(os.path.join(out, "rig-3000"), 3000)
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
