#!/usr/bin/env bash
# End-to-end tests of replicas behind nginx (scripts/cluster/test_cluster.py, through
# scripts/local-cluster): identical answers from every replica, SIGTERM draining and SIGKILL
# retries under load without a failed request, and load figures (printed, not asserted).
# Expects target/release/bandsaw (cargo build --release). About a minute on 2 cores.
set -euo pipefail
cd "$(dirname "$0")/../.."

[ -x target/release/bandsaw ] || { echo "target/release/bandsaw is missing: run cargo build --release" >&2; exit 1; }
missing=()
command -v nginx >/dev/null 2>&1 || [ -x /usr/sbin/nginx ] || missing+=(nginx)
command -v wrk >/dev/null 2>&1 || missing+=(wrk)
command -v python3 >/dev/null 2>&1 || missing+=(python3)
if [ "${#missing[@]}" -gt 0 ]; then
  SUDO=""
  [ "$(id -u)" -ne 0 ] && SUDO=sudo
  $SUDO apt-get update
  $SUDO apt-get install -y "${missing[@]}"
fi

# The test starts and stops its own clusters (each local-cluster cleans up after itself); this
# trap only stops the runner if this script is interrupted.
PID=""
cleanup() { [ -n "$PID" ] && kill -TERM "$PID" 2>/dev/null || true; }
trap cleanup EXIT INT TERM
python3 scripts/cluster/test_cluster.py &
PID=$!
wait "$PID"
