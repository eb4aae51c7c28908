#!/usr/bin/env python3
"""Reference table for foldcheck's folding arithmetic, measured with numpy.

For each tone (seeded random frequency f and sample rate fs, f up to 10*fs and not a
multiple of fs/2) the script samples cos(2*pi*f*t) at t = n/fs, applies a Hann window,
takes a zero-padded FFT and records the frequency of the peak bin: the frequency at
which the sampled tone actually appears. No folding formula is used here.

Tones whose f/fs lies within MARGIN_BINS unpadded bins of a multiple of 1/2 are
skipped: there the tone's mirror image sits inside its main lobe and the peak no
longer marks one frequency.

    python3 tests/reference/folding.py          # rewrite folding.csv
    python3 tests/reference/folding.py --check  # exit 1 if folding.csv has drifted
"""

import argparse
import sys
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
CSV = HERE / "folding.csv"
COLUMNS = ["f_hz", "fs_hz", "alias_hz", "resolution_hz"]
SEED = 20240611
TONES = 300
SAMPLES = 16384
PADDED = 4 * SAMPLES
MARGIN_BINS = 16
TOLERANCE = 1e-6  # Hz, for --check


def tones():
    """Yield (f_hz, fs_hz): the worked example of docs/format.md ("Worked checks"), then seeded random tones."""
    yield 16000.0, 5000.0
    rng = np.random.default_rng(SEED)
    made = 0
    while made < TONES:
        fs = float(10.0 ** rng.uniform(2.0, 6.0))  # 100 Hz .. 1 MHz
        ratio = float(rng.uniform(0.0, 10.0))
        half_turns = 2.0 * ratio
        if abs(half_turns - round(half_turns)) < 2.0 * MARGIN_BINS / SAMPLES:
            continue
        made += 1
        yield ratio * fs, fs


def measure(f_hz, fs_hz):
    """Sample the tone, FFT it, and return (peak frequency, bin spacing) in Hz."""
    t = np.arange(SAMPLES) / fs_hz
    x = np.cos(2.0 * np.pi * f_hz * t) * np.hanning(SAMPLES)
    spectrum = np.abs(np.fft.rfft(x, n=PADDED))
    resolution = fs_hz / PADDED
    return int(np.argmax(spectrum)) * resolution, resolution


def rows():
    return [(f, fs, *measure(f, fs)) for f, fs in tones()]


def header():
    return [
        "# foldcheck reference table: where a sampled tone appears, measured as the peak of a"
        " Hann-windowed, zero-padded numpy FFT",
        f"# numpy {np.__version__}; seed {SEED}; {SAMPLES} samples padded to {PADDED}",
        "# regenerate: python3 tests/reference/folding.py   check: python3 tests/reference/folding.py --check",
        ",".join(COLUMNS),
    ]


def read_csv(path):
    meta, data = [], []
    for line in path.read_text().splitlines():
        if line.startswith("#"):
            meta.append(line)
        elif line and not line.startswith(COLUMNS[0] + ","):
            data.append(tuple(float(v) for v in line.split(",")))
    return meta, data


def check():
    meta, old = read_csv(CSV)
    new = rows()
    version = header()[1]
    if version not in meta:
        print(f"note: {CSV.name} was made with another numpy ({version[2:]} here)")
    if len(old) != len(new):
        print(f"{CSV.name}: {len(old)} rows committed, {len(new)} computed")
        return 1
    bad = [(o, n) for o, n in zip(old, new) if max(abs(a - b) for a, b in zip(o, n)) > TOLERANCE]
    for o, n in bad[:10]:
        print(f"drift: committed {o} computed {n}")
    if bad:
        print(f"{CSV.name}: {len(bad)} of {len(new)} rows differ by more than {TOLERANCE} Hz")
        return 1
    print(f"{CSV.name}: {len(new)} rows match within {TOLERANCE} Hz")
    return 0


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--check", action="store_true", help="compare with the committed table")
    args = parser.parse_args()
    if args.check:
        return check()
    data = rows()
    lines = header() + [",".join(f"{v:.17g}" for v in r) for r in data]
    CSV.write_text("\n".join(lines) + "\n")
    print(f"wrote {CSV} ({len(data)} rows)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
