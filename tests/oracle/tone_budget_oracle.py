#!/usr/bin/env python3
"""End-to-end oracle for known tones and the data budgets: seeded random rigs through
the real binary (`foldcheck check --format json`), recomputed independently.

Each rig has channels on clocks divided exactly from one oscillator, some with a plain
decimation stage, each with zero to two analog anti-alias filters (Butterworth,
Chebyshev type I, Bessel), on one of three modules or on none, with or without their own
`sample-bits` and `alias-rejection`; known tones (`disturbances`) with a level and a
channel list (or none: every channel); module and logger limits set a little above or
below what the channels produce.

`disturbance-alias` (docs/model.md §1, the rule's explanation in `foldcheck explain`):
at every rate change `fs` (the ADC, then each stage) a tone `f` above `fs/2` appears at
`|f − round(f/fs)·fs|` (the folding relation of the sampling theorem: C. E. Shannon,
Proc. IRE 37, 1949); when that lands in `[0, B]` the chain must attenuate `f` by the
required rejection plus the tone's `level`. The required rejection is the channel's
`alias-rejection`, else the ideal dynamic range of the module's `adc-bits`,
6.02·N + 1.76 dB (W. Kester, Analog Devices MT-001, from memory), else 40 dB. Rates and
folds are computed with Python's fractions; the attenuation of the analog chain at `f`
with scipy.signal.butter / cheby1 / bessel(norm='mag') (analog=True) and freqs. The set
of (channel, tone) pairs that fail is compared; for channels without decimation also the
reported fold (exact), attenuation and requirement (0.01 dB) and stage 0.

`throughput` and `storage` (docs/format.md, `logger`, `modules`): a channel produces
final rate × sample-bits ÷ 8 bytes per second, sample-bits being the channel's, else
its module's, else the module's `adc-bits` rounded up to a whole byte, else 32; each
module's channels against its `throughput`, all channels against the logger's, and the
logger's rate × `duration` against its `storage`, the limits written in kB, MB, GB, TB
(powers of 1000: BIPM, The International System of Units, 9th edition, 2019) or KiB,
MiB, GiB (powers of 1024: IEC 80000-13). Sums are exact fractions;
each finding's `data_rate_bytes_per_s` / `bytes` and limit must match (relative 1e-9),
and a limit met exactly never happens here (limits are at least 1 % away).

Usage: tone_budget_oracle.py PATH/TO/foldcheck [--rigs N] [--seed S]
Exits 1 on any mismatch.
"""
import math
import os
import sys
import tempfile
from fractions import Fraction

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from chain_oracle import ROOTS, attenuation_db, random_filters, yaml_filter  # noqa: E402
from run_check import arguments, check_json, finish, flow_item  # noqa: E402

DURATIONS = [("90 min", 5400), ("1 h", 3600), ("24 h", 86_400), ("2 d", 172_800)]


def away_from(rng, value, lo=0.8, hi=1.25):
    """A factor times `value`, at least 1 % away from it."""
    while True:
        k = rng.uniform(lo, hi)
        if abs(k - 1) >= 0.01:
            return value * Fraction(k)


RATE_UNITS = [("kB/s", 1000), ("KiB/s", 1024), ("MB/s", 1000**2), ("MiB/s", 1024**2)]
SIZE_UNITS = [("GB", 1000**3), ("GiB", 1024**3), ("TB", 1000**4)]


def quantity(rng, x, units):
    """`x` (bytes or bytes per second) written in a random unit of `units` with four
    decimals: (text, the exact value of what was written)."""
    unit, scale = rng.choice(units)
    digits = f"{float(x / scale):.4f}"
    if Fraction(digits) == 0:
        unit, scale = units[0]
        digits = f"{float(x / scale):.4f}"
    return f"{digits} {unit}", Fraction(digits) * scale


