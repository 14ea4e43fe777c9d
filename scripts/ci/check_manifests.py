#!/usr/bin/env python3
"""Checks of docker/ and docker/k8s/ that Docker itself is not needed for (run by
scripts/ci/manifests.sh, which validates the schemas and lints the Dockerfile before).

    python3 scripts/ci/check_manifests.py        (needs PyYAML and target/release/bandsaw)

The settings' names are written once, in src/config.rs; everything here is checked against it,
so a renamed setting cannot leave a deployment file silently setting nothing.
"""

import glob
import json
import os
import re
import shutil
import subprocess
import tempfile
import time
import tomllib
import unittest

import yaml

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
BIN = os.path.join(ROOT, "target", "release", "bandsaw")


def read(*path):
    with open(os.path.join(ROOT, *path), encoding="utf-8") as f:
        return f.read()


DEFAULT_GRACE_MS = int(re.search(r"DEFAULT_SHUTDOWN_GRACE_MS: u64 = ([0-9_]+);", read("src", "config.rs")).group(1).replace("_", ""))
CONFIG_NAMES = set(re.findall(r'env = "(BANDSAW_[A-Z_]+)"', read("src", "config.rs")))
DOCKERFILE = read("docker", "Dockerfile")
# Instructions with their continuation lines joined.
INSTRUCTIONS = [
    line.strip()
    for line in re.sub(r"\\\n", " ", DOCKERFILE).splitlines()
    if line.strip() and not line.lstrip().startswith("#")
]
DOCS = {os.path.basename(p): list(yaml.safe_load_all(read(p))) for p in sorted(glob.glob(os.path.join(ROOT, "docker", "k8s", "*.yaml")))}


def kind(k):
    found = [d for docs in DOCS.values() for d in docs if d and d["kind"] == k]
    assert len(found) == 1, f"expected one {k}, found {len(found)}"
    return found[0]


DEPLOYMENT = kind("Deployment")
POD = DEPLOYMENT["spec"]["template"]
CONTAINER = POD["spec"]["containers"][0]
ENV = {e["name"]: e["value"] for e in CONTAINER["env"]}


def cpu(q):
    q = str(q)
    return float(q[:-1]) / 1000 if q.endswith("m") else float(q)


def instruction(name):
    found = [i for i in INSTRUCTIONS if i.split()[0].upper() == name]
    assert len(found) == 1, f"expected one {name} in the Dockerfile, found {found}"
    return found[0][len(name):].strip()


class SettingNames(unittest.TestCase):
    def test_config_has_settings(self):
        # Guards the pattern itself: if it found nothing, every subset test below would pass.
        self.assertIn("BANDSAW_THREADS", CONFIG_NAMES)
        self.assertGreaterEqual(len(CONFIG_NAMES), 10)

    def test_binary_reads_the_same_names(self):
        help_text = subprocess.run([BIN, "serve", "--help"], capture_output=True, text=True, check=True).stdout
        self.assertEqual(set(re.findall(r"env: (BANDSAW_[A-Z_]+)", help_text)), CONFIG_NAMES)

    def test_dockerfile_lists_every_setting_and_no_other(self):
        self.assertEqual(set(re.findall(r"BANDSAW_[A-Z_]+", DOCKERFILE)), CONFIG_NAMES)

    def test_manifests_and_compose_set_only_real_settings(self):
        for name, docs in DOCS.items():
            for n in re.findall(r"BANDSAW_[A-Z_]+", json.dumps(docs)):
                self.assertIn(n, CONFIG_NAMES, name)
        compose = yaml.safe_load(read("docker", "compose.yaml"))
        for n in compose["services"]["bandsaw"]["environment"]:
            self.assertIn(n, CONFIG_NAMES, "compose.yaml")


