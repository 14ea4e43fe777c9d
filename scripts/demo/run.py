#!/usr/bin/env python3
"""A demo of bandsaw on invented data: the web shop of Brindlecrust Bakehouse, a fictional chain
of fourteen bakeries whose customers order bread and cakes online for collection or delivery.

Five numbers the shop watches, each sent in the data form it arrives in and with the resampling
scheme its structure calls for, printed as a dashboard tile or a CI job would show them:

  1. checkout latency, a binned histogram from the monitoring system (p50, p95, p99): `bins`, iid
  2. conversion, 0/1 per visit, tallied: `{"values", "counts"}`, proportion, iid
  3. basket size, several orders per customer: raw rows, `cluster` by customer (beside iid)
  4. hourly orders over six weeks, autocorrelated: raw rows, `stationary_block` "auto" (beside iid)
  5. the product-search service's benchmarks before and after a change: `/v1/batch` of
     comparisons under Holm, and `bandsaw check` on the same runs written as suite files

Every number is generated here by a seeded generator of our own (SplitMix64, Box-Muller), so
the data, and with fixed bootstrap seeds the whole output, are the same on every machine.

    python3 scripts/demo/run.py                 # starts target/release/bandsaw on a free port
    BANDSAW_URL=http://host:8080 python3 scripts/demo/run.py
    python3 scripts/demo/run.py --save DIR      # also writes every request and response to DIR

Exit status 0 when every case got its answers (whatever the verdicts), 1 otherwise.
Standard library only.
"""

import argparse
import json
import math
import os
import subprocess
import sys
import tempfile
import urllib.error
import urllib.request

SHOP = "Brindlecrust Bakehouse"
LEVEL = 0.95
RESAMPLES = 4000
BOOT_SEED = 2026  # the bootstrap seed of every request, so that the output repeats exactly
TOLERANCE = 0.02  # a benchmark change within 2 % counts as none
REPO = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))


# ---------------------------------------------------------------------------------------------
# A seeded generator of our own, so the data do not depend on the Python version's `random`.


class Gen:
    """SplitMix64 (Steele, Lea & Flood 2014) with the distributions the demo needs."""

    MASK = (1 << 64) - 1

    def __init__(self, seed):
        self.state = seed & self.MASK
        self.spare = None

    def next_u64(self):
        self.state = (self.state + 0x9E3779B97F4A7C15) & self.MASK
        z = self.state
        z = ((z ^ (z >> 30)) * 0xBF58476D1CE4E5B9) & self.MASK
        z = ((z ^ (z >> 27)) * 0x94D049BB133111EB) & self.MASK
        return z ^ (z >> 31)

    def uniform(self):
        """In (0, 1): 53 random bits, never 0, so that logs are finite."""
        return ((self.next_u64() >> 11) + 0.5) / float(1 << 53)

    def normal(self):
        """Box-Muller, keeping the second value for the next call."""
        if self.spare is not None:
            z, self.spare = self.spare, None
            return z
        r = math.sqrt(-2.0 * math.log(self.uniform()))
        t = 2.0 * math.pi * self.uniform()
        self.spare = r * math.sin(t)
        return r * math.cos(t)

    def lognormal(self, median, sigma):
        return median * math.exp(sigma * self.normal())

    def poisson(self, lam):
        """Knuth's product of uniforms below 30; above, a rounded normal (counts that large
        are close enough to it for a demo)."""
        if lam >= 30:
            return max(0, round(lam + math.sqrt(lam) * self.normal()))
        limit, k, p = math.exp(-lam), 0, 1.0
        while True:
            p *= self.uniform()
            if p <= limit:
                return k
            k += 1

    def choice(self, weights):
        """An index drawn with probability proportional to its weight."""
        u, acc = self.uniform() * sum(weights), 0.0
        for i, w in enumerate(weights):
            acc += w
            if u < acc:
                return i
        return len(weights) - 1


# ---------------------------------------------------------------------------------------------
# The shop's invented data, one generator seed per case so that each case stands on its own.

# The monitoring system's checkout-latency buckets, in seconds (`le` bounds; +Inf is implied).
LATENCY_BUCKETS = [0.025, 0.05, 0.1, 0.15, 0.2, 0.3, 0.4, 0.5, 0.75, 1, 1.5, 2.5, 5]


