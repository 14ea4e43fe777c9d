"""Simulated coverage of the 90 % bootstrap intervals of the MEAN.

Independent numpy implementation (no bootstrap library) of the five interval
methods bandsaw offers, with bandsaw's conventions (see bootref.py):
percentile, basic, normal (bias-corrected, z = norm.ppf(0.95), SE = sd of
replicates ddof=1), bca (z0 with half-ties, jackknife acceleration) and
studentized (se*_i = sqrt(plug-in var of resample i / n)). Replicate quantiles
are Hyndman-Fan definition 7 (numpy.quantile method="linear"), written out
row-wise here so that each trial may use its own BCa probabilities.

Cases (iid resampling, B = 1000 resamples per sample, fixed seeds):
  (a) standard normal samples, n = 50, truth 0;
  (b) standard exponential samples, n = 10, truth 1.

Sources: Davison & Hinkley (1997), Bootstrap Methods and their Application,
ch. 5; Efron (1987), JASA 82(397); Efron & Tibshirani (1993), ch. 14;
Hyndman & Fan (1996), The American Statistician 50(4).

Written against numpy 2.4.6, scipy 1.17.1.

Usage: python3 coverage_expectation.py [trials_a] [trials_b] [B]
"""

import json
import sys
import time

import numpy as np
from scipy.stats import norm, t as student_t

LEVEL = 0.90
ALPHA = 1.0 - LEVEL
METHODS = ("percentile", "basic", "normal", "bca", "studentized")


def row_quantile(sorted_rows, p):
    """Hyndman-Fan 7 quantile of each sorted row; p scalar or one per row."""
    B = sorted_rows.shape[1]
    p = np.broadcast_to(np.asarray(p, dtype=float), (sorted_rows.shape[0],))
    h = (B - 1) * p
    j = np.clip(np.floor(h).astype(np.int64), 0, B - 1)
    g = h - j
    j1 = np.minimum(j + 1, B - 1)
    r = np.arange(sorted_rows.shape[0])
    lo, hi = sorted_rows[r, j], sorted_rows[r, j1]
    with np.errstate(invalid="ignore"):
        return np.where(g == 0.0, lo, lo + g * (hi - lo))


def one_chunk(rng, x, B):
    """x: (m, n) samples. Returns dict method -> (lower, upper) arrays of length m."""
    m, n = x.shape
    theta = x.mean(axis=1)
    idx = rng.integers(0, n, size=(m, B * n))
    idx += (np.arange(m) * n)[:, None]
    X = x.ravel()[idx].reshape(m, B, n)
    reps = X.mean(axis=2)
    rep_var = np.mean((X - reps[:, :, None]) ** 2, axis=2)
    del X, idx
    s = np.sort(reps, axis=1)
    out = {}
    q_lo = row_quantile(s, ALPHA / 2)
    q_hi = row_quantile(s, 1 - ALPHA / 2)
    out["percentile"] = (q_lo, q_hi)
    out["basic"] = (2 * theta - q_hi, 2 * theta - q_lo)
    z = norm.ppf(1 - ALPHA / 2)
    se = reps.std(axis=1, ddof=1)
    bias = reps.mean(axis=1) - theta
    out["normal"] = (theta - bias - z * se, theta - bias + z * se)
    # BCa: z0 with half ties; jackknife acceleration of the mean in closed form:
    # theta_(i) = (n xbar - x_i)/(n-1), so d_i = (x_i - xbar)/(n-1) and
    # a = sum d^3 / (6 (sum d^2)^1.5) = sum c^3 / (6 (sum c^2)^1.5), c = x - xbar.
    below = np.count_nonzero(reps < theta[:, None], axis=1)
    ties = np.count_nonzero(reps == theta[:, None], axis=1)
    z0 = norm.ppf((below + 0.5 * ties) / B)
    c = x - theta[:, None]
    s2 = np.sum(c * c, axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        a = np.where(s2 > 0, np.sum(c ** 3, axis=1) / (6.0 * s2 ** 1.5), 0.0)
    ends = []
    for q in (ALPHA / 2, 1 - ALPHA / 2):
        w = z0 + norm.ppf(q)
        ends.append(row_quantile(s, norm.cdf(z0 + w / (1.0 - a * w))))
    out["bca"] = tuple(ends)
    # Studentized.
    se_star = np.sqrt(rep_var / n)
    diff = reps - theta[:, None]
    with np.errstate(invalid="ignore", divide="ignore"):
        tt = np.where(se_star > 0, diff / se_star, np.sign(diff) * np.inf)
    ts = np.sort(tt, axis=1)
    se_hat = np.sqrt(np.var(x, axis=1) / n)
    out["studentized"] = (theta - row_quantile(ts, 1 - ALPHA / 2) * se_hat,
                          theta - row_quantile(ts, ALPHA / 2) * se_hat)
    return out


def simulate(name, draw, n, truth, trials, B, seed, chunk):
    rng = np.random.default_rng(seed)
    hits = {k: 0 for k in METHODS}
    widths = {k: 0.0 for k in METHODS}
    done = 0
    t0 = time.time()
    while done < trials:
        m = min(chunk, trials - done)
        x = draw(rng, (m, n))
        res = one_chunk(rng, x, B)
        for k in METHODS:
            lo, hi = res[k]
            hits[k] += int(np.count_nonzero((lo <= truth) & (truth <= hi)))
            widths[k] += float(np.sum(hi - lo))
        done += m
    el = time.time() - t0
    print(f"\ncase {name}: n = {n}, truth = {truth}, trials = {trials}, B = {B}, seed = {seed}, "
          f"{el:.1f} s")
    print(f"  {'method':12s} {'coverage':>9s} {'binom se':>9s} {'mean width':>11s}")
    rows = {}
    for k in METHODS:
        cov = hits[k] / trials
        se = (cov * (1 - cov) / trials) ** 0.5
        rows[k] = {"coverage": cov, "se": se, "mean_width": widths[k] / trials}
        print(f"  {k:12s} {cov:9.4f} {se:9.4f} {widths[k] / trials:11.4f}")
    return {"n": n, "truth": truth, "trials": trials, "resamples": B, "seed": seed,
            "methods": rows}


def main():
    trials_a = int(sys.argv[1]) if len(sys.argv) > 1 else 40000
    trials_b = int(sys.argv[2]) if len(sys.argv) > 2 else 100000
    B = int(sys.argv[3]) if len(sys.argv) > 3 else 1000
    res = {"level": LEVEL}
    res["a_normal_n50"] = simulate(
        "(a) standard normal", lambda r, s: r.standard_normal(s), 50, 0.0,
        trials_a, B, seed=20250101, chunk=100)
    res["b_exponential_n10"] = simulate(
        "(b) standard exponential", lambda r, s: r.standard_exponential(s), 10, 1.0,
        trials_b, B, seed=20250102, chunk=500)
    z = norm.ppf(1 - ALPHA / 2)
    approx = 2 * student_t.cdf(z * np.sqrt(49 / 50), 49) - 1
    print(f"\nanalytic approximation, case (a) percentile (ideal B): "
          f"2*T_49.cdf({z:.7f}*sqrt(49/50)) - 1 = {approx:.5f}")
    res["a_percentile_analytic"] = approx
    print(json.dumps(res))


if __name__ == "__main__":
    main()
