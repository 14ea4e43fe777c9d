"""Independent numpy/scipy checks of a RUNNING bandsaw server.

Written against numpy 2.4.6, scipy 1.17.1, pytest 9.2.0 (Python 3.11).
HTTP with urllib from the standard library only; the reference computations
live in bootref.py next to this file (plain numpy/scipy from the published
formulas, no bootstrap library).

Server: if BANDSAW_URL is set it is used as is. Otherwise the binary at
BANDSAW_BIN (default target/release/bandsaw, relative to the repository root,
two levels above this file) is started as `BANDSAW_BIN serve --listen
127.0.0.1:0`; its output is read line by line until a line containing
"listening on http://HOST:PORT" appears, and the process is terminated at the
end of the session. The tests are skipped when neither is available.

Run:  python3 -m pytest -q scripts/reference/test_reference.py
"""

import json
import math
import os
import pathlib
import subprocess
import sys
import threading
import time
import urllib.error
import urllib.request

import numpy as np
import pytest
from scipy.stats import norm

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parent))
import bootref as br  # noqa: E402

REPO_ROOT = pathlib.Path(__file__).resolve().parents[2]
STARTUP_TIMEOUT_S = 60.0
REL = 1e-9

# ---------------------------------------------------------------- data sets

# Efron & Tibshirani (1993), An Introduction to the Bootstrap, Table 14.1,
# spatial test data, column A (from memory; see spatial_bca.py).
SPATIAL_A = [48, 36, 20, 29, 42, 42, 20, 42, 22, 41, 45, 14, 6, 0, 33, 28, 34, 4,
             32, 24, 47, 41, 24, 26, 30, 41]
# Efron & Tibshirani (1993), Table 3.1, law school LSAT (docs/references.md).
LSAT = [576, 635, 558, 578, 666, 580, 555, 661, 651, 605, 653, 575, 545, 572, 594]
# Invented: 30 checkout basket sizes (items per order), right-skewed, many ties.
BASKETS = [1, 1, 1, 2, 1, 3, 2, 1, 4, 1, 2, 6, 1, 1, 2, 3, 1, 9, 2, 1, 1, 5, 2, 1,
           14, 3, 1, 2, 1, 7]
# docs/references.md, sample-quantile example (Hyndman & Fan 1996).
SMALL = [2, 5, 7, 7, 3, 9, 4, 6]

DATASETS = {"spatial_A": SPATIAL_A, "lsat": LSAT, "baskets": BASKETS, "small8": SMALL}
STATISTICS = {
    "mean": "mean",
    "median": "median",
    "quantile_0.9": {"name": "quantile", "p": 0.9},
    "variance": "variance",
    "std_dev": "std_dev",
}
METHODS4 = ["percentile", "basic", "normal", "bca"]
LEVELS = [0.9, 0.95]
B = 4000
SEED = 20240917


# ---------------------------------------------------------------- server

def _drain(stream):
    for _ in iter(stream.readline, ""):
        pass


