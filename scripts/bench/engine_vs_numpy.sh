#!/usr/bin/env bash
# bandsaw engine vs the numpy baseline, same work (iid bootstrap of n standard normal values,
# B resamples, mean or median of each, 95 % percentile interval), in one run.
#
# Usage: scripts/bench/engine_vs_numpy.sh [n] [B] [rounds] [repeats]
#   defaults: 10000 10000 3 3
#
# Builds benches/engine.rs once (cargo bench --no-run --bench engine), then runs `rounds`
# rounds; in each round, for mean then median, it alternates bandsaw on 1 thread, bandsaw on
# all threads (nproc) and numpy (scripts/bench/numpy_baseline.py), each process reporting the
# best of `repeats` runs; the order of the three is reversed every other round so that drift in
# machine load does not favour one of them. The table shows, per statistic and variant, the
# best seconds over all rounds, and numpy_seconds / bandsaw_seconds (how many times faster
# bandsaw is). The numpy baseline is single-threaded, so the 1-thread ratio is the
# like-for-like one; the all-threads ratio adds bandsaw's parallelism.
#
# Installs nothing, except `python3 -m pip install --quiet numpy` when numpy is missing.
# About 1 minute on a quiet 2-core machine at the defaults.
set -euo pipefail

cd "$(dirname "$0")/../.."

N=${1:-10000}
B=${2:-10000}
ROUNDS=${3:-3}
REPEATS=${4:-3}
NPROC=$(nproc)
STATS=(mean median)

command -v python3 >/dev/null || { echo "python3 is required" >&2; exit 1; }
if ! python3 -c 'import numpy' 2>/dev/null; then
    echo "numpy missing: python3 -m pip install --quiet numpy" >&2
    python3 -m pip install --quiet numpy
fi

# Other builds or test runs (rustc or cargo processes; exact names, since `pgrep -f rustc`
# also matches any command line that merely mentions rustc).
busy() { { pgrep -x 'rustc|cargo' 2>/dev/null || true; } | wc -l; }

echo "building: cargo bench --no-run --bench engine" >&2
# Run the built executable directly afterwards, so that a concurrent edit of src/ cannot
# trigger a rebuild in the middle of the measurements.
BIN=$(cargo bench --no-run --bench engine --message-format=json 2>/dev/null | python3 -c '
import json, sys
exe = None
for line in sys.stdin:
    try:
        m = json.loads(line)
    except ValueError:
        continue
    if m.get("reason") == "compiler-artifact" and m.get("target", {}).get("name") == "engine" \
            and "bench" in m.get("target", {}).get("kind", []) and m.get("executable"):
        exe = m["executable"]
print(exe or "")
')
if [[ -z "$BIN" || ! -x "$BIN" ]]; then
    echo "build failed; rerun: cargo bench --no-run --bench engine" >&2
    exit 1
fi

RESULTS=$(mktemp)
trap 'rm -f "$RESULTS"' EXIT
LOAD_BEFORE=$(cut -d' ' -f1-3 /proc/loadavg)
BUSY_BEFORE=$(busy)
BUSY_DURING=0
MEASUREMENTS=0
START=$(date +%s)

# measure ROUND VARIANT STAT: one process, best of REPEATS, one JSON line tagged into RESULTS.
measure() {
    local round=$1 variant=$2 stat=$3 line mark=""
    if (( $(busy) > 0 )); then BUSY_DURING=$((BUSY_DURING + 1)); mark="  (rustc/cargo running)"; fi
    MEASUREMENTS=$((MEASUREMENTS + 1))
    case $variant in
        bandsaw_1) line=$("$BIN" "$N" "$B" "$stat" "$REPEATS" 1) ;;
        bandsaw_all) line=$("$BIN" "$N" "$B" "$stat" "$REPEATS" "$NPROC") ;;
        numpy) line=$(python3 scripts/bench/numpy_baseline.py "$N" "$B" "$stat" "$REPEATS") ;;
    esac
    printf '%s\t%s\t%s\n' "$round" "$variant" "$line" >>"$RESULTS"
    printf '  round %s %-11s %-6s %s s%s\n' "$round" "$variant" "$stat" \
        "$(python3 -c 'import json,sys; print("%.3f" % json.loads(sys.argv[1])["seconds"])' "$line")" "$mark" >&2
}

