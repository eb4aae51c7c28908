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
- for channels with a sinc (CIC) decimation stage: the stage's rate, its worst image and
  the attenuation there: the analog chain plus the CIC, the latter as N cascaded M-tap
  moving averages evaluated with scipy.signal.freqz at the stage's input rate (E.
  Hogenauer, IEEE Trans. ASSP 29, 1981, from memory); some stages carry a `digital`
  filter instead (docs/model.md §2–3: 0 dB to the passband edge, linear in dB across
  the transition, the stopband value above, edges as fractions of the output rate,
  periodic in the input rate; its stopband edge sometimes past half the output rate),
  with its `delay-samples` in the latency;
- the worst image beyond the first (`fold_from_hz`, docs/model.md §3): some sensors carry
  a notched datasheet `table` (linear in dB over log-frequency, numpy.interp), and every
  image band [n·fs − B, n·fs + B] (for a stage, n not a multiple of its factor) up to one
  ADC period past the table is searched on a dense grid; foldcheck's point must lie in an
  image band, carry the reference's attenuation there, and be no more attenuated than
  the grid's least attenuated point (0.01 dB);
- delta-sigma modules (docs/model.md §4): a modulator at R × the ADC rate (R from 16 to
  256) with its own FIR; the worst modulator image [k·f_mod − B, k·f_mod + B] against the
  analog chain alone, on a dense grid, and the ADC images guarded by the FIR's 150 dB;
- latency (docs/model.md §2): the analog group delay at DC (Σ −Re(p)/|p|² over scipy's
  poles, `output='zpk'`) plus the sinc's N·(M − 1)/2 input samples, and the analog group
  delay at the band edge against a central difference of the unwrapped
  scipy.signal.freqs_zpk phase (1e-5 relative).

Groups (docs/model.md §5): seeded random pairs on one root clock, ending at one rate, one
member sampled directly and the other faster and decimated through a sinc stage (delay
N·(M − 1)/2 input samples, Hogenauer 1981, from memory) or a `digital` filter with a
`delay-samples`, each with its own analog filters. For each pair the script recomputes,
from scipy.signal's analog prototypes (`output='zpk'`, `freqs_zpk`, phase unwrapped
from DC on a dense grid of the common band):
- Δφ(f) = φ_a(f) − φ_b(f) with φ = unwrapped analog phase − 360°·f·(digital delays),
  and checks that foldcheck's `phase_difference_deg` equals Δφ at its `frequency_hz`
  (0.01 deg) and is not smaller than the largest |Δφ| on the grid (less 0.01 deg);
- the latency difference `delay_difference_s`: digital delays plus the analog group
  delay at DC, Σ −Re(p)/|p|² over scipy's poles (1e-12 s).

It also runs `foldcheck check --format json` on the channels' rig and recomputes which
rate findings each channel must get, with the thresholds of docs/model.md compared
exactly (fractions) where they meet a rate:
- `nyquist` at the first rate change with fs ≤ 2B,
- `sampling-margin` at the first rate change before that with fs < 2.5·B (common
  practice, the built-in margin),
- `alias-rejection` when, at a checked rate change, the worst image (or a modulator
  image, or a sensor resonance that folds into the band there, net of its gain) is
  attenuated less than the built-in 40 dB (reported at the worst rate change; within
  0.05 dB of it not compared); when the resonance is the worst case, the finding's
  `fold_from_hz` must be the resonance and `attenuation_db` the chain's attenuation
  there less the gain (0.01 dB),
- `passband-droop` when the chain attenuates B by more than 0.5 dB (whatever nyquist
  says),
- `oversampling` when the final rate exceeds 20·B.
A verdict within 0.01 dB of its threshold is not compared (float noise on both sides).

Usage: chain_oracle.py PATH/TO/foldcheck [--channels N] [--groups G] [--seed S]
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

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from run_check import check_json  # noqa: E402

ROOTS = [("24.576 MHz", Fraction(24_576_000)), ("10 MHz", Fraction(10_000_000)),
         ("12.288 MHz", Fraction(12_288_000)), ("44.1 kHz", Fraction(44_100))]


def analog_ba(kind, order, cutoff, ripple):
    wc = 2 * math.pi * cutoff
    if kind == "butterworth":
        return signal.butter(order, wc, analog=True)
    if kind == "chebyshev":
        return signal.cheby1(order, ripple, wc, analog=True)
    return signal.bessel(order, wc, analog=True, norm="mag")


