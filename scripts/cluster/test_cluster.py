#!/usr/bin/env python3
"""End-to-end tests of bandsaw replicas behind nginx, run through scripts/local-cluster.

    python3 scripts/cluster/test_cluster.py            (needs target/release/bandsaw, nginx, wrk)

(a) three replicas answer the same request with identical bodies but for `elapsed_ms`, and
    every replica answered some (the local balancer's `X-Upstream` header says which);
(b) under steady load, one replica gets SIGTERM: no client request fails and it exits 0;
(c) under steady load, one replica gets SIGKILL: nginx's retries keep failed requests at zero;
(d) load figures through nginx (wrk, scripts/load/interval.lua): requests/s, per core, p50/p99
    at concurrency 1, 4 and 16, one replica against three. These are measurements, printed as
    a table, not asserted;
(e) Ctrl-C stops the whole cluster (scripts/local-cluster's trap).

Knobs (environment): ROUNDS (1) repeats (b) and (c); LOAD_SECONDS (3) per wrk run in (d);
SKIP_LOAD=1 skips (d). Only 127.0.0.1 is contacted.
"""

import http.client
import json
import os
import re
import signal
import subprocess
import sys
import threading
import time
import unittest

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
LOCAL_CLUSTER = os.path.join(ROOT, "scripts", "local-cluster")
LUA = os.path.join(ROOT, "scripts", "load", "interval.lua")
ROUNDS = int(os.environ.get("ROUNDS", "1"))
LOAD_SECONDS = int(os.environ.get("LOAD_SECONDS", "3"))
CORES = os.cpu_count() or 1


def load_body():
    """The request body of scripts/load/interval.lua (200 invented page load times, the mean,
    B = 1000, percentile, seed 1), so that these tests and wrk send the same request."""
    with open(LUA, encoding="utf-8") as f:
        text = f.read()
    m = re.search(r"^local body = \[\[\n(.*?)\n\]\]$", text, re.S | re.M)
    return json.loads(m.group(1))


BODY = load_body()
# For (b) and (c): the same request with 20x the resamples, so that each one computes for a few
# milliseconds and the signal finds requests in flight on the replica it stops.
HEAVY = dict(BODY, resamples=20_000)


class Cluster:
    """scripts/local-cluster as a child process: its replicas, balancer URL and folder."""

    def __init__(self, replicas=3, threads=1):
        self.proc = subprocess.Popen(
            [LOCAL_CLUSTER, "-n", str(replicas), "-t", str(threads)],
            stdout=subprocess.PIPE,
            text=True,
            env=dict(os.environ, KEEP="0"),
            # A shell started in the background ignores SIGINT, and an ignored signal stays
            # ignored across exec (and cannot be trapped): give local-cluster the default back.
            preexec_fn=lambda: signal.signal(signal.SIGINT, signal.SIG_DFL),
        )
        self.replicas = []  # (pid, "127.0.0.1:port")
        self.url = self.dir = None
        for line in self.proc.stdout:
            kind, value = line.split()[0], line.split()[1:]
            if kind == "replica":
                self.replicas.append((int(value[0]), value[1].removeprefix("http://")))
            elif kind == "balancer":
                self.url = value[0].removeprefix("http://")
            elif kind == "dir":
                self.dir = value[0]
                break
        if self.dir is None:
            self.proc.wait(timeout=30)
            raise RuntimeError(f"local-cluster exited ({self.proc.returncode}) before it was ready")
        self.host, self.port = self.url.rsplit(":", 1)

    def exit_status(self, index, timeout):
        """The exit status of replica `index` (0-based), waiting up to `timeout` seconds."""
        path = os.path.join(self.dir, f"replica-{index + 1}.exit")
        deadline = time.monotonic() + timeout
        while time.monotonic() < deadline:
            if os.path.exists(path):
                with open(path, encoding="ascii") as f:
                    text = f.read().strip()
                if text:
                    return int(text)
            time.sleep(0.1)
        return None

    def access_log(self):
        with open(os.path.join(self.dir, "access.log"), encoding="ascii") as f:
            return f.read().splitlines()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.proc.send_signal(signal.SIGTERM)
        self.proc.wait(timeout=30)
        self.proc.stdout.close()


def post(conn, body):
    """POST /v1/interval; returns (status, X-Upstream, parsed body)."""
    conn.request("POST", "/v1/interval", body=body, headers={"Content-Type": "application/json"})
    resp = conn.getresponse()
    data = resp.read()
    return resp.status, resp.getheader("X-Upstream", ""), data