def checkout_histogram():
    """One day of checkouts as the monitoring system exports them: cumulative counts per `le`
    bucket. Most checkouts are log-normal around 190 ms; about 4 % go through the card issuer's
    extra verification step, log-normal around 1.1 s."""
    g = Gen(101)
    n = 18_000 + g.poisson(400)
    cumulative = [0] * (len(LATENCY_BUCKETS) + 1)  # the last one is +Inf
    for _ in range(n):
        if g.uniform() < 0.04:
            seconds = g.lognormal(1.1, 0.55)
        else:
            seconds = g.lognormal(0.19, 0.45)
        # The smallest bucket that holds it, then running sums: what `le` buckets count.
        bucket = next(i for i, le in enumerate(LATENCY_BUCKETS + [math.inf]) if seconds <= le)
        cumulative[bucket] += 1
    for i in range(1, len(cumulative)):
        cumulative[i] += cumulative[i - 1]
    return cumulative


def bins_from_cumulative(cumulative):
    """Prometheus-style cumulative buckets to bandsaw's `bins`: the count in each bin, the first
    edge 0 (no latency is below it), and +Inf minus the last finite bucket as the overflow."""
    finite = len(LATENCY_BUCKETS)
    counts = [cumulative[0]] + [cumulative[i] - cumulative[i - 1] for i in range(1, finite)]
    overflow = cumulative[-1] - cumulative[finite - 1]
    return {"edges": [0] + LATENCY_BUCKETS, "counts": counts, "overflow": overflow}


def visits():
    """One week of visits, 1 when the visit ended in an order: about 3.2 % do."""
    g = Gen(202)
    n = 11_000 + g.poisson(500)
    return [1 if g.uniform() < 0.032 else 0 for _ in range(n)]


def orders_by_customer():
    """A month of orders from 640 customers with 1 to 6 orders each (most order once or twice).
    Each customer has a typical basket (a household that buys a loaf and rolls, an office that
    buys three dozen pastries): log-normal around 3.2 items, and each order is 1 + Poisson
    around it. The export lists orders in time order, customers interleaved."""
    g = Gen(303)
    orders = []
    for c in range(640):
        k = 1 + g.choice([30, 22, 17, 13, 10, 8])
        typical = g.lognormal(3.2, 0.5)
        for _ in range(k):
            orders.append((g.uniform(), f"cust-{c:04d}", 1 + g.poisson(typical)))
    orders.sort()
    return [items for _, _, items in orders], [cust for _, cust, _ in orders]


def hourly_orders():
    """Orders per hour over six weeks (1008 hours): a morning peak for breakfast pastries, an
    evening one for next-day bread, 35 % more at weekends, and a slowly wandering level
    (weather, promotions, local events) as AR(1) noise on the log scale, phi = 0.9 an hour."""
    g = Gen(404)
    level, series = 0.0, []
    for t in range(6 * 7 * 24):
        day, hour = divmod(t, 24)
        daily = (
            math.exp(-((hour - 9.5) ** 2) / 18.0)
            + 0.6 * math.exp(-((hour - 19.0) ** 2) / 8.0)
            + 0.05
        )
        weekend = 1.35 if day % 7 >= 5 else 1.0
        level = 0.9 * level + 0.12 * g.normal()
        series.append(g.poisson(40.0 * daily * weekend * math.exp(level)))
    return series


# The product-search service's benchmark suite: name -> (typical ms, the change's factor,
# run-to-run noise as a log-scale sd). One real slowdown (typo-tolerant matching got a wider
# edit-distance search), one benchmark on a busy shared machine, the rest steady.
SEARCH_SUITE = {
    "search/prefix_autocomplete": (0.84, 1.00, 0.015),
    "search/full_text_sourdough": (12.6, 1.00, 0.020),
    "search/facet_gluten_free": (4.1, 1.00, 0.015),
    "search/typo_tolerant": (7.9, 1.08, 0.020),
    "search/store_stock_lookup": (21.0, 1.00, 0.050),
    "search/category_browse": (2.3, 1.00, 0.012),
}
SLOWED = "search/typo_tolerant"
SEARCH_RUNS = 30


def search_runs():
    """30 timed runs a side of each benchmark, in ms, before (main) and after (the change)."""
    g = Gen(505)
    before, after = {}, {}
    for name, (ms, factor, noise) in SEARCH_SUITE.items():
        before[name] = [round(g.lognormal(ms, noise), 4) for _ in range(SEARCH_RUNS)]
        after[name] = [round(g.lognormal(ms * factor, noise), 4) for _ in range(SEARCH_RUNS)]
    return before, after