@pytest.fixture(scope="session")
def server_url():
    url = os.environ.get("BANDSAW_URL")
    if url:
        yield url.rstrip("/")
        return
    binary = pathlib.Path(os.environ.get("BANDSAW_BIN", "target/release/bandsaw"))
    if not binary.is_absolute():
        binary = REPO_ROOT / binary
    if not binary.exists():
        pytest.skip(f"no BANDSAW_URL and no binary at {binary}")
    # stderr is merged into stdout so the announcement is found wherever it is logged.
    proc = subprocess.Popen([str(binary), "serve", "--listen", "127.0.0.1:0"],
                            cwd=str(REPO_ROOT), stdout=subprocess.PIPE,
                            stderr=subprocess.STDOUT, text=True, bufsize=1)
    found = {}
    seen = []

    def reader():
        for line in iter(proc.stdout.readline, ""):
            seen.append(line.rstrip("\n"))
            if "listening on http://" in line:
                for tok in line.split():
                    if tok.startswith("http://"):
                        found["url"] = tok.rstrip("/.,;)\"'")
                        break
                break

    th = threading.Thread(target=reader, daemon=True)
    th.start()
    th.join(STARTUP_TIMEOUT_S)
    if "url" not in found:
        proc.terminate()
        try:
            proc.wait(5)
        except subprocess.TimeoutExpired:
            proc.kill()
        pytest.fail(f"{binary} did not announce 'listening on http://...' within "
                    f"{STARTUP_TIMEOUT_S} s (rc={proc.poll()}); output:\n" + "\n".join(seen[-40:]))
    threading.Thread(target=_drain, args=(proc.stdout,), daemon=True).start()
    try:
        yield found["url"]
    finally:
        proc.terminate()
        try:
            proc.wait(10)
        except subprocess.TimeoutExpired:
            proc.kill()
            proc.wait(5)


def post(base, path, body, timeout=120):
    req = urllib.request.Request(base + path, data=json.dumps(body).encode("utf-8"),
                                 headers={"Content-Type": "application/json"}, method="POST")
    try:
        with urllib.request.urlopen(req, timeout=timeout) as r:
            return r.status, json.loads(r.read().decode("utf-8"))
    except urllib.error.HTTPError as e:
        text = e.read().decode("utf-8", "replace")
        return e.code, text


def interval_ok(base, body):
    status, resp = post(base, "/v1/interval", body)
    assert status == 200, f"POST /v1/interval -> {status}: {resp}\nrequest: {json.dumps(body)[:500]}"
    return resp


_cache = {}


def cached_interval(base, key, body):
    if key not in _cache:
        _cache[key] = interval_ok(base, body)
    return _cache[key]


# ---------------------------------------------------------------- comparison

def close(got, want, scale=1.0, rel=REL):
    """|got - want| <= rel * max(|want|, scale, 1): relative 1e-9, absolute 1e-9 near 0.

    `scale` is the magnitude of the inputs a value was computed from (e.g. |estimate|
    for a bias, which is a difference of two numbers that size)."""
    if got is None or want is None:
        return False
    if math.isinf(want) or math.isinf(got):
        return got == want
    return abs(got - want) <= rel * max(abs(want), abs(scale), 1.0)


def check(name, got, want, scale=1.0, rel=REL):
    assert close(got, want, scale, rel), (
        f"{name}: server {got!r} vs numpy {want!r} (diff {None if got is None else got - want!r}, "
        f"tol {rel * max(abs(want), abs(scale), 1.0):.3g})")


def find_interval(resp, method, level):
    hits = [iv for iv in resp["intervals"]
            if iv["method"] == method and abs(iv["level"] - level) < 1e-12]
    assert len(hits) == 1, f"expected one {method} interval at {level}, got {hits}"
    return hits[0]


# ---------------------------------------------------------------- tests

