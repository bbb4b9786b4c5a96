#!/usr/bin/env bash
# How long `candor score` takes on ROWS predictions made elsewhere (default
# 2,000,000) with a four-segment column: every metric, the diagnosis, every
# calibration method cross-fitted over 5 folds, 1,000 bootstrap resamples
# per fold, per segment too. The predictions are synthetic: a shipping
# forecaster's on-time probabilities, slightly over-confident, written by
# awk with a fixed seed.
# Prints the wall time and peak memory of the scoring.
set -euo pipefail
cd "$(dirname "$0")/.."
cargo build --release --quiet
candor="${CARGO_TARGET_DIR:-$PWD/target}/release/candor"
rows="${ROWS:-2000000}"
work="$(mktemp -d)"
trap 'rm -rf "$work"' EXIT
awk -v n="$rows" 'BEGIN {
    srand(20261204);
    print "on_time,p_on_time,depot";
    split("north south east west", depot, " ");
    for (i = 0; i < n; i++) {
        z = 4 * rand() - 2;
        p = 1 / (1 + exp(-1.4 * z));
        y = (rand() < 1 / (1 + exp(-z))) ? 1 : 0;
        printf "%d,%.6f,%s\n", y, p, depot[1 + int(4 * rand())];
    }
}' > "$work/forecasts.csv"
echo "wrote $rows predictions ($(du -h "$work/forecasts.csv" | cut -f1))"
/usr/bin/time -f "candor score: %e s wall, %M KB peak resident memory, %P CPU" \
    "$candor" score "$work/forecasts.csv" --target on_time --group depot \
    --out "$work/results" > /dev/null