# ---------------------------------------------------------------------------------------------
# Talking to bandsaw.


class Service:
    def __init__(self, url, save_dir):
        self.url = url.rstrip("/")
        self.save_dir = save_dir

    def post(self, name, path, body):
        """POST a request; the parsed response, or exit with the problem document."""
        request = urllib.request.Request(
            self.url + path, json.dumps(body).encode(), {"Content-Type": "application/json"}
        )
        try:
            with urllib.request.urlopen(request, timeout=120) as r:
                answer = json.load(r)
        except urllib.error.HTTPError as e:
            sys.exit(f"{name}: {path} answered {e.code}: {e.read().decode(errors='replace')}")
        if self.save_dir:
            with open(os.path.join(self.save_dir, f"{name}.json"), "w") as f:
                json.dump({"path": path, "request": body, "response": answer}, f, indent=1)
        return answer


def start_server(binary):
    """Starts `bandsaw serve` on a free port; returns the process and its URL."""
    proc = subprocess.Popen(
        [binary, "serve", "--listen", "127.0.0.1:0"],
        stdout=subprocess.PIPE,
        stderr=subprocess.DEVNULL,
        text=True,
    )
    line = proc.stdout.readline()
    if "listening on " not in line:
        proc.kill()
        sys.exit(f"the server did not start: {line!r}")
    return proc, line.split("listening on ", 1)[1].split()[0]


def interval_job(data, statistic, scheme=None, methods=None):
    job = {"data": data, "statistic": statistic, "resamples": RESAMPLES, "seed": BOOT_SEED,
           "levels": [LEVEL]}
    if scheme:
        job["scheme"] = scheme
    if methods:
        job["methods"] = methods
    return job


def batch_results(answer, name):
    """The `ok` responses of a batch, in order; exit on any job's problem."""
    out = []
    for i, r in enumerate(answer["results"]):
        if "ok" not in r:
            sys.exit(f"{name}: job {i} refused: {json.dumps(r['error'])}")
        out.append(r["ok"])
    return out


# ---------------------------------------------------------------------------------------------
# Printing: numbers at the precision their interval supports.

WIDTH = 96

# What each warning means for a tile, in a few words (the response's message says more).
WARNING_GIST = {
    "serial_correlation": "the server saw neighbouring rows move together",
    "extreme_quantile": "few observations beyond it",
    "skewed_replicates": "lopsided replicate distribution",
    "large_bias": "bootstrap bias is large",
    "few_distinct_replicates": "the interval's ends are coarse",
    "quantile_in_overflow": "it lies above the last bucket",
    "small_sample": "few observations",
    "too_few_runs": "too few runs to decide",
}


def decimals(width):
    """Decimals that show a width of this size to two significant digits."""
    if not width > 0:
        return 3
    return max(0, 1 - math.floor(math.log10(width)))


def num(x, d):
    return f"{x:,.{d}f}"


def pick(response, method="bca"):
    """The interval of `method` at the demo's level."""
    for i in response["intervals"]:
        if i["method"] == method and abs(i["level"] - LEVEL) < 1e-12:
            return i
    raise KeyError(method)


def warnings_of(response):
    return [w["code"] for w in response["diagnostics"]["warnings"]]


def warning_text(codes):
    return "; ".join(f"{c} ({WARNING_GIST[c]})" if c in WARNING_GIST else c for c in codes)


def heading(number, title, facts):
    print()
    print(f"{number}  {title}")
    wrapped("data", facts)
    print("   " + "-" * (WIDTH - 3))


def wrapped(label, text, indent=3):
    """`label  text`, the text wrapped under itself at WIDTH."""
    pad = " " * indent + f"{label:<9}"
    words, line, lines = text.split(), "", []
    for w in words:
        if line and len(pad) + len(line) + 1 + len(w) > WIDTH:
            lines.append(line)
            line = w
        else:
            line = f"{line} {w}" if line else w
    lines.append(line)
    print(pad + lines[0])
    for rest in lines[1:]:
        print(" " * len(pad) + rest)


