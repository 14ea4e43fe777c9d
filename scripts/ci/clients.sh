#!/usr/bin/env bash
# The example clients of scripts/examples/ (shell, Python, R, JavaScript) against the release
# server: each must exit 0, print the same estimate and interval lines as the others, and print
# the pointer of the bad field of its bad request. One summary line per client, then a count.
# Run from the repository root after `cargo build --release`.
set -euo pipefail

need_install=0
command -v jq >/dev/null && command -v curl >/dev/null || need_install=1
Rscript -e 'library(jsonlite); library(curl)' >/dev/null 2>&1 || need_install=1
if [[ $need_install == 1 ]]; then
  echo "== apt-get install r-base-core r-cran-jsonlite r-cran-curl jq curl"
  export DEBIAN_FRONTEND=noninteractive
  apt-get update -qq
  apt-get install -y -qq r-base-core r-cran-jsonlite r-cran-curl jq curl >/dev/null
fi
command -v node >/dev/null || { echo "node (20 or later) is required for client.mjs" >&2; exit 1; }

work=$(mktemp -d)
server_pid=""
cleanup() {
  [[ -n $server_pid ]] && kill "$server_pid" 2>/dev/null || true
  rm -rf "$work"
}
trap cleanup EXIT

target/release/bandsaw serve --listen 127.0.0.1:0 >"$work/server.log" 2>&1 &
server_pid=$!
for _ in $(seq 100); do
  url=$(grep -o 'http://127\.0\.0\.1:[0-9]*' "$work/server.log" | head -n1 || true)
  [[ -n $url ]] && break
  sleep 0.1
done
[[ -n ${url:-} ]] || { echo "the server did not start:" >&2; cat "$work/server.log" >&2; exit 1; }
export BANDSAW_URL=$url

declare -A run=(
  [curl.sh]="bash scripts/examples/curl.sh"
  [client.py]="python3 scripts/examples/client.py"
  [client.R]="Rscript scripts/examples/client.R"
  [client.mjs]="node scripts/examples/client.mjs"
)
order=(curl.sh client.py client.R client.mjs)
passed=0 failed=0 reference=""
for client in "${order[@]}"; do
  status=0
  ${run[$client]} >"$work/$client.out" 2>"$work/$client.err" || status=$?
  # The estimate and the interval lines: what every client must print alike.
  numbers=$(grep -E '^(median: |(percentile|bca) [0-9]+%: )' "$work/$client.out" || true)
  reference=${reference:-$numbers}
  why=""
  [[ $status == 0 ]] || why="exited $status"
  [[ $(grep -cE '^(percentile|bca) (90|95)%: ' <<<"$numbers") == 4 ]] || why="${why:+$why; }not 4 interval lines"
  [[ $numbers == "$reference" ]] || why="${why:+$why; }numbers differ from ${order[0]}'s"
  grep -q '^problem at /data/2: ' "$work/$client.out" || why="${why:+$why; }no problem at /data/2 printed"
  if [[ -z $why ]]; then
    passed=$((passed + 1))
    echo "$client: ok ($(grep -c '%: ' <<<"$numbers") intervals as the others print them; pointers /data/2 and /statistic printed)"
  else
    failed=$((failed + 1))
    echo "$client: FAILED ($why)"
    sed 's/^/    /' "$work/$client.out" "$work/$client.err"
  fi
done
echo "the numbers every client printed:"
sed 's/^/    /' <<<"$reference"
echo "clients: $passed passed, $failed failed"
[[ $failed == 0 ]]
