"""What the oracles share: their command line and one run of `foldcheck check`."""
import argparse
import json
import os
import random
import subprocess
import sys


def arguments(rigs, seed):
    """The command line of a rig-by-rig oracle (the binary, how many rigs, the seed) and
    the random generator seeded from it."""
    ap = argparse.ArgumentParser()
    ap.add_argument("binary")
    ap.add_argument("--rigs", type=int, default=rigs)
    ap.add_argument("--seed", type=int, default=seed)
    args = ap.parse_args()
    return args, random.Random(args.seed)


def check_json(binary, tmp, name, text, failures):
    """Write `text` to TMP/NAME.rig.yaml and run `check --format json` on it: (the path,
    its findings), the findings None (and the failure noted) when it exits other than
    0 or 1."""
    path = os.path.join(tmp, f"{name}.rig.yaml")
    with open(path, "w") as f:
        f.write(text)
    out = subprocess.run([binary, "check", path, "--format", "json"],
                         capture_output=True, text=True, check=False)
    if out.returncode not in (0, 1):
        failures.append(f"{name}: check exits {out.returncode}: {out.stderr.strip()}")
        return path, None
    return path, json.loads(out.stdout)["findings"]


def finish(summary, failures):
    """Print the first mismatches and the summary line; exit 1 on any mismatch."""
    for f in failures[:40]:
        print("MISMATCH", f)
    print(f"{summary}: {len(failures)} mismatches")
    sys.exit(1 if failures else 0)


def flow_item(*pairs):
    """A list item written as a one-line flow mapping, `  - { key: value, … }`, of the
    (key, value) pairs whose value is not None."""
    return "  - { " + ", ".join(f"{k}: {v}" for k, v in pairs if v is not None) + " }"
