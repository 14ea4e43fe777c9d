#!/usr/bin/env python3
"""A flood of maximum-size requests against the release server: memory must stay bounded and
every request must get a documented answer.

    python3 scripts/faults/flood.py [--binary target/release/bandsaw] [--requests 600]

Starts `bandsaw serve` on a free loopback port with small, known limits (below), sends
CLIENTS concurrent clients' worth of requests over raw sockets, each of one of three bodies:

  at-limit   exactly --max-body-bytes bytes, --max-rows numbers (padded with spaces): a job runs
  over-rows  exactly --max-body-bytes bytes, one row too many: 422, after the whole body is read
  over-size  one byte over --max-body-bytes: 413, from Content-Length before the body is read

Two thirds of the clients send `Expect: 100-continue` (as curl does for large bodies), so a
refusal (413, or 503 overloaded) comes before they send the body; the rest send the body at
once, and a refusal may then reach them as a reset connection, which is counted and reported.

Meanwhile a thread samples VmRSS from /proc/<pid>/status every few milliseconds, and VmHWM (the
kernel's own peak) at the end. The bound the peak must stay under, from the limits:

  baseline                            RSS after one warm-up request (threads, tables, code)
  + max_connections x 2 x body limit  each connection holds at most one body while it is read;
                                      collecting it into one buffer copies it once
  + min(threads + queue, max_connections) x per job
                                      admitted jobs hold their body and their parsed data:
      per job = body limit + 64 B x max_rows   (the bytes; the floats, sorted copy, units and
                                      replicate buffers, generously eight 8-byte words a row)
  x 1.25                              allocator slack (freed memory kept by malloc's arenas)

The check fails (exit 1) if the peak passes the bound, if any request with Expect got no
documented answer (200, 413, 422, or 503 with Retry-After), or if an answer is not a problem
document where it should be. Prints the figures.
"""

import argparse
import json
import os
import re
import socket
import subprocess
import sys
import threading
import time
from concurrent.futures import ThreadPoolExecutor

LIMITS = {
    "max_body_bytes": 4 * 1024 * 1024,
    "max_rows": 250_000,
    "threads": 2,
    "max_connections": 16,
}
# Two rounds: a short queue, where most jobs are shed (503) before their body is read; and a
# queue longer than the connection limit, where every body is read and every valid job runs.
QUEUES = (2, 32)
CLIENTS = 48
DOCUMENTED = {200, 413, 422, 503}


def padded(text, size):
    raw = text.encode()
    assert len(raw) <= size, (len(raw), size)
    return raw + b" " * (size - len(raw))


def bodies(limit, rows):
    # Invented response times of a service, ms, four decimals: 9 bytes a row.
    values = ",".join(f"{100 + (i * 7919) % 900 + (i % 10) / 10:.4f}" for i in range(rows))
    ok = '{"data": [' + values + '], "statistic": "mean", "resamples": 200, "seed": 11}'
    many = '{"data": [' + ",".join("1" for _ in range(rows + 1)) + '], "statistic": "mean", "seed": 11}'
    return {
        "at-limit": padded(ok, limit),
        "over-rows": padded(many, limit),
        "over-size": padded(ok, limit + 1),
    }


def start(binary, queue):
    args = [
        binary, "serve", "--listen", "127.0.0.1:0",
        "--threads", str(LIMITS["threads"]),
        "--queue", str(queue),
        "--max-body-bytes", str(LIMITS["max_body_bytes"]),
        "--max-rows", str(LIMITS["max_rows"]),
        "--max-connections", str(LIMITS["max_connections"]),
        "--log-format", "json",
    ]
    proc = subprocess.Popen(args, stdout=subprocess.PIPE, stderr=subprocess.DEVNULL, text=True)
    line = proc.stdout.readline()
    m = re.search(r"http://([\d.]+):(\d+)", line)
    if not m:
        proc.kill()
        sys.exit(f"no address line from the server: {line!r}")
    return proc, int(m.group(2))


def read_response(f):
    status_line = f.readline()
    if not status_line:
        raise ConnectionResetError("closed before an answer")
    status = int(status_line.split()[1])
    headers = {}
    while True:
        line = f.readline()
        if line in (b"\r\n", b"\n", b""):
            break
        k, _, v = line.decode().partition(":")
        headers[k.strip().lower()] = v.strip()
    if status == 100:
        return status, headers, b""
    n = int(headers.get("content-length", "0"))
    return status, headers, f.read(n)


