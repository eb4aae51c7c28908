#!/usr/bin/env python3
"""Make synthetic campaigns for the benchmark (bench/run.sh) in bench/out/.

    python3 bench/gen.py [--out bench/out] [--sizes 1k,10k,100k,1M] [--single 100k]

Each campaign `c<size>/` holds one shared catalog (`catalog/bench-hall.yaml`: a clock
tree, sensors, modules) and rig files of about 200 channels each (`rigs/r-NNNNN.rig.yaml`)
that include it; `single-<n>/` holds one rig of n channels. The rigs are made-up but use
every part of the format: derived clocks, module chains, per-channel filters of every
response, decimation with sinc and digital stages, groups, disturbances and a logger.
About one channel in fifty has a sampling or filtering problem, so the rules do real work
and the output is not empty. Output is deterministic (a fixed seed per file).
"""

import argparse
import os
import random
import shutil

CHANNELS_PER_RIG = 200

CATALOG = """\
format: 1
catalog: bench-hall
description: Shared equipment of a made-up benchmark hall.

clocks:
  - name: hall-osc
    frequency: 24.576 MHz
  - name: hall-102k4
    source: hall-osc
    divide: 240
  - name: hall-51k2
    source: hall-102k4
    divide: 2
  - name: hall-25k6
    source: hall-51k2
    divide: 2
  - name: hall-pll-48k
    source: hall-osc
    multiply: 1
    divide: 512

sensors:
  - name: acc-100
    kind: IEPE accelerometer, 100 mV/g
    bandwidth: 10 kHz
    resonance:
      frequency: 35 kHz
      gain: 25 dB
  - name: acc-seis
    kind: seismic accelerometer
    bandwidth: 500 Hz
    resonance:
      frequency: 4.5 kHz
      gain: 18 dB
    response:
      - { response: butterworth, order: 2, cutoff: 1.5 kHz }
  - name: sg-350
    kind: foil strain gauge, full bridge
    bandwidth: 2 kHz
  - name: lc-50k
    kind: load cell, 50 kN
    bandwidth: 1 kHz
  - name: mic-12
    kind: measurement microphone
    bandwidth: 20 kHz

modules:
  - name: dsa-24
    adc-bits: 24
    max-rate: 204.8 kHz
    filters:
      - { response: digital, passband-edge: 0.45, stopband-edge: 0.55, attenuation: 110 dB }
    throughput: 400 MB/s
  - name: bridge-24
    adc-bits: 24
    max-rate: 51.2 kHz
    filters:
      - { response: bessel, order: 4, cutoff: 1 kHz }
      - { response: digital, passband-edge: 0.4, stopband-edge: 0.5, attenuation: 100 dB }
    throughput: 200 MB/s
  - name: sar-16
    adc-bits: 16
    max-rate: 1 MHz
    throughput: 400 MB/s
"""


