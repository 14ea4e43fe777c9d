"""numpy baseline for the bandsaw benchmark: the same work as one /v1/interval call.

iid resampling of n values, B resamples, the statistic of each resample, then a
95 % percentile interval (numpy.quantile method="linear", Hyndman & Fan 1996
def. 7). Vectorised numpy: indices drawn with Generator.integers in chunks of
CHUNK resamples (bounds memory to CHUNK*n values), mean or np.median along
axis 1. Data are standard normal, drawn once outside the timed region.

Written against numpy 2.4.6 (Python 3.11). OPENBLAS_CORETYPE is left as found.

Usage: python3 numpy_baseline.py [n] [B] [statistic|all] [repeats] [chunk]
  defaults: 10000 10000 all 3 500; statistic in {mean, median, all}.
Prints one JSON line per statistic:
  {"statistic": ..., "n": ..., "resamples": ..., "seconds": best of repeats, ...}
"""

import json
import sys
import time

import numpy as np

STATS = {
    "mean": lambda a: a.mean(axis=1),
    "median": lambda a: np.median(a, axis=1),
}


def run_once(x, B, stat, seed, chunk):
    rng = np.random.default_rng(seed)
    n = x.shape[0]
    f = STATS[stat]
    reps = np.empty(B)
    for start in range(0, B, chunk):
        m = min(chunk, B - start)
        idx = rng.integers(0, n, size=(m, n))
        reps[start:start + m] = f(x[idx])
    lo, hi = np.quantile(reps, [0.025, 0.975], method="linear")
    return float(lo), float(hi)


def main():
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 10_000
    B = int(sys.argv[2]) if len(sys.argv) > 2 else 10_000
    which = sys.argv[3] if len(sys.argv) > 3 else "all"
    repeats = int(sys.argv[4]) if len(sys.argv) > 4 else 3
    chunk = int(sys.argv[5]) if len(sys.argv) > 5 else 500
    stats = list(STATS) if which == "all" else [which]
    x = np.random.default_rng(12345).standard_normal(n)
    for stat in stats:
        times = []
        for r in range(repeats):
            t0 = time.perf_counter()
            lo, hi = run_once(x, B, stat, seed=1000 + r, chunk=chunk)
            times.append(time.perf_counter() - t0)
        print(json.dumps({"statistic": stat, "n": n, "resamples": B, "seconds": min(times),
                          "repeats": repeats, "chunk": chunk, "lower": lo, "upper": hi,
                          "numpy": np.__version__}), flush=True)


if __name__ == "__main__":
    main()
