#!/usr/bin/env python3
"""Reference table for foldcheck's sinc (CIC) stage delay, from cascaded moving averages.

An order-N sinc stage of factor M is N cascaded M-tap moving averages (Hogenauer 1981,
from memory). The script builds that FIR filter with numpy.convolve and takes the
centroid of its impulse response, Σ n·h[n] / Σ h[n], in samples of the stage's input
rate. The centroid (not the argmax: an even length has two equal peaks) is the delay of
a symmetric, linear-phase FIR filter. It is compared with the closed form N·(M − 1)/2,
and the script refuses to write or check a table where the two differ.

    python3 tests/reference/cic_delay.py          # rewrite cic_delay.csv
    python3 tests/reference/cic_delay.py --check  # exit 1 if cic_delay.csv has drifted
"""

import argparse
import sys
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
CSV = HERE / "cic_delay.csv"
COLUMNS = ["order", "factor", "delay_samples"]
ORDERS = range(1, 7)
FACTORS = [2, 3, 4, 5, 8, 10, 16, 25, 64]
TOLERANCE = 1e-9  # samples


def rows():
    out = []
    for order in ORDERS:
        for factor in FACTORS:
            taps = np.ones(1)
            for _ in range(order):
                taps = np.convolve(taps, np.ones(factor) / factor)
            n = np.arange(taps.size)
            centroid = float(np.dot(n, taps) / taps.sum())
            closed = order * (factor - 1) / 2.0
            if abs(centroid - closed) > TOLERANCE:
                raise SystemExit(f"order {order} factor {factor}: centroid {centroid} != N(M-1)/2 = {closed}")
            out.append((order, factor, centroid))
    return out


def header():
    return [
        "# foldcheck reference table: sinc (CIC) stage delay in input samples",
        "# source: centroid of the impulse response of N cascaded M-tap moving averages (numpy.convolve),"
        " checked against N*(M-1)/2",
        f"# numpy {np.__version__}",
        "# regenerate: python3 tests/reference/cic_delay.py   check: python3 tests/reference/cic_delay.py --check",
        ",".join(COLUMNS),
    ]


def format_row(r):
    order, factor, d = r
    return f"{order},{factor},{d:.17g}"


def read_csv(path):
    meta, data = [], []
    for line in path.read_text().splitlines():
        if line.startswith("#"):
            meta.append(line)
        elif line and not line.startswith(COLUMNS[0] + ","):
            n, m, d = line.split(",")
            data.append((int(n), int(m), float(d)))
    return meta, data


def check():
    meta, old = read_csv(CSV)
    new = rows()
    if len(old) != len(new):
        print(f"{CSV.name}: {len(old)} rows committed, {len(new)} computed")
        return 1
    bad = [(o, n) for o, n in zip(old, new) if o[:2] != n[:2] or abs(o[2] - n[2]) > TOLERANCE]
    for o, n in bad[:10]:
        print(f"drift: committed {o} computed {n}")
    if bad:
        print(f"{CSV.name}: {len(bad)} of {len(new)} rows differ by more than {TOLERANCE} samples")
        return 1
    print(f"{CSV.name}: {len(new)} rows match within {TOLERANCE} samples")
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
