"""bandsaw through HTTP against the vectorised numpy a notebook user writes, side by side in one
run, for the jobs of the speed goals (README, *Speed*). Prints ratios only (numpy seconds over
bandsaw seconds, or bandsaw's own time ratio where the goal is one), each the best of `repeats`
alternating runs, so that drift in machine load favours neither side.

Usage: python3 scripts/bench/service_vs_numpy.py [repeats]   (default 3)

It starts the release binary (build it first: cargo build --release) on a free loopback port
with limits raised for the large jobs, and installs numpy with pip when it is missing. The numpy
side runs on one thread, chunked so that memory stays bounded, as a notebook user would write it.
Invented data: standard normal values and an AR(1) series, fixed seeds.
"""

import json
import os
import subprocess
import sys
import time
import urllib.request

try:
    import numpy as np
except ImportError:
    subprocess.run([sys.executable, "-m", "pip", "install", "--quiet", "numpy"], check=True)
    import numpy as np

ROOT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..")
BINARY = os.path.join(ROOT, "target", "release", "bandsaw")
CHUNK_CELLS = 20_000_000  # numpy works on (chunk × n) index arrays of at most this many cells


def start_server():
    """The release binary on a free port, limits raised for a 10⁶-row median."""
    proc = subprocess.Popen(
        [BINARY, "serve", "--listen", "127.0.0.1:0", "--work-limit", "1e12", "--max-rows", "2000000",
         "--max-body-bytes", "100000000", "--max-time-limit-ms", "600000", "--max-resamples", "100000"],
        stdout=subprocess.PIPE, stderr=subprocess.DEVNULL, text=True)
    line = proc.stdout.readline()
    url = next(w for w in line.split() if w.startswith("http://"))
    return proc, url


def post(url, route, body):
    """Seconds for one request, from sending the body to the whole response read."""
    data = json.dumps(body).encode()
    req = urllib.request.Request(url + route, data=data, headers={"Content-Type": "application/json"})
    t = time.perf_counter()
    with urllib.request.urlopen(req, timeout=900) as r:
        r.read()
        assert r.status == 200
    return time.perf_counter() - t


def interval(x, statistic, b, scheme=None, methods=("percentile",)):
    body = {"data": x, "statistic": statistic, "resamples": b, "seed": 1, "methods": list(methods),
            "time_limit_ms": 600000}
    if scheme:
        body["scheme"] = scheme
    return body


def numpy_iid(x, stat, b, rng):
    """The percentile interval of `stat` over b iid resamples, chunked."""
    n = len(x)
    chunk = max(1, CHUNK_CELLS // n)
    out = []
    for start in range(0, b, chunk):
        idx = rng.integers(0, n, size=(min(chunk, b - start), n))
        out.append(stat(x[idx], axis=1))
    reps = np.concatenate(out)
    return np.quantile(reps, [0.025, 0.975])


def numpy_stationary(x, b, mean_block, rng):
    """The stationary bootstrap (Politis & Romano 1994), vectorised: at each position a new
    block starts with probability 1/mean_block at a random row, else the previous row's
    successor (wrapping); the last restart at or before each position is found with a running
    maximum."""
    n = len(x)
    chunk = max(1, CHUNK_CELLS // n)
    t = np.arange(n)
    out = []
    for start in range(0, b, chunk):
        m = min(chunk, b - start)
        restart = rng.random((m, n)) < 1.0 / mean_block
        restart[:, 0] = True
        starts = rng.integers(0, n, size=(m, n))
        last = np.maximum.accumulate(np.where(restart, t, 0), axis=1)
        idx = (np.take_along_axis(starts, last, axis=1) + t - last) % n
        out.append(x[idx].mean(axis=1))
    return np.quantile(np.concatenate(out), [0.025, 0.975])


def best(f, repeats):
    return min(f() for _ in range(repeats))


def alternate(service, local, repeats):
    """Best seconds of each, runs alternating between the two."""
    s, l = [], []
    for i in range(repeats):
        pair = (service, local) if i % 2 == 0 else (local, service)
        for f in pair:
            (s if f is service else l).append(f())
    return min(s), min(l)


def main():
    repeats = int(sys.argv[1]) if len(sys.argv) > 1 else 3
    rng = np.random.default_rng(7)
    proc, url = start_server()
    rows = []
    try:
        x = rng.standard_normal(10_000)
        for name, stat, fn in [("mean", "mean", np.mean), ("median", "median", np.median)]:
            s, n = alternate(lambda: post(url, "/v1/interval", interval(x.tolist(), stat, 10_000)),
                             lambda: timed(lambda: numpy_iid(x, fn, 10_000, rng)), repeats)
            rows.append((f"{name}, n = 10 000, B = 10 000, percentile", "numpy ÷ bandsaw", n / s))
        big = rng.standard_normal(1_000_000).tolist()
        small = x.tolist()
        t_big = best(lambda: post(url, "/v1/interval", interval(big, "median", 10_000)), repeats)
        t_small = best(lambda: post(url, "/v1/interval", interval(small, "median", 10_000)), repeats)
        rows.append(("median at n = 10⁶ against n = 10⁴, B = 10 000", "bandsaw ÷ bandsaw", t_big / t_small))
        series = np.zeros(100_000)
        e = rng.standard_normal(100_000)
        for i in range(1, len(series)):
            series[i] = 0.6 * series[i - 1] + e[i]
        scheme = {"kind": "stationary_block", "mean_block_length": 50}
        s, n = alternate(lambda: post(url, "/v1/interval", interval(series.tolist(), "mean", 2000, scheme)),
                         lambda: timed(lambda: numpy_stationary(series, 2000, 50, rng)), repeats)
        rows.append(("stationary block mean, n = 100 000, B = 2000, mean block 50", "numpy ÷ bandsaw", n / s))
        page = [rng.standard_normal(2000) for _ in range(200)]
        batch = {"jobs": [dict(interval(p.tolist(), "mean", 2000), kind="interval") for p in page]}
        s, n = alternate(lambda: post(url, "/v1/batch", batch),
                         lambda: timed(lambda: [numpy_iid(p, np.mean, 2000, rng) for p in page]), repeats)
        rows.append(("200 series of n = 2000 in one batch, mean, B = 2000", "numpy ÷ bandsaw", n / s))
        wide = rng.standard_normal(100_000).tolist()
        both, plain = alternate(
            lambda: post(url, "/v1/interval", interval(wide, "mean", 2000, methods=("percentile", "bca"))),
            lambda: post(url, "/v1/interval", interval(wide, "mean", 2000)), repeats)
        rows.append(("BCa on top of percentile, mean, n = 100 000, B = 2000", "bandsaw ÷ bandsaw", both / plain))
    finally:
        proc.terminate()
        proc.wait()
    print(f"bandsaw over HTTP against numpy {np.__version__} (one thread), {os.cpu_count()} cores, best of {repeats}")
    print(f"{'job':<64} {'ratio':<18} {'value':>7}")
    for job, what, ratio in rows:
        print(f"{job:<64} {what:<18} {ratio:>6.2f}×")


def timed(f):
    t = time.perf_counter()
    f()
    return time.perf_counter() - t


if __name__ == "__main__":
    main()