def make_rig(rng, r):
    root_text, root = rng.choice(ROOTS[:3])
    modules = []
    for m in range(3):
        adc = rng.choice([None, 16, 24])
        bits = rng.choice([None, None, 16, 24, 32])
        modules.append(dict(name=f"card-{m}", adc_bits=adc, sample_bits=bits))
    channels = []
    for i in range(rng.randint(4, 10)):
        divide = rng.randint(math.ceil(root / 200_000), int(root / 2_000))
        fs = root / divide
        factor = rng.randint(2, 4) if rng.random() < 0.3 else None
        final = fs / factor if factor else fs
        band = round(float(final) / rng.uniform(2.3, 8.0), 3)
        filters = random_filters(rng, band, rng.randint(0, 2))
        module = rng.choice([None] + modules)
        rejection = rng.randint(30, 100) if rng.random() < 0.5 else None
        bits = rng.choice([16, 24, 32]) if rng.random() < 0.4 else None
        channels.append(dict(name=f"r{r}-ch{i}", divide=divide, fs=fs, factor=factor,
                             final=final, band=band, filters=filters, module=module,
                             rejection=rejection, bits=bits))
    tones = []
    seen = set()
    for t in range(rng.randint(2, 5)):
        c = rng.choice(channels)
        f = round(float(c["fs"]) * rng.uniform(0.3, 4.0), 1)
        if f in seen:
            continue
        seen.add(f)
        level = rng.choice([None, 0, 10, 20, 35])
        names = None
        if rng.random() < 0.5:
            names = sorted({rng.choice(channels)["name"] for _ in range(rng.randint(1, 3))})
        tones.append(dict(name=f"tone-{t}", f=Fraction(str(f)), f_text=f"{f} Hz", level=level,
                          channels=names))
    rig = dict(name=f"oracle-{r}", root_text=root_text, root=root, modules=modules,
               channels=channels, tones=tones)
    # Limits around what the channels produce.
    for m in modules:
        total = sum((data_rate(c) for c in channels if c["module"] is m), Fraction(0))
        m["throughput"] = None
        if total > 0 and rng.random() < 0.8:
            m["throughput"] = quantity(rng, away_from(rng, total), RATE_UNITS)
    total = sum((data_rate(c) for c in channels), Fraction(0))
    dur_text, dur_s = rng.choice(DURATIONS)
    rig["logger"] = dict(
        throughput=quantity(rng, away_from(rng, total), RATE_UNITS),
        storage=quantity(rng, away_from(rng, total * dur_s), SIZE_UNITS),
        duration=(dur_text, dur_s))
    return rig


