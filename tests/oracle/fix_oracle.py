#!/usr/bin/env python3
"""End-to-end oracle for machine-readable fixes and fingerprints, through the real
binary (`foldcheck check --format json`), on the shipped example campaign and on seeded
random rigs with mistakes put in (a misspelt clock, a unit in the wrong case, bands
and filters that fail the rate rules).

For every finding that carries a `fix` (docs/output.md: byte offsets, end exclusive),
the edits are applied here, in Python, to a copy of the campaign, and `check` runs
again. The promise checked (docs/output.md, `fix`; README, "Fixing findings"): the finding's fingerprint is gone, and no
fingerprint that was not there before appears at `warning` or above; each edit replaces
the bytes of one value (no line break, no comment), and its line and column agree with
its byte offset (1-based, columns in Unicode characters).

Fingerprints name what a finding is about, never where it is: the same rigs with a
comment line put before every line and blank lines at the top must give the same
fingerprints (and the same number of findings).

Usage: fix_oracle.py PATH/TO/foldcheck [--rigs N] [--seed S] [--examples DIR]
Exits 1 on any mismatch.
"""
import json
import os
import re
import shutil
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from chain_oracle import make_channel, rig_text  # noqa: E402
from run_check import arguments, finish  # noqa: E402

SEVERE = ("warning", "error")


def check_dir(binary, folder):
    """`check --format json` over a folder, run from inside it (paths as written)."""
    out = subprocess.run([binary, "check", ".", "--format", "json"], cwd=folder,
                         capture_output=True, text=True, check=False)
    if out.returncode not in (0, 1):
        raise RuntimeError(f"check exits {out.returncode}: {out.stderr.strip()}")
    return json.loads(out.stdout)["findings"]


def line_col(text_bytes, offset):
    before = text_bytes[:offset].decode("utf-8")
    line = before.count("\n") + 1
    return line, len(before) - (before.rfind("\n") + 1) + 1


def apply_fix(folder, fix, failures, label):
    """Apply a fix's edits to the files under `folder`, last edit first per file."""
    by_file = {}
    for e in fix["edits"]:
        by_file.setdefault(e["file"], []).append(e)
    for name, edits in by_file.items():
        path = os.path.join(folder, name)
        with open(path, "rb") as f:
            data = f.read()
        for e in sorted(edits, key=lambda e: e["start"], reverse=True):
            old = data[e["start"]:e["end"]]
            if b"\n" in old or b"#" in old:
                failures.append(f"{label}: an edit spans more than one value: {old!r}")
            if (e["line"], e["column"]) != line_col(data, e["start"]) or \
                    (e["end_line"], e["end_column"]) != line_col(data, e["end"]):
                failures.append(f"{label}: edit at {e['line']}:{e['column']}–{e['end_line']}:{e['end_column']} "
                                f"but its bytes {e['start']}..{e['end']} are at "
                                f"{line_col(data, e['start'])}–{line_col(data, e['end'])}")
            data = data[:e["start"]] + e["replacement"].encode("utf-8") + data[e["end"]:]
        with open(path, "wb") as f:
            f.write(data)


def check_fixes(binary, folder, failures, counts):
    before = check_dir(binary, folder)
    known = {f["fingerprint"] for f in before}
    for f in before:
        if not f.get("fix"):
            continue
        counts["fixes"] += 1
        counts.setdefault("by rule", {}).setdefault(f["rule"], 0)
        counts["by rule"][f["rule"]] += 1
        label = f"{f['file']}:{f['line']}: {f['rule']} fix `{f['fix']['description']}`"
        with tempfile.TemporaryDirectory() as tmp:
            copy = os.path.join(tmp, "campaign")
            shutil.copytree(folder, copy)
            apply_fix(copy, f["fix"], failures, label)
            try:
                after = check_dir(binary, copy)
            except RuntimeError as e:
                failures.append(f"{label}: after the fix, {e}")
                continue
        if any(a["fingerprint"] == f["fingerprint"] for a in after):
            failures.append(f"{label}: the finding is still there after its fix")
        new = [a for a in after if a["fingerprint"] not in known and a["severity"] in SEVERE]
        if new:
            failures.append(f"{label}: the fix adds {new[0]['rule']}: {new[0]['message']}")
    return before