def rig_text(index: int, channels: int, rng: random.Random) -> str:
    """One rig file of `channels` channels."""
    out = []
    w = out.append
    w("format: 1\n")
    w(f"rig: bench-rig-{index:05d}\n")
    w(f"description: synthetic rig {index} of the benchmark campaign\n")
    w("include:\n  - ../catalog/bench-hall.yaml\n\n")
    w("defaults:\n  margin: 2.5\n  alias-rejection: 80 dB\n  phase-tolerance: 2 deg\n\n")
    w("clocks:\n")
    w(f"  - name: r{index}-3k2\n    source: hall-25k6\n    divide: 8\n")
    w(f"  - name: r{index}-6k4\n    source: hall-25k6\n    divide: 4\n")
    w("\nchannels:\n")
    names = []
    for c in range(channels):
        name = f"ch-{c:06d}"
        names.append(name)
        kind = c % 10
        faulty = rng.random() < 0.02
        w(f"  - name: {name}\n")
        if kind <= 3:
            # bridge channel on the module's chain
            w("    sensor: sg-350\n    module: bridge-24\n")
            w(f"    clock: r{index}-3k2\n")
            w(f"    band: {'1.5 kHz' if faulty else '200 Hz'}\n")
        elif kind <= 5:
            # vibration on the DSA card with its own analog filter
            w("    sensor: acc-100\n    module: dsa-24\n    clock: hall-51k2\n")
            w(f"    band: {rng.choice(['5 kHz', '8 kHz', '10 kHz'])}\n")
            w("    filters:\n")
            cutoff = "30 kHz" if faulty else "12 kHz"
            w(f"      - {{ response: butterworth, order: 6, cutoff: {cutoff} }}\n")
            w("      - { response: digital, passband-edge: 0.45, stopband-edge: 0.55, attenuation: 110 dB }\n")
        elif kind == 6:
            # acoustic channel, decimated twice
            w("    sensor: mic-12\n    module: dsa-24\n    clock: hall-102k4\n")
            w("    band: 5 kHz\n")
            w("    filters:\n")
            w("      - { response: chebyshev, order: 7, cutoff: 12 kHz, ripple: 0.1 dB }\n")
            w("    decimate:\n")
            w("      - factor: 2\n        filter: { response: sinc, order: 3 }\n")
            w("      - factor: 2\n")
            w("        filter: { response: digital, passband-edge: 0.42, stopband-edge: 0.5, attenuation: 100 dB }\n")
        elif kind == 7:
            # load cell with a measured filter table
            w("    sensor: lc-50k\n    module: sar-16\n")
            w(f"    clock: r{index}-6k4\n    band: {'2.9 kHz' if faulty else '500 Hz'}\n")
            w("    filters:\n")
            w("      - response: table\n")
            w("        points: [[500 Hz, 0 dB], [1 kHz, 6 dB], [2 kHz, 30 dB], [5 kHz, 95 dB]]\n")
            w("    sample-bits: 16\n")
        elif kind == 8:
            # structural accelerometer on the SAR card
            w("    sensor: acc-seis\n    module: sar-16\n")
            w(f"    clock: r{index}-6k4\n    band: 400 Hz\n")
            w("    filters:\n")
            w("      - { response: butterworth, order: 8, cutoff: 1 kHz }\n")
            w("    alias-rejection: 90 dB\n")
        else:
            # audio-rate channel on the PLL clock
            w("    sensor: mic-12\n    module: dsa-24\n    clock: hall-pll-48k\n")
            w(f"    band: {'20 kHz' if faulty else '12 kHz'}\n")
            w("    filters:\n")
            w("      - { response: butterworth, order: 8, cutoff: 17 kHz }\n")
            w("      - { response: digital, passband-edge: 0.4, stopband-edge: 0.5, attenuation: 110 dB }\n")
    w("\ngroups:\n")
    for g in range(0, min(channels, 40), 10):
        members = ", ".join(names[g + k] for k in range(0, 4) if g + k < channels)
        w(f"  - name: grp-{g:03d}\n    channels: [{members}]\n")
    w("\ndisturbances:\n")
    w("  - name: drive-pwm\n    frequency: 16 kHz\n    level: 20 dB\n")
    w(f"    channels: [{', '.join(names[k] for k in range(4, min(channels, 60), 10))}]\n")
    w("  - name: mains\n    frequency: 50 Hz\n")
    w("\nlogger:\n  throughput: 2 GB/s\n  storage: 100 TB\n  duration: 24 h\n")
    return "".join(out)


def parse_size(s: str) -> int:
    s = s.strip().lower()
    mult = {"k": 1_000, "m": 1_000_000}.get(s[-1], 1)
    return int(float(s.rstrip("km")) * mult)


