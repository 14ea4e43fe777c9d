#!/usr/bin/env bash
# Ask bandsaw for a median with bootstrap intervals, with curl and jq.
#
# The data are invented: minutes to first reply on a fictional support desk's tickets this
# week. Run a server (`bandsaw serve`), then `bash curl.sh`; BANDSAW_URL says where it listens.
set -euo pipefail
URL="${BANDSAW_URL:-http://127.0.0.1:8080}"

# 1. A good request: the median, percentile and BCa intervals at 90 % and 95 %, a fixed seed
#    (the same seed gives the same numbers on every run). --fail-with-body: exit non-zero on
#    an HTTP error, still printing the problem document.
answer=$(curl -sS --fail-with-body -H 'Content-Type: application/json' "$URL/v1/interval" -d '{
  "data": [2.9, 5.4, 1.8, 8.3, 4.1, 12.6, 6.2, 3.5, 7.7, 44.0, 5.1, 9.4, 4.6, 2.2, 15.8, 6.9, 3.3, 11.2, 5.6, 8.1,
           27.5, 4.4, 6.5, 2.6, 9.9, 5.0, 3.8, 18.3, 7.2, 4.9, 6.0, 33.1, 5.3, 10.4, 3.1, 8.6, 4.2, 14.7, 6.7, 61.0],
  "statistic": "median", "methods": ["percentile", "bca"],
  "levels": [0.9, 0.95], "resamples": 4000, "seed": 2024}')

# jq picks the fields out as tab-separated text; printf rounds them like the other clients.
IFS=$'\t' read -r estimate n seed < <(jq -r '[.estimate, .n, .seed] | @tsv' <<<"$answer")
printf 'median: %.3f minutes (n = %s, seed %s)\n' "$estimate" "$n" "$seed"
jq -r '.intervals[] | [.method, .level * 100, .lower, .upper] | @tsv' <<<"$answer" |
  while IFS=$'\t' read -r method level lower upper; do
    printf '%s %.0f%%: %.3f to %.3f\n' "$method" "$level" "$lower" "$upper"
  done

# 2. A bad request: a string among the data and a statistic that does not exist. The server
#    answers 422 with one error per bad field, each with a JSON Pointer into the request.
#    -w appends the status on a line of its own after the body.
reply=$(curl -sS -H 'Content-Type: application/json' -w '\n%{http_code}' "$URL/v1/interval" \
  -d '{"data": [3, 5, "twelve", 8], "statistic": "typical"}')
status=$(tail -n1 <<<"$reply")
problem=$(sed '$d' <<<"$reply")
jq -r '.errors[] | "problem at \(.pointer): \(.message)"' <<<"$problem"
pointers=$(jq -r '[.errors[].pointer] | sort | join(" ")' <<<"$problem")
[[ "$status" == 422 && "$pointers" == "/data/2 /statistic" ]]