def without_elapsed(value):
    """A response with every `elapsed_ms` removed: the one field that depends on the replica's
    clock rather than on the request."""
    if isinstance(value, dict):
        return {k: without_elapsed(v) for k, v in value.items() if k != "elapsed_ms"}
    if isinstance(value, list):
        return [without_elapsed(v) for v in value]
    return value


class Load:
    """`clients` threads posting `body` through the balancer, each on its own kept-alive
    connection, until stopped. A failure is any exception or any status but 200."""

    def __init__(self, cluster, body, clients):
        self.cluster, self.body, self.clients = cluster, json.dumps(body), clients
        self.stop = threading.Event()
        self.lock = threading.Lock()
        self.ok = 0
        self.failures = []  # (time, what)
        self.upstreams = []  # (time, X-Upstream) of the 200s
        self.threads = [threading.Thread(target=self.client) for _ in range(clients)]

    def client(self):
        conn = None
        while not self.stop.is_set():
            try:
                if conn is None:
                    conn = http.client.HTTPConnection(self.cluster.host, int(self.cluster.port), timeout=30)
                status, upstream, _ = post(conn, self.body)
                now = time.monotonic()
                with self.lock:
                    if status == 200:
                        self.ok += 1
                        self.upstreams.append((now, upstream))
                    else:
                        self.failures.append((now, f"HTTP {status} via {upstream}"))
            except (OSError, http.client.HTTPException) as e:
                with self.lock:
                    self.failures.append((time.monotonic(), repr(e)))
                if conn is not None:
                    conn.close()
                conn = None
        if conn is not None:
            conn.close()

    def __enter__(self):
        for t in self.threads:
            t.start()
        return self

    def __exit__(self, *exc):
        self.stop.set()
        for t in self.threads:
            t.join()


def run_with_signal(testcase, sig, label):
    """Three replicas, 4 clients for ~6 s, `sig` to the first replica after 2 s. Returns the
    cluster's figures and asserts nothing (the callers do)."""
    with Cluster(replicas=3) as cluster:
        victim_pid, victim = cluster.replicas[0]
        with Load(cluster, HEAVY, clients=4) as load:
            time.sleep(2)
            t_signal = time.monotonic()
            os.kill(victim_pid, sig)
            time.sleep(4)
        status = cluster.exit_status(0, timeout=35)
        # What nginx met on the stopped replica: refused connections (it no longer listens) and
        # connections lost with a request on them (in flight, or sent as it closed them).
        with open(os.path.join(cluster.dir, "error.log"), encoding="utf-8", errors="replace") as f:
            errors = f.read()
        refused = errors.count("Connection refused")
        lost = len(re.findall(r"prematurely closed|reset by peer", errors))
        after = [u for t, u in load.upstreams if t > t_signal]
        retried = sum(1 for u in after if "," in u)
        served_by_victim_after = sum(1 for t, u in load.upstreams if t > t_signal + 0.5 and u.split(",")[-1].strip() == victim)
        print(
            f"\n  {label}: {load.ok} ok, {len(load.failures)} failed; after the signal {len(after)} ok, "
            f"{retried} of them retried on another replica by nginx; {served_by_victim_after} answered by the "
            f"stopped replica from 0.5 s after it; nginx met {refused} refused connections and {lost} lost with a "
            f"request on them; the replica's exit status {status}",
            file=sys.stderr,
        )
        for t, what in load.failures[:10]:
            print(f"    failure at {t - t_signal:+.3f} s from the signal: {what}", file=sys.stderr)
        testcase.assertGreater(len(after), 0, "no request completed after the signal")
        testcase.assertEqual(served_by_victim_after, 0, "the stopped replica kept answering")
        return load, status