def table_db(points, f):
    """A datasheet table as docs/model.md §2 defines it: linear in dB over log-frequency
    between points (numpy.interp on log10 f), 0 below the first point, the last value
    held above the last."""
    xs = np.log10([p[0] for p in points])
    ys = [p[1] for p in points]
    f = np.asarray(f, dtype=float)
    return np.where(f < points[0][0], 0.0, np.interp(np.log10(np.maximum(f, 1e-300)), xs, ys))


def analog_only(filters):
    return [f for f in filters if f[0] != "table"]


def attenuation_db(filters, f):
    total = 0.0
    for flt in filters:
        if flt[0] == "table":
            total += float(table_db(flt[1], f))
            continue
        kind, order, cutoff, ripple = flt
        b, a = analog_ba(kind, order, cutoff, ripple)
        _, h = signal.freqs(b, a, worN=[2 * math.pi * f])
        total += -20 * math.log10(abs(h[0]))
    return total


def attenuation_vec(filters, f):
    """Attenuation (dB) of a chain of analog filters at an array of frequencies."""
    total = np.zeros_like(f)
    for flt in filters:
        if flt[0] == "table":
            total += table_db(flt[1], f)
            continue
        kind, order, cutoff, ripple = flt
        b, a = analog_ba(kind, order, cutoff, ripple)
        _, h = signal.freqs(b, a, worN=2 * math.pi * f)
        total += -20 * np.log10(np.abs(h))
    return total


def phase_deg(filters, f):
    total = 0.0
    for kind, order, cutoff, ripple in analog_only(filters):
        b, a = analog_ba(kind, order, cutoff, ripple)
        w = np.linspace(0.0, 2 * math.pi * f, 4000)
        _, h = signal.freqs(b, a, worN=w)
        total += math.degrees(np.unwrap(np.angle(h))[-1])
    return total


def cic_vec(order, factor, fin, f):
    """cic_db at an array of frequencies (nulls as +inf)."""
    h = np.ones(factor) / factor
    taps = np.array([1.0])
    for _ in range(order):
        taps = np.convolve(taps, h)
    _, resp = signal.freqz(taps, worN=np.asarray(f, dtype=float), fs=fin)
    with np.errstate(divide="ignore"):
        return -20 * np.log10(np.abs(resp))


def group_delay_numeric_s(filters, f):
    """Group delay of the analog filters at f (> 0) as −dφ/dω: a central difference of
    the unwrapped scipy.signal.freqs_zpk phase, a method independent of the pole sum."""
    d = max(f * 1e-5, 1e-3)
    grid = np.linspace(0.0, f + d, 20001)
    grid = np.append(grid[grid < f - d], [f - d, f + d])
    phi = np.radians(unwrapped_phase_deg(analog_only(filters), grid))
    return -(phi[-1] - phi[-2]) / (2 * math.pi * 2 * d)


def cic_db(order, factor, fin, f):
    h = np.ones(factor) / factor
    taps = np.array([1.0])
    for _ in range(order):
        taps = np.convolve(taps, h)
    _, resp = signal.freqz(taps, worN=[f], fs=fin)
    mag = abs(resp[0])
    return math.inf if mag == 0 else -20 * math.log10(mag)


def digital_vec(edges, fin, fout, f):
    """A `digital` decimation filter (docs/model.md §2, §3): 0 dB up to the passband edge,
    linear in dB over linear frequency across the transition, the stopband value above;
    edges are fractions of the stage's output rate `fout`; it runs at the input rate
    `fin` and so is periodic in it: evaluated at |f − round(f/fin)·fin|."""
    pe, se, stop, _ = edges
    f = np.asarray(f, dtype=float)
    g = np.abs(f - np.round(f / fin) * fin)
    lo, hi = pe * fout, se * fout
    return np.clip((g - lo) / (hi - lo), 0.0, 1.0) * stop


def stage_db(c, f):
    """The decimation stage's own filter at `f` (sinc or digital), dB."""
    m, order = c["stage"]
    fs0 = float(c["fs"])
    if c["digital"]:
        return digital_vec(c["digital"], fs0, fs0 / m, f)
    return cic_vec(order, m, fs0, f) if np.ndim(f) else cic_db(order, m, fs0, f)


def stage_delay_s(c):
    """The stage's delay: the sinc's N·(M − 1)/2 input samples (Hogenauer 1981, from
    memory), or the digital filter's `delay-samples` of the output rate."""
    if not c["stage"]:
        return 0.0
    m, order = c["stage"]
    if c["digital"]:
        return c["digital"][3] / (float(c["fs"]) / m)
    return order * (m - 1) / 2 / float(c["fs"])


