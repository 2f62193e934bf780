"""The notebook pipeline cuvette is measured against: numpy + scipy on the same export files.

It does what a careful notebook does for each file: load the two columns, Savitzky-Golay
smoothing (the same 9-point, cubic window), find_peaks for the reddest peak with a prominence
floor, and the half width on the red side with peak_widths. Not part of the tests.

Run after `cargo bench --bench perf` has written target/bench-files/:
    python3 benches/python_reference.py
"""
import glob
import os
import time

import numpy as np
from scipy.signal import find_peaks, peak_widths, savgol_filter

HERE = os.path.dirname(os.path.abspath(__file__))
FILES = sorted(glob.glob(os.path.join(HERE, "..", "target", "bench-files", "abs_*.csv")))


def analyse(x, y):
    s = savgol_filter(y, 9, 3)
    peaks, _ = find_peaks(s, prominence=0.002 * s.max())
    if len(peaks) == 0:
        return None
    p = peaks[-1]
    w = peak_widths(s, [p], rel_height=0.5)
    return x[p], s[p], w[0][0] / 2.0


def main():
    if not FILES:
        raise SystemExit("no files: run `cargo bench --bench perf` first")
    x, y = np.loadtxt(FILES[0], delimiter=",", skiprows=1, unpack=True)
    n = 2000
    t0 = time.perf_counter()
    for _ in range(n):
        analyse(x, y)
    one = (time.perf_counter() - t0) / n
    t0 = time.perf_counter()
    for f in FILES:
        x, y = np.loadtxt(f, delimiter=",", skiprows=1, unpack=True)
        analyse(x, y)
    many = time.perf_counter() - t0
    print(f"analyse one 601-point spectrum: {one * 1e6:.1f} us")
    print(f"read and analyse {len(FILES)} files (one process): {many * 1e3:.0f} ms")


if __name__ == "__main__":
    main()
