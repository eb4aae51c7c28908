#!/usr/bin/env python3
"""End-to-end oracle for fingerprints: every finding of the physics and budget rules on
seeded random rigs (those of the chain, tone-and-budget and limits oracles), its
fingerprint recomputed here with Python's hashlib from the fields docs/output.md
("Fingerprints") lists: the first 8 bytes of SHA-256 (FIPS 180-4), as 16 lowercase hex
digits, over `foldcheck/v1`, the rule, the campaign root relative to the top of the git
work tree (`.` here: the rigs are written outside any git tree), the owner
(`rig:<name>`) and the subject the rule names, joined by NUL bytes; plus a counter when
one owner and subject hold several findings of one rule.

Subjects: `channel/<name>` for the channel rules (`…/at/modulator` for a converter's
modulator image), `disturbance/<tone>/channel/<name>`, `group/<name>`, `clock/<name>`,
`module/<name>` or `logger` for `throughput`, `logger` for `storage`.

Usage: fingerprint_oracle.py PATH/TO/foldcheck [--rigs N] [--seed S]
Exits 1 on any mismatch.
"""
import hashlib
import os
import re
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import chain_oracle  # noqa: E402
import limits_oracle  # noqa: E402
import tone_budget_oracle  # noqa: E402
from run_check import arguments, check_json, finish  # noqa: E402

CHANNEL_RULES = {"nyquist", "sampling-margin", "alias-rejection", "passband-droop", "sensor-band",
                 "oversampling", "module-rate", "missing-band"}


def fingerprint(*fields):
    return hashlib.sha256("\0".join(fields).encode("utf-8")).digest()[:8].hex()


def named(message, what):
    """The name in backticks after `what` in a message: "clock `b` drives …" → b."""
    m = re.search(what + r" `([^`]+)`", message)
    return m.group(1) if m else None


def subject(f, tones):
    """The subject key path docs/output.md gives the finding's rule, or None for a rule
    this oracle does not recompute."""
    rule, msg = f["rule"], f["message"]
    if rule in CHANNEL_RULES:
        at = "/at/modulator" if rule == "alias-rejection" and "modulator rate" in msg else ""
        return f"channel/{f['channel']}{at}"
    if rule == "disturbance-alias":
        return f"disturbance/{tones[f['values']['disturbance_hz']]}/channel/{f['channel']}"
    if rule == "group-clock":
        return f"group/{named(msg, 'group')}"
    if rule == "unused-clock":
        return f"clock/{named(msg, 'clock')}"
    if rule == "throughput":
        module = named(msg, "module")
        return f"module/{module}" if module else "logger"
    if rule == "storage":
        return "logger"
    return None


def compare(rig_name, findings, tones, failures, counts):
    keyed = []
    for f in findings:
        s = subject(f, tones)
        if s is not None:
            keyed.append((f, (f["rule"], f"rig:{rig_name}", s)))
    seen = {}
    for _, key in keyed:
        seen[key] = seen.get(key, 0) + 1
    nth = {}
    for f, key in keyed:
        fields = ["foldcheck/v1", key[0], ".", key[1], key[2]]
        if seen[key] > 1:
            nth[key] = nth.get(key, 0) + 1
            fields.append(str(nth[key]))
            counts["with a counter"] += 1
        counts["fingerprints"] += 1
        counts.setdefault("rules", set()).add(f["rule"])
        want = fingerprint(*fields)
        if f["fingerprint"] != want:
            failures.append(f"{rig_name}: {f['rule']} ({key[2]}): fingerprint {f['fingerprint']}, "
                            f"hashlib over {fields} gives {want}")


def main():
    args, rng = arguments(30, 20261206)
    failures = []
    counts = {"rigs": 0, "fingerprints": 0, "with a counter": 0}
    with tempfile.TemporaryDirectory() as tmp:
        for r in range(args.rigs):
            kind = r % 3
            if kind == 0:
                channels = [chain_oracle.make_channel(rng, r * 100 + i) for i in range(rng.randint(5, 15))]
                name, text, tones = f"chain-{r}", chain_oracle.rig_text(channels), {}
                text = text.replace("rig: oracle", f"rig: {name}")
            elif kind == 1:
                rig = tone_budget_oracle.make_rig(rng, r)
                name, text = rig["name"], tone_budget_oracle.rig_yaml(rig)
                tones = {float(t["f"]): t["name"] for t in rig["tones"]}
            else:
                rig = limits_oracle.make_rig(rng, r)
                name, text, tones = rig["name"], limits_oracle.rig_yaml(rig), {}
            folder = os.path.join(tmp, name)
            os.makedirs(folder)
            _, findings = check_json(args.binary, folder, name, text, failures)
            counts["rigs"] += 1
            if findings is not None:
                compare(name, findings, tones, failures, counts)
    rules = ", ".join(sorted(counts.get("rules", ())))
    finish(f"{counts['rigs']} rigs: {counts['fingerprints']} fingerprints recomputed with hashlib "
           f"({counts['with a counter']} with a counter; rules {rules})", failures)


if __name__ == "__main__":
    main()