def post(port, body, expect):
    """One request on its own connection: (status or 'reset', headers, body)."""
    s = socket.create_connection(("127.0.0.1", port), timeout=120)
    try:
        head = (
            "POST /v1/interval HTTP/1.1\r\nHost: bandsaw\r\nContent-Type: application/json\r\n"
            f"Content-Length: {len(body)}\r\nConnection: close\r\n"
            + ("Expect: 100-continue\r\n" if expect else "") + "\r\n"
        )
        s.sendall(head.encode())
        f = s.makefile("rb")
        if expect:
            status, headers, text = read_response(f)
            if status != 100:
                return status, headers, text
        try:
            s.sendall(body)
        except (BrokenPipeError, ConnectionResetError):
            pass  # the answer may still be readable
        return read_response(f)
    except (ConnectionResetError, BrokenPipeError):
        return "reset", {}, b""
    finally:
        s.close()


def rss_kib(pid, field):
    with open(f"/proc/{pid}/status") as f:
        for line in f:
            if line.startswith(field + ":"):
                return int(line.split()[1])
    raise RuntimeError(f"no {field}")


def check_answer(kind, status, headers, text):
    """A problem with the answer, or None."""
    if status not in DOCUMENTED:
        return f"{kind}: undocumented status {status}"
    if status == 200:
        return None if kind == "at-limit" else f"{kind}: 200"
    doc = json.loads(text)
    expected = {413: "/problems/body-too-large", 422: "/problems/invalid-request", 503: "/problems/overloaded"}
    if doc.get("type") != expected[status]:
        return f"{kind}: {status} with type {doc.get('type')}"
    if status == 503 and "retry-after" not in headers:
        return f"{kind}: 503 without Retry-After"
    return None


def flood(binary, made, requests, queue):
    """One round: the baseline and peak RSS in KiB, the answers, the seconds taken."""
    proc, port = start(binary, queue)
    try:
        warm = post(port, made["at-limit"], True)
        assert warm[0] == 200, warm
        baseline = rss_kib(proc.pid, "VmRSS")
        peak = [baseline]
        done = threading.Event()

        def sample():
            while not done.is_set():
                peak[0] = max(peak[0], rss_kib(proc.pid, "VmRSS"))
                time.sleep(0.005)

        sampler = threading.Thread(target=sample)
        sampler.start()
        kinds = ["at-limit", "over-rows", "over-size"]
        # Every third client of each kind sends its body without Expect.
        plan = [(kinds[i % 3], (i // 3) % 3 != 0) for i in range(requests)]
        started = time.monotonic()
        with ThreadPoolExecutor(CLIENTS) as ex:
            answers = list(ex.map(lambda p: (p[0], p[1], post(port, made[p[0]], p[1])), plan))
        seconds = time.monotonic() - started
        done.set()
        sampler.join()
        peak_kib = max(peak[0], rss_kib(proc.pid, "VmHWM"))
    finally:
        proc.terminate()
        proc.wait(timeout=60)
    return baseline, peak_kib, answers, seconds


def judge(answers):
    """Counts by (kind, status), failures, resets."""
    counts, failures, resets = {}, [], 0
    for kind, expect, (status, headers, text) in answers:
        counts[(kind, status)] = counts.get((kind, status), 0) + 1
        if status == "reset":
            resets += 1
            if expect:
                failures.append(f"{kind}: reset although the client sent Expect: 100-continue")
            continue
        problem = check_answer(kind, status, headers, text)
        if problem:
            failures.append(problem)
    return counts, failures, resets


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--binary", default="target/release/bandsaw")
    ap.add_argument("--requests", type=int, default=600)
    a = ap.parse_args()
    limit, rows, conns = LIMITS["max_body_bytes"], LIMITS["max_rows"], LIMITS["max_connections"]
    made = bodies(limit, rows)
    mib = lambda kib: kib / 1024
    all_failures = []
    for queue in QUEUES:
        baseline, peak, answers, seconds = flood(a.binary, made, a.requests, queue)
        per_job = limit + 64 * rows
        holders = min(LIMITS["threads"] + queue, conns)
        bound = int((baseline * 1024 + conns * 2 * limit + holders * per_job) * 1.25) // 1024
        counts, failures, resets = judge(answers)
        print(f"limits: {json.dumps(LIMITS)}, queue {queue}; {CLIENTS} concurrent clients, "
              f"{a.requests} requests in {seconds:.1f} s")
        for (kind, status), n in sorted(counts.items(), key=str):
            print(f"  {kind:9} -> {status}: {n}")
        print(f"figure: queue {queue}: baseline RSS {mib(baseline):.1f} MiB; peak RSS {mib(peak):.1f} MiB; "
              f"bound {mib(bound):.1f} MiB ({100 * peak / bound:.0f} % of it); "
              f"resets seen by clients without Expect: {resets} of {sum(1 for _, e, _ in answers if not e)}")
        if peak > bound:
            failures.append(f"queue {queue}: peak RSS {mib(peak):.1f} MiB over the bound {mib(bound):.1f} MiB")
        all_failures += failures
    for f in all_failures[:20]:
        print("FAIL:", f)
    print(f"flood: {'FAILED' if all_failures else 'passed'} ({len(all_failures)} failures)")
    return 1 if all_failures else 0


if __name__ == "__main__":
    sys.exit(main())
