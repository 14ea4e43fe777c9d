"""Time against n and B for the mean and the median, in-process, on all threads: the table that
shows the two cost classes (README, *Speed*). The mean reads every row of every resample, so
its time grows like n·B; the median's replicates take O(log n) binomial splits, so its time
grows like B·log n plus one sort of the data.

Usage: python3 scripts/bench/cost_classes.py [max_row_draws]   (default 2e9)

Runs `cargo bench --bench engine` (release build) once per cell, best of 2, and prints a
Markdown table of seconds. A mean cell whose n·B exceeds max_row_draws is not run ("—"), so
that the whole table takes a couple of minutes on a 2-core machine.
"""

import json
import os
import subprocess
import sys

ROOT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..")
NS = [1_000, 10_000, 100_000, 1_000_000]
BS = [1_000, 10_000, 100_000]


def seconds(statistic, n, b):
    out = subprocess.run(
        ["cargo", "bench", "--quiet", "--bench", "engine", "--", str(n), str(b), statistic, "2", "all"],
        cwd=ROOT, check=True, capture_output=True, text=True).stdout
    line = next(l for l in out.splitlines() if l.startswith("{"))
    return json.loads(line)["seconds"]


def main():
    limit = float(sys.argv[1]) if len(sys.argv) > 1 else 2e9
    print(f"seconds in-process on {os.cpu_count()} threads (best of 2), percentile interval")
    print()
    print("| statistic | n | " + " | ".join(f"B = {b:,}".replace(",", " ") for b in BS) + " |")
    print("| --- | ---: | " + " | ".join("---:" for _ in BS) + " |")
    for statistic in ["mean", "median"]:
        for n in NS:
            cells = []
            for b in BS:
                if statistic == "mean" and n * b > limit:
                    cells.append("—")
                else:
                    cells.append(f"{seconds(statistic, n, b):.3g}")
            print(f"| {statistic} | {n:,} | ".replace(",", " ") + " | ".join(cells) + " |")


if __name__ == "__main__":
    main()
