#!/usr/bin/env python3
"""End-to-end oracle: random rigs through the real binary, checked with scipy.signal.

For seeded random channels (a root oscillator divided down exactly, a band, one or two
analog anti-alias filters of random family, order and cutoff, and sometimes a sensor
response), this script writes a rig file, asks `foldcheck inspect --format json` for each
channel, and recomputes independently:

- the exact ADC rate with Python's fractions (root × multiply ÷ divide),
- fs/B and the nyquist verdict fs > 2B (C. E. Shannon, Proc. IRE 37, 1949),
- the lowest folding frequency fs − B (docs/model.md),
- the chain's attenuation there and at the band edge, and its phase at the band edge,
  from scipy.signal.butter / cheby1 / bessel(norm='mag') with analog=True and freqs
  (phase unwrapped with numpy from DC on a dense grid),
- for channels with a sinc (CIC) decimation stage: the stage's rate, its fs − B, and the
  attenuation there: the analog chain plus the CIC, the latter as N cascaded M-tap moving
  averages evaluated with scipy.signal.freqz at the stage's input rate (E. Hogenauer,
  IEEE Trans. ASSP 29, 1981, from memory).

Usage: chain_oracle.py PATH/TO/foldcheck [--channels N] [--seed S]
Exits 1 on any mismatch (0.01 dB, 0.1 deg, exact rates).
"""
import argparse
import json
import math
import os
import random
import subprocess
import sys
import tempfile
from fractions import Fraction

import numpy as np
from scipy import signal

ROOTS = [("24.576 MHz", Fraction(24_576_000)), ("10 MHz", Fraction(10_000_000)),
         ("12.288 MHz", Fraction(12_288_000)), ("44.1 kHz", Fraction(44_100))]


def analog_ba(kind, order, cutoff, ripple):
    wc = 2 * math.pi * cutoff
    if kind == "butterworth":
        return signal.butter(order, wc, analog=True)
    if kind == "chebyshev":
        return signal.cheby1(order, ripple, wc, analog=True)
    return signal.bessel(order, wc, analog=True, norm="mag")


def attenuation_db(filters, f):
    total = 0.0
    for kind, order, cutoff, ripple in filters:
        b, a = analog_ba(kind, order, cutoff, ripple)
        _, h = signal.freqs(b, a, worN=[2 * math.pi * f])
        total += -20 * math.log10(abs(h[0]))
    return total


def phase_deg(filters, f):
    total = 0.0
    for kind, order, cutoff, ripple in filters:
        b, a = analog_ba(kind, order, cutoff, ripple)
        w = np.linspace(0.0, 2 * math.pi * f, 4000)
        _, h = signal.freqs(b, a, worN=w)
        total += math.degrees(np.unwrap(np.angle(h))[-1])
    return total


def cic_db(order, factor, fin, f):
    h = np.ones(factor) / factor
    taps = np.array([1.0])
    for _ in range(order):
        taps = np.convolve(taps, h)
    _, resp = signal.freqz(taps, worN=[f], fs=fin)
    mag = abs(resp[0])
    return math.inf if mag == 0 else -20 * math.log10(mag)


def yaml_filter(kind, order, cutoff, ripple):
    extra = f", ripple: {ripple} dB" if kind == "chebyshev" else ""
    return f"{{ response: {kind}, order: {order}, cutoff: {cutoff} Hz{extra} }}"


def make_channel(rng, i):
    root_text, root = rng.choice(ROOTS)
    divide = rng.randint(1, 4096) if root > 100_000 else rng.randint(1, 4)
    fs = root / divide
    band = float(fs) / rng.uniform(1.6, 12.0)
    band = round(band, 3)
    filters = []
    for _ in range(rng.randint(1, 2)):
        kind = rng.choice(["butterworth", "chebyshev", "bessel"])
        order = rng.randint(1, 10)
        cutoff = round(band * rng.uniform(0.8, 3.0), 3)
        ripple = rng.choice([0.1, 0.5, 1.0]) if kind == "chebyshev" else None
        filters.append((kind, order, cutoff, ripple))
    sensor = None
    if rng.random() < 0.3:
        sensor = ("butterworth", rng.randint(1, 3), round(band * rng.uniform(2.0, 6.0), 3), None)
    stage = None
    if rng.random() < 0.4:
        stage = (rng.randint(2, 8), rng.randint(1, 5))  # (factor M, order N)
    return dict(name=f"ch-{i:03d}", root_text=root_text, root=root, divide=divide, fs=fs,
                band=band, filters=filters, sensor=sensor, stage=stage)


