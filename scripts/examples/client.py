#!/usr/bin/env python3
"""Ask bandsaw for a median with bootstrap intervals, using only Python's standard library.

The data are invented: minutes to first reply on a fictional support desk's tickets this week.
Run a server (`bandsaw serve`), then `python3 client.py`; BANDSAW_URL says where it listens.
"""

import json
import os
import sys
import urllib.error
import urllib.request

URL = os.environ.get("BANDSAW_URL", "http://127.0.0.1:8080")

MINUTES = [2.9, 5.4, 1.8, 8.3, 4.1, 12.6, 6.2, 3.5, 7.7, 44.0, 5.1, 9.4, 4.6, 2.2, 15.8, 6.9, 3.3, 11.2, 5.6, 8.1,
           27.5, 4.4, 6.5, 2.6, 9.9, 5.0, 3.8, 18.3, 7.2, 4.9, 6.0, 33.1, 5.3, 10.4, 3.1, 8.6, 4.2, 14.7, 6.7, 61.0]


def post(path, body):
    """POST a JSON body; return (HTTP status, parsed JSON answer), for errors too."""
    req = urllib.request.Request(URL + path, data=json.dumps(body).encode(),
                                 headers={"Content-Type": "application/json"})
    try:
        with urllib.request.urlopen(req) as resp:
            return resp.status, json.load(resp)
    except urllib.error.HTTPError as e:  # 4xx/5xx still carry a JSON problem document
        return e.code, json.load(e)


# 1. A good request: the median, percentile and BCa intervals at 90 % and 95 %, a fixed seed
#    (the same seed gives the same numbers on every run).
status, r = post("/v1/interval", {
    "data": MINUTES, "statistic": "median", "methods": ["percentile", "bca"],
    "levels": [0.9, 0.95], "resamples": 4000, "seed": 2024})
if status != 200:
    sys.exit(f"expected 200, got {status}: {r}")
print(f"median: {r['estimate']:.3f} minutes (n = {r['n']}, seed {r['seed']})")
for iv in r["intervals"]:
    print(f"{iv['method']} {iv['level']:.0%}: {iv['lower']:.3f} to {iv['upper']:.3f}")

# 2. A bad request: a string among the data and a statistic that does not exist. The server
#    answers 422 with one error per bad field, each with a JSON Pointer into the request.
status, p = post("/v1/interval", {"data": [3, 5, "twelve", 8], "statistic": "typical"})
for e in p.get("errors", []):
    print(f"problem at {e['pointer']}: {e['message']}")
pointers = {e["pointer"] for e in p.get("errors", [])}
sys.exit(0 if status == 422 and pointers == {"/data/2", "/statistic"} else 1)