@pytest.mark.parametrize("stat_key", list(STATISTICS))
@pytest.mark.parametrize("data_key", list(DATASETS))
def test_identities_from_returned_replicates(server_url, data_key, stat_key):
    """Exact identity check against numpy 2.4.6 / scipy 1.17.1, same replicates.

    From the server's own replicates (include=["replicates"]) and the data,
    recompute with numpy: the estimate (numpy.quantile method="linear" =
    Hyndman & Fan 1996 def. 7 for median/quantile; plug-in var/std), standard
    error (sd ddof=1), bias (mean(reps) - estimate), z0 (share below, ties
    counted half, scipy norm.ppf), acceleration (own leave-one-out jackknife,
    Efron 1987 JASA 82(397); Efron & Tibshirani 1993 ch. 14) and every
    percentile, basic, normal and BCa endpoint (Davison & Hinkley 1997 ch. 5)
    at levels 0.9 and 0.95. Tolerance: relative 1e-9 (absolute 1e-9 near 0;
    differences such as bias and basic endpoints are measured against the size
    of the estimate they were computed from)."""
    data = DATASETS[data_key]
    stat = STATISTICS[stat_key]
    body = {"data": data, "statistic": stat, "resamples": B, "seed": SEED,
            "levels": LEVELS, "methods": METHODS4, "include": ["replicates"]}
    resp = cached_interval(server_url, ("id", data_key, stat_key), body)
    x = np.asarray(data, dtype=float)
    f = br.statistic_fn(stat)

    reps = np.asarray(resp["replicates"], dtype=float)
    assert reps.shape == (B,), f"expected {B} replicates, got {reps.shape}"
    assert np.all(np.isfinite(reps))
    assert resp.get("resamples") in (None, B)

    theta_np = f(x)
    theta = float(resp["estimate"])
    check("estimate", theta, theta_np)
    if "n" in resp:
        assert resp["n"] == len(x)

    se, bias = br.summary(reps, theta)
    check("standard_error", resp["standard_error"], se, scale=abs(theta))
    check("bias", resp["bias"], bias, scale=abs(theta))

    # z0 counts replicates against the server's estimate: a replicate equal to the
    # estimate must compare equal in the same floating-point value it was made with.
    z0 = br.z0_of(reps, theta)
    accel = br.acceleration(br.jackknife_values(x, f))
    diag = resp["diagnostics"]
    check("diagnostics.z0", diag["z0"], z0)
    check("diagnostics.acceleration", diag["acceleration"], accel)
    if theta != theta_np:
        # Only last-bit differences can reach here (the estimate matched to 1e-9);
        # with ties at the estimate they would shift z0, so say so.
        z0_np = br.z0_of(reps, theta_np)
        assert z0_np == z0, (f"server estimate {theta!r} and numpy {theta_np!r} differ in the "
                             f"last bits and that changes the tie count behind z0 "
                             f"({z0!r} vs {z0_np!r})")

    scale = max(abs(theta), se)
    for level in LEVELS:
        for method in METHODS4:
            want = br.interval(method, reps, theta, level, accel=accel)
            iv = find_interval(resp, method, level)
            check(f"{method}@{level}.lower", iv["lower"], want[0], scale=scale)
            check(f"{method}@{level}.upper", iv["upper"], want[1], scale=scale)
            assert iv["lower"] <= iv["upper"]


@pytest.mark.parametrize("data_key", ["spatial_A", "lsat", "baskets", "small8"])
def test_studentized_mean_from_returned_replicates(server_url, data_key):
    """Bootstrap-t for the mean (Davison & Hinkley 1997, ch. 5; DiCiccio & Efron
    1996, Statistical Science 11(3)), recomputed with numpy 2.4.6 from the
    returned replicates and replicate_standard_errors: t_i = (theta*_i -
    theta)/se*_i, interval (theta - Q_t(1-a/2) se_hat, theta - Q_t(a/2) se_hat),
    se_hat = sqrt(plug-in var / n), Q = numpy.quantile method="linear".
    Tolerance relative 1e-9 of the estimate's size."""
    x = np.asarray(DATASETS[data_key], dtype=float)
    n = len(x)
    body = {"data": DATASETS[data_key], "statistic": "mean", "resamples": B, "seed": SEED + 1,
            "levels": LEVELS, "methods": ["studentized"], "include": ["replicates"]}
    resp = interval_ok(server_url, body)
    assert "replicate_standard_errors" in resp, \
        f"no replicate_standard_errors in response keys {sorted(resp)}"
    reps = np.asarray(resp["replicates"], dtype=float)
    rse = np.asarray(resp["replicate_standard_errors"], dtype=float)
    assert reps.shape == (B,) and rse.shape == (B,)
    assert np.all(rse >= 0)
    theta = float(resp["estimate"])
    check("estimate", theta, float(np.mean(x)))
    se_hat = math.sqrt(br.plugin_var(x) / n)
    if np.any(rse == 0):
        pytest.skip(f"{int(np.sum(rse == 0))} replicate(s) with se* = 0; convention undefined")
    for level in LEVELS:
        want = br.studentized(reps, rse, theta, se_hat, level)
        iv = find_interval(resp, "studentized", level)
        check(f"studentized@{level}.lower", iv["lower"], want[0], scale=abs(theta))
        check(f"studentized@{level}.upper", iv["upper"], want[1], scale=abs(theta))


