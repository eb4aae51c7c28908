#!/usr/bin/env python3
"""Reference table for foldcheck's analog low-pass responses.

Every row comes from scipy.signal: `butter`, `cheby1` and `bessel(norm='mag')`,
all with `analog=True`, evaluated with `freqs`. Attenuation is -20*log10|H| (dB,
positive = smaller); phase is numpy.unwrap(angle(H)) in degrees.

The phase is unwrapped on a dense grid that starts at DC (where H is real and
positive), so that numpy.unwrap never sees a step of more than half a turn; only the
report points are written out.

    python3 tests/reference/filters.py          # rewrite filters.csv
    python3 tests/reference/filters.py --check  # exit 1 if filters.csv has drifted
"""

import argparse
import sys
from pathlib import Path

import numpy as np
import scipy
from scipy import signal

HERE = Path(__file__).resolve().parent
CSV = HERE / "filters.csv"
COLUMNS = ["kind", "ripple_db", "order", "cutoff_hz", "f_hz", "attenuation_db", "phase_deg"]
TOLERANCE = 1e-6  # dB and degrees, for --check
ORDERS = range(1, 13)
# Report grid: 40 log-spaced points from 0.1 to 100 times the cutoff.
REPORT_RATIOS = np.logspace(-1, 2, 40)
# Dense grid for unwrapping: DC, then 1e-4 .. 1e2 times the cutoff, plus the report points.
DENSE_RATIOS = np.unique(np.concatenate([[0.0], np.logspace(-4, 2, 60001), REPORT_RATIOS]))


def designs():
    """Yield (kind, ripple_db, order, cutoff_hz, b, a) for every filter in the table."""
    for order in ORDERS:
        # Two cutoffs, so the table also checks the scaling with the cutoff.
        cutoff_hz = 1000.0 if order % 2 else 20000.0
        wn = 2.0 * np.pi * cutoff_hz
        b, a = signal.butter(order, wn, btype="low", analog=True)
        yield "butterworth", 0.0, order, cutoff_hz, b, a
        for ripple_db in (0.5, 1.0, 3.0):
            b, a = signal.cheby1(order, ripple_db, wn, btype="low", analog=True)
            yield "chebyshev", ripple_db, order, cutoff_hz, b, a
        b, a = signal.bessel(order, wn, btype="low", analog=True, norm="mag")
        yield "bessel", 0.0, order, cutoff_hz, b, a


def rows():
    """Compute the table rows as tuples matching COLUMNS."""
    report_idx = np.searchsorted(DENSE_RATIOS, REPORT_RATIOS)
    out = []
    for kind, ripple_db, order, cutoff_hz, b, a in designs():
        w = 2.0 * np.pi * cutoff_hz * DENSE_RATIOS
        _, h = signal.freqs(b, a, worN=w)
        atten = -20.0 * np.log10(np.abs(h))
        phase = np.degrees(np.unwrap(np.angle(h)))
        for i in report_idx:
            f_hz = cutoff_hz * DENSE_RATIOS[i]
            out.append((kind, ripple_db, order, cutoff_hz, f_hz, atten[i], phase[i]))
    return out


def header():
    return [
        "# foldcheck reference table: analog low-pass attenuation (dB) and unwrapped phase (deg)",
        "# source: scipy.signal butter / cheby1 / bessel(norm='mag'), analog=True, then freqs;"
        " phase = numpy.unwrap(angle(h)) on a dense grid from DC",
        f"# scipy {scipy.__version__}, numpy {np.__version__}",
        "# regenerate: python3 tests/reference/filters.py   check: python3 tests/reference/filters.py --check",
        ",".join(COLUMNS),
    ]


def format_row(r):
    kind, ripple_db, order, cutoff_hz, f_hz, atten, phase = r
    return f"{kind},{ripple_db:g},{order},{cutoff_hz:g},{f_hz:.17g},{atten:.12g},{phase:.12g}"


def read_csv(path):
    meta, data = [], []
    for line in path.read_text().splitlines():
        if line.startswith("#"):
            meta.append(line)
        elif line and not line.startswith("kind,"):
            k, rp, n, fc, f, att, ph = line.split(",")
            data.append((k, float(rp), int(n), float(fc), float(f), float(att), float(ph)))
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
    bad = 0
    for o, n in zip(old, new):
        same_key = o[:3] == n[:3] and np.isclose(o[3], n[3], rtol=1e-15) and np.isclose(o[4], n[4], rtol=1e-12)
        if not same_key or abs(o[5] - n[5]) > TOLERANCE or abs(o[6] - n[6]) > TOLERANCE:
            bad += 1
            if bad <= 10:
                print(f"drift: committed {o} computed {n}")
    if bad:
        print(f"{CSV.name}: {bad} of {len(new)} rows differ by more than {TOLERANCE}")
        return 1
    print(f"{CSV.name}: {len(new)} rows match within {TOLERANCE} dB / deg")
    return 0


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--check", action="store_true", help="compare with the committed table")
    args = parser.parse_args()
    if args.check:
        return check()
    lines = header() + [format_row(r) for r in rows()]
    CSV.write_text("\n".join(lines) + "\n")
    print(f"wrote {CSV} ({len(lines) - len(header())} rows)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
