#!/usr/bin/env python3
"""End-to-end oracle for the front end the help designs when a delta-sigma converter's
modulator image fails and the channel has no analog filter to change (docs/model.md §4):
seeded random channels through the real binary (`foldcheck check --format json`).

Each channel sits on a module whose modulator runs at R × the ADC rate (its own FIR
guards the ADC images) and needs X dB of rejection; with no analog filter, energy from
the first modulator image, f = R·fs − B, folds in unattenuated. The help must propose
the lowest Butterworth order n for which some cutoff fc gives at least X dB at f and at
most the passband tolerance (0.5 dB, the built-in value) at B, with its cutoff between
the two bounds. For a Butterworth filter A(f) = 10·log10(1 + (f/fc)^(2n)) (the textbook
magnitude, as scipy.signal.butter gives it), so the bounds are closed-form:
fc ≤ f / (10^(X/10) − 1)^(1/2n) and fc ≥ B / (10^(T/10) − 1)^(1/2n). The attenuation
the help quotes at f and at B is recomputed at its cutoff (0.01 dB), and
scipy.signal.butter(analog=True) + freqs must agree with the closed form there.

Usage: front_end_oracle.py PATH/TO/foldcheck [--rigs N] [--seed S]
Exits 1 on any mismatch.
"""
import math
import os
import re
import sys
import tempfile
from fractions import Fraction

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from chain_oracle import attenuation_db  # noqa: E402
from run_check import arguments, check_json, finish, flow_item  # noqa: E402

TOLERANCE_DB = 0.5
UNITS = {"Hz": 1, "kHz": 1e3, "MHz": 1e6, "GHz": 1e9}


def butterworth_db(f, fc, n):
    return 10 * math.log10(1 + (f / fc) ** (2 * n))


def bounds(f_img, band, need, n):
    """The cutoffs that give `need` dB at f_img and at most the tolerance at the band."""
    upper = f_img / (10 ** (need / 10) - 1) ** (1 / (2 * n))
    lower = band / (10 ** (TOLERANCE_DB / 10) - 1) ** (1 / (2 * n))
    return lower, upper


def lowest_order(f_img, band, need):
    """The lowest Butterworth order for which some cutoff meets both bounds."""
    for n in range(1, 64):
        lower, upper = bounds(f_img, band, need, n)
        if lower <= upper:
            return n
    raise ValueError("no order below 64 can")


def hz(text):
    value, unit = text.split()
    return float(value) * UNITS[unit]


def main():
    args, rng = arguments(40, 20261207)
    failures = []
    counts = {"channels": 0, "designs": 0, "orders": {}}
    with tempfile.TemporaryDirectory() as tmp:
        for r in range(args.rigs):
            fs = Fraction(rng.choice([12_800, 25_600, 48_000, 51_200, 96_000, 102_400]))
            channels = []
            lines = ["format: 1", f"rig: front-end-{r}", "clocks:", f"  - {{ name: osc, frequency: {fs} Hz }}",
                     "modules:"]
            ratios = rng.sample([16, 32, 64, 128, 256], 3)
            for k, ratio in enumerate(ratios):
                need = rng.randint(30, 90)
                lines.append(flow_item(
                    ("name", f"ds-{k}"), ("alias-rejection", f"{need} dB"),
                    ("modulator", f"{{ oversampling-ratio: {ratio}, filter: {{ response: digital, "
                                  "passband-edge: 0.45, stopband-edge: 0.55, attenuation: 100 dB } }")))
                for i in range(rng.randint(1, 3)):
                    band = round(float(fs) / rng.uniform(2.6, 10.0), 1)
                    channels.append(dict(name=f"fe{r}-{k}-{i}", ratio=ratio, need=need, band=band))
            lines.append("channels:")
            for c in channels:
                k = ratios.index(c["ratio"])
                lines.append(flow_item(("name", c["name"]), ("module", f"ds-{k}"), ("clock", "osc"),
                                       ("band", f"{c['band']} Hz"), ("filters", "[]")))
            _, findings = check_json(args.binary, tmp, f"front-end-{r}", "\n".join(lines) + "\n", failures)
            if findings is None:
                continue
            helps = {f["channel"]: f for f in findings
                     if f["rule"] == "alias-rejection" and f["values"].get("at") == "modulator"}
            for c in channels:
                counts["channels"] += 1
                f_img = float(fs) * c["ratio"] - c["band"]
                f = helps.get(c["name"])
                if f is None:
                    failures.append(f"{c['name']}: no modulator-image finding with 0 dB of analog filtering")
                    continue
                n = lowest_order(f_img, c["band"], c["need"])
                m = re.search(r"order: (\d+), cutoff: ([0-9.]+ [kMG]?Hz)", f.get("help") or "")
                if not m:
                    failures.append(f"{c['name']}: the help proposes no Butterworth front end: {f.get('help')}")
                    continue
                counts["designs"] += 1
                counts["orders"][n] = counts["orders"].get(n, 0) + 1
                order, fc = int(m.group(1)), hz(m.group(2))
                lower, upper = bounds(f_img, c["band"], c["need"], order)
                if order != n:
                    failures.append(f"{c['name']}: order {order} proposed, the lowest that can is {n} "
                                    f"(image {f_img} Hz, {c['need']} dB, band {c['band']} Hz)")
                elif not lower * (1 - 1e-9) <= fc <= upper * (1 + 1e-9):
                    failures.append(f"{c['name']}: cutoff {fc} Hz outside [{lower:.1f}, {upper:.1f}] Hz for order {order}")
                quoted = re.search(r"attenuates [0-9.]+ [kMG]?Hz by ([0-9.]+) dB and the [0-9.]+ [kMG]?Hz band edge "
                                   r"by ([0-9.]+) dB", f["help"])
                at_img, at_band = butterworth_db(f_img, fc, order), butterworth_db(c["band"], fc, order)
                scipy_img = attenuation_db([("butterworth", order, fc, None)], f_img)
                if abs(scipy_img - at_img) > 1e-6 * max(1.0, at_img):
                    failures.append(f"{c['name']}: closed form {at_img} dB against scipy {scipy_img} dB")
                if quoted and (abs(float(quoted.group(1)) - at_img) > 0.01 or abs(float(quoted.group(2)) - at_band) > 0.01):
                    failures.append(f"{c['name']}: the help quotes {quoted.group(1)} / {quoted.group(2)} dB, "
                                    f"the cutoff gives {at_img:.2f} / {at_band:.2f} dB")
                elif not quoted:
                    failures.append(f"{c['name']}: the help quotes no attenuation: {f['help']}")
    finish(f"{args.rigs} rigs, {counts['channels']} delta-sigma channels without a front end: "
           f"{counts['designs']} designs checked (lowest orders {dict(sorted(counts['orders'].items()))})", failures)


if __name__ == "__main__":
    main()
