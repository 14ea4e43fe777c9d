#!/usr/bin/env bash
# Load measurement of POST /v1/interval with wrk (closed loop), plus the engine's own time.
#
#   bash scripts/load/run.sh
#
# 1. installs wrk from Debian's packages if it is missing, builds the release binary;
# 2. starts `bandsaw serve` on a free loopback port with 2 compute threads and the default
#    queue (4 per thread, so at most 2 + 8 = 10 jobs admitted; the rest get 503 overloaded);
# 3. runs wrk for DURATION seconds at each concurrency in LEVELS (scripts/load/interval.lua:
#    a fixed 200-value body, mean, B = 1000, percentile), finds the saturating concurrency
#    (where 200s per second stop growing) and runs once more at twice it;
# 4. posts the same body SEQ times with one curl process, one request at a time on one
#    kept-alive connection, and takes the median of the responses' "elapsed_ms" (the server's
#    own time) and of curl's total time; then, as cross-checks, SEQ separate curl processes and
#    CLI_RUNS runs of the in-process `bandsaw interval` on the same body;
# 5. prints markdown tables. The server is stopped on exit (trap).
#
# Only 127.0.0.1 is contacted. Raw outputs go to a temporary folder (printed at the end).
# Knobs (environment): DURATION (10), LEVELS ("1 2 4 8 16 32"), SEQ (50), CLI_RUNS (20),
# THREADS (2), OUT (a fresh mktemp -d).
set -euo pipefail

cd "$(dirname "$0")/../.."
ROOT=$PWD
LUA=scripts/load/interval.lua
DURATION=${DURATION:-10}
LEVELS=${LEVELS:-"1 2 4 8 16 32"}
SEQ=${SEQ:-50}
CLI_RUNS=${CLI_RUNS:-20}
THREADS=${THREADS:-2}
OUT=${OUT:-$(mktemp -d /tmp/bandsaw-load.XXXXXX)}
mkdir -p "$OUT"
T0=$(date +%s)

log() { echo "[load] $*" >&2; }
builds_running() {
  # other people's compilers on this machine compete with the server and wrk for the CPUs
  local p
  p=$(pgrep -x 'rustc|cargo' 2>/dev/null | wc -l || true)
  echo "${p:-0}"
}

# --- wrk -------------------------------------------------------------------------------------
if ! command -v wrk >/dev/null 2>&1; then
  log "wrk missing: installing it from Debian's packages"
  SUDO=""
  [ "$(id -u)" -ne 0 ] && SUDO=sudo
  $SUDO apt-get update
  $SUDO apt-get install -y wrk
fi
for tool in curl jq awk; do
  command -v "$tool" >/dev/null 2>&1 || { log "$tool is required"; exit 1; }
done

# --- build -----------------------------------------------------------------------------------
log "builds by others running before the build: $(builds_running)"
TB=$(date +%s)
HEAD=$(git rev-parse --short HEAD)
if [ -n "$(git status --porcelain -- src Cargo.toml Cargo.lock build.rs 2>/dev/null)" ]; then
  BUILT="working tree: commit $HEAD plus uncommitted changes to src/Cargo"
else
  BUILT="commit $HEAD"
fi
if cargo build --release --quiet 2>"$OUT/build.err"; then
  cp target/release/bandsaw "$OUT/bandsaw"
else
  # Others edit src/ concurrently: if the working tree does not compile right now, measure the
  # committed HEAD instead, built from a clean copy in its own target folder (seeded once from
  # ./target so that the dependencies are not compiled again).
  log "the working tree does not build now (see $OUT/build.err); building commit $HEAD from a clean copy"
  TGT=${LOAD_TARGET_DIR:-/tmp/bandsaw-load-target}
  if [ ! -d "$TGT/release" ] && [ -d target/release/deps ]; then
    mkdir -p "$TGT/release"
    cp -a target/release/deps target/release/build target/release/.fingerprint "$TGT/release/" 2>/dev/null || true
  fi
  mkdir -p "$OUT/head-src"
  git archive HEAD | tar -x -C "$OUT/head-src"
  (cd "$OUT/head-src" && CARGO_TARGET_DIR="$TGT" cargo build --release --quiet)
  cp "$TGT/release/bandsaw" "$OUT/bandsaw"
  rm -rf "$OUT/head-src"
  BUILT="commit $HEAD (clean copy; the working tree did not compile at the time)"