def yaml_filter(kind, order=None, cutoff=None, ripple=None):
    if kind == "table":
        pts = ", ".join(f"[{fq} Hz, {db} dB]" for fq, db in order)
        return f"{{ response: table, points: [{pts}] }}"
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
    elif float(fs) >= 3 * band and rng.random() < 0.3:
        # A notched datasheet table: deep from 0.6·fs to 1.2·fs, rising back to a shallow
        # value somewhere between 1.5·fs and 2.6·fs, so the worst image may lie beyond
        # the first and inside an interpolated segment (docs/model.md §3).
        f0 = float(fs)
        sensor = ("table", [(round(band * 1.5, 3), 0.1), (round(0.6 * f0, 3), 100.0),
                            (round(1.2 * f0, 3), 100.0),
                            (round(rng.uniform(1.5, 2.6) * f0, 3), float(rng.randint(3, 60)))])
    stage = None
    digital = None
    if rng.random() < 0.4:
        stage = (rng.randint(2, 8), rng.randint(1, 5))  # (factor M, order N)
        if rng.random() < 0.4:
            # A `digital` stage filter instead of the sinc: edges as fractions of the
            # output rate (the stopband edge sometimes past its half, where images fold
            # in), its stopband value, and its delay in output samples.
            digital = (round(rng.uniform(0.3, 0.45), 3), round(rng.uniform(0.5, 0.7), 3),
                       float(rng.choice([60, 80, 100, 120])), round(rng.uniform(5, 60), 1))
    modulator = None
    if stage is None and (sensor is None or sensor[0] != "table") and float(fs) >= 2.5 * band \
            and rng.random() < 0.3:
        # A delta-sigma module: modulator at R × the ADC rate, its own FIR (passband
        # 0.45, stopband 0.55 of the ADC rate, 150 dB), periodic in the modulator rate.
        modulator = rng.choice([16, 32, 64, 128, 256])
    resonance = None
    if sensor is None and modulator is None and rng.random() < 0.35:
        # A sensor resonance above the band (frequency, gain): it may fold into the band
        # at the ADC or at the stage, where the chain less its gain must still give the
        # required rejection (docs/model.md §1, the rule's explanation).
        if rng.random() < 0.7:
            # Aimed into an image band of the ADC or of the stage (n·fs ± B), most often.
            fs_k = fs / stage[0] if stage and rng.random() < 0.5 else fs
            f = float(fs_k) * rng.randint(1, 2) + band * rng.uniform(-0.95, 0.95)
        else:
            f = float(fs) * rng.uniform(0.55, 2.6)
        resonance = (Fraction(str(round(max(f, 1.5 * band), 1))), float(rng.randint(5, 40)))
    return dict(name=f"ch-{i:03d}", root_text=root_text, root=root, divide=divide, fs=fs,
                band=band, filters=filters, sensor=sensor, stage=stage, modulator=modulator,
                resonance=resonance, digital=digital)


def rig_text(channels):
    lines = ["format: 1", "rig: oracle", "clocks:"]
    for c in channels:
        lines.append(f"  - {{ name: {c['name']}-osc, frequency: {c['root_text']} }}")
        lines.append(f"  - {{ name: {c['name']}-clk, source: {c['name']}-osc, divide: {c['divide']} }}")
    mods = sorted({c["modulator"] for c in channels if c["modulator"]})
    if mods:
        lines.append("modules:")
        for r in mods:
            lines.append(f"  - {{ name: ds-{r}, modulator: {{ oversampling-ratio: {r}, filter: "
                         "{ response: digital, passband-edge: 0.45, stopband-edge: 0.55, attenuation: 150 dB } } }")
    lines.append("sensors:")
    lines.append("  - { name: plain, bandwidth: 1 GHz }")
    for c in channels:
        if c["sensor"]:
            lines.append(f"  - {{ name: {c['name']}-sensor, bandwidth: 1 GHz, response: [{yaml_filter(*c['sensor'])}] }}")
        elif c["resonance"]:
            fr, gain = c["resonance"]
            lines.append(f"  - {{ name: {c['name']}-sensor, bandwidth: 1 GHz, "
                         f"resonance: {{ frequency: {float(fr)} Hz, gain: {gain} dB }} }}")
    lines.append("channels:")
    for c in channels:
        sensor = f"{c['name']}-sensor" if c["sensor"] or c["resonance"] else "plain"
        fl = ", ".join(yaml_filter(*f) for f in c["filters"])
        dec = ""
        if c["stage"] and c["digital"]:
            pe, se, stop, samples = c["digital"]
            dec = (f", decimate: [{{ factor: {c['stage'][0]}, filter: {{ response: digital, passband-edge: {pe}, "
                   f"stopband-edge: {se}, attenuation: {stop} dB, delay-samples: {samples} }} }}]")
        elif c["stage"]:
            m, n = c["stage"]
            dec = f", decimate: [{{ factor: {m}, filter: {{ response: sinc, order: {n} }} }}]"
        module = f", module: ds-{c['modulator']}" if c["modulator"] else ""
        lines.append(f"  - {{ name: {c['name']}, clock: {c['name']}-clk, sensor: {sensor}{module}, band: {c['band']} Hz, filters: [{fl}]{dec} }}")
    return "\n".join(lines) + "\n"


