#!/usr/bin/env python3
"""Checks scripts/demo/run.py end to end (standard library only: unittest).

It runs the demo once with a server of its own and, when BANDSAW_URL is set (scripts/ci/demo.sh
sets it), once more against that server; then holds the output and the saved requests and
responses to what the demo claims: every case present with its scheme, the clustered and block
intervals wider than the iid ones by more than their Monte Carlo error, the planted slowdown
the only regression and `bandsaw check` agreeing, the README's excerpt generated from this very
output.

    python3 scripts/demo/test_demo.py -v
"""

import importlib.util
import json
import math
import os
import re
import subprocess
import sys
import tempfile
import unittest

HERE = os.path.dirname(os.path.abspath(__file__))
REPO = os.path.dirname(os.path.dirname(HERE))
RUN = os.path.join(HERE, "run.py")

_spec = importlib.util.spec_from_file_location("bakery_demo", RUN)
demo = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(demo)

# The README block between these markers is an excerpt of the output; an elision line stands
# for the cases left out (both written by scripts/demo/readme_block.sh).
README_START = "<!-- bakery-demo output"
ELISION = re.compile(r"^\[\.\.\. .* \.\.\.\]$", re.M)


def run_demo(save_dir, url=None):
    env = {k: v for k, v in os.environ.items() if k != "BANDSAW_URL"}
    if url:
        env["BANDSAW_URL"] = url
    proc = subprocess.run(
        [sys.executable, RUN, "--save", save_dir], capture_output=True, text=True, env=env,
        timeout=300,
    )
    return proc.returncode, proc.stdout, proc.stderr


def unwrapped(text):
    """The printed text with its wrapped lines joined again."""
    return re.sub(r"\s*\n\s+", " ", text)


def saved(name):
    with open(os.path.join(Demo.save_dir, f"{name}.json")) as f:
        return json.load(f)


def bca(response):
    return demo.pick(response)


def width(response):
    i = bca(response)
    return i["upper"] - i["lower"]


def width_mc_error(*responses):
    """Monte Carlo standard error of a difference of widths: the ends' errors in quadrature
    (the ends of one interval are correlated, so this errs on the large side)."""
    ends = [e for r in responses for e in (bca(r)["lower_mc_error"], bca(r)["upper_mc_error"])]
    return math.sqrt(sum(e * e for e in ends))