echo "measuring: n=$N B=$B, $ROUNDS rounds x best of $REPEATS, threads 1 and $NPROC" >&2
for ((round = 1; round <= ROUNDS; round++)); do
    if ((round % 2 == 1)); then order=(bandsaw_1 bandsaw_all numpy); else order=(numpy bandsaw_all bandsaw_1); fi
    for stat in "${STATS[@]}"; do
        for variant in "${order[@]}"; do
            measure "$round" "$variant" "$stat"
        done
    done
done

ELAPSED=$(($(date +%s) - START))
LOAD_AFTER=$(cut -d' ' -f1-3 /proc/loadavg)
CPU=$(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2- | sed 's/^ *//' || true)

python3 - "$RESULTS" <<EOF
import json, platform, sys
import numpy as np

rows = {}
for raw in open(sys.argv[1]):
    rnd, variant, line = raw.rstrip("\n").split("\t", 2)
    rows.setdefault((json.loads(line)["statistic"], variant), []).append(json.loads(line))

nproc = $NPROC
def best(stat, variant):
    return min(r["seconds"] for r in rows[(stat, variant)])
def spread(stat, variant):
    s = [r["seconds"] for r in rows[(stat, variant)]]
    return 100.0 * (max(s) - min(s)) / min(s)

print()
print("| statistic | bandsaw 1 thread (s) | bandsaw %d threads (s) | numpy (s) | numpy / bandsaw 1 thread | numpy / bandsaw %d threads |" % (nproc, nproc))
print("|---|---:|---:|---:|---:|---:|")
for stat in ("mean", "median"):
    b1, bn, npy = best(stat, "bandsaw_1"), best(stat, "bandsaw_all"), best(stat, "numpy")
    print("| %s | %.3f | %.3f | %.3f | %.1fx | %.1fx |" % (stat, b1, bn, npy, npy / b1, npy / bn))
print()
print("n = $N, B = $B; seconds = best over $ROUNDS rounds x $REPEATS repeats; ratio = numpy_seconds / bandsaw_seconds.")
print("Machine: nproc = %d (%s); numpy %s, Python %s; $(rustc --version 2>/dev/null || echo rustc ?)." % (nproc, "$CPU" or "cpu ?", np.__version__, platform.python_version()))
print("Spread of per-round bests (max-min)/min: " + "; ".join(
    "%s %s %.0f%%" % (stat, v.replace("bandsaw_all", "bandsaw %dT" % nproc).replace("bandsaw_1", "bandsaw 1T"), spread(stat, v))
    for stat in ("mean", "median") for v in ("bandsaw_1", "bandsaw_all", "numpy")) + ".")
print("Load average before/after: $LOAD_BEFORE / $LOAD_AFTER; rustc/cargo processes running before: $BUSY_BEFORE, present at the start of $BUSY_DURING of $MEASUREMENTS measurements; wall time ${ELAPSED} s.")
sanity = []
for stat in ("mean", "median"):
    b = rows[(stat, "bandsaw_1")][-1]
    p = rows[(stat, "numpy")][-1]
    sanity.append("%s bandsaw [%.4f, %.4f] (width %.4f), numpy [%.4f, %.4f] (width %.4f)"
                  % (stat, b["lower"], b["upper"], b["upper"] - b["lower"], p["lower"], p["upper"], p["upper"] - p["lower"]))
print("Sanity, 95 %% percentile intervals (different N(0,1) draws, so they agree only statistically; ~3.92/sqrt(n) = %.4f wide for the mean): " % (3.92 / $N ** 0.5) + "; ".join(sanity) + ".")
EOF