@pytest.mark.parametrize("p,expected", [(0.1, 2.7), (0.25, 3.75), (0.5, 5.5), (0.9, 7.6)])
def test_sample_quantiles_hyndman_fan_7(server_url, p, expected):
    """Hyndman, R. J. & Fan, Y. (1996), The American Statistician 50(4),
    definition 7; numpy 2.4.6 quantile(method="linear"). For x = [2,5,7,7,3,9,4,6]
    the estimate equals numpy.quantile(x, p) (2.7, 3.75, 5.5, 7.6,
    docs/references.md) to 1e-12."""
    want = float(np.quantile(np.asarray(SMALL, dtype=float), p, method="linear"))
    assert abs(want - expected) <= 1e-12
    for stat in ([{"name": "quantile", "p": p}] + (["median"] if p == 0.5 else [])):
        resp = interval_ok(server_url, {"data": SMALL, "statistic": stat, "resamples": 200,
                                        "seed": 3, "methods": ["percentile"]})
        assert abs(resp["estimate"] - want) <= 1e-12 * max(1.0, abs(want)), (stat, resp["estimate"], want)


@pytest.mark.parametrize("data_key", ["small8", "spatial_A"])
def test_normal_method_uses_norm_ppf(server_url, data_key):
    """NIST/SEMATECH e-Handbook §1.3.6.7.1 critical values; scipy 1.17.1
    norm.ppf. For method "normal" the implied z = (upper - lower)/(2 SE), with
    SE the response's standard_error, equals norm.ppf(1 - a/2) to 1e-12
    (relative), and the midpoint is estimate - bias to 1e-12 of the estimate."""
    levels = [0.6827, 0.8, 0.9, 0.95, 0.99]
    resp = interval_ok(server_url, {"data": DATASETS[data_key], "statistic": "mean",
                                    "resamples": 1000, "seed": 11, "levels": levels,
                                    "methods": ["normal"]})
    se = float(resp["standard_error"])
    assert se > 0
    for level in levels:
        iv = find_interval(resp, "normal", level)
        z = (iv["upper"] - iv["lower"]) / (2 * se)
        want = float(norm.ppf(1 - (1 - level) / 2))
        assert abs(z - want) <= 1e-12 * want, f"level {level}: z {z!r} vs norm.ppf {want!r}"
        mid = (iv["upper"] + iv["lower"]) / 2
        assert abs(mid - (resp["estimate"] - resp["bias"])) <= 1e-12 * max(1.0, abs(resp["estimate"]))
    assert abs(norm.ppf(0.975) - 1.959963984540054) <= 1e-15


@pytest.mark.parametrize("data_key", list(DATASETS))
def test_mean_standard_error_near_exact_bootstrap_value(server_url, data_key):
    """Efron & Tibshirani (1993) ch. 5: the ideal bootstrap standard error of
    the mean under iid resampling is sqrt(plug-in var / n) (numpy 2.4.6). With
    B = 4000 replicates the Monte Carlo relative sd of the sd is about
    1/sqrt(2(B-1)) = 0.0112; tolerance 4.5 of those (about 5 %). Monte Carlo
    check, not an identity."""
    x = np.asarray(DATASETS[data_key], dtype=float)
    body = {"data": DATASETS[data_key], "statistic": "mean", "resamples": B, "seed": SEED,
            "levels": LEVELS, "methods": METHODS4, "include": ["replicates"]}
    resp = cached_interval(server_url, ("id", data_key, "mean"), body)
    ideal = math.sqrt(br.plugin_var(x) / len(x))
    tol = 4.5 / math.sqrt(2 * (B - 1))
    assert abs(resp["standard_error"] / ideal - 1) <= tol, (resp["standard_error"], ideal)