class Demo(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.tmp = tempfile.TemporaryDirectory()
        cls.save_dir = os.path.join(cls.tmp.name, "own-server")
        cls.status, cls.out, cls.err = run_demo(cls.save_dir)
        print(cls.out, file=sys.stderr)

    @classmethod
    def tearDownClass(cls):
        cls.tmp.cleanup()

    def case_text(self, number):
        """The printed block of one case: from its heading to the next one."""
        m = re.search(rf"^{number}  .*?(?=^\d  |\Z)", self.out, re.M | re.S)
        self.assertIsNotNone(m, f"case {number} is not in the output")
        return m.group(0)

    def test_exit_status_is_zero(self):
        self.assertEqual(self.status, 0, self.err)

    def test_every_case_is_present_with_its_reason(self):
        titles = ["Checkout latency", "Conversion", "Basket size", "Orders per hour",
                  "Product search"]
        for number, title in enumerate(titles, 1):
            text = self.case_text(number)
            self.assertIn(title, text.splitlines()[0])
            self.assertRegex(text, r"(?m)^   scheme   \S", f"case {number} says why its scheme")
        for number in (2, 3, 4):  # the cases whose numbers feed money decisions
            self.assertRegex(self.case_text(number), r"(?m)^   caution  \S")

    def test_latency_from_bins(self):
        job = saved("1-checkout-latency")
        bins = job["request"]["jobs"][0]["data"]["bins"]
        self.assertEqual(len(bins["edges"]), len(bins["counts"]) + 1)
        p50, p95, p99, slow = [r["ok"] for r in job["response"]["results"]]
        self.assertLess(p50["estimate"], p95["estimate"])
        self.assertLess(p95["estimate"], p99["estimate"])
        for r in (p50, p95, p99, slow):
            self.assertLessEqual(bca(r)["lower"], r["estimate"])
            self.assertLessEqual(r["estimate"], bca(r)["upper"])
            self.assertEqual(r["n"], sum(bins["counts"]) + bins["overflow"])
        text = self.case_text(1)
        d = demo.decimals((bca(p99)["upper"] - bca(p99)["lower"]) * 1000)
        shown = re.escape(demo.num(p99["estimate"] * 1000, d))
        self.assertRegex(text, rf"(?m)^   p99 +{shown} ms ")

    def test_conversion_from_a_tally(self):
        job = saved("2-conversion")
        data = job["request"]["data"]
        self.assertEqual(data["values"], [0, 1])
        r = job["response"]
        self.assertAlmostEqual(r["estimate"], data["counts"][1] / sum(data["counts"]), places=12)
        self.assertLess(bca(r)["lower"], r["estimate"])
        self.assertLess(r["estimate"], bca(r)["upper"])

    def assert_wider_than_iid(self, name, kind, number):
        job = saved(name)
        right, iid = [r["ok"] for r in job["response"]["results"]]
        self.assertEqual(right["scheme"]["kind"], kind)
        self.assertEqual(iid["scheme"]["kind"], "iid")
        self.assertEqual(right["estimate"], iid["estimate"])
        # Wider by more than 4 Monte Carlo standard errors of the difference of widths.
        margin = 4 * width_mc_error(right, iid)
        self.assertGreater(width(right) - width(iid), margin)
        narrower = 1 - width(iid) / width(right)
        printed = unwrapped(self.case_text(number))
        self.assertIn(f"the iid interval is {narrower:.0%} narrower", printed)
        return right, iid

    def test_cluster_interval_is_wider_than_iid(self):
        right, iid = self.assert_wider_than_iid("3-basket-size", "cluster", 3)
        # The README says so: orders in time order, customers interleaved, look independent.
        self.assertNotIn("serial_correlation", demo.warnings_of(iid))
        request = saved("3-basket-size")["request"]["jobs"][0]
        self.assertEqual(len(request["scheme"]["clusters"]), len(request["data"]))
        self.assertEqual(right["diagnostics"]["jackknife"]["kind"], "clusters")

    def test_block_interval_is_wider_than_iid(self):
        right, iid = self.assert_wider_than_iid("4-hourly-orders", "stationary_block", 4)
        asked = saved("4-hourly-orders")["request"]["jobs"][0]["scheme"]
        self.assertEqual(asked["mean_block_length"], "auto")
        self.assertGreater(right["scheme"]["mean_block_length"], 1)  # resolved from the data
        self.assertIn("serial_correlation", demo.warnings_of(iid))

    def test_only_the_planted_slowdown_is_a_regression(self):
        job = saved("5-search-benchmarks")
        self.assertEqual(job["request"]["multiplicity"], "holm")
        verdicts = {
            name: r["ok"]["verdict"]
            for name, r in zip(demo.SEARCH_SUITE, job["response"]["results"])
        }
        self.assertEqual(verdicts[demo.SLOWED], "regression")
        for name, verdict in verdicts.items():
            if name != demo.SLOWED:
                self.assertNotEqual(verdict, "regression", name)
        text = self.case_text(5)
        self.assertRegex(text, rf"(?m)^   REGRESSION +{re.escape(demo.SLOWED)} ")
        self.assertEqual(len(re.findall(r"(?m)^   REGRESSION ", text)), 1)

    def test_bandsaw_check_agrees_and_fails_the_build(self):
        check = saved("5-search-check")
        self.assertEqual(check["exit_status"], 1)
        batch = saved("5-search-benchmarks")["response"]["results"]
        ours = {name: r["ok"]["verdict"] for name, r in zip(demo.SEARCH_SUITE, batch)}
        report = check["report"]
        theirs = {n: r["ok"]["verdict"] for n, r in zip(report["benchmarks"], report["results"])}
        self.assertEqual(ours, theirs)
        self.assertIn("agree with the batch on every benchmark", unwrapped(self.case_text(5)))

    @unittest.skipUnless(os.environ.get("BANDSAW_URL"), "BANDSAW_URL not set")
    def test_a_given_server_prints_the_same(self):
        with tempfile.TemporaryDirectory() as other:
            status, out, err = run_demo(other, os.environ["BANDSAW_URL"])
        self.assertEqual(status, 0, err)
        self.assertEqual(out, self.out)

    def test_readme_excerpt_is_this_output(self):
        with open(os.path.join(REPO, "README.md")) as f:
            readme = f.read()
        start = readme.index(README_START)
        block = readme[readme.index("```text\n", start) + len("```text\n"):]
        block = block[: block.index("\n```\n")] + "\n"
        parts = [p.strip("\n") for p in ELISION.split(block) if p.strip()]
        self.assertGreaterEqual(len(parts), 2)
        for part in parts:
            self.assertIn(part, self.out, "stale: run scripts/demo/readme_block.sh")


if __name__ == "__main__":
    unittest.main()
