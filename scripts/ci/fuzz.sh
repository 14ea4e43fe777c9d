#!/usr/bin/env bash
# Property tests of the engine (tests/properties) and a bounded fuzz run of the request parser
# and validator (tests/fuzz), both in-process through the handlers' own functions. Needs only
# cargo. BANDSAW_FUZZ_SECONDS sets the fuzz run's length (60 here), BANDSAW_FUZZ_SEED its
# sequence of cases (fixed by default, so a failure here reproduces anywhere).
set -euo pipefail
cd "$(dirname "$0")/../.."

export BANDSAW_FUZZ_SECONDS="${BANDSAW_FUZZ_SECONDS:-60}"
log="$(mktemp -d)"
trap 'rm -rf "$log"' EXIT

echo "== property tests (tests/properties)"
set +e
cargo test --release --test properties 2>&1 | tee "$log/properties" | grep -vE "^\s*(Compiling|Finished|Running)"
props=${PIPESTATUS[0]}

echo "== fuzz run, ${BANDSAW_FUZZ_SECONDS} s (tests/fuzz)"
cargo test --release --test fuzz -- --nocapture 2>&1 | tee "$log/fuzz" | grep -vE "^\s*(Compiling|Finished|Running)"
fuzz=${PIPESTATUS[0]}
set -e

echo "== summary"
grep -h "^test result:" "$log/properties" "$log/fuzz" || true
grep -h "^fuzz:" "$log/fuzz" || true
if [ "$props" -ne 0 ] || [ "$fuzz" -ne 0 ]; then
  echo "FAILED: properties exit $props, fuzz exit $fuzz"
  exit 1
fi