def campaign(root: str, channels: int, per_rig: int) -> None:
    if os.path.isdir(root):
        shutil.rmtree(root)
    os.makedirs(os.path.join(root, "catalog"))
    os.makedirs(os.path.join(root, "rigs"))
    with open(os.path.join(root, "catalog", "bench-hall.yaml"), "w") as f:
        f.write(CATALOG)
    rigs = max(1, channels // per_rig)
    for i in range(rigs):
        rng = random.Random(i)
        n = per_rig if i < rigs - 1 else channels - per_rig * (rigs - 1)
        with open(os.path.join(root, "rigs", f"r-{i:05d}.rig.yaml"), "w") as f:
            f.write(rig_text(i, n, rng))


def shape_campaign(root: str, heavy: bool, rigs: int = 40, per_rig: int = 500) -> None:
    """The campaign of the fix-search measurement: `rigs` rigs of `per_rig` channels,
    one shared catalog of six clocks and twenty sensors, Butterworth anti-alias filters
    of order 2-8 with their cutoff at 1.2 x the band, 40 dB required, bands 100 Hz-5 kHz.
    `heavy`: each channel samples on one of the six clocks (3.2-102.4 kHz) at random, so
    most channels fail a rate rule and the fix search runs; otherwise each channel takes
    the slowest clock that gives it 12 x its band (a clean twin of the same size)."""
    clocks = [3200, 6400, 12800, 25600, 51200, 102400]
    if os.path.isdir(root):
        shutil.rmtree(root)
    os.makedirs(os.path.join(root, "catalog"))
    os.makedirs(os.path.join(root, "rigs"))
    lines = ["format: 1", "catalog: shape-hall", "clocks:", "  - { name: shape-osc, frequency: 24.576 MHz }"]
    for hz in clocks:
        lines.append(f"  - {{ name: clk-{hz}, source: shape-osc, divide: {24_576_000 // hz} }}")
    lines.append("sensors:")
    for k in range(20):
        lines.append(f"  - {{ name: sens-{k:02d}, bandwidth: 20 kHz }}")
    with open(os.path.join(root, "catalog", "shape-hall.yaml"), "w") as f:
        f.write("\n".join(lines) + "\n")
    for i in range(rigs):
        rng = random.Random(1000 + i)
        out = [f"format: 1", f"rig: shape-{i:03d}", "include: [../catalog/shape-hall.yaml]",
               "defaults: { alias-rejection: 40 dB }", "channels:"]
        for c in range(per_rig):
            band = rng.randint(100, 5000)
            order = rng.randint(2, 8)
            if heavy:
                clock = rng.choice(clocks)
            else:
                clock = next((hz for hz in clocks if hz >= 12 * band), clocks[-1])
            out.append(
                f"  - {{ name: ch-{c:03d}, clock: clk-{clock}, sensor: sens-{rng.randrange(20):02d}, "
                f"band: {band} Hz, filters: [{{ response: butterworth, order: {order}, cutoff: {round(1.2 * band)} Hz }}] }}"
            )
        with open(os.path.join(root, "rigs", f"s-{i:03d}.rig.yaml"), "w") as f:
            f.write("\n".join(out) + "\n")


def main() -> None:
    here = os.path.dirname(os.path.abspath(__file__))
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--out", default=os.path.join(here, "out"))
    ap.add_argument("--sizes", default="1k,10k,100k,1M")
    ap.add_argument("--single", default="100k", help="channels of the single-file rig ('' for none)")
    ap.add_argument("--shape", action="store_true",
                    help="also write shape-clean/ and shape-heavy/ (40 rigs x 500 channels: clean vs findings-heavy)")
    args = ap.parse_args()
    if args.shape:
        for name, heavy in (("shape-clean", False), ("shape-heavy", True)):
            shape_campaign(os.path.join(args.out, name), heavy)
            print(f"{os.path.join(args.out, name)}: 20000 channels in 40 rig files")
    os.makedirs(args.out, exist_ok=True)
    for s in filter(None, args.sizes.split(",")):
        n = parse_size(s)
        root = os.path.join(args.out, f"c{s.strip()}")
        campaign(root, n, CHANNELS_PER_RIG)
        print(f"{root}: {n} channels in {max(1, n // CHANNELS_PER_RIG)} rig files")
    if args.single:
        n = parse_size(args.single)
        root = os.path.join(args.out, f"single-{args.single.strip()}")
        campaign(root, n, n)
        print(f"{root}: {n} channels in one rig file")


if __name__ == "__main__":
    main()
