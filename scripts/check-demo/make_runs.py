"""Writes the invented runs of the check demo: base.json (the main branch) and change.json (a
pull request) for the benchmark suite of a fictional team, Larkspur Docs, whose static-site
builder parses Markdown and resizes images. Milliseconds per run; fixed seed, so the files are
reproducible. The story the numbers tell:

- resize/hero_webp: the pull request makes it about 8 % slower (a real regression);
- parse/markdown_large: shares its machine with other jobs, so its runs wander by about 6 %,
  and nothing changed (a noisy non-regression);
- parse/front_matter: the CI job was cut short and has only 3 runs a side (too few to decide);
- the rest: unchanged, 1 to 2 % noise.
"""

import json
import random

rng = random.Random(2026)


def runs(n, level, noise):
    """n runs around `level` ms with lognormal noise of log-scale sd `noise` (timings skew right)."""
    return [round(level * rng.lognormvariate(0.0, noise), 3) for _ in range(n)]


SUITE = {
    # name: (runs, base level, change level, noise)
    "parse/markdown_small": (30, 1.84, 1.84, 0.015),
    "parse/markdown_large": (30, 212.0, 212.0, 0.06),
    "parse/front_matter": (3, 0.412, 0.431, 0.02),
    "resize/thumbnail_jpeg": (30, 6.3, 6.3, 0.012),
    "resize/hero_webp": (30, 48.5, 52.4, 0.02),
}

base = {name: runs(n, b, s) for name, (n, b, _, s) in SUITE.items()}
change = {name: runs(n, c, s) for name, (n, _, c, s) in SUITE.items()}
for path, suite in [("base.json", base), ("change.json", change)]:
    with open(path, "w") as f:
        json.dump(suite, f, indent=1)
        f.write("\n")