def sample_bits(c):
    m = c["module"]
    if c["bits"]:
        return c["bits"]
    if m and m["sample_bits"]:
        return m["sample_bits"]
    if m and m["adc_bits"]:
        return -(-m["adc_bits"] // 8) * 8
    return 32


def data_rate(c):
    return c["final"] * sample_bits(c) / 8


def required_db(c):
    if c["rejection"] is not None:
        return float(c["rejection"])
    m = c["module"]
    if m and m["adc_bits"]:
        return 6.02 * m["adc_bits"] + 1.76
    return 40.0


def rig_yaml(rig):
    lines = ["format: 1", f"rig: {rig['name']}", "clocks:",
             f"  - {{ name: osc, frequency: {rig['root_text']} }}"]
    for c in rig["channels"]:
        lines.append(f"  - {{ name: {c['name']}-clk, source: osc, divide: {c['divide']} }}")
    lines.append("modules:")
    for m in rig["modules"]:
        lines.append(flow_item(("name", m["name"]), ("adc-bits", m["adc_bits"]),
                               ("sample-bits", m["sample_bits"]),
                               ("throughput", m["throughput"] and m["throughput"][0])))
    lines.append("channels:")
    for c in rig["channels"]:
        lines.append(flow_item(
            ("name", c["name"]), ("clock", f"{c['name']}-clk"), ("band", f"{c['band']} Hz"),
            ("filters", "[" + ", ".join(yaml_filter(*f) for f in c["filters"]) + "]"),
            ("module", c["module"] and c["module"]["name"]),
            ("decimate", c["factor"] and f"[{{ factor: {c['factor']} }}]"),
            ("alias-rejection", None if c["rejection"] is None else f"{c['rejection']} dB"),
            ("sample-bits", c["bits"])))
    if rig["tones"]:
        lines.append("disturbances:")
        for t in rig["tones"]:
            lines.append(flow_item(
                ("name", t["name"]), ("frequency", t["f_text"]),
                ("level", None if t["level"] is None else f"{t['level']} dB"),
                ("channels", None if t["channels"] is None else "[" + ", ".join(t["channels"]) + "]")))
    lg = rig["logger"]
    lines += ["logger:",
              f"  throughput: {lg['throughput'][0]}",
              f"  storage: {lg['storage'][0]}",
              f"  duration: {lg['duration'][0]}"]
    return "\n".join(lines) + "\n"


def fold(f, fs):
    return abs(f - round(f / fs) * fs)


def tone_failures(c, t):
    """(stage, fold, attenuation, requirement) of each rate change at which tone `t`
    folds into the band of channel `c` short of the requirement; None when the
    comparison sits on a threshold (not compared)."""
    band = Fraction(str(c["band"]))
    rates = [c["fs"]] + ([c["fs"] / c["factor"]] if c["factor"] else [])
    need = required_db(c) + (t["level"] or 0)
    out = []
    for k, fs in enumerate(rates):
        if 2 * t["f"] <= fs:
            continue
        alias = fold(t["f"], fs)
        if abs(alias - band) <= band * Fraction(1, 10**9) or 2 * t["f"] == fs:
            return None
        if alias > band:
            continue
        att = attenuation_db(c["filters"], float(t["f"]))
        if abs(att - need) < 0.01:
            return None
        if att < need:
            out.append((k, alias, att, need))
    return out


def close(a, b, rel=1e-9):
    return abs(a - b) <= rel * max(abs(a), abs(b), 1e-300)


def check_rig(binary, rig, tmp, failures, counts):
    _, findings = check_json(binary, tmp, rig["name"], rig_yaml(rig), failures)
    if findings is None:
        return
    for f in findings:
        if f["rule"] in ("schema", "quantity", "unknown-reference", "yaml-syntax"):
            failures.append(f"{rig['name']}: the generated rig is refused: {f['message']}")
    # Known tones.
    got = {}
    for f in findings:
        if f["rule"] == "disturbance-alias":
            got.setdefault((f["channel"], Fraction(f["values"]["disturbance_hz"]).limit_denominator(10)), []).append(f)
    for c in rig["channels"]:
        for t in rig["tones"]:
            if t["channels"] is not None and c["name"] not in t["channels"]:
                if (c["name"], t["f"]) in got:
                    failures.append(f"{c['name']}: tone {t['f_text']} is not listed for it but was checked")
                continue
            expected = tone_failures(c, t)
            if expected is None:
                counts["skipped"] += 1
                continue
            counts["pairs"] += 1
            shown = got.get((c["name"], t["f"]), [])
            if bool(expected) != bool(shown):
                failures.append(f"{c['name']} (fs {float(c['fs'])} Hz, band {c['band']} Hz, "
                                f"stages {1 + bool(c['factor'])}), tone {t['f_text']}: expected "
                                f"{'a finding' if expected else 'none'}, got {len(shown)}: {expected}")
                continue
            if expected:
                counts["failing pairs"] += 1
            if expected and not c["factor"]:
                stage, alias, att, need = expected[0]
                v = shown[0]["values"]
                counts["values compared"] += 1
                if v["stage"] != stage or not close(v["alias_hz"], float(alias)) \
                        or abs(v["attenuation_db"] - att) > 0.01 or abs(v["required_db"] - need) > 0.01:
                    failures.append(f"{c['name']}, tone {t['f_text']}: got {v}, expected stage {stage}, "
                                    f"alias {float(alias)} Hz, {att:.3f} dB of {need:.3f} dB")
    # Budgets.
    limits = []
    for m in rig["modules"]:
        if m["throughput"]:
            total = sum((data_rate(c) for c in rig["channels"] if c["module"] is m), Fraction(0))
            limits.append((f"module {m['name']}", m["throughput"][1], total))
    lg = rig["logger"]
    total = sum((data_rate(c) for c in rig["channels"]), Fraction(0))
    limits.append(("logger", lg["throughput"][1], total))
    shown = [f for f in findings if f["rule"] == "throughput"]
    for what, limit, total in limits:
        counts["budgets"] += 1
        mine = [f for f in shown if close(f["values"]["limit_bytes_per_s"], float(limit))]
        if (total > limit) != bool(mine):
            failures.append(f"{rig['name']}: {what}: {float(total)} B/s against {float(limit)} B/s, "
                            f"{len(mine)} throughput findings")
        elif mine and not close(mine[0]["values"]["data_rate_bytes_per_s"], float(total)):
            failures.append(f"{rig['name']}: {what}: got {mine[0]['values']}, expected {float(total)} B/s")
        counts["budget findings"] += bool(mine)
    need = total * lg["duration"][1]
    limit = lg["storage"][1]
    mine = [f for f in findings if f["rule"] == "storage"]
    counts["budgets"] += 1
    counts["budget findings"] += bool(mine)
    if (need > limit) != bool(mine):
        failures.append(f"{rig['name']}: storage {float(need)} B against {float(limit)} B, {len(mine)} findings")
    elif mine and not (close(mine[0]["values"]["bytes"], float(need))
                       and close(mine[0]["values"]["limit_bytes"], float(limit))):
        failures.append(f"{rig['name']}: storage: got {mine[0]['values']}, expected {float(need)} of {float(limit)}")


def main():
    args, rng = arguments(40, 20261202)
    failures = []
    counts = dict.fromkeys(["pairs", "failing pairs", "values compared", "skipped", "budgets",
                            "budget findings"], 0)
    with tempfile.TemporaryDirectory() as tmp:
        for r in range(args.rigs):
            check_rig(args.binary, make_rig(rng, r), tmp, failures, counts)
    finish(f"{args.rigs} rigs: {counts['pairs']} (channel, tone) pairs compared "
           f"({counts['failing pairs']} failing, {counts['values compared']} with their values; "
           f"{counts['skipped']} on a threshold, not compared), {counts['budgets']} budgets "
           f"({counts['budget findings']} exceeded)", failures)


if __name__ == "__main__":
    main()
