#!/usr/bin/env python3
"""End-to-end oracle for the rules that compare exact rates and names against limits:
seeded random rigs through the real binary (`foldcheck check --format json`), each
verdict recomputed with Python's fractions from the rule texts of docs/format.md and
the README's rule table.

Each rig has two oscillators, a tree of clocks derived from each (`divide`, sometimes
`multiply`), modules with a `max-rate` and a list of `rates` written in Hz, kHz or MHz
(often exactly one of the rig's rates: a limit met exactly passes), sensors with a
`bandwidth`, channels with an optional decimation stage, and groups.

- `module-rate`: the ADC rate (the clock's exact rate) is above the module's `max-rate`
  or is not one of its `rates` (exact equality: `51.2 kHz` is `51200 Hz` is
  12.288 MHz ÷ 240); the finding's `rate_hz` is the ADC rate.
- `sensor-band`: the channel's `band` is above its sensor's `bandwidth` (equal passes).
- `unused-clock`: every clock that drives no channel, directly or through clocks derived
  from it (the set of clocks named is compared).
- `group-clock`: the members of a group do not share one root oscillator, or do not end
  at one final rate (exact); a member with an error of its own is left out.
- a delta-sigma module's modulator `rate` that is not an integer multiple of a channel's
  ADC rate (docs/model.md §4): one `quantity` finding per such ADC rate, naming its first
  channel and how many more share it.

Usage: limits_oracle.py PATH/TO/foldcheck [--rigs N] [--seed S]
Exits 1 on any mismatch.
"""
import os
import re
import sys
import tempfile
from fractions import Fraction

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from run_check import arguments, check_json, finish, flow_item  # noqa: E402

OSCILLATORS = [("24.576 MHz", Fraction(24_576_000)), ("25.6 MHz", Fraction(25_600_000)),
               ("10 MHz", Fraction(10_000_000)), ("12.288 MHz", Fraction(12_288_000))]
UNITS = [("Hz", 1), ("kHz", 1000), ("MHz", 1_000_000)]


def exact_text(rng, hz):
    """`hz` written exactly in a random unit, or None when no unit writes it with at most
    six decimals."""
    for unit, scale in rng.sample(UNITS, len(UNITS)):
        v = hz / scale
        for digits in range(7):
            if (v * 10**digits).denominator == 1:
                return f"{float(v):.{digits}f} {unit}"
    return None