def rig_text(channels):
    lines = ["format: 1", "rig: oracle", "clocks:"]
    for c in channels:
        lines.append(f"  - {{ name: {c['name']}-osc, frequency: {c['root_text']} }}")
        lines.append(f"  - {{ name: {c['name']}-clk, source: {c['name']}-osc, divide: {c['divide']} }}")
    lines.append("sensors:")
    lines.append("  - { name: plain, bandwidth: 1 GHz }")
    for c in channels:
        if c["sensor"]:
            lines.append(f"  - {{ name: {c['name']}-sensor, bandwidth: 1 GHz, response: [{yaml_filter(*c['sensor'])}] }}")
    lines.append("channels:")
    for c in channels:
        sensor = f"{c['name']}-sensor" if c["sensor"] else "plain"
        fl = ", ".join(yaml_filter(*f) for f in c["filters"])
        dec = ""
        if c["stage"]:
            m, n = c["stage"]
            dec = f", decimate: [{{ factor: {m}, filter: {{ response: sinc, order: {n} }} }}]"
        lines.append(f"  - {{ name: {c['name']}, clock: {c['name']}-clk, sensor: {sensor}, band: {c['band']} Hz, filters: [{fl}]{dec} }}")
    return "\n".join(lines) + "\n"


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("binary")
    ap.add_argument("--channels", type=int, default=60)
    ap.add_argument("--seed", type=int, default=20261201)
    args = ap.parse_args()
    rng = random.Random(args.seed)
    channels = [make_channel(rng, i) for i in range(args.channels)]
    failures = []
    counts = {"adc alias": 0, "stage alias": 0}
    with tempfile.TemporaryDirectory() as tmp:
        path = os.path.join(tmp, "oracle.rig.yaml")
        with open(path, "w") as f:
            f.write(rig_text(channels))
        for c in channels:
            out = subprocess.run([args.binary, "inspect", path, c["name"], "--format", "json"],
                                 capture_output=True, text=True, check=False)
            if out.returncode != 0:
                failures.append(f"{c['name']}: exit {out.returncode}: {out.stderr.strip()}")
                continue
            r = json.loads(out.stdout)
            chain = c["filters"] + ([c["sensor"]] if c["sensor"] else [])
            a0 = r["analysis"]["rate_changes"][0]
            fs = float(c["fs"])
            band = c["band"]

            def check(what, got, want, tol):
                if got is None or abs(got - want) > tol:
                    failures.append(f"{c['name']}: {what}: foldcheck {got}, reference {want}")

            if r["clock"]["path"][-1]["rate_exact_hz"] != str(c["fs"]).replace(" ", ""):
                failures.append(f"{c['name']}: exact rate {r['clock']['path'][-1]['rate_exact_hz']} != {c['fs']}")
            check("rate", a0["rate_hz"], fs, 1e-9 * fs)
            check("ratio", a0["ratio"], fs / band, 1e-9)
            if a0["nyquist"] != (fs > 2 * band):
                failures.append(f"{c['name']}: nyquist verdict {a0['nyquist']} at fs/B = {fs / band}")
            if a0["alias"] is not None:
                f_alias = fs - band
                check("fold_from", a0["alias"]["fold_from_hz"], f_alias, 1e-6 * fs)
                counts["adc alias"] += 1
                want = attenuation_db(chain, f_alias)
                check("attenuation at fs-B (dB)", a0["alias"]["attenuation_db"], want, 0.01 + 1e-6 * want)
            pb = r["analysis"]["passband"]
            want_pb = attenuation_db(chain, band)
            if c["stage"]:
                m, n = c["stage"]
                want_pb += cic_db(n, m, fs, band)
                a1 = r["analysis"]["rate_changes"][1]
                fs1 = fs / m
                check("stage 1 rate", a1["rate_hz"], fs1, 1e-9 * fs1)
                stage_checked = a0["nyquist"] and fs1 > 2 * band
                if stage_checked:
                    if a1["alias"] is None:
                        failures.append(f"{c['name']}: stage 1 alias not checked at fs1/B = {fs1 / band}")
                    else:
                        counts["stage alias"] += 1
                        f1 = fs1 - band
                        check("stage 1 fold_from", a1["alias"]["fold_from_hz"], f1, 1e-6 * fs1)
                        want = attenuation_db(chain, f1) + cic_db(n, m, fs, f1)
                        got = a1["alias"]["attenuation_db"]
                        if not (want > 300 and got >= 299.999):
                            check("stage 1 attenuation at fs-B (dB)", got, want, 0.01 + 1e-6 * want)
                elif a0["nyquist"] and a1["nyquist"]:
                    failures.append(f"{c['name']}: stage 1 nyquist verdict at fs1/B = {fs1 / band}")
            check("attenuation at B (dB)", pb["attenuation_db"], want_pb, 0.01)
            check("phase at B (deg)", r["analysis"]["phase_at_band_deg"], phase_deg(chain, band), 0.1)
    print(f"{len(channels)} channels checked against scipy {__import__('scipy').__version__} "
          f"({counts['adc alias']} ADC folds, {counts['stage alias']} decimation-stage folds): "
          f"{len(failures)} mismatches")
    if counts["adc alias"] == 0 or counts["stage alias"] == 0:
        print("  the random rigs exercised too little: change the seed or the channel count")
        failures.append("coverage")
    for f in failures[:40]:
        print("  " + f)
    sys.exit(1 if failures else 0)


if __name__ == "__main__":
    main()