class ClusterTest(unittest.TestCase):
    def test_a_replicas_answer_identically(self):
        """Every replica gives the same bytes (but for elapsed_ms) for the same request."""
        with Cluster(replicas=3) as cluster:
            conn = http.client.HTTPConnection(cluster.host, int(cluster.port), timeout=30)
            bodies, upstreams = [], []
            for _ in range(30):
                status, upstream, data = post(conn, json.dumps(BODY))
                self.assertEqual(status, 200, data[:300])
                bodies.append(json.loads(data))
                upstreams.append(upstream)
            conn.close()
            replicas = {addr for _, addr in cluster.replicas}
            self.assertEqual(set(upstreams), replicas, "round robin should reach every replica in 30 requests")
            first = without_elapsed(bodies[0])
            self.assertIn("intervals", first)
            for b, u in zip(bodies, upstreams):
                self.assertIn("elapsed_ms", b)
                self.assertEqual(without_elapsed(b), first, f"the response from {u} differs")
            # nginx's own log agrees with the header: each replica appears in it.
            logged = [line for line in cluster.access_log() if "/v1/interval" in line]
            self.assertEqual(len(logged), 30)
            for addr in replicas:
                self.assertTrue(any(f"upstream={addr}" in line for line in logged), addr)
            counts = {a: upstreams.count(a) for a in sorted(replicas)}
            print(f"\n  30 identical responses, by replica: {counts}", file=sys.stderr)

    def test_b_sigterm_drains_without_failures(self):
        """A replica that gets SIGTERM under load finishes its requests and exits 0; the
        balancer sends the rest elsewhere: no client sees a failure."""
        for r in range(ROUNDS):
            with self.subTest(round=r):
                load, status = run_with_signal(self, signal.SIGTERM, f"SIGTERM round {r + 1}")
                self.assertEqual(load.failures, [])
                self.assertEqual(status, 0, "a replica stopped by SIGTERM exits 0")

    def test_c_sigkill_is_retried(self):
        """A replica killed outright under load: requests in flight on it are lost by it, and
        nginx retries them (and new ones) on another replica. Every endpoint is a pure function
        of its request, so the retry gives the answer the killed replica would have given."""
        for r in range(ROUNDS):
            with self.subTest(round=r):
                load, status = run_with_signal(self, signal.SIGKILL, f"SIGKILL round {r + 1}")
                self.assertEqual(load.failures, [])
                self.assertEqual(status, 128 + signal.SIGKILL)

    def test_e_ctrl_c_stops_everything(self):
        """local-cluster on SIGINT (Ctrl-C): every replica and nginx stopped, its folder gone."""
        cluster = Cluster(replicas=2)
        cluster.proc.send_signal(signal.SIGINT)
        self.assertEqual(cluster.proc.wait(timeout=30), 130)
        cluster.proc.stdout.close()
        for pid, _ in cluster.replicas:
            with self.assertRaises(ProcessLookupError, msg=f"replica {pid} still runs"):
                os.kill(pid, 0)
        with self.assertRaises(OSError, msg="the balancer still accepts connections"):
            http.client.HTTPConnection(cluster.host, int(cluster.port), timeout=5).connect()
        self.assertFalse(os.path.exists(cluster.dir))

    @unittest.skipIf(os.environ.get("SKIP_LOAD") == "1", "SKIP_LOAD=1")
    def test_d_load_figures(self):
        """Throughput and latency through nginx, one replica against three (one compute thread
        each). Measurements only: the assertions are that wrk ran without socket errors."""
        rows = []
        for replicas in (1, 3):
            with Cluster(replicas=replicas, threads=1) as cluster:
                for conc in (1, 4, 16):
                    out = subprocess.run(
                        ["wrk", "-t1", f"-c{conc}", f"-d{LOAD_SECONDS}s", "--timeout", "30s", "-s", LUA, f"http://{cluster.url}/v1/interval"],
                        capture_output=True, text=True, check=True,
                    ).stdout
                    fields = dict(kv.split("=") for kv in re.search(r"^LOAD (.*)$", out, re.M).group(1).split())
                    statuses = dict(kv.split("=") for kv in re.search(r"^STATUS ?(.*)$", out, re.M).group(1).split())
                    errors = re.search(r"^ERRORS (.*)$", out, re.M).group(1)
                    self.assertRegex(errors, r"connect=0 read=0 write=0 timeout=0", out)
                    secs = float(fields["duration_s"])
                    ok = int(statuses.get("200", 0))
                    shed = int(statuses.get("503", 0))
                    self.assertGreater(ok, 0, out)
                    rows.append((replicas, conc, ok / secs, ok / secs / CORES, shed, float(fields["p50_ms"]), float(fields["p99_ms"])))
        load1, _, _ = os.getloadavg()
        print(f"\n  Through nginx, {CORES} cores shared by nginx, wrk and the replicas (1 compute thread each); "
              f"POST /v1/interval, 200 values, mean, B = 1000; {LOAD_SECONDS} s per row; load average {load1:.2f} after", file=sys.stderr)
        print("\n  | replicas | clients | 200s/s | per core | 503s | p50 ms | p99 ms |", file=sys.stderr)
        print("  |---:|---:|---:|---:|---:|---:|---:|", file=sys.stderr)
        for r in rows:
            print(f"  | {r[0]} | {r[1]} | {r[2]:.0f} | {r[3]:.0f} | {r[4]} | {r[5]:.2f} | {r[6]:.2f} |", file=sys.stderr)


if __name__ == "__main__":
    # On SIGTERM, unwind through the `with` blocks so that every cluster is stopped.
    signal.signal(signal.SIGTERM, lambda *_: sys.exit(143))
    unittest.main(verbosity=2)