def make_rig(rng, r):
    clocks = []  # dict(name, root, parent, rate, text)
    for o in range(2):
        text, hz = rng.choice(OSCILLATORS)
        root = f"osc-{o}"
        clocks.append(dict(name=root, root=root, parent=None, rate=hz, text=f"frequency: {text}"))
        for d in range(rng.randint(2, 6)):
            parent = rng.choice([c for c in clocks if c["root"] == root])
            divide = rng.randint(2, 64)
            multiply = 2 if rng.random() < 0.15 else 1
            extra = f", multiply: {multiply}" if multiply > 1 else ""
            clocks.append(dict(name=f"k{o}-{d}", root=root, parent=parent["name"],
                               rate=parent["rate"] * multiply / divide,
                               text=f"source: {parent['name']}, divide: {divide}{extra}"))
    rates = sorted({c["rate"] for c in clocks})
    modules = []
    for m in range(2):
        mod = dict(name=f"card-{m}", max_rate=None, rates=None, texts=[])
        if rng.random() < 0.8:
            pick = rng.choice(rates)
            hz = pick if rng.random() < 0.6 else pick * Fraction(rng.choice([3, 5, 7]), 4)
            text = exact_text(rng, hz)
            if text:
                mod["max_rate"] = hz
                mod["texts"].append(f"max-rate: {text}")
        if rng.random() < 0.6:
            listed = []
            for hz in rng.sample(rates, min(len(rates), rng.randint(1, 3))):
                text = exact_text(rng, hz)
                if text:
                    listed.append((hz, text))
            if listed:
                mod["rates"] = {hz for hz, _ in listed}
                mod["texts"].append("rates: [" + ", ".join(t for _, t in listed) + "]")
        modules.append(mod)
    if rng.random() < 0.6:
        # A delta-sigma module whose modulator `rate` is a multiple of one clock's rate,
        # and so not of some others (docs/model.md §4: a `quantity` finding per ADC rate).
        hz = rng.choice(rates) * rng.choice([16, 32, 64, 128, 100]) * rng.choice([1, 1, Fraction(7, 3)])
        text = exact_text(rng, hz)
        if text:
            modules.append(dict(name="ds-card", max_rate=None, rates=None, modulator=hz,
                                texts=[f"modulator: {{ rate: {text} }}"]))
    sensors = [dict(name=f"sens-{s}", bandwidth=Fraction(rng.choice([500, 1000, 2000, 5000, 10_000, 20_000])))
               for s in range(3)]
    channels = []
    for i in range(rng.randint(3, 9)):
        clock = rng.choice(clocks)
        factor = rng.randint(2, 4) if rng.random() < 0.3 else None
        final = clock["rate"] / factor if factor else clock["rate"]
        sensor = rng.choice([None] + sensors)
        if sensor and rng.random() < 0.3:
            band = sensor["bandwidth"]  # exactly at the bandwidth: passes
        else:
            band = Fraction(str(round(float(final) / rng.uniform(2.6, 12.0), 2)))
        if band <= 0:
            band = Fraction(1, 100)
        channels.append(dict(name=f"r{r}-ch{i}", clock=clock, factor=factor, final=final,
                             module=rng.choice([None] + modules), sensor=sensor, band=band))
    for c in channels:
        if c["module"] and c["module"].get("modulator") and rng.random() < 0.5:
            # Often on a clock whose rate divides the modulator's.
            fits = [k for k in clocks if (c["module"]["modulator"] / k["rate"]).denominator == 1]
            if fits:
                c["clock"] = rng.choice(fits)
                c["final"] = c["clock"]["rate"] / c["factor"] if c["factor"] else c["clock"]["rate"]
                if c["sensor"] is None:
                    c["band"] = Fraction(str(round(float(c["final"]) / rng.uniform(2.6, 12.0), 2)))
    for mod in modules:
        # Often the limit is exactly the ADC rate of one of the module's channels.
        on = [c for c in channels if c["module"] is mod]
        if on and rng.random() < 0.6:
            hz = rng.choice(on)["clock"]["rate"]
            text = exact_text(rng, hz)
            if text:
                mod["max_rate"] = hz
                mod["texts"] = [t for t in mod["texts"] if not t.startswith("max-rate")] + [f"max-rate: {text}"]
    groups = []
    for g in range(rng.randint(0, 2)):
        members = rng.sample(channels, min(len(channels), rng.randint(2, 3)))
        if rng.random() < 0.5:
            # Members on one root and one final rate, which must pass.
            base = members[0]
            for other in members[1:]:
                other["clock"], other["factor"], other["final"] = base["clock"], base["factor"], base["final"]
                if other["sensor"] is None or other["band"] * 2 >= other["final"]:
                    other["band"] = base["band"]
        groups.append(dict(name=f"grp-{g}", members=[m["name"] for m in members]))
    return dict(name=f"limits-{r}", clocks=clocks, modules=modules, sensors=sensors,
                channels=channels, groups=groups)


def rig_yaml(rig):
    lines = ["format: 1", f"rig: {rig['name']}", "clocks:"]
    lines += [f"  - {{ name: {c['name']}, {c['text']} }}" for c in rig["clocks"]]
    lines.append("modules:")
    for m in rig["modules"]:
        lines.append("  - { " + ", ".join([f"name: {m['name']}"] + m["texts"]) + " }")
    lines.append("sensors:")
    for s in rig["sensors"]:
        lines.append(f"  - {{ name: {s['name']}, bandwidth: {s['bandwidth']} Hz }}")
    lines.append("channels:")
    for c in rig["channels"]:
        lines.append(flow_item(
            ("name", c["name"]), ("clock", c["clock"]["name"]), ("band", f"{float(c['band'])} Hz"),
            ("filters", "[]"), ("module", c["module"] and c["module"]["name"]),
            ("sensor", c["sensor"] and c["sensor"]["name"]),
            ("decimate", c["factor"] and f"[{{ factor: {c['factor']} }}]")))
    if rig["groups"]:
        lines.append("groups:")
        for g in rig["groups"]:
            lines.append(f"  - {{ name: {g['name']}, channels: [{', '.join(g['members'])}] }}")
    return "\n".join(lines) + "\n"


def misfit(c):
    """The channel's module has a modulator whose rate is not a multiple of its ADC rate."""
    m = c["module"]
    return bool(m and m.get("modulator") and (m["modulator"] / c["clock"]["rate"]).denominator != 1)