def zpk(kind, order, cutoff, ripple):
    wc = 2 * math.pi * cutoff
    if kind == "butterworth":
        return signal.butter(order, wc, analog=True, output="zpk")
    if kind == "chebyshev":
        return signal.cheby1(order, ripple, wc, analog=True, output="zpk")
    return signal.bessel(order, wc, analog=True, norm="mag", output="zpk")


def unwrapped_phase_deg(filters, f_grid):
    """Unwrapped analog phase (deg) of a chain on a grid that starts at DC."""
    total = np.zeros_like(f_grid)
    for flt in analog_only(filters):
        z, p, k = zpk(*flt)
        _, h = signal.freqs_zpk(z, p, k, worN=2 * math.pi * f_grid)
        total += np.degrees(np.unwrap(np.angle(h)))
    return total


def dc_group_delay_s(filters):
    total = 0.0
    for flt in analog_only(filters):
        z, p, _ = zpk(*flt)
        # τ(0) = Σ_poles −Re(p)/|p|² − Σ_zeros (same); these prototypes have no zeros.
        total += float(np.sum(-p.real / np.abs(p) ** 2))
        if len(z):
            total -= float(np.sum(-z.real / np.abs(z) ** 2))
    return total


def random_filters(rng, band, n):
    out = []
    for _ in range(n):
        kind = rng.choice(["butterworth", "chebyshev", "bessel"])
        order = rng.randint(2, 8)
        cutoff = round(band * rng.uniform(1.2, 3.0), 3)
        ripple = rng.choice([0.1, 0.5]) if kind == "chebyshev" else None
        out.append((kind, order, cutoff, ripple))
    return out


def make_pair(rng, i):
    fs = Fraction(rng.choice([3200, 6400, 12800, 25600]))
    band = round(float(fs) / rng.uniform(3.0, 8.0), 3)
    m = rng.randint(2, 8)
    if rng.random() < 0.5:
        stage = ("sinc", rng.randint(1, 5), None)
    else:
        stage = ("digital", None, round(rng.uniform(0.0, 40.0), 2))
    return dict(name=f"g{i:03d}", fs=fs, band=band, m=m, stage=stage,
                a=random_filters(rng, band, rng.randint(1, 2)),
                b=random_filters(rng, band, rng.randint(1, 2)))


def pair_rig(pairs):
    lines = ["format: 1", "rig: oracle-groups", "clocks:"]
    for g in pairs:
        lines.append(f"  - {{ name: {g['name']}-fast, frequency: {g['fs'] * g['m']} Hz }}")
        lines.append(f"  - {{ name: {g['name']}-slow, source: {g['name']}-fast, divide: {g['m']} }}")
    lines.append("channels:")
    for g in pairs:
        fa = ", ".join(yaml_filter(*f) for f in g["a"])
        fb = ", ".join(yaml_filter(*f) for f in g["b"])
        kind, order, samples = g["stage"]
        if kind == "sinc":
            flt = f"{{ response: sinc, order: {order} }}"
        else:
            flt = ("{ response: digital, passband-edge: 0.45, stopband-edge: 0.5, "
                   f"attenuation: 120 dB, delay-samples: {samples} }}")
        lines.append(f"  - {{ name: {g['name']}-a, clock: {g['name']}-slow, band: {g['band']} Hz, filters: [{fa}] }}")
        lines.append(f"  - {{ name: {g['name']}-b, clock: {g['name']}-fast, band: {g['band']} Hz, filters: [{fb}], "
                     f"decimate: [{{ factor: {g['m']}, filter: {flt} }}] }}")
    lines.append("groups:")
    for g in pairs:
        lines.append(f"  - {{ name: {g['name']}, channels: [{g['name']}-b, {g['name']}-a], phase-tolerance: 0.001 deg }}")
    return "\n".join(lines) + "\n"


