#!/usr/bin/env python3
"""Start-up latency, side by side in one run: `--version`, a two-line rig and a
200-channel rig with its catalog (the first rig of bench/gen.py's c1k campaign), for one
or more builds of foldcheck, interleaved so that the machine's load falls on all alike.
Prints medians, minima and the ratios to the same binary's `--version`.

    python3 bench/latency.py [BINARY ...] [--runs 60]

BINARY defaults to target/release/foldcheck. Give two (for example a build of an older
commit and the current one) to compare them in the same run. The rigs are written to
bench/out/ (gitignored) when missing.
"""

import argparse
import os
import statistics
import subprocess
import sys
import time


def main() -> None:
    here = os.path.dirname(os.path.abspath(__file__))
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("binaries", nargs="*", default=[os.path.join(here, "..", "target", "release", "foldcheck")])
    ap.add_argument("--runs", type=int, default=60)
    args = ap.parse_args()
    out = os.path.join(here, "out")
    small = os.path.join(out, "c1k", "rigs", "r-00000.rig.yaml")
    if not os.path.exists(small):
        subprocess.run([sys.executable, os.path.join(here, "gen.py"), "--out", out,
                        "--sizes", "1k", "--single", ""], check=True)
    tiny = os.path.join(out, "tiny.rig.yaml")
    with open(tiny, "w") as f:
        f.write("format: 1\nrig: tiny\n")
    cmds = {}
    for i, fc in enumerate(args.binaries):
        tag = f"[{i}] " if len(args.binaries) > 1 else ""
        cmds[(fc, tag + "--version")] = [fc, "--version"]
        cmds[(fc, tag + "two-line rig")] = [fc, "check", "--format", "json", tiny]
        cmds[(fc, tag + "200-channel rig")] = [fc, "check", "--format", "json", small]
    times = {k: [] for k in cmds}
    for _ in range(5):
        for c in cmds.values():
            subprocess.run(c, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    load_before = open("/proc/loadavg").read().split()[:3]
    for _ in range(args.runs):
        for k, c in cmds.items():
            t0 = time.perf_counter()
            p = subprocess.run(c, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
            times[k].append(time.perf_counter() - t0)
            if p.returncode not in (0, 1):
                sys.exit(f"{' '.join(c)} exited {p.returncode}")
    load_after = open("/proc/loadavg").read().split()[:3]
    for i, fc in enumerate(args.binaries):
        print(f"[{i}] {fc}")
    print(f"{args.runs} runs each, interleaved; load average {' '.join(load_before)} before, "
          f"{' '.join(load_after)} after\n")
    print("| command | median ms | min ms | median / `--version` | min / `--version` |")
    print("|---|---:|---:|---:|---:|")
    for (fc, name), t in times.items():
        base = times[(fc, name.replace("two-line rig", "--version").replace("200-channel rig", "--version"))]
        med, lo = statistics.median(t), min(t)
        print(f"| {name} | {med * 1e3:.2f} | {lo * 1e3:.2f} | "
              f"{med / statistics.median(base):.2f} | {lo / min(base):.2f} |")


if __name__ == "__main__":
    main()