def tile_rows(rows):
    """rows: (metric, response, scale, unit); one aligned line each: estimate, BCa interval,
    the larger Monte Carlo error of its ends, and the warnings."""
    print(f"   {'metric':<18}{'estimate':>12}   {f'{LEVEL:.0%} interval (BCa)':<26}{'MC error':>9}")
    for metric, r, scale, unit in rows:
        i = pick(r)
        lo, hi, est = i["lower"] * scale, i["upper"] * scale, r["estimate"] * scale
        d = decimals(hi - lo)
        mc = max(i["lower_mc_error"], i["upper_mc_error"]) * scale
        span = f"{num(lo, d)} to {num(hi, d)} {unit}"
        shown = f"{num(est, d)} {unit}"
        print(f"   {metric:<18}{shown:>12}   {span:<26}{'±' + num(mc, d + 1):>9}")
    for metric, r, _, _ in rows:
        if warnings_of(r):
            wrapped("warning", f"{metric}: {warning_text(warnings_of(r))}")


def against_iid(right, iid, right_name, unit):
    """The right scheme's interval beside iid's, and how much narrower iid's claims to be."""
    a, b = pick(right), pick(iid)
    wa, wb = a["upper"] - a["lower"], b["upper"] - b["lower"]
    d = decimals(min(wa, wb))
    print(f"   {'scheme':<24}{'estimate':>10}   {f'{LEVEL:.0%} interval (BCa)':<24}{'width':>8}")
    for name, r, i, w in [(right_name, right, a, wa), ("iid (the mistake)", iid, b, wb)]:
        span = f"{num(i['lower'], d)} to {num(i['upper'], d)} {unit}"
        print(f"   {name:<24}{num(r['estimate'], d):>10}   {span:<24}{num(w, d):>8}")
    narrower = 1 - wb / wa
    wrapped(
        "mistake",
        f"the iid interval is {narrower:.0%} narrower than the {right_name.split(' (')[0]} one: "
        f"falsely precise, as if there were {(wa / wb) ** 2:.1f}x as many independent "
        f"observations as there are."
        + (f" iid's own warnings: {warning_text(warnings_of(iid))}." if warnings_of(iid)
           else " The iid request raised no warning: nothing in the numbers shows the grouping."),
    )
    return narrower


# ---------------------------------------------------------------------------------------------
# The five cases.


def bucket_of(edges, x):
    """The edges of the bucket (lower, upper] that holds x."""
    i = next(i for i in range(1, len(edges)) if x <= edges[i])
    return edges[i - 1], edges[i]


def case_latency(svc):
    cumulative = checkout_histogram()
    bins = bins_from_cumulative(cumulative)
    n = cumulative[-1]
    data = {"bins": bins}
    jobs = [
        interval_job(data, {"name": "quantile", "p": 0.5}),
        interval_job(data, {"name": "quantile", "p": 0.95}),
        interval_job(data, {"name": "quantile", "p": 0.99}),
        interval_job(data, {"name": "exceedance", "threshold": 1}),
    ]
    batch = {"jobs": [dict(j, kind="interval") for j in jobs]}
    answer = svc.post("1-checkout-latency", "/v1/batch", batch)
    p50, p95, p99, slow = batch_results(answer, "checkout latency")
    heading(
        1,
        "Checkout latency, Tuesday (from the monitoring system's histogram)",
        f"{n:,} checkouts in {len(bins['counts'])} buckets from 0 to 5 s, "
        f"{bins['overflow']} above 5 s; the cumulative le= counts differenced into bins",
    )
    tile_rows([("p50", p50, 1000, "ms"), ("p95", p95, 1000, "ms"), ("p99", p99, 1000, "ms"),
               ("slower than 1 s", slow, 100, "%")])
    lo, hi = bucket_of(bins["edges"], p99["estimate"])
    wrapped(
        "note",
        f"the p99 lies in the {lo:g} to {hi:g} s bucket and is read as if its checkouts were "
        "spread evenly there; the interval covers the sampling noise, not that assumption (a "
        "finer bucket there would tell more). The 1 s share needs no such reading: 1 s is an edge.",
    )
    wrapped(
        "scheme",
        "iid over the bins: checkouts are separate requests by separate customers, and a "
        "histogram keeps no order, so a resample redraws the bucket counts as a multinomial "
        "(quantiles read with observations spread evenly inside each bucket).",
    )
    return {"p50": p50, "p95": p95, "p99": p99, "slower_than_1s": slow}