def check_groups(binary, pairs, tmp, failures):
    _, findings = check_json(binary, tmp, "groups", pair_rig(pairs), failures)
    found = {}
    for x in findings or []:
        if x["rule"] == "group-phase":
            found[x["message"].split("`")[1]] = x["values"]
    checked = 0
    for g in pairs:
        v = found.get(g["name"])
        if v is None:
            failures.append(f"group {g['name']}: no group-phase finding at a 0.001 deg tolerance")
            continue
        fs_fast = float(g["fs"] * g["m"])
        kind, order, samples = g["stage"]
        # Digital delay of member b: a sinc delays N(M-1)/2 input samples; a digital
        # filter its delay-samples of the stage's output rate.
        delay_b = order * (g["m"] - 1) / 2 / fs_fast if kind == "sinc" else samples / float(g["fs"])
        grid = np.linspace(0.0, g["band"], 20001)
        phi_a = unwrapped_phase_deg(g["a"], grid)
        phi_b = unwrapped_phase_deg(g["b"], grid) - 360.0 * grid * delay_b
        dphi = phi_a - phi_b
        f_got = v["frequency_hz"]
        want_at = float((unwrapped_phase_deg(g["a"], np.linspace(0, f_got, 4001))[-1])
                        - (unwrapped_phase_deg(g["b"], np.linspace(0, f_got, 4001))[-1] - 360.0 * f_got * delay_b))
        got = v["phase_difference_deg"]
        if abs(got - want_at) > 0.01:
            failures.append(f"group {g['name']}: Δφ at {f_got} Hz: foldcheck {got}, scipy {want_at}")
        if abs(got) < np.max(np.abs(dphi)) - 0.01:
            failures.append(f"group {g['name']}: foldcheck's max |Δφ| {abs(got)} below scipy's {np.max(np.abs(dphi))}")
        if not 0.0 < f_got <= g["band"] * (1 + 1e-12):
            failures.append(f"group {g['name']}: frequency {f_got} outside (0, {g['band']}]")
        want_delay = dc_group_delay_s(g["a"]) - (dc_group_delay_s(g["b"]) + delay_b)
        if abs(v["delay_difference_s"] - want_delay) > 1e-12 + 1e-9 * abs(want_delay):
            failures.append(f"group {g['name']}: delay difference {v['delay_difference_s']} vs {want_delay}")
        checked += 1
    return checked


def chain_of(c):
    return c["filters"] + ([c["sensor"]] if c["sensor"] else [])


def worst_image_ref(c, k):
    """The least attenuated point (f, dB) of the image bands of rate change k (0: the
    ADC, 1: the sinc stage), recomputed on a dense grid of every band [n·fs_k − B,
    n·fs_k + B] (n ≥ 1; for the stage, n not a multiple of its factor, whose images the
    ADC already folded), plus the table points inside, up to one ADC period beyond the
    table's last point (docs/model.md §3). Analog parts from scipy.signal.freqs, the
    sinc as cascaded moving averages with scipy.signal.freqz."""
    chain = chain_of(c)
    fs0, band = float(c["fs"]), c["band"]
    last_pt = max([p[0] for flt in chain if flt[0] == "table" for p in flt[1]], default=0.0)
    table_pts = [p[0] for flt in chain if flt[0] == "table" for p in flt[1]]
    if k == 0:
        fs, skip = fs0, 0
    else:
        m, _ = c["stage"]
        fs, skip = fs0 / m, m
    top = math.ceil((last_pt + fs0 + band) / fs) + 1
    best = (math.inf, math.inf)
    for n in range(1, top + 1):
        if skip and n % skip == 0:
            continue
        lo, hi = n * fs - band, n * fs + band
        grid = np.concatenate([np.linspace(lo, hi, 401), [p for p in table_pts if lo < p < hi]])
        a = attenuation_vec(chain, grid)
        if k == 1:
            a = a + stage_db(c, grid)
        i = int(np.argmin(a))
        if a[i] < best[1]:
            best = (float(grid[i]), float(a[i]))
    return best


def modulator_ref(c):
    """The worst modulator image (f, dB) against the analog chain alone: a dense grid of
    [k·f_mod − B, k·f_mod + B] for k = 1, 2 (every response here keeps rising)."""
    fmod, band = float(c["fs"]) * c["modulator"], c["band"]
    grid = np.concatenate([np.linspace(k * fmod - band, k * fmod + band, 2001) for k in (1, 2)])
    a = attenuation_vec(chain_of(c), grid)
    i = int(np.argmin(a))
    return float(grid[i]), float(a[i])