fi
log "built $BUILT in $(($(date +%s) - TB)) s"
# Run a private copy, so that someone else's rebuild cannot swap the binary mid-measurement.
BIN="$OUT/bandsaw"

# The request body, taken from the Lua script so that wrk and curl send the identical bytes.
awk '/^local body = \[\[$/ {on = 1; next} on && /^\]\]$/ {exit} on {print}' "$LUA" > "$OUT/body.json"
NDATA=$(jq '.data | length' "$OUT/body.json")
[ "$NDATA" -eq 200 ] || { log "the body in $LUA has $NDATA values, expected 200"; exit 1; }

# --- server ----------------------------------------------------------------------------------
SERVER_PID=""
cleanup() {
  if [ -n "${SAMPLER_PID:-}" ]; then kill "$SAMPLER_PID" 2>/dev/null || true; fi
  if [ -n "$SERVER_PID" ] && kill -0 "$SERVER_PID" 2>/dev/null; then
    kill -TERM "$SERVER_PID" 2>/dev/null || true
    for _ in $(seq 50); do kill -0 "$SERVER_PID" 2>/dev/null || break; sleep 0.1; done
    kill -KILL "$SERVER_PID" 2>/dev/null || true
  fi
}
trap cleanup EXIT INT TERM

"$BIN" serve --listen 127.0.0.1:0 --threads "$THREADS" >"$OUT/server.out" 2>"$OUT/server.err" &
SERVER_PID=$!
ADDR=""
for _ in $(seq 100); do
  ADDR=$(sed -n 's/^bandsaw listening on //p' "$OUT/server.out" | head -n1)
  [ -n "$ADDR" ] && break
  kill -0 "$SERVER_PID" 2>/dev/null || { log "server exited:"; cat "$OUT/server.err" >&2; exit 1; }
  sleep 0.1
done
[ -n "$ADDR" ] || { log "server did not print its address within 10 s"; exit 1; }
case "$ADDR" in http://127.0.0.1:*) ;; *) log "unexpected address $ADDR"; exit 1 ;; esac
URL="$ADDR/v1/interval"
QUEUE=$(curl -s --max-time 5 "$ADDR/v1/catalog" | jq -r '.. | objects | select(has("queue")) | .queue' 2>/dev/null | head -n1 || true)
log "server $ADDR (pid $SERVER_PID), $THREADS compute threads, queue ${QUEUE:-?}"

# --- wrk runs --------------------------------------------------------------------------------
# wrk needs at least one connection per thread: -t2 except at concurrency 1 (-t1).
SAMPLER_PID=""
run_wrk() { # $1 concurrency, $2 seconds, $3 label
  local c=$1 d=$2 label=$3 t=2
  [ "$c" -lt 2 ] && t=1
  # sample once a second whether anyone's rustc/cargo is running during this run
  ( while :; do builds_running; sleep 1; done ) >"$OUT/builds-$label.txt" &
  SAMPLER_PID=$!
  wrk -t"$t" -c"$c" -d"${d}s" --timeout 10s --latency -s "$LUA" "$URL" >"$OUT/wrk-$label.txt" 2>&1
  kill "$SAMPLER_PID" 2>/dev/null || true
  wait "$SAMPLER_PID" 2>/dev/null || true
  SAMPLER_PID=""
  echo "builds=$(awk '$1 > 0 { k++ } END { printf "%d/%d", k, NR }' "$OUT/builds-$label.txt") threads=$t" >>"$OUT/wrk-$label.txt"
}
# one line per run: label c t rps ok_rps p50 p99 max pct200 pct503 other server_p50 server_p99 builds
summarise() { # $1 label $2 concurrency
  awk -v label="$1" -v c="$2" '
    function kv(s,   a) { split(s, a, "="); return a[2] }
    /^LOAD /      { for (i = 2; i <= NF; i++) { split($i, a, "="); L[a[1]] = a[2] } }
    /^STATUS/     { for (i = 2; i <= NF; i++) { split($i, a, "="); S[a[1]] = a[2]; tot += a[2] } }
    /^ERRORS /    { for (i = 2; i <= NF; i++) { split($i, a, "="); E[a[1]] = a[2] } }
    /^SERVER200 / { for (i = 2; i <= NF; i++) { split($i, a, "="); V[a[1]] = a[2] } }
    /^builds=/    { split($1, a, "="); b = a[2]; split($2, a, "="); t = a[2] }
    END {
      ok = S["200"] + 0; shed = S["503"] + 0; other = tot - ok - shed
      olist = ""
      for (k in S) if (k != "200" && k != "503") olist = olist k ":" S[k] ","
      sock = E["connect"] + E["read"] + E["write"] + E["timeout"]
      if (olist == "") olist = "-"
      printf "%s %d %d %.1f %.1f %.2f %.2f %.2f %.1f %.1f %s/%d %.2f %.2f %s\n",
        label, c, t, L["rps"], ok / L["duration_s"], L["p50_ms"], L["p99_ms"], L["max_ms"],
        (tot ? 100 * ok / tot : 0), (tot ? 100 * shed / tot : 0), olist, sock,
        V["p50_ms"], V["p99_ms"], b
    }' "$OUT/wrk-$1.txt"
}