def reformatted(text):
    """The same document with a comment before every line and blank lines on top."""
    lines = text.split("\n")
    out = ["", "# moved down by the oracle", ""]
    for line in lines:
        indent = line[:len(line) - len(line.lstrip())]
        out.append(f"{indent}# a comment the fingerprints must not see")
        out.append(line)
    return "\n".join(out)


def check_fingerprints(binary, folder, before, failures, counts):
    with tempfile.TemporaryDirectory() as tmp:
        copy = os.path.join(tmp, "campaign")
        shutil.copytree(folder, copy)
        for root, _, files in os.walk(copy):
            for name in files:
                if name.endswith(".yaml"):
                    path = os.path.join(root, name)
                    with open(path) as f:
                        text = f.read()
                    with open(path, "w") as f:
                        f.write(reformatted(text))
        after = check_dir(binary, copy)
    counts["fingerprints"] += len(before)
    a = sorted((f["rule"], f["fingerprint"]) for f in before)
    b = sorted((f["rule"], f["fingerprint"]) for f in after)
    if a != b:
        failures.append(f"{folder}: fingerprints move with the lines: {sorted(set(a) ^ set(b))[:4]}")
    for f in before:
        if not re.fullmatch(r"[0-9a-f]{16}", f["fingerprint"]):
            failures.append(f"{f['file']}: fingerprint {f['fingerprint']!r} is not 16 lowercase hex digits")


def mistaken_rig(rng, r):
    """A rig of the chain oracle's channels with mistakes put in."""
    channels = [make_channel(rng, r * 100 + i) for i in range(rng.randint(4, 10))]
    text = rig_text(channels).replace("rig: oracle", f"rig: fixes-{r}")
    lines = text.split("\n")
    for i, line in enumerate(lines):
        if "clock: ch-" in line and rng.random() < 0.2:
            lines[i] = re.sub(r"clock: (ch-\d+)-clk", r"clock: \1-clck", line)
        elif "band: " in line and rng.random() < 0.15:
            lines[i] = line.replace(" Hz, filters", " hz, filters", 1)
    return "\n".join(lines)


def main():
    args, rng = arguments(12, 20261205)
    binary = os.path.abspath(args.binary)  # check runs from inside each campaign
    failures = []
    counts = dict.fromkeys(["campaigns", "fixes", "fingerprints"], 0)
    here = os.path.dirname(os.path.abspath(__file__))
    examples = os.path.join(here, "..", "..", "examples")
    folders = []
    with tempfile.TemporaryDirectory() as tmp:
        ex = os.path.join(tmp, "examples")
        shutil.copytree(examples, ex)
        folders.append(ex)
        for r in range(args.rigs):
            folder = os.path.join(tmp, f"fixes-{r}")
            os.makedirs(folder)
            with open(os.path.join(folder, f"fixes-{r}.rig.yaml"), "w") as f:
                f.write(mistaken_rig(rng, r))
            folders.append(folder)
        for folder in folders:
            counts["campaigns"] += 1
            try:
                before = check_fixes(binary, folder, failures, counts)
                check_fingerprints(binary, folder, before, failures, counts)
            except RuntimeError as e:
                failures.append(f"{folder}: {e}")
    if counts["fixes"] < 10:
        failures.append(f"only {counts['fixes']} fixes were tried: change the seed or the rig count")
    finish(f"{counts['campaigns']} campaigns (the examples and {args.rigs} random rigs with mistakes): "
           f"{counts['fixes']} fixes applied and re-checked ({dict(sorted(counts.get('by rule', {}).items()))}), "
           f"{counts['fingerprints']} fingerprints "
           f"compared after moving every line", failures)


if __name__ == "__main__":
    main()
