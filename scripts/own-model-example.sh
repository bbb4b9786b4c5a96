#!/usr/bin/env bash
# Runs examples/own-model/compare.toml end to end: scikit-learn's histogram
# gradient boosting, trained by candor's `command` family, against candor's
# own gradient boosting and logistic regression on the same folds.
#
# Makes a Python virtual environment with scikit-learn and pandas once (in
# target/own-model-venv, or $VENV), builds candor, and runs the manifest into
# results/own-model (or $OUT). Extra arguments go to `candor run`.
set -euo pipefail
cd "$(dirname "$0")/.."

venv="${VENV:-target/own-model-venv}"
if [ ! -x "$venv/bin/python3" ]; then
    python3 -m venv "$venv"
    "$venv/bin/pip" install --quiet "scikit-learn>=1.4" pandas
fi
"$venv/bin/python3" -c "import sklearn, pandas; print('scikit-learn', sklearn.__version__, '/ pandas', pandas.__version__)"

cargo build --release --quiet
PATH="$(cd "$venv/bin" && pwd):$PATH" "${CARGO_TARGET_DIR:-target}/release/candor" run examples/own-model/compare.toml \
    --out "${OUT:-results/own-model}" "$@"