def case_conversion(svc):
    v = visits()
    tally = {"values": [0, 1], "counts": [v.count(0), v.count(1)]}
    r = svc.post("2-conversion", "/v1/interval", interval_job(tally, "proportion"))
    heading(
        2,
        "Conversion, last week (visits that ended in an order)",
        f"{len(v):,} visits, 0/1 each, tallied as {{\"values\": [0, 1], \"counts\": "
        f"{tally['counts']}}}",
    )
    tile_rows([("conversion", r, 100, "%")])
    wrapped(
        "scheme",
        "iid: each visit is one yes/no trial counted once, and the tally resamples exactly as "
        "the 0/1 rows would (one binomial draw); if many visits came from the same visitors, "
        "resample visitors instead, as in case 3.",
    )
    wrapped(
        "caution",
        "a conversion rate feeds pricing and advertising spend: the interval covers sampling "
        "noise only, not a holiday week, a campaign or a change in who visits; have a qualified "
        "analyst review data and method before money moves on it.",
    )
    return {"conversion": r}


def case_basket(svc):
    items, customers = orders_by_customer()
    cluster = {"kind": "cluster", "clusters": customers}
    answer = svc.post(
        "3-basket-size",
        "/v1/batch",
        {"jobs": [dict(interval_job(items, "mean", cluster), kind="interval"),
                  dict(interval_job(items, "mean"), kind="interval")]},
    )
    by_customer, iid = batch_results(answer, "basket size")
    heading(
        3,
        "Basket size, October (items per order)",
        f"{len(items):,} orders from {len(set(customers))} customers with 1 to 6 orders each, "
        "in time order; a customer label per row",
    )
    narrower = against_iid(by_customer, iid, "cluster (by customer)", "items")
    wrapped(
        "scheme",
        "cluster by customer: a customer's orders resemble each other (an office orders big, a "
        "household small), so whole customers are resampled with all their orders; the rows are "
        "not independent, the customers are.",
    )
    wrapped(
        "caution",
        "basket size feeds pricing and promotion decisions: the interval assumes next month's "
        "customers are like October's; have a qualified analyst review it before prices change.",
    )
    return {"cluster": by_customer, "iid": iid, "iid_narrower": narrower}


def case_hourly(svc):
    series = hourly_orders()
    block = {"kind": "stationary_block", "mean_block_length": "auto"}
    answer = svc.post(
        "4-hourly-orders",
        "/v1/batch",
        {"jobs": [dict(interval_job(series, "mean", block), kind="interval"),
                  dict(interval_job(series, "mean"), kind="interval")]},
    )
    blocks, iid = batch_results(answer, "hourly orders")
    length = blocks["scheme"]["mean_block_length"]
    heading(
        4,
        "Orders per hour, the last six weeks (for the packing-team rota)",
        f"{len(series):,} hours in time order, {min(series)} to {max(series)} orders an hour, "
        "daily and weekly cycles",
    )
    narrower = against_iid(blocks, iid, f"block (mean {length:.0f} h)", "orders/h")
    wrapped(
        "scheme",
        "stationary blocks of consecutive hours, length \"auto\" (chosen from the data, here "
        f"{length:.1f} h on average): busy hours come in runs (weather, promotions), so single "
        "hours drawn apart would hide how far the level wanders.",
    )
    wrapped(
        "caution",
        "staffing from this mean assumes the next weeks resemble the last six (no holidays, no "
        "new shop); plan peaks from the daily cycle, not the mean, and have rotas checked "
        "against the working-time rules that apply.",
    )
    return {"block": blocks, "iid": iid, "iid_narrower": narrower}


def search_batch(before, after):
    jobs = [
        {
            "kind": "compare",
            "baseline": before[name],
            "candidate": after[name],
            "statistic": "mean",
            "tolerance": TOLERANCE,
            "resamples": 10_000,
            "seed": BOOT_SEED,
        }
        for name in SEARCH_SUITE
    ]
    return {"jobs": jobs, "multiplicity": "holm", "family_level": LEVEL}


def run_check(binary, before, after, save_dir):
    """`bandsaw check` in-process on the same runs written as suite files: the CI job's view."""
    with tempfile.TemporaryDirectory() as tmp:
        paths = []
        for label, suite in [("main", before), ("change", after)]:
            paths.append(os.path.join(tmp, f"search-{label}.json"))
            with open(paths[-1], "w") as f:
                json.dump(suite, f, indent=1)
        common = [binary, "check", *paths, "--tolerance", str(TOLERANCE), "--resamples", "10000",
                  "--seed", str(BOOT_SEED), "--level", str(LEVEL)]
        proc = subprocess.run(common + ["--format", "json"], capture_output=True, text=True)
    try:
        report = json.loads(proc.stdout)
    except ValueError:
        sys.exit(f"bandsaw check exited {proc.returncode} without a report: {proc.stderr}")
    if save_dir:
        with open(os.path.join(save_dir, "5-search-check.json"), "w") as f:
            json.dump({"exit_status": proc.returncode, "report": report}, f, indent=1)
    return proc.returncode, report


