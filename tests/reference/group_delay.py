#!/usr/bin/env python3
"""Reference table for foldcheck's analog group delay, from scipy.signal's analog prototypes.

Every filter is designed by scipy.signal (`butter`, `cheby1` with 0.5, 1 and 3 dB of
ripple, `bessel(norm='mag')`), all with `analog=True, output='zpk'`, so its poles and
zeros are scipy's, in rad/s. The group delay at ω = 2πf is the closed form over them:

    τ(ω) = Σ_poles −Re(p) / (Re(p)² + (ω − Im(p))²)  −  Σ_zeros (same term)

The script cross-checks every value against a numerical derivative of the unwrapped
phase that `scipy.signal.freqs_zpk` returns (a 7-point central difference, step scaled
to the distance from jω to the nearest pole, so that even a high-order Chebyshev's
ripple is resolved) and refuses to write or check a table where the two disagree by
more than CROSS_CHECK relative. No discretised filter is used anywhere (the bilinear
transform's frequency warping alone would be ~1e-4 off at ten times the cutoff).

    python3 tests/reference/group_delay.py          # rewrite group_delay.csv
    python3 tests/reference/group_delay.py --check  # exit 1 if group_delay.csv has drifted
"""

import argparse
import sys
from pathlib import Path

import numpy as np
import scipy
from scipy import signal

HERE = Path(__file__).resolve().parent
CSV = HERE / "group_delay.csv"
COLUMNS = ["kind", "ripple_db", "order", "cutoff_hz", "f_hz", "group_delay_s"]
ORDERS = range(1, 13)
# 25 log-spaced points from 0.1 to 10 times the cutoff.
REPORT_RATIOS = np.logspace(-1, 1, 25)
CROSS_CHECK = 1e-9  # relative: closed form vs numerical derivative of freqs_zpk's phase
TOLERANCE = 1e-9  # relative, for --check against the committed table


def designs():
    """Yield (kind, ripple_db, order, cutoff_hz, z, p) for every filter in the table."""
    for order in ORDERS:
        # Two cutoffs, so the table also checks the scaling with the cutoff.
        cutoff_hz = 1000.0 if order % 2 else 20000.0
        wn = 2.0 * np.pi * cutoff_hz
        z, p, _ = signal.butter(order, wn, analog=True, output="zpk")
        yield "butterworth", 0.0, order, cutoff_hz, z, p
        for ripple_db in (0.5, 1.0, 3.0):
            z, p, _ = signal.cheby1(order, ripple_db, wn, analog=True, output="zpk")
            yield "chebyshev", ripple_db, order, cutoff_hz, z, p
        z, p, _ = signal.bessel(order, wn, analog=True, output="zpk", norm="mag")
        yield "bessel", 0.0, order, cutoff_hz, z, p


def closed_form(z, p, w):
    """Group delay in seconds at angular frequencies w (rad/s)."""
    def term(roots):
        roots = np.asarray(roots, dtype=complex)
        if roots.size == 0:
            return np.zeros_like(w)
        re = roots.real[None, :]
        im = roots.imag[None, :]
        return np.sum(-re / (re**2 + (w[:, None] - im) ** 2), axis=1)

    return term(p) - term(z)


# Weights of the 7-point central difference for the first derivative (error O(h^6)).
STENCIL = np.array([-1.0, 9.0, -45.0, 0.0, 45.0, -9.0, 1.0]) / 60.0
OFFSETS = np.arange(-3, 4)


def numerical(z, p, w):
    """−dφ/dω of the unwrapped phase of freqs_zpk, by a 7-point central difference."""
    out = np.empty_like(w)
    for i, wi in enumerate(w):
        # The phase varies on the scale of the distance from jω to the nearest pole.
        scale = np.min(np.abs(1j * wi - np.asarray(p)))
        h = 2e-3 * min(scale, wi)
        ws = wi + OFFSETS * h
        _, resp = signal.freqs_zpk(z, p, 1.0, worN=ws)
        phase = np.unwrap(np.angle(resp))
        out[i] = -np.dot(STENCIL, phase) / h
    return out


def rows():
    """Compute the table rows as tuples matching COLUMNS, cross-checked."""
    out = []
    worst = 0.0
    for kind, ripple_db, order, cutoff_hz, z, p in designs():
        f = cutoff_hz * REPORT_RATIOS
        w = 2.0 * np.pi * f
        tau = closed_form(z, p, w)
        num = numerical(z, p, w)
        rel = np.abs(tau - num) / np.abs(tau)
        worst = max(worst, float(rel.max()))
        if rel.max() > CROSS_CHECK:
            i = int(rel.argmax())
            raise SystemExit(
                f"cross-check failed: {kind} {ripple_db} dB order {order} at {f[i]} Hz: "
                f"closed form {tau[i]!r}, derivative of freqs_zpk phase {num[i]!r} "
                f"(relative {rel[i]:.3g} > {CROSS_CHECK})"
            )
        for fi, ti in zip(f, tau):
            out.append((kind, ripple_db, order, cutoff_hz, float(fi), float(ti)))
    print(f"cross-check: closed form vs numerical derivative of freqs_zpk phase, worst relative {worst:.3g}")
    return out


def header():
    return [
        "# foldcheck reference table: analog group delay (s), closed form over scipy's poles and zeros",
        "# source: scipy.signal butter / cheby1 / bessel(norm='mag'), analog=True, output='zpk';"
        f" cross-checked against -d(unwrap(angle(freqs_zpk)))/dw within {CROSS_CHECK:g} relative",
        f"# scipy {scipy.__version__}, numpy {np.__version__}",
        "# regenerate: python3 tests/reference/group_delay.py   check: python3 tests/reference/group_delay.py --check",
        ",".join(COLUMNS),
    ]


def format_row(r):
    kind, ripple_db, order, cutoff_hz, f_hz, tau = r
    return f"{kind},{ripple_db:g},{order},{cutoff_hz:g},{f_hz:.17g},{tau:.17g}"


def read_csv(path):
    meta, data = [], []
    for line in path.read_text().splitlines():
        if line.startswith("#"):
            meta.append(line)
        elif line and not line.startswith(COLUMNS[0] + ","):
            kind, ripple, order, cutoff, f, tau = line.split(",")
            data.append((kind, float(ripple), int(order), float(cutoff), float(f), float(tau)))
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
        if o[:4] != n[:4]
        or abs(o[4] - n[4]) > 1e-12 * n[4]
        or abs(o[5] - n[5]) > TOLERANCE * abs(n[5])
    ]
    for o, n in bad[:10]:
        print(f"drift: committed {o} computed {n}")
    if bad:
        print(f"{CSV.name}: {len(bad)} of {len(new)} rows differ by more than {TOLERANCE} relative")
        return 1
    print(f"{CSV.name}: {len(new)} rows match within {TOLERANCE} relative")
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