def test_same_seed_same_answer(server_url):
    """Reproducibility (docs/api.md, `seed`): the same request with the same seed
    gives the same replicates and intervals, bit for bit (compared as parsed
    JSON numbers, Python 3.11 json)."""
    body = {"data": BASKETS, "statistic": "median", "resamples": 1000, "seed": 424242,
            "levels": [0.9], "methods": METHODS4, "include": ["replicates"]}
    a = interval_ok(server_url, body)
    b = interval_ok(server_url, body)
    assert a["replicates"] == b["replicates"]
    assert a["intervals"] == b["intervals"]
    assert a["estimate"] == b["estimate"] and a["standard_error"] == b["standard_error"]


# ---------------------------------------------------------------- binned histograms
# Checked with numpy 2.4.6 (Python 3.11).

# Invented: checkout latencies (ms) of one hour, as a monitoring system's histogram; the second
# has an empty bin and a heavier overflow.
BINNED = {
    "checkout": ([0, 25, 50, 100, 250, 500, 1000, 2500], [1830, 2960, 1410, 520, 190, 60, 18], 12),
    "gappy": ([0, 10, 20, 40, 80, 160], [14, 0, 9, 22, 5], 7),
}


@pytest.mark.parametrize("name", sorted(BINNED))
@pytest.mark.parametrize("p", [0.0, 0.1, 0.25, 0.5, 0.9, 0.95, 0.99, 1.0])
def test_binned_quantiles_follow_the_documented_rule(server_url, name, p):
    edges, counts, overflow = BINNED[name]
    body = {"data": {"bins": {"edges": edges, "counts": counts, "overflow": overflow}},
            "statistic": {"name": "quantile", "p": p}, "resamples": 10, "seed": 1,
            "methods": ["percentile"]}
    got = interval_ok(server_url, body)["estimate"]
    want = br.binned_quantile(edges, counts, overflow, p)
    assert got == pytest.approx(want, rel=REL, abs=1e-12), (name, p)
    if p > 0:
        k = np.array([list(counts) + [overflow]])
        assert br.binned_quantile_rows(edges, k, p)[0] == pytest.approx(want, rel=REL)


@pytest.mark.parametrize("name,p", [("checkout", 0.5), ("checkout", 0.95), ("gappy", 0.5), ("gappy", 0.8)])
def test_binned_quantile_standard_error_matches_a_numpy_multinomial_bootstrap(server_url, name, p):
    edges, counts, overflow = BINNED[name]
    b_server, b_numpy = 20000, 400000
    body = {"data": {"bins": {"edges": edges, "counts": counts, "overflow": overflow}},
            "statistic": {"name": "quantile", "p": p}, "resamples": b_server, "seed": SEED,
            "methods": ["percentile"]}
    se = interval_ok(server_url, body)["standard_error"]
    reps = br.multinomial_bootstrap_quantiles(edges, counts, overflow, p, b_numpy, SEED)
    ref = reps.std(ddof=1)
    # A standard error from B replicates has relative sd sqrt((kappa - 1)/(4B)), kappa the
    # replicates' kurtosis (taken from the numpy replicates); both estimates carry it, so the
    # tolerance is 4 sds of their difference.
    kappa = np.mean((reps - reps.mean()) ** 4) / reps.var() ** 2
    sd = ref * math.sqrt((kappa - 1) / 4 * (1 / b_server + 1 / b_numpy))
    assert abs(se - ref) < 4 * sd, (name, p, se, ref, sd)
