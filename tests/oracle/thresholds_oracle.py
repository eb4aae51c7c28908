#!/usr/bin/env python3
"""End-to-end oracle for the thresholds and where they come from: seeded random rigs,
each in its own campaign folder, through the real binary (`foldcheck check --format
json`), the rate verdicts recomputed with the thresholds that apply.

Each rig may set `defaults` (`margin`, `alias-rejection`, `passband-tolerance`,
`oversampling-limit`) and its folder may hold a `foldcheck.toml` with `[thresholds]`;
the rig's `defaults` win over the settings file, which wins over the built-in values
(margin 2.5, 0.5 dB, 20, and 40 dB of required rejection unless the channel says
otherwise) — docs/format.md, `defaults` and "Settings". Channels sample at exact rates
(10 MHz, 12.288 MHz or 24.576 MHz divided), often with a band that puts the ratio
exactly at the margin or exactly at the oversampling limit (docs/model.md §1: thresholds
that meet a rate are compared as the decimals written, exactly; at the margin passes,
at the limit passes), behind zero to two Butterworth filters.

Recomputed per channel (one rate change, the ADC):
- `nyquist`: fs ≤ 2·B (C. E. Shannon, Proc. IRE 37, 1949), exact fractions;
- `sampling-margin`: 2·B < fs < margin·B (the margin is common practice), exact;
- `alias-rejection`: the attenuation at fs − B below the required rejection (a
  Butterworth chain keeps rising, so fs − B is its least attenuated image), from
  scipy.signal.butter(analog=True) and freqs; within 0.05 dB not compared;
- `passband-droop`: the attenuation at B above the passband tolerance, whatever
  `nyquist` says; within 0.01 dB not compared;
- `oversampling`: fs above oversampling-limit·B, exact.

Usage: thresholds_oracle.py PATH/TO/foldcheck [--rigs N] [--seed S]
Exits 1 on any mismatch.
"""
import os
import sys
import tempfile
from fractions import Fraction

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from chain_oracle import attenuation_db, yaml_filter  # noqa: E402
from run_check import arguments, check_json, finish, flow_item  # noqa: E402

ROOTS = [("10 MHz", Fraction(10_000_000)), ("12.288 MHz", Fraction(12_288_000)),
         ("24.576 MHz", Fraction(24_576_000))]
DIVIDES = [64, 100, 128, 200, 240, 250, 256, 400, 480, 500, 512, 1000, 1024]
MARGINS = ["2.5", "2.56", "3.2", "2.4", "3.125", "4", "2.048"]
LIMITS = ["10", "12.5", "16", "20", "25", "40", "50"]
RULES = ["nyquist", "sampling-margin", "alias-rejection", "passband-droop", "oversampling"]
BUILT_IN = {"margin": "2.5", "alias-rejection": "40", "passband-tolerance": "0.5",
            "oversampling-limit": "20"}


def terminating(x, places=6):
    return (x * 10**places).denominator == 1


def random_thresholds(rng):
    """Some of the four thresholds, as the decimal text written."""
    out = {}
    if rng.random() < 0.6:
        out["margin"] = rng.choice(MARGINS) if rng.random() < 0.6 else f"{rng.uniform(2.05, 4.0):.3f}"
    if rng.random() < 0.5:
        out["alias-rejection"] = str(rng.randint(20, 100))
    if rng.random() < 0.5:
        out["passband-tolerance"] = f"{rng.uniform(0.1, 3.0):.2f}"
    if rng.random() < 0.5:
        out["oversampling-limit"] = rng.choice(LIMITS) if rng.random() < 0.6 else str(rng.randint(5, 60))
    return out


def make_rig(rng, r):
    rig_t, toml_t = random_thresholds(rng), (random_thresholds(rng) if rng.random() < 0.5 else None)
    applies = {k: rig_t.get(k, (toml_t or {}).get(k, BUILT_IN[k])) for k in BUILT_IN}
    margin, limit = Fraction(applies["margin"]), Fraction(applies["oversampling-limit"])
    channels = []
    for i in range(rng.randint(6, 12)):
        root_text, root = rng.choice(ROOTS)
        divide = rng.choice(DIVIDES)
        fs = root / divide
        pick = rng.random()
        band = None
        if pick < 0.25 and terminating(fs / margin):
            band = fs / margin  # exactly at the margin: passes
        elif pick < 0.4 and terminating(fs / limit):
            band = fs / limit  # exactly at the limit: passes
        if band is None:
            band = Fraction(str(round(float(fs) / rng.uniform(1.8, 60.0), 3)))
        filters = [("butterworth", rng.randint(2, 8), round(float(band) * rng.uniform(1.0, 3.0), 3), None)
                   for _ in range(rng.randint(0, 2))]
        rejection = str(rng.randint(20, 100)) if rng.random() < 0.3 else None
        channels.append(dict(name=f"t{r}-ch{i}", root_text=root_text, divide=divide, fs=fs,
                             band=band, filters=filters, rejection=rejection))
    return dict(name=f"thresholds-{r}", rig_t=rig_t, toml_t=toml_t, applies=applies, channels=channels)


