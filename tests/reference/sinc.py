#!/usr/bin/env python3
"""Reference table for foldcheck's `sinc` (CIC decimator) response, from scipy.signal.

An order-N sinc stage of factor M is N cascaded M-tap moving averages (Hogenauer 1981).
The script builds that FIR filter by convolving N boxcars of M taps (1/M each) and
evaluates it with scipy.signal.freqz at the stage's input rate; attenuation is
-20*log10|H| in dB. Points deeper than MAX_DB are left out: there the FIR evaluation is
limited by rounding, not by the filter.

    python3 tests/reference/sinc.py          # rewrite sinc.csv
    python3 tests/reference/sinc.py --check  # exit 1 if sinc.csv has drifted
"""

import argparse
import sys
from pathlib import Path

import numpy as np
import scipy
from scipy import signal

HERE = Path(__file__).resolve().parent
CSV = HERE / "sinc.csv"
COLUMNS = ["order", "factor", "input_rate_hz", "f_hz", "attenuation_db"]
STAGES = [(1, 2), (1, 5), (2, 4), (3, 8), (4, 16), (5, 3), (6, 10), (3, 64)]
INPUT_RATE_HZ = 48000.0
# Frequencies as fractions of the input rate: 0..2 (so periodicity is covered), offset
# so that most points miss the exact nulls, plus exact multiples of the input rate.
FRACTIONS = np.unique(np.concatenate([np.linspace(0.0, 2.0, 61) + 0.0123, [0.0, 1.0, 2.0]]))
MAX_DB = 180.0
TOLERANCE = 1e-6  # dB, for --check


def rows():
    out = []
    for order, factor in STAGES:
        taps = np.ones(1)
        for _ in range(order):
            taps = np.convolve(taps, np.ones(factor) / factor)
        f = FRACTIONS * INPUT_RATE_HZ
        _, h = signal.freqz(taps, 1.0, worN=f, fs=INPUT_RATE_HZ)
        with np.errstate(divide="ignore"):
            atten = -20.0 * np.log10(np.abs(h))
        for fi, ai in zip(f, atten):
            if ai <= MAX_DB:
                out.append((order, factor, INPUT_RATE_HZ, float(fi), float(ai) if ai > 0.0 else 0.0))
    return out


def header():
    return [
        "# foldcheck reference table: sinc (CIC) stage attenuation, N cascaded M-tap moving averages",
        "# source: numpy.convolve of boxcars, scipy.signal.freqz at the stage input rate",
        f"# scipy {scipy.__version__}, numpy {np.__version__}",
        "# regenerate: python3 tests/reference/sinc.py   check: python3 tests/reference/sinc.py --check",
        ",".join(COLUMNS),
    ]


def format_row(r):
    order, factor, fin, f, a = r
    return f"{order},{factor},{fin:g},{f:.17g},{a:.12g}"


def read_csv(path):
    meta, data = [], []
    for line in path.read_text().splitlines():
        if line.startswith("#"):
            meta.append(line)
        elif line and not line.startswith(COLUMNS[0] + ","):
            n, m, fin, f, a = line.split(",")
            data.append((int(n), int(m), float(fin), float(f), float(a)))
    return meta, data


def check():
    meta, old = read_csv(CSV)
    new = rows()
    version = header()[2]
    if version not in meta:
        print(f"note: {CSV.name} was made with other versions ({version[2:]} here)")
    if len(old) != len(new):
        print(f"{CSV.name}: {len(old)} rows committed, {len(new)} computed")
        return 1
    bad = [
        (o, n)
        for o, n in zip(old, new)
        if o[:3] != n[:3] or abs(o[3] - n[3]) > 1e-9 * max(1.0, n[3]) or abs(o[4] - n[4]) > TOLERANCE
    ]
    for o, n in bad[:10]:
        print(f"drift: committed {o} computed {n}")
    if bad:
        print(f"{CSV.name}: {len(bad)} of {len(new)} rows differ by more than {TOLERANCE} dB")
        return 1
    print(f"{CSV.name}: {len(new)} rows match within {TOLERANCE} dB")
    return 0


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--check", action="store_true", help="compare with the committed table")
    args = parser.parse_args()
    if args.check:
        return check()
    data = rows()
    lines = header() + [format_row(r) for r in data]
    CSV.write_text("\n".join(lines) + "\n")
    print(f"wrote {CSV} ({len(data)} rows)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
