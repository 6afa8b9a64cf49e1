#!/usr/bin/python3
"""bench_pandas.py - the comparison for scripts/bench-speed.sh: what a lab
would write with pandas/numpy to get freezing points from a logger CSV.

Reads the whole file with pandas.read_csv (its C engine), then per channel
finds each freeze by the recalescence jump (a rise of more than 0.3 K within
5 s), takes the minimum before it as nucleation, fits a straight line to the
freezing branch from 20 s to 600 s after nucleation and extrapolates it back
to the nucleation instant. Prints one line per channel and a count; its
timing is what the benchmark compares against. Not part of frostfit.
"""
import sys

import numpy as np
import pandas as pd

RISE_K = 0.3       # recalescence jump that marks a freeze
RISE_WINDOW_S = 5.0
BRANCH_FROM_S = 20.0
BRANCH_TO_S = 600.0
MIN_GAP_S = 1200.0  # separate freeze events


def freezes(t, y):
    dt = float(np.median(np.diff(t[:1000])))
    k = max(1, int(round(RISE_WINDOW_S / dt)))
    rise = y[k:] - y[:-k]
    starts = np.flatnonzero(rise > RISE_K)
    events = []
    last = -np.inf
    for s in starts:
        if t[s] - last < MIN_GAP_S:
            continue
        last = t[s]
        lo, hi = max(0, s - k), min(len(y), s + 2 * k)
        n = lo + int(np.argmin(y[lo:hi]))
        sel = (t >= t[n] + BRANCH_FROM_S) & (t <= t[n] + BRANCH_TO_S)
        if np.count_nonzero(sel) < 10:
            continue
        slope, icpt = np.polyfit(t[sel], y[sel], 1)
        events.append((t[n], icpt + slope * t[n]))
    return events


def main():
    if len(sys.argv) != 2:
        print("usage: bench_pandas.py FILE.csv", file=sys.stderr)
        return 1
    df = pd.read_csv(sys.argv[1])
    t = df.iloc[:, 0].to_numpy(dtype=float)
    total = 0
    for name in df.columns[1:]:
        ev = freezes(t, df[name].to_numpy(dtype=float))
        total += len(ev)
        first = f"{ev[0][1]:.3f}" if ev else "none"
        print(f"{name}: {len(ev)} freezes, first at {first} C")
    print(f"{len(df)} rows, {total} freezes")
    return 0


if __name__ == "__main__":
    sys.exit(main())
