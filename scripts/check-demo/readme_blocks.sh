#!/usr/bin/env bash
# Rewrites the two demo reports in README.md (between the check-demo markers) with what
# `bandsaw check` prints now; tests/service/check.rs fails until they agree.
set -euo pipefail
cd "$(dirname "$0")/../.."
bin=target/release/bandsaw
args=(scripts/check-demo/base.json scripts/check-demo/change.json --tolerance 0.02 --seed 7)
text=$("$bin" check "${args[@]}" || true)
markdown=$("$bin" check "${args[@]}" --format markdown || true)
TEXT="$text" MARKDOWN="$markdown" python3 - <<'PY'
import os, re
s = open("README.md").read()
text_block = re.compile(r"(<!-- check-demo text[^\n]*\n```text\n).*?(\n```\n)", re.S)
s, n1 = text_block.subn(lambda m: m.group(1) + os.environ["TEXT"] + m.group(2), s)
md_block = re.compile(r"(<!-- check-demo markdown[^\n]*\n).*?(\n<!-- check-demo end -->)", re.S)
s, n2 = md_block.subn(lambda m: m.group(1) + os.environ["MARKDOWN"] + m.group(2), s)
assert n1 == 1 and n2 == 1, "the README's check-demo markers"
open("README.md", "w").write(s)
PY
