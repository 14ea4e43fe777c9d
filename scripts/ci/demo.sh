#!/usr/bin/env bash
# The bakery demo (scripts/demo/run.py) as a CI step: runs it with a server of its own and again
# against a server started here (BANDSAW_URL), and checks what it prints and what it sent and
# got (scripts/demo/test_demo.py: every case present, the cluster and block intervals wider than
# the iid ones, only the planted slowdown a regression, bandsaw check agreeing, the README's
# excerpt current). Expects `cargo build --release` done. Standard-library Python only.
set -euo pipefail
cd "$(dirname "$0")/../.."

bin=target/release/bandsaw
test -x "$bin" || { echo "demo.sh: $bin is missing: run cargo build --release first" >&2; exit 2; }
if ! command -v python3 >/dev/null; then
  apt-get update && apt-get install -y python3
fi

log=$(mktemp)
"$bin" serve --listen 127.0.0.1:0 >"$log" 2>/dev/null &
server=$!
trap 'kill "$server" 2>/dev/null || true; rm -f "$log"' EXIT
for _ in $(seq 1 100); do grep -q 'listening on' "$log" && break; sleep 0.1; done
url=$(grep -o 'http://[0-9.:]*' "$log" | head -1)
test -n "$url" || { echo "demo.sh: the server did not start" >&2; exit 2; }

echo "== the bakery demo (scripts/demo/test_demo.py; the demo's output first)"
BANDSAW_URL="$url" python3 scripts/demo/test_demo.py -v
