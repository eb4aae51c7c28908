#!/usr/bin/env python3
"""End-to-end oracle for rule levels and suppression comments: seeded random rigs (the
limits oracle's) checked twice by the real binary (`foldcheck check --format json`):
plain, then with a `foldcheck.toml` that sets random `[rules]` levels and with
suppression comments at the end of random channel lines, and the second run predicted
from the first.

docs/format.md ("Settings", "Suppression comments"): a rule set to `error`, `warning` or
`note` reports at that severity, one set to `off` reports nothing; a comment
`# foldcheck: allow <rule>, … -- <reason>` at the end of a line covers the node that
starts on that line (here a channel's one-line mapping), so that channel's findings of
those rules are kept but marked suppressed (with the reason); a rule it names that has
no finding there is not reported on its own, but a comment none of whose rules has a
finding there is one `suppression` warning naming them ("suppresses nothing"). README: the exit
status is 1 exactly when a finding that is not suppressed is at or above `--fail-on`
(error by default). Findings keep their fingerprints (docs/output.md: never the
severity or the position).

Usage: levels_oracle.py PATH/TO/foldcheck [--rigs N] [--seed S]
Exits 1 on any mismatch.
"""
import os
import re
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import limits_oracle  # noqa: E402
from run_check import arguments, check_json, finish  # noqa: E402

RULES = ["nyquist", "sampling-margin", "alias-rejection", "passband-droop", "sensor-band",
         "oversampling", "module-rate", "unused-clock", "group-clock"]
LEVELS = [None, None, "error", "warning", "note", "off"]


def main():
    args, rng = arguments(40, 20261209)
    failures = []
    counts = dict.fromkeys(["rigs", "findings", "off", "relevelled", "suppressed", "suppresses nothing",
                            "exit 1"], 0)
    with tempfile.TemporaryDirectory() as tmp:
        for r in range(args.rigs):
            rig = limits_oracle.make_rig(rng, r)
            text = limits_oracle.rig_yaml(rig)
            plain = os.path.join(tmp, f"{r}-plain")
            os.makedirs(plain)
            _, base = check_json(args.binary, plain, rig["name"], text, failures)
            if base is None:
                continue
            levels = {rule: lv for rule in RULES if (lv := rng.choice(LEVELS))}
            lines = text.split("\n")
            comments = {}  # line number (1-based) -> (rules, reason)
            # Sometimes every channel's own findings are allowed, so that only the
            # findings elsewhere decide the exit status.
            allow_all = rng.random() < 0.3
            for i, line in enumerate(lines):
                if not (line.startswith("  - { name: ") and "clock: " in line):
                    continue
                name = re.match(r"  - \{ name: ([^,]+),", line).group(1)
                own = sorted({f["rule"] for f in base if f.get("channel") == name and f["line"] == i + 1
                              and levels.get(f["rule"]) != "off"})
                if allow_all and own:
                    chosen = own
                elif rng.random() < 0.35:
                    pool = [x for x in own + RULES if levels.get(x) != "off"]
                    chosen = sorted(set(rng.sample(pool, min(len(pool), rng.randint(1, 2)))))
                else:
                    continue
                reason = f"accepted by the test lead ({r}.{i})"
                lines[i] = f"{line}  # foldcheck: allow {', '.join(chosen)} -- {reason}"
                comments[i + 1] = (chosen, reason)
            folder = os.path.join(tmp, f"{r}-levels")
            os.makedirs(folder)
            with open(os.path.join(folder, "foldcheck.toml"), "w") as f:
                f.write("[rules]\n" + "".join(f'{k} = "{v}"\n' for k, v in levels.items()))
            path, got = check_json(args.binary, folder, rig["name"], "\n".join(lines), failures)
            if got is None:
                continue
            counts["rigs"] += 1
            # What the second run must say, from the first.
            want = {}
            for f in base:
                level = levels.get(f["rule"], f["severity"])
                if level == "off":
                    counts["off"] += 1
                    continue
                counts["relevelled"] += level != f["severity"]
                covered = comments.get(f["line"])
                suppressed = covered[1] if covered and f["rule"] in covered[0] else None
                counts["suppressed"] += suppressed is not None
                want[f["fingerprint"]] = (f["rule"], level, suppressed)
            # A comment none of whose rules has a finding in its node suppresses nothing:
            # one `suppression` finding, naming its rules.
            nothing = {(line, tuple(rules)) for line, (rules, _) in comments.items()
                       if not any(f["line"] == line and f["rule"] in rules and levels.get(f["rule"]) != "off"
                                  for f in base)}
            counts["suppresses nothing"] += len(nothing)
            have = {f["fingerprint"]: (f["rule"], f["severity"], f.get("suppressed"))
                    for f in got if f["rule"] != "suppression"}
            counts["findings"] += len(want)
            if have != want:
                diff = sorted(set(want.items()) ^ set(have.items()))[:3]
                failures.append(f"{rig['name']}: levels {levels}, comments {comments}: differing {diff}")
            said = set()
            for f in got:
                if f["rule"] == "suppression":
                    m = re.search(r"suppression of (.+) suppresses nothing", f["message"])
                    said.add((f["line"], tuple(sorted(re.findall(r"`([^`]+)`", m.group(1))))) if m
                             else (f["line"], f["message"]))
            if said != nothing:
                failures.append(f"{rig['name']}: `suppression` findings {sorted(said)}, expected {sorted(nothing)}")
            # Exit status under the default --fail-on (error).
            status = 1 if any(lv == "error" and not sup for _, lv, sup in want.values()) else 0
            counts["exit 1"] += status
            code = subprocess.run([args.binary, "check", path, "--format", "json"], capture_output=True,
                                  check=False).returncode
            if code != status:
                failures.append(f"{rig['name']}: check exits {code}, expected {status}")
    finish(f"{counts['rigs']} rigs: {counts['findings']} findings predicted ({counts['relevelled']} at another "
           f"level, {counts['off']} turned off, {counts['suppressed']} suppressed), {counts['suppresses nothing']} "
           f"suppressions that suppress nothing, {counts['exit 1']} runs that must exit 1", failures)


if __name__ == "__main__":
    main()
