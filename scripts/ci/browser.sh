#!/usr/bin/env bash
# The page at / in a real browser: Debian's chromium driven by playwright-core (no browser
# download), against target/release/bandsaw. Run from the repository root after
# `cargo build --release`. The test starts its own server on a free port and stops it.
set -euo pipefail

if ! command -v chromium >/dev/null 2>&1; then
  echo "== installing chromium (apt)"
  export DEBIAN_FRONTEND=noninteractive
  apt-get update -qq
  apt-get install -y -qq chromium >/dev/null
fi
if ! command -v npm >/dev/null 2>&1; then
  echo "== installing node and npm (apt)"
  export DEBIAN_FRONTEND=noninteractive
  apt-get update -qq
  apt-get install -y -qq nodejs npm >/dev/null
fi
test -x target/release/bandsaw || { echo "target/release/bandsaw is missing: run cargo build --release first" >&2; exit 1; }

echo "== npm ci (scripts/browser)"
(cd scripts/browser && npm ci --no-audit --no-fund)

echo "== the page in chromium"
profile=$(mktemp -d)
trap 'rm -rf "$profile"' EXIT
# The test prints one line per check and a summary; it exits non-zero on any failure.
TMPDIR="$profile" node scripts/browser/page.test.mjs target/release/bandsaw