log "warm-up: 2 s at concurrency 2 (not reported)"
run_wrk 2 2 warmup
: >"$OUT/rows.txt"
for c in $LEVELS; do
  log "wrk -c$c for ${DURATION} s"
  run_wrk "$c" "$DURATION" "c$c"
  summarise "c$c" "$c" >>"$OUT/rows.txt"
done

# Saturation: the first level that reaches 90 % of the highest 200s per second seen; beyond it
# more concurrency adds waiting, not throughput.
SAT=$(awk '{ c[NR] = $2; g[NR] = $5; if ($5 > m) m = $5 } END {
  for (i = 1; i <= NR; i++) if (g[i] >= 0.9 * m) { print c[i]; exit } }' "$OUT/rows.txt")
TWICE=$((2 * SAT))
log "saturating concurrency: $SAT; wrk -c$TWICE for ${DURATION} s"
run_wrk "$TWICE" "$DURATION" "2x"
summarise "2x" "$TWICE" >>"$OUT/rows.txt"

# --- the engine's own time: sequential curl ---------------------------------------------------
# One curl process, SEQ + 5 POSTs one after another on one kept-alive connection (like wrk -c1);
# the first 5 are not recorded. Each response body is followed by "code seconds connects".
log "curl: $SEQ sequential POSTs on one connection (after 5 unrecorded)"
BSEQ=$(builds_running)
args=()
for i in $(seq $((SEQ + 5))); do
  [ "$i" -gt 1 ] && args+=(--next)
  args+=(-s --max-time 10 -H 'Content-Type: application/json' --data-binary @"$OUT/body.json"
    -w '\n%{http_code} %{time_total} %{num_connects}\n' "$URL")
done
curl "${args[@]}" >"$OUT/curl-keepalive.txt"
# pairs of lines: body, then "code seconds connects"; keep the recorded 200s as "seconds elapsed_ms"
awk 'NR % 2 == 1 { body = $0; next }
     { n++; if (n > 5 && $1 == 200) { match(body, /"elapsed_ms":[0-9.eE+-]+/)
       print $2, substr(body, RSTART + 13, RLENGTH - 13) } }' "$OUT/curl-keepalive.txt" >"$OUT/curl.txt"
CONNECTS=$(awk 'NR % 2 == 0 { c += $3 } END { print c + 0 }' "$OUT/curl-keepalive.txt")
median() { sort -g | awk '{ v[NR] = $1 } END { if (NR == 0) { print "NA"; exit }
  if (NR % 2) print v[(NR + 1) / 2]; else print (v[NR / 2] + v[NR / 2 + 1]) / 2 }'; }
CURL_OK=$(wc -l <"$OUT/curl.txt")
CURL_ELAPSED=$(awk '{ print $2 }' "$OUT/curl.txt" | median)
CURL_TOTAL=$(awk '{ print $1 * 1000 }' "$OUT/curl.txt" | median)

# The same, one curl process (and one connection) per request: the server idles in between.
log "curl: $SEQ sequential POSTs, one process each"
: >"$OUT/curl-separate.txt"
for i in $(seq "$SEQ"); do
  curl -s --max-time 10 -H 'Content-Type: application/json' --data-binary @"$OUT/body.json" "$URL" |
    jq -r '.elapsed_ms // empty' >>"$OUT/curl-separate.txt"
