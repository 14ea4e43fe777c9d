"""Independent numpy implementation of the interval conventions bandsaw uses.

Written against numpy 2.4.6 and scipy 1.17.1 (Python 3.11). Everything here
follows the published formulas directly; no bootstrap library is used.

Sources:
- percentile, basic, normal, studentized: Davison, A. C. & Hinkley, D. V.
  (1997), Bootstrap Methods and their Application, ch. 5.
- BCa (z0 from the share of replicates below the estimate, acceleration from
  the jackknife): Efron, B. (1987), JASA 82(397); Efron & Tibshirani (1993),
  An Introduction to the Bootstrap, ch. 14.
- Replicate and sample quantiles: Hyndman & Fan (1996), definition 7
  (numpy.quantile method="linear").
"""

import numpy as np
from scipy.stats import norm


def q7(x, p):
    """Hyndman-Fan definition 7 quantile."""
    return np.quantile(np.asarray(x, dtype=float), p, method="linear")


def plugin_var(x, axis=None):
    x = np.asarray(x, dtype=float)
    return np.var(x, axis=axis, ddof=0)


def statistic_fn(stat):
    """Return f(x) for a bandsaw statistic spec on one column (1-d array)."""
    if isinstance(stat, str):
        name, params = stat, {}
    else:
        params = dict(stat)
        name = params.pop("name")
    if name == "mean":
        return lambda x: float(np.mean(x))
    if name == "median":
        return lambda x: float(q7(x, 0.5))
    if name == "quantile":
        p = params["p"]
        return lambda x: float(q7(x, p))
    # The divisor "n" is numpy's ddof=0, "n-1" its ddof=1.
    if name == "variance":
        ddof = {"n": 0, "n-1": 1}[params.get("divisor", "n")]
        return lambda x: float(np.var(x, ddof=ddof))
    if name == "std_dev":
        ddof = {"n": 0, "n-1": 1}[params.get("divisor", "n")]
        return lambda x: float(np.std(x, ddof=ddof))
    raise ValueError(f"statistic {name!r} not implemented in the reference")


def jackknife_values(x, f):
    x = np.asarray(x, dtype=float)
    n = len(x)
    return np.array([f(np.delete(x, i)) for i in range(n)])


def acceleration(jack):
    d = np.mean(jack) - jack
    s2 = np.sum(d * d)
    if s2 == 0.0:
        return 0.0
    return float(np.sum(d ** 3) / (6.0 * s2 ** 1.5))


def z0_of(reps, theta):
    reps = np.asarray(reps, dtype=float)
    B = reps.size
    # Ties within 1e-12 relative to max(|theta|, sd), at most 1e-6 sd, count as equal (bandsaw's TIE_TOLERANCE):
    # resamples that reproduce the estimate mathematically may differ from it in the last bits.
    sd = float(np.std(reps, ddof=1)) if B > 1 else 0.0
    tol = min(1e-12 * max(abs(theta), sd), 1e-6 * sd)
    share = (np.count_nonzero(reps < theta - tol) + 0.5 * np.count_nonzero(np.abs(reps - theta) <= tol)) / B
    return float(norm.ppf(share))


def summary(reps, theta):
    reps = np.asarray(reps, dtype=float)
    se = float(np.std(reps, ddof=1))
    bias = float(np.mean(reps) - theta)
    return se, bias


def percentile(reps, level):
    a = 1.0 - level
    return float(q7(reps, a / 2)), float(q7(reps, 1 - a / 2))


def basic(reps, theta, level):
    a = 1.0 - level
    return 2 * theta - float(q7(reps, 1 - a / 2)), 2 * theta - float(q7(reps, a / 2))


def normal(reps, theta, level):
    a = 1.0 - level
    z = norm.ppf(1 - a / 2)
    se, bias = summary(reps, theta)
    return theta - bias - z * se, theta - bias + z * se


def bca(reps, theta, level, accel, z0=None):
    if z0 is None:
        z0 = z0_of(reps, theta)
    a = 1.0 - level
    out = []
    for q in (a / 2, 1 - a / 2):
        zq = norm.ppf(q)
        w = z0 + zq
        aq = norm.cdf(z0 + w / (1.0 - accel * w))
        out.append(float(q7(reps, aq)))
    return tuple(out)


def studentized(reps, rep_se, theta, se_hat, level):
    """Bootstrap-t: t_i = (theta*_i - theta)/se*_i, interval theta - Q_t(.)*se_hat."""
    a = 1.0 - level
    t = (np.asarray(reps, dtype=float) - theta) / np.asarray(rep_se, dtype=float)
    return theta - float(q7(t, 1 - a / 2)) * se_hat, theta - float(q7(t, a / 2)) * se_hat


def interval(method, reps, theta, level, accel=None, rep_se=None, se_hat=None):
    if method == "percentile":
        return percentile(reps, level)
    if method == "basic":
        return basic(reps, theta, level)
    if method == "normal":
        return normal(reps, theta, level)
    if method == "bca":
        return bca(reps, theta, level, accel)
    if method == "studentized":
        return studentized(reps, rep_se, theta, se_hat, level)
    raise ValueError(method)


# ---------------------------------------------------------------- binned histograms

def binned_quantile(edges, counts, overflow, p):
    """The p-quantile of a binned histogram by docs/api.md's rule (observations spread evenly
    in each bin, position r = p*N with N the total count including the overflow; past the last
    edge, the last edge). Written with searchsorted over the occupied bins' cumulative counts."""
    edges = np.asarray(edges, dtype=float)
    counts = np.asarray(counts, dtype=float)
    cum = np.cumsum(counts)
    r = p * (cum[-1] + overflow)
    if r > cum[-1]:
        return float(edges[-1])
    occupied = np.flatnonzero(counts > 0)
    i = occupied[np.searchsorted(cum[occupied], r, side="left")]
    below = cum[i] - counts[i]
    return float(edges[i] + (r - below) / counts[i] * (edges[i + 1] - edges[i]))


def binned_quantile_rows(edges, k, p):
    """The same rule, vectorised over rows of resampled counts `k` (bins, then the overflow),
    for p > 0: the first bin whose cumulative count reaches r is then always occupied."""
    edges = np.asarray(edges, dtype=float)
    bins = k[:, :-1].astype(float)
    cum = np.cumsum(bins, axis=1)
    r = p * k.sum(axis=1)
    reached = cum >= r[:, None]
    inside = reached.any(axis=1)
    i = np.where(inside, reached.argmax(axis=1), 0)
    rows = np.arange(len(k))
    below = cum[rows, i] - bins[rows, i]
    q = edges[i] + (r - below) / np.where(inside, bins[rows, i], 1.0) * (edges[i + 1] - edges[i])
    return np.where(inside, q, edges[-1])


def multinomial_bootstrap_quantiles(edges, counts, overflow, p, b, seed):
    """b replicates of the binned p-quantile, each from counts redrawn as a multinomial over
    the bins and the overflow with the observed shares."""
    cells = np.append(np.asarray(counts, dtype=float), overflow)
    n = int(cells.sum())
    k = np.random.default_rng(seed).multinomial(n, cells / n, size=b)
    return binned_quantile_rows(edges, k, p)