RATE_RULES = ["nyquist", "sampling-margin", "alias-rejection", "passband-droop", "oversampling"]
REQUIRED_DB = 40.0       # built-in required rejection (docs/model.md)
MARGIN = Fraction(5, 2)  # built-in margin, common practice
TOLERANCE_DB = 0.5       # built-in passband tolerance
LIMIT = 20               # built-in oversampling limit
NEAR_DB = 0.01


def fold(f, fs):
    """Where `f` lands when sampled at `fs`: |f − round(f/fs)·fs| (exact fractions)."""
    return abs(f - round(f / fs) * fs)


def resonance_ref(c, rates, k):
    """The net attenuation (dB) of the sensor resonance at rate change k when it folds
    into the band there: it lies above the band before k (where the earlier rate changes
    left it) and lands inside it at k. The chain's attenuation at the resonance
    (scipy.signal.freqs; at the stage, plus the sinc at its input rate) less its gain.
    None when it does not fold in at k."""
    if not c["resonance"]:
        return None
    fr, gain = c["resonance"]
    band = Fraction(str(c["band"]))
    arrives = fr if k == 0 else fold(fr, rates[k - 1])
    if arrives <= band or fold(fr, rates[k]) > band:
        return None
    att = attenuation_db(chain_of(c), float(fr))
    if k == 1:
        att += float(stage_db(c, float(fr)))
    return att - gain