def expected(rig):
    module_rate, sensor_band = set(), set()
    for c in rig["channels"]:
        m, fs = c["module"], c["clock"]["rate"]
        if m and ((m["max_rate"] is not None and fs > m["max_rate"])
                  or (m["rates"] is not None and fs not in m["rates"])):
            module_rate.add(c["name"])
        if c["sensor"] and c["band"] > c["sensor"]["bandwidth"]:
            sensor_band.add(c["name"])
    used = set()
    by_name = {c["name"]: c for c in rig["clocks"]}
    for c in rig["channels"]:
        k = c["clock"]
        while k is not None:
            used.add(k["name"])
            k = by_name.get(k["parent"]) if k["parent"] else None
    unused = {c["name"] for c in rig["clocks"]} - used
    chans = {c["name"]: c for c in rig["channels"]}
    group_clock = set()
    for g in rig["groups"]:
        # A member with an error of its own (here: a modulator rate that is not a
        # multiple of its ADC rate) is left out of the comparison (docs/format.md, groups).
        members = [chans[n] for n in g["members"] if not misfit(chans[n])]
        if len({m["clock"]["root"] for m in members}) > 1 or len({m["final"] for m in members}) > 1:
            group_clock.add(g["name"])
    misfits = {}
    for c in rig["channels"]:
        if misfit(c):
            misfits.setdefault(c["clock"]["rate"], []).append(c["name"])
    modulator = {(names[0], len(names) - 1) for names in misfits.values()}
    return module_rate, sensor_band, unused, group_clock, modulator


def main():
    args, rng = arguments(60, 20261203)
    failures = []
    counts = dict.fromkeys(["channels", "module-rate", "sensor-band", "unused-clock", "group-clock",
                            "modulator", "groups", "limits met exactly"], 0)
    with tempfile.TemporaryDirectory() as tmp:
        for r in range(args.rigs):
            rig = make_rig(rng, r)
            _, findings = check_json(args.binary, tmp, rig["name"], rig_yaml(rig), failures)
            if findings is None:
                continue
            got = {rule: set() for rule in ("module-rate", "sensor-band", "unused-clock", "group-clock",
                                            "modulator")}
            for f in findings:
                if f["rule"] in ("schema", "unknown-reference", "yaml-syntax", "clock-cycle") or (
                        f["rule"] == "quantity" and "not an integer multiple" not in f["message"]):
                    failures.append(f"{rig['name']}: the generated rig is refused: {f['message']}")
                if f["rule"] in ("module-rate", "sensor-band"):
                    got[f["rule"]].add(f["channel"])
                    if f["rule"] == "module-rate":
                        c = next(c for c in rig["channels"] if c["name"] == f["channel"])
                        if abs(f["values"]["rate_hz"] - float(c["clock"]["rate"])) > 1e-9 * float(c["clock"]["rate"]):
                            failures.append(f"{c['name']}: module-rate rate_hz {f['values']['rate_hz']}, "
                                            f"ADC rate {float(c['clock']['rate'])}")
                elif f["rule"] == "quantity" and "not an integer multiple" in f["message"]:
                    m = re.search(r"of channel `([^`]+)`(?: and (\d+) more)?", f["message"])
                    got["modulator"].add((m.group(1), int(m.group(2) or 0)) if m else f["message"])
                elif f["rule"] in ("unused-clock", "group-clock"):
                    m = re.match(r"(?:clock|group) `([^`]+)`", f["message"])
                    got[f["rule"]].add(m.group(1) if m else f["message"])
            want = dict(zip(("module-rate", "sensor-band", "unused-clock", "group-clock", "modulator"),
                            expected(rig)))
            for rule, names in want.items():
                counts[rule] += len(names)
                if names != got[rule]:
                    failures.append(f"{rig['name']}: `{rule}`: expected {sorted(names)}, check says {sorted(got[rule])}")
            counts["channels"] += len(rig["channels"])
            counts["groups"] += len(rig["groups"])
            counts["limits met exactly"] += sum(
                1 for c in rig["channels"]
                if (c["module"] and c["clock"]["rate"] == c["module"]["max_rate"])
                or (c["sensor"] and c["band"] == c["sensor"]["bandwidth"]))
    finish(f"{args.rigs} rigs, {counts['channels']} channels, {counts['groups']} groups "
           f"({counts['limits met exactly']} limits met exactly): expected {counts['module-rate']} module-rate, "
           f"{counts['sensor-band']} sensor-band, {counts['unused-clock']} unused-clock, "
           f"{counts['group-clock']} group-clock findings, {counts['modulator']} modulator rates that are "
           f"not a multiple of an ADC rate", failures)


if __name__ == "__main__":
    main()
