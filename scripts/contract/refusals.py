"""A schemathesis check of the document against the parser, for `.ci/run`.

A request that the OpenAPI document's schemas allow (schemathesis's positive mode) must be
answered, or refused only by a documented limit (`work-limit`, `time-limit`, `overloaded`) or by
field errors that each name a documented rule (`errors[].rule`, one of the `Rule` schema's
values). Any other refusal means the document allows what the parser does not: the two have
parted ways.
"""

import json
import pathlib

import schemathesis
from schemathesis.generation import GenerationMode

DOCUMENT = pathlib.Path(__file__).resolve().parents[2] / "openapi" / "openapi.json"
RULES = set(json.loads(DOCUMENT.read_text())["components"]["schemas"]["Rule"]["enum"])
LIMITS = {"/problems/work-limit", "/problems/time-limit", "/problems/overloaded"}


@schemathesis.check
def refusals_are_documented(ctx, response, case):
    """A schema-valid request is accepted, or refused by a documented rule or limit; and no
    request at all gets a server error other than a documented limit (a 503 `time-limit` for a
    request that asked for 1 ms is the contract, not a failure)."""
    if response.status_code >= 500:
        kind = response.json().get("type")
        if kind not in LIMITS:
            raise AssertionError(f"the server failed with {kind} ({response.status_code})")
        return None
    meta = case.meta
    if meta is None or meta.generation.mode != GenerationMode.POSITIVE or response.status_code < 400:
        return None
    body = response.json()
    kind = body.get("type")
    if kind in LIMITS:
        return None
    if kind == "/problems/invalid-request":
        undocumented = [e for e in body.get("errors", []) if e.get("rule") not in RULES]
        if undocumented:
            raise AssertionError(f"a schema-valid request was refused outside the documented rules: {undocumented}")
        return None
    raise AssertionError(f"a schema-valid request was refused with {kind} ({response.status_code})")