done
SEP_N=$(wc -l <"$OUT/curl-separate.txt")
SEP_ELAPSED=$(median <"$OUT/curl-separate.txt")

log "in-process: $CLI_RUNS runs of bandsaw interval"
: >"$OUT/cli.txt"
for i in $(seq "$CLI_RUNS"); do
  "$BIN" interval --threads "$THREADS" --input "$OUT/body.json" | jq -r '.elapsed_ms' >>"$OUT/cli.txt"
done
CLI_ELAPSED=$(median <"$OUT/cli.txt")

# --- stop the server, report -----------------------------------------------------------------
cleanup
SERVER_PID=""
BEND=$(builds_running)
T1=$(date +%s)

WRK_P50_C1=$(awk '$1 == "c1" { print $6 }' "$OUT/rows.txt")
WRK_SRV_C1=$(awk '$1 == "c1" { print $12 }' "$OUT/rows.txt")
fmt() { awk -v x="$1" 'BEGIN { if (x == "" || x == "NA") print "NA"; else printf "%.3f", x }'; }

echo
echo "## bandsaw load: POST /v1/interval, n = 200, mean, B = 1000, percentile"
echo
echo "$(date -u '+%Y-%m-%d %H:%M UTC'); $(nproc) CPUs, $(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2- | sed 's/^ *//'); binary: $BUILT; $(wrk --version 2>&1 | head -n1 | awk '{print $1, $2}'); server: $THREADS compute threads, queue ${QUEUE:-?}; wrk ${DURATION} s per row, closed loop"
echo
echo "| concurrency | wrk threads | requests/s (all) | 200/s | p50 ms | p99 ms | max ms | 200 % | 503 % | other statuses / socket errors | server p50 ms (200s) | server p99 ms (200s) | s with rustc/cargo running |"
echo "| ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | :---: | ---: | ---: | ---: |"
awk '{ lab = ($1 == "2x") ? sprintf("**%d (2 × %d)**", $2, $2 / 2) : $2
  printf "| %s | %d | %.0f | %.0f | %.2f | %.2f | %.2f | %.1f | %.1f | %s | %.2f | %.2f | %s |\n",
    lab, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13, $14 }' "$OUT/rows.txt"
echo
echo "Saturating concurrency (the first level reaching 90 % of the peak 200/s): **$SAT**; rerun at **$TWICE**."
echo "Latency columns are wrk's, over every response (200 and 503 together); the server columns are the"
echo "\"elapsed_ms\" of the 200 responses only (handler start to result, so including the wait in the queue)."
echo
echo "| engine time vs HTTP, concurrency 1 | median ms |"
echo "| --- | ---: |"
echo "| server \"elapsed_ms\", $CURL_OK sequential curl POSTs on one kept-alive connection (read body + parse + validate + compute) | $(fmt "$CURL_ELAPSED") |"
echo "| curl time_total, same requests ($CONNECTS connection(s) in all) | $(fmt "$CURL_TOTAL") |"
echo "| server \"elapsed_ms\" of the 200s during wrk -c1 | $(fmt "$WRK_SRV_C1") |"
echo "| wrk p50 at concurrency 1 | $(fmt "$WRK_P50_C1") |"
echo "| **wrk p50 (c1) − curl elapsed_ms median = HTTP + response encoding + client** | $(awk -v a="$WRK_P50_C1" -v b="$CURL_ELAPSED" 'BEGIN { printf "%.3f", a - b }') |"
echo "| wrk p50 (c1) − server elapsed_ms median of the same wrk run | $(awk -v a="$WRK_P50_C1" -v b="$WRK_SRV_C1" 'BEGIN { printf "%.3f", a - b }') |"
echo "| server \"elapsed_ms\", $SEP_N curl processes one after another (new connection each, server idle in between) | $(fmt "$SEP_ELAPSED") |"
echo "| in-process \`bandsaw interval\` \"elapsed_ms\", $CLI_RUNS fresh processes | $(fmt "$CLI_ELAPSED") |"
echo
echo "rustc/cargo processes running: $BSEQ during the curl runs, $BEND at the end."
echo "Load part took $((T1 - T0)) s in all (build included). Raw outputs: $OUT"
