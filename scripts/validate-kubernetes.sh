#!/usr/bin/env bash
# Validates the Kubernetes templates in deploy/kubernetes/ against the
# Kubernetes API's own JSON schemas, strictly (unknown fields are errors),
# with the kubernetes-validate package from PyPI in a virtual environment
# (made once in target/k8s-venv, or $VENV). No cluster is needed.
set -euo pipefail
cd "$(dirname "$0")/.."
venv="${VENV:-target/k8s-venv}"
if [ ! -x "$venv/bin/kubernetes-validate" ]; then
    python3 -m venv "$venv"
    "$venv/bin/pip" install --quiet kubernetes-validate
fi
for version in ${K8S_VERSIONS:-1.31.0 1.37.0}; do
    "$venv/bin/kubernetes-validate" --strict -k "$version" deploy/kubernetes/*.yaml
done