class Deployment(unittest.TestCase):
    def test_cpu_matches_threads(self):
        threads = int(ENV["BANDSAW_THREADS"])
        res = CONTAINER["resources"]
        self.assertEqual(cpu(res["requests"]["cpu"]), threads)
        self.assertEqual(cpu(res["limits"]["cpu"]), threads)

    def test_termination_grace_exceeds_the_drain(self):
        grace_s = int(ENV["BANDSAW_SHUTDOWN_GRACE_MS"]) / 1000
        pause = float(CONTAINER["lifecycle"]["preStop"]["exec"]["command"][1])
        self.assertGreater(POD["spec"]["terminationGracePeriodSeconds"], pause + grace_s)
        # A request admitted before SIGTERM can finish within the drain.
        self.assertLessEqual(int(ENV["BANDSAW_MAX_TIME_LIMIT_MS"]), int(ENV["BANDSAW_SHUTDOWN_GRACE_MS"]))

    def test_probes_and_scrape(self):
        port = CONTAINER["ports"][0]
        self.assertEqual(CONTAINER["livenessProbe"]["httpGet"]["path"], "/healthz")
        self.assertEqual(CONTAINER["readinessProbe"]["httpGet"]["path"], "/readyz")
        for probe in ("livenessProbe", "readinessProbe"):
            self.assertEqual(CONTAINER[probe]["httpGet"]["port"], port["name"])
        ann = POD["metadata"]["annotations"]
        self.assertEqual(ann["prometheus.io/scrape"], "true")
        self.assertEqual(ann["prometheus.io/path"], "/metrics")
        self.assertEqual(int(ann["prometheus.io/port"]), port["containerPort"])

    def test_ports_agree_with_the_image(self):
        listen = re.search(r"BANDSAW_LISTEN=(\S+)", instruction("ENV")).group(1)
        port = int(listen.rsplit(":", 1)[1])
        self.assertEqual(int(instruction("EXPOSE")), port)
        self.assertEqual(CONTAINER["ports"][0]["containerPort"], port)

    def test_compose_waits_for_the_drain(self):
        compose = yaml.safe_load(read("docker", "compose.yaml"))["services"]["bandsaw"]
        grace_ms = int(compose["environment"].get("BANDSAW_SHUTDOWN_GRACE_MS", DEFAULT_GRACE_MS))
        self.assertGreater(int(compose["stop_grace_period"].removesuffix("s")), grace_ms / 1000)

    def test_security_context(self):
        pod, c = POD["spec"]["securityContext"], CONTAINER["securityContext"]
        self.assertTrue(pod["runAsNonRoot"])
        self.assertNotEqual(pod["runAsUser"], 0)
        self.assertEqual(instruction("USER"), f"{pod['runAsUser']}:{pod['runAsGroup']}")
        self.assertFalse(c["allowPrivilegeEscalation"])
        self.assertTrue(c["readOnlyRootFilesystem"])
        self.assertEqual(c["capabilities"]["drop"], ["ALL"])
        self.assertNotIn("add", c["capabilities"])

    def test_selectors_reach_the_pods(self):
        labels = POD["metadata"]["labels"]
        self.assertEqual(DEPLOYMENT["spec"]["selector"]["matchLabels"], labels)
        self.assertEqual(kind("Service")["spec"]["selector"], labels)
        self.assertEqual(kind("PodDisruptionBudget")["spec"]["selector"]["matchLabels"], labels)
        target = kind("HorizontalPodAutoscaler")["spec"]["scaleTargetRef"]
        self.assertEqual((target["kind"], target["name"]), ("Deployment", DEPLOYMENT["metadata"]["name"]))
        self.assertEqual(kind("Service")["spec"]["ports"][0]["targetPort"], CONTAINER["ports"][0]["name"])


class Image(unittest.TestCase):
    def test_build_context_holds_what_the_build_reads(self):
        """Copies exactly what the Dockerfile's COPY lines take (and .dockerignore lets through)
        and checks that Cargo can read the package from it and that every file the source
        includes at compile time is in it."""
        ignore = [l for l in read(".dockerignore").splitlines() if l and not l.startswith("#")]
        self.assertEqual(ignore[0], "*", ".dockerignore is an allow-list")
        allowed = {l[1:] for l in ignore[1:] if l.startswith("!")}
        with tempfile.TemporaryDirectory() as ctx:
            for ins in INSTRUCTIONS:
                parts = ins.split()
                if parts[0] != "COPY" or any(p.startswith("--from") for p in parts):
                    continue
                for src in parts[1:-1]:
                    self.assertIn(src, allowed, f"{src} is copied but .dockerignore leaves it out")
                    path = os.path.join(ROOT, src)
                    self.assertTrue(os.path.exists(path), src)
                    (shutil.copytree if os.path.isdir(path) else shutil.copy)(path, os.path.join(ctx, src))
            meta = subprocess.run(
                ["cargo", "metadata", "--no-deps", "--offline", "--format-version", "1", "--manifest-path", os.path.join(ctx, "Cargo.toml")],
                check=True, capture_output=True, text=True,
            ).stdout
            # Cargo refuses to build a package one of whose declared targets (a [[bench]], say) is
            # missing; `cargo metadata` merely leaves it out, hence the comparison.
            found = {t["name"] for t in json.loads(meta)["packages"][0]["targets"]}
            with open(os.path.join(ROOT, "Cargo.toml"), "rb") as f:
                manifest = tomllib.load(f)
            declared = {t["name"] for k in ("bin", "bench", "test", "example") for t in manifest.get(k, [])}
            self.assertIn("bandsaw", found)
            self.assertLessEqual(declared, found, "targets declared in Cargo.toml whose files the image does not copy")
            for rs in glob.glob(os.path.join(ctx, "src", "**", "*.rs"), recursive=True):
                with open(rs, encoding="utf-8") as f:
                    for inc in re.findall(r'include_(?:str|bytes)!\("([^"]+)"\)', f.read()):
                        self.assertTrue(os.path.exists(os.path.join(os.path.dirname(rs), inc)), f"{rs}: {inc}")

    def test_healthcheck_command_against_a_live_server(self):
        """The HEALTHCHECK's own command: 0 against a serving bandsaw, non-zero once it is gone."""
        cmd = json.loads(re.search(r"CMD (\[.*\])$", instruction("HEALTHCHECK")).group(1))
        server = subprocess.Popen([BIN, "serve", "--listen", "127.0.0.1:0", "--threads", "1"], stdout=subprocess.PIPE, text=True)
        try:
            addr = ""
            for line in server.stdout:
                if line.startswith("bandsaw listening on http://"):
                    addr = line.split("http://")[1].strip()
                    break
            env = dict(os.environ, BANDSAW_LISTEN=addr)
            self.assertEqual(subprocess.run(cmd, env=env, timeout=10).returncode, 0)
        finally:
            server.terminate()
            server.wait(timeout=40)
            server.stdout.close()
        time.sleep(0.2)
        self.assertNotEqual(subprocess.run(cmd, env=env, timeout=10, stderr=subprocess.DEVNULL).returncode, 0)


if __name__ == "__main__":
    unittest.main(verbosity=2)