def check_verdicts(report):
    """name -> verdict from `bandsaw check --format json` (the batch response with names)."""
    return {
        name: r["ok"]["verdict"] if "ok" in r else "refused"
        for name, r in zip(report["benchmarks"], report["results"])
    }


def case_search(svc, binary, save_dir):
    before, after = search_runs()
    answer = svc.post("5-search-benchmarks", "/v1/batch", search_batch(before, after))
    results = dict(zip(SEARCH_SUITE, batch_results(answer, "search benchmarks")))
    heading(
        5,
        "Product search, main against the change (benchmark suite, ms per query)",
        f"{len(SEARCH_SUITE)} benchmarks, {SEARCH_RUNS} runs a side; ratio of means, changes "
        f"within {TOLERANCE:.0%} count as none; Holm over the suite at {LEVEL:.0%}",
    )
    method = next(iter(results.values()))["decision"]["method"]
    columns = f"{'verdict':<14}{'benchmark':<30}{'change':>8}   {method + ' interval':<24}"
    print(f"   {columns}{'read at':>9}")
    order = {"regression": 0, "inconclusive": 1, "improvement": 2, "equivalent": 3}
    for name, r in sorted(results.items(), key=lambda kv: (order[kv[1]["verdict"]], kv[0])):
        dec = r["decision"]
        change = r["candidate_estimate"] / r["baseline_estimate"] - 1
        span = f"{dec['lower'] - 1:+.1%} to {dec['upper'] - 1:+.1%}"
        verdict = r["verdict"].upper() if r["verdict"] == "regression" else r["verdict"]
        print(f"   {verdict:<14}{name:<30}{change:>+8.1%}   {span:<24}{dec['level']:>9.2%}")
    for name, r in results.items():
        if r["verdict"] != "equivalent":
            wrapped("why", f"{name}: {r['verdict_reason']}")
    status, report = run_check(binary, before, after, save_dir) if binary else (None, None)
    if report is not None:
        theirs = check_verdicts(report)
        same = all(theirs.get(n) == r["verdict"] for n, r in results.items())
        wrapped(
            "CI job",
            f"bandsaw check (in-process, the same runs as two suite files, the same seed) exits "
            f"{status}: {'fail the build' if status == 1 else 'pass'}; its verdicts "
            f"{'agree with the batch on every benchmark' if same else 'DIFFER from the batch'}.",
        )
    wrapped(
        "scheme",
        "each side's runs resampled on their own (iid; the runs of a build are separate "
        "timings), and Holm's step-down across the suite so that six benchmarks do not get six "
        "chances of a false alarm.",
    )
    wrapped(
        "caution",
        "a verdict speaks for these runs on this machine: interleave base and change runs "
        "(--paired) where drift is possible, and let a person weigh a release that matters.",
    )
    return {"results": results, "check_status": status, "check_report": report}


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--save", metavar="DIR", help="write every request and response here")
    ap.add_argument("--bin", default=os.path.join(REPO, "target", "release", "bandsaw"),
                    help="the bandsaw binary (to serve, and for `bandsaw check`)")
    args = ap.parse_args()
    if args.save:
        os.makedirs(args.save, exist_ok=True)
    url, proc = os.environ.get("BANDSAW_URL"), None
    if not url:
        proc, url = start_server(args.bin)
    print(f"bandsaw at {url}", file=sys.stderr)
    try:
        svc = Service(url, args.save)
        print(f"{SHOP} web shop: five numbers with their error bands")
        print(f"(invented data from scripts/demo/run.py; {LEVEL:.0%} intervals, {RESAMPLES} "
              f"resamples, bootstrap seed {BOOT_SEED})")
        case_latency(svc)
        case_conversion(svc)
        case_basket(svc)
        case_hourly(svc)
        case_search(svc, args.bin if os.path.exists(args.bin) else None, args.save)
    finally:
        if proc:
            proc.terminate()
            proc.wait(timeout=30)


if __name__ == "__main__":
    main()
