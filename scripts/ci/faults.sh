#!/usr/bin/env bash
# Faults: a flood of maximum-size requests (memory bound, documented answers), then the Rust
# tests of clients that hang up mid-job, trickle bytes or hold connections, with their figures.
#
#   cargo build --release && bash scripts/ci/faults.sh
#
# Needs only python3 (standard library) and cargo; starts its servers on free loopback ports
# and stops them itself (the flood script terminates its server; the tests kill theirs).
set -euo pipefail
cd "$(dirname "$0")/../.."

if ! command -v python3 >/dev/null; then
  apt-get update && apt-get install -y python3
fi
test -x target/release/bandsaw || { echo "faults: build first (cargo build --release)" >&2; exit 1; }

echo "== flood of maximum-size requests"
python3 scripts/faults/flood.py --binary target/release/bandsaw

echo "== hang-ups, trickling clients, the connection limit (tests/service/faults.rs)"
# --test-threads=1: the figures are times, and each test starts its own server. A failure
# stops the script (pipefail).
cargo test --release --test service faults:: -- --nocapture --test-threads=1 2>&1 \
  | grep -E '^(figure:|test |test result:)|panicked|FAILED'
