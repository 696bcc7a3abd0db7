"""The job of `holdfast inspect` on a waveform CSV (t, va, vb, vc, ia, ib, ic
in volts and amperes), written the way a vectorised pandas + numpy script
would do it: read the CSV, one-cycle DFT phasors of each phase by
cumulative sums, the positive-sequence voltage, the first disturbance below
0.9 pu. Prints the seconds it took and what it found, for bench/compare.sh.

Given a folder instead of a file (plan mode), it does the same for every CSV
in it, on all cores (one process per core), and draws no figures.
"""
import os
import sys
import time
from multiprocessing import Pool

import numpy as np
import pandas as pd


def evaluate(args):
    path, rated_kv, f_nom = args
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
    return len(t), start


def main(path, rated_kv, f_nom):
    t0 = time.perf_counter()
    if os.path.isdir(path):
        files = sorted(
            os.path.join(path, f) for f in os.listdir(path) if f.endswith(".csv")
        )
        with Pool(os.cpu_count()) as pool:
            found = pool.map(evaluate, [(f, rated_kv, f_nom) for f in files])
        secs = time.perf_counter() - t0
        samples = sum(n for n, _ in found)
        print(f"{secs:.3f} s; {len(files)} recordings; {samples} samples")
        return
    n, start = evaluate((path, rated_kv, f_nom))
    secs = time.perf_counter() - t0
    print(f"{secs:.3f} s; {n} samples; first disturbance start {start}")


if __name__ == "__main__":
    main(sys.argv[1], float(sys.argv[2]), float(sys.argv[3]))