def expected_findings(c):
    """The rate findings a channel must get: {rule: stage or None}, and the rules too
    close to their threshold to compare; with the worst alias check's (frequency, dB)
    under `worst` when the resonance is the worst by more than 0.05 dB."""
    chain = chain_of(c)
    band = Fraction(str(c["band"]))
    rates = [c["fs"]]
    if c["stage"]:
        rates.append(c["fs"] / c["stage"][0])
    expected, unsure = {}, set()
    nyq = next((k for k, fs in enumerate(rates) if fs <= 2 * band), None)
    if nyq is not None:
        expected["nyquist"] = nyq
    checked = rates if nyq is None else rates[:nyq]
    margin = next((k for k, fs in enumerate(checked) if fs < MARGIN * band), None)
    if margin is not None:
        expected["sampling-margin"] = margin
    worst = None
    candidates = []
    for k, fs in enumerate(checked):
        # A converter's own filter (150 dB stopband, periodic in the modulator rate)
        # guards its ADC images; its modulator images meet the analog chain alone.
        _, a = modulator_ref(c) if c["modulator"] else worst_image_ref(c, k)
        candidates.append((a, k, None))
        net = resonance_ref(c, rates, k)
        if net is not None:
            candidates.append((net, k, c["resonance"][0]))
    for a, k, fr in candidates:
        if abs(a - REQUIRED_DB) < 0.05:
            unsure.add("alias-rejection")
        if a < REQUIRED_DB and (worst is None or a < worst[1]):
            worst = (k, a, fr)
    if worst is not None:
        expected["alias-rejection"] = worst[0]
        others = [a for a, k, fr in candidates if fr is None]
        if worst[2] is not None and all(a > worst[1] + 0.05 for a in others):
            expected["worst"] = (float(worst[2]), worst[1])
    droop = attenuation_db(chain, float(band))
    if c["stage"]:
        droop += float(stage_db(c, float(band)))
    if abs(droop - TOLERANCE_DB) < NEAR_DB:
        unsure.add("passband-droop")
    if droop > TOLERANCE_DB:
        expected["passband-droop"] = None
    if rates[-1] > LIMIT * band:
        expected["oversampling"] = None
    return expected, unsure


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("binary")
    ap.add_argument("--channels", type=int, default=60)
    ap.add_argument("--groups", type=int, default=30)
    ap.add_argument("--seed", type=int, default=20261201)
    args = ap.parse_args()
    rng = random.Random(args.seed)
    channels = [make_channel(rng, i) for i in range(args.channels)]
    pairs = [make_pair(rng, i) for i in range(args.groups)]
    failures = []
    counts = {"adc alias": 0, "stage alias": 0, "findings": 0, "compared": 0, "interior worst": 0,
              "modulator": 0, "latency": 0, "resonance worst": 0}
    with tempfile.TemporaryDirectory() as tmp:
        path, findings = check_json(args.binary, tmp, "oracle", rig_text(channels), failures)
        reported, alias_values = {}, {}
        if findings is not None:
            for f in findings:
                if f["rule"] in RATE_RULES and f.get("channel"):
                    reported.setdefault(f["channel"], {})[f["rule"]] = f["values"].get("stage")
                if f["rule"] == "alias-rejection" and f.get("channel"):
                    alias_values[f["channel"]] = f["values"]
        for c in channels:
            expected, unsure = expected_findings(c)
            got = reported.get(c["name"], {})
            counts["findings"] += len([r for r in expected if r in RATE_RULES])
            for rule in RATE_RULES:
                if rule in unsure:
                    continue
                counts["compared"] += 1
                if (rule in expected) != (rule in got):
                    failures.append(f"{c['name']}: `{rule}`: check {'reports' if rule in got else 'does not report'} it, "
                                    f"the reference {'expects' if rule in expected else 'does not'}")
                elif rule in expected and expected[rule] is not None and got[rule] != expected[rule]:
                    failures.append(f"{c['name']}: `{rule}` at stage {got[rule]}, the reference says {expected[rule]}")
            if "worst" in expected and "alias-rejection" not in unsure and "alias-rejection" in got:
                # The resonance is the worst case: reported at its frequency, with the net
                # attenuation (the chain's less the gain).
                counts["resonance worst"] += 1
                fr, net = expected["worst"]
                v = alias_values[c["name"]]
                if abs(v["fold_from_hz"] - fr) > 1e-9 * fr or abs(v["attenuation_db"] - net) > 0.01 + 1e-6 * abs(net):
                    failures.append(f"{c['name']}: resonance at {fr} Hz, net {net:.3f} dB expected; check says "
                                    f"{v['fold_from_hz']} Hz, {v['attenuation_db']} dB")
        for c in channels:
            out = subprocess.run([args.binary, "inspect", path, c["name"], "--format", "json"],
                                 capture_output=True, text=True, check=False)
            if out.returncode != 0:
                failures.append(f"{c['name']}: exit {out.returncode}: {out.stderr.strip()}")
                continue
            r = json.loads(out.stdout)
            chain = chain_of(c)
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
            if a0["alias"] is not None and c["modulator"]:
                # The converter's filter gives 150 dB on every ADC image.
                if a0["alias"]["attenuation_db"] < 150.0 - 0.01:
                    failures.append(f"{c['name']}: ADC image {a0['alias']['attenuation_db']} dB below the converter's 150 dB")
            if c["modulator"]:
                counts["modulator"] += 1
                m = a0["modulator"]
                fmod = fs * c["modulator"]
                if m is None:
                    failures.append(f"{c['name']}: no modulator check at {fmod} Hz")
                else:
                    check("modulator rate", m["rate_hz"], fmod, 1e-9 * fmod)
                    got_f, got_a = m["fold_from_hz"], m["attenuation_db"]
                    k = round(got_f / fmod)
                    if k < 1 or abs(got_f - k * fmod) > band * (1 + 1e-9):
                        failures.append(f"{c['name']}: modulator fold_from {got_f} outside [k·{fmod} ± {band}]")
                    want = attenuation_db(chain, got_f)
                    check(f"modulator attenuation at {got_f} Hz", got_a, want, 0.01 + 1e-6 * want)
                    _, ref_a = modulator_ref(c)
                    if got_a > ref_a + 0.01:
                        failures.append(f"{c['name']}: worst modulator image {got_a} dB above scipy's {ref_a} dB")
            elif a0["modulator"] is not None:
                failures.append(f"{c['name']}: a modulator check without a modulator")
            if a0["alias"] is not None and not c["modulator"]:
                # The worst image (docs/model.md §3): the least attenuated point of the
                # image bands [n·fs − B, n·fs + B], here on a dense grid of the first
                # three (every response in these chains rises beyond them). foldcheck's
                # frequency must lie in an image band, its attenuation must be scipy's
                # there, and no grid point may be less attenuated (0.01 dB).
                counts["adc alias"] += 1
                got_f = a0["alias"]["fold_from_hz"]
                got_a = a0["alias"]["attenuation_db"]
                n = round(got_f / fs)
                if n < 1 or abs(got_f - n * fs) > band * (1 + 1e-9):
                    failures.append(f"{c['name']}: fold_from {got_f} outside the image bands of {fs} Hz")
                want = attenuation_db(chain, got_f)
                check(f"attenuation at {got_f} Hz (dB)", got_a, want, 0.01 + 1e-6 * want)
                _, grid_min = worst_image_ref(c, 0)
                if got_a > grid_min + 0.01:
                    failures.append(f"{c['name']}: worst image {got_a} dB above scipy's grid minimum {grid_min} dB")
                if abs(got_f - (fs - band)) > 1e-6 * fs:
                    counts["interior worst"] += 1
            pb = r["analysis"]["passband"]
            want_pb = attenuation_db(chain, band)
            if c["stage"]:
                m, n = c["stage"]
                want_pb += float(stage_db(c, band))
                a1 = r["analysis"]["rate_changes"][1]
                fs1 = fs / m
                check("stage 1 rate", a1["rate_hz"], fs1, 1e-9 * fs1)
                stage_checked = a0["nyquist"] and fs1 > 2 * band
                if stage_checked:
                    if a1["alias"] is None:
                        failures.append(f"{c['name']}: stage 1 alias not checked at fs1/B = {fs1 / band}")
                    else:
                        counts["stage alias"] += 1
                        # The worst point of the stage's image bands (n not a multiple of
                        # M), checked like the ADC's.
                        f1 = a1["alias"]["fold_from_hz"]
                        n1 = round(f1 / fs1)
                        if n1 < 1 or n1 % m == 0 or abs(f1 - n1 * fs1) > band * (1 + 1e-9):
                            failures.append(f"{c['name']}: stage 1 fold_from {f1} outside its image bands")
                        if abs(f1 - (fs1 - band)) > 1e-6 * fs1:
                            counts["interior worst"] += 1
                        want = attenuation_db(chain, f1) + float(stage_db(c, f1))
                        got = a1["alias"]["attenuation_db"]
                        if not (want > 300 and got >= 299.999):
                            check("stage 1 attenuation at its worst image (dB)", got, want, 0.01 + 1e-6 * want)
                        _, ref1 = worst_image_ref(c, 1)
                        if got > ref1 + 0.01:
                            failures.append(f"{c['name']}: stage 1 worst image {got} dB above scipy's grid minimum {ref1} dB")
                elif a0["nyquist"] and a1["nyquist"]:
                    failures.append(f"{c['name']}: stage 1 nyquist verdict at fs1/B = {fs1 / band}")
            check("attenuation at B (dB)", pb["attenuation_db"], want_pb, 0.01)
            # Latency (docs/model.md §2): the sinc's N·(M − 1)/2 input samples plus the
            # analog group delay at DC, Σ −Re(p)/|p|² over scipy's poles; the group delay
            # at the band edge against a numerical derivative of scipy's phase.
            lat = r["analysis"]["latency"]
            digital = stage_delay_s(c)
            dc = dc_group_delay_s(chain)
            check("analog group delay at DC (s)", lat["analog_group_delay_dc_s"], dc, 1e-12 + 1e-9 * dc)
            check("latency (s)", lat["latency_s"], dc + digital, 1e-12 + 1e-9 * (dc + digital))
            edge = group_delay_numeric_s(chain, band)
            check("analog group delay at B (s)", lat["analog_group_delay_band_edge_s"], edge, 1e-12 + 1e-5 * abs(edge))
            counts["latency"] += 1
            check("phase at B (deg)", r["analysis"]["phase_at_band_deg"], phase_deg(chain, band), 0.1)
        groups_checked = check_groups(args.binary, pairs, tmp, failures)
    print(f"{groups_checked} group pairs checked (phase over the common band with digital delays, latency difference)")
    print(f"{len(channels)} channels checked against scipy {__import__('scipy').__version__} "
          f"({counts['adc alias']} ADC folds, {counts['stage alias']} decimation-stage folds, "
          f"{counts['interior worst']} worst images beyond fs − B, {counts['modulator']} modulator checks, "
          f"{counts['resonance worst']} folding sensor resonances reported as the worst case, "
          f"{counts['latency']} latencies; "
          f"{counts['compared']} rule verdicts of `check` compared, {counts['findings']} findings expected): "
          f"{len(failures)} mismatches")
    if (counts["adc alias"] == 0 or counts["stage alias"] == 0 or counts["findings"] < 20
            or counts["modulator"] == 0 or counts["interior worst"] == 0
            or counts["resonance worst"] == 0):
        print("  the random rigs exercised too little: change the seed or the channel count")
        failures.append("coverage")
    for f in failures[:40]:
        print("  " + f)
    sys.exit(1 if failures else 0)


if __name__ == "__main__":
    main()
