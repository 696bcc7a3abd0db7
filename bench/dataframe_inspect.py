"""The job of `holdfast inspect` on a waveform CSV (t, va, vb, vc, ia, ib, ic
in volts and amperes), written the way a vectorised pandas + numpy script
would do it: read the CSV, one-cycle DFT phasors of each phase by
cumulative sums, the positive-sequence voltage, the first disturbance below
0.9 pu. Prints the seconds it took and what it found, for bench/compare.sh.
"""
import sys
import time

import numpy as np
import pandas as pd


def main(path, rated_kv, f_nom):
    t0 = time.perf_counter()
    df = pd.read_csv(path)
    t = df["t"].to_numpy()
    fs = 1.0 / np.median(np.diff(t[:1000]))
    n = int(round(fs / f_nom))
    base = rated_kv * 1e3 / np.sqrt(3.0)
    m = np.arange(len(t))
    rot = np.exp(-2j * np.pi * f_nom * m / fs)
    phasors = []
    for col in ("va", "vb", "vc"):
        x = df[col].to_numpy() / base
        c = np.cumsum(x * rot)
        s = c[n - 1:] - np.concatenate(([0], c[:-n]))
        phasors.append(np.sqrt(2) / n * s)
    a = np.exp(2j * np.pi / 3)
    va, vb, vc = phasors
    v1 = np.abs((va + a * vb + a * a * vc) / 3)
    below = np.nonzero(v1 < 0.9)[0]
    start = t[n - 1 + below[0]] if len(below) else None
    secs = time.perf_counter() - t0
    print(f"{secs:.3f} s; {len(t)} samples; first disturbance start {start}")


if __name__ == "__main__":
    main(sys.argv[1], float(sys.argv[2]), float(sys.argv[3]))