def rig_yaml(rig):
    lines = ["format: 1", f"rig: {rig['name']}"]
    units = {"alias-rejection": " dB", "passband-tolerance": " dB"}
    if rig["rig_t"]:
        lines.append("defaults:")
        lines += [f"  {k}: {v}{units.get(k, '')}" for k, v in rig["rig_t"].items()]
    lines.append("clocks:")
    for c in rig["channels"]:
        lines.append(f"  - {{ name: {c['name']}-osc, frequency: {c['root_text']} }}")
        lines.append(f"  - {{ name: {c['name']}-clk, source: {c['name']}-osc, divide: {c['divide']} }}")
    lines.append("channels:")
    for c in rig["channels"]:
        lines.append(flow_item(
            ("name", c["name"]), ("clock", f"{c['name']}-clk"), ("band", f"{decimal(c['band'])} Hz"),
            ("filters", "[" + ", ".join(yaml_filter(*f) for f in c["filters"]) + "]"),
            ("alias-rejection", c["rejection"] and f"{c['rejection']} dB")))
    return "\n".join(lines) + "\n"


def decimal(x):
    """A terminating fraction as its exact decimal text."""
    for places in range(7):
        if (x * 10**places).denominator == 1:
            return f"{float(x):.{places}f}" if places else str(int(x))
    raise ValueError(x)


def toml_text(t):
    quoted = {"alias-rejection": "{} dB", "passband-tolerance": "{} dB"}
    lines = ["[thresholds]"]
    for k, v in t.items():
        lines.append(f'{k} = "{quoted[k].format(v)}"' if k in quoted else f"{k} = {v}")
    return "\n".join(lines) + "\n"


def expected(rig, c):
    """{rule}, and the rules too close to their threshold to compare."""
    a = rig["applies"]
    fs, band = c["fs"], c["band"]
    margin, limit = Fraction(a["margin"]), Fraction(a["oversampling-limit"])
    required = float(c["rejection"] or a["alias-rejection"])
    tolerance = float(a["passband-tolerance"])
    out, unsure = set(), set()
    if fs <= 2 * band:
        out.add("nyquist")
    else:
        if fs < margin * band:
            out.add("sampling-margin")
        att = attenuation_db(c["filters"], float(fs - band))
        if abs(att - required) < 0.05:
            unsure.add("alias-rejection")
        elif att < required:
            out.add("alias-rejection")
    droop = attenuation_db(c["filters"], float(band))
    if abs(droop - tolerance) < 0.01:
        unsure.add("passband-droop")
    elif droop > tolerance:
        out.add("passband-droop")
    if fs > limit * band:
        out.add("oversampling")
    return out, unsure


def main():
    args, rng = arguments(60, 20261204)
    failures = []
    counts = dict.fromkeys(["channels", "verdicts", "findings", "at the margin", "at the limit",
                            "with settings file"], 0)
    with tempfile.TemporaryDirectory() as tmp:
        for r in range(args.rigs):
            rig = make_rig(rng, r)
            folder = os.path.join(tmp, rig["name"])
            os.makedirs(folder)
            if rig["toml_t"] is not None:
                counts["with settings file"] += 1
                with open(os.path.join(folder, "foldcheck.toml"), "w") as f:
                    f.write(toml_text(rig["toml_t"]))
            _, findings = check_json(args.binary, folder, rig["name"], rig_yaml(rig), failures)
            if findings is None:
                continue
            got = {}
            for f in findings:
                if f["rule"] in ("schema", "quantity", "yaml-syntax", "settings"):
                    failures.append(f"{rig['name']}: refused: {f['message']}")
                if f["rule"] in RULES and f.get("channel"):
                    got.setdefault(f["channel"], set()).add(f["rule"])
            for c in rig["channels"]:
                want, unsure = expected(rig, c)
                counts["channels"] += 1
                counts["at the margin"] += c["fs"] == Fraction(rig["applies"]["margin"]) * c["band"]
                counts["at the limit"] += c["fs"] == Fraction(rig["applies"]["oversampling-limit"]) * c["band"]
                have = got.get(c["name"], set()) - unsure
                want -= unsure
                counts["verdicts"] += len(RULES) - len(unsure)
                counts["findings"] += len(want)
                if have != want:
                    failures.append(f"{c['name']} (fs {c['fs']} Hz, band {c['band']} Hz, thresholds "
                                    f"{rig['applies']}, channel rejection {c['rejection']}): expected "
                                    f"{sorted(want)}, check says {sorted(have)}")
    finish(f"{args.rigs} rigs ({counts['with settings file']} with a settings file), {counts['channels']} "
           f"channels ({counts['at the margin']} exactly at the margin, {counts['at the limit']} exactly at "
           f"the oversampling limit): {counts['verdicts']} verdicts compared, {counts['findings']} findings "
           f"expected", failures)


if __name__ == "__main__":
    main()
