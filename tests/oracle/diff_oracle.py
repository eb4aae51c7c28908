#!/usr/bin/env python3
"""End-to-end oracle for `foldcheck diff`: seeded random rigs (those of the limits and
tone-and-budget oracles) and an edited copy of each (bands moved, a channel removed, a
divider changed, a reference misspelt), compared with `diff OLD NEW --format json`
against what `check --format json` says of each side on its own.

docs/output.md ("How `diff` matches findings"): a fingerprint only on the new side is
*introduced*, only on the old side *resolved*; on both sides it is *changed* when its
values, message or severity differ and *unchanged* otherwise; the exit status is 1
exactly when an introduced finding is at or above `--fail-on` (error, warning or note;
error when not given).

Usage: diff_oracle.py PATH/TO/foldcheck [--rigs N] [--seed S]
Exits 1 on any mismatch.
"""
import json
import os
import re
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import limits_oracle  # noqa: E402
import tone_budget_oracle  # noqa: E402
from run_check import arguments, check_json, finish  # noqa: E402

RANK = {"note": 0, "warning": 1, "error": 2}


def edited(rng, text):
    """The rig with a few edits a reviewer might see in a change."""
    lines = text.split("\n")
    out = []
    for line in lines:
        if line.startswith("  - { name: ") and "band: " in line:
            roll = rng.random()
            if roll < 0.1:
                continue  # the channel is removed
            if roll < 0.3:
                line = re.sub(r"band: ([0-9.]+) Hz",
                              lambda m: f"band: {round(float(m.group(1)) * rng.choice([0.5, 0.9, 1.1, 2.0]), 3)} Hz",
                              line)
            elif roll < 0.35:
                line = re.sub(r"clock: ([a-z0-9-]+)", r"clock: \1x", line)
        elif "divide: " in line and rng.random() < 0.2:
            line = re.sub(r"divide: (\d+)", lambda m: f"divide: {int(m.group(1)) + rng.choice([1, 2])}", line)
        out.append(line)
    return "\n".join(out)


def same(a, b):
    return (a.get("values"), a["message"], a["severity"]) == (b.get("values"), b["message"], b["severity"])


def main():
    args, rng = arguments(40, 20261208)
    failures = []
    counts = dict.fromkeys(["pairs", "introduced", "resolved", "changed", "unchanged", "exit 1"], 0)
    with tempfile.TemporaryDirectory() as tmp:
        for r in range(args.rigs):
            if r % 2:
                rig = tone_budget_oracle.make_rig(rng, r)
                text = tone_budget_oracle.rig_yaml(rig)
            else:
                rig = limits_oracle.make_rig(rng, r)
                text = limits_oracle.rig_yaml(rig)
            new_text = edited(rng, text)
            sides = {}
            for side, body in (("old", text), ("new", new_text)):
                folder = os.path.join(tmp, f"{r}-{side}")
                os.makedirs(folder)
                sides[side] = check_json(args.binary, folder, rig["name"], body, failures)
            (old_path, old), (new_path, new) = sides["old"], sides["new"]
            if old is None or new is None:
                continue
            fail_on = rng.choice([None, "error", "warning", "note"])
            cmd = [args.binary, "diff", old_path, new_path, "--format", "json"]
            if fail_on:
                cmd += ["--fail-on", fail_on]
            out = subprocess.run(cmd, capture_output=True, text=True, check=False)
            if out.returncode not in (0, 1):
                failures.append(f"{rig['name']}: diff exits {out.returncode}: {out.stderr.strip()}")
                continue
            d = json.loads(out.stdout)
            counts["pairs"] += 1
            before = {f["fingerprint"]: f for f in old}
            after = {f["fingerprint"]: f for f in new}
            want = {
                "introduced": set(after) - set(before),
                "resolved": set(before) - set(after),
                "changed": {k for k in set(before) & set(after) if not same(before[k], after[k])},
            }
            got = {
                "introduced": {f["fingerprint"] for f in d["introduced"]},
                "resolved": {f["fingerprint"] for f in d["resolved"]},
                "changed": {c["fingerprint"] for c in d["changed"]},
            }
            unchanged = len(set(before) & set(after)) - len(want["changed"])
            for what in want:
                counts[what] += len(want[what])
                if want[what] != got[what]:
                    failures.append(f"{rig['name']}: {what}: expected {len(want[what])}, diff says "
                                    f"{len(got[what])} (differing: {sorted(want[what] ^ got[what])[:3]})")
            counts["unchanged"] += unchanged
            if d["summary"]["unchanged_findings"] != unchanged:
                failures.append(f"{rig['name']}: unchanged {d['summary']['unchanged_findings']}, expected {unchanged}")
            floor = RANK[fail_on or "error"]
            status = 1 if any(RANK[after[k]["severity"]] >= floor for k in want["introduced"]) else 0
            counts["exit 1"] += status
            if out.returncode != status:
                failures.append(f"{rig['name']}: diff exits {out.returncode} with --fail-on {fail_on}, expected {status}")
    finish(f"{counts['pairs']} rig pairs: {counts['introduced']} introduced, {counts['resolved']} resolved, "
           f"{counts['changed']} changed, {counts['unchanged']} unchanged findings; {counts['exit 1']} pairs "
           f"that must fail", failures)


if __name__ == "__main__":
    main()
