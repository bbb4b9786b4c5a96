#!/usr/bin/env bash
# What the `command` family's exchange costs per fit: writing the rows to
# train on and to score as CSV, starting the program, and reading its output.
#
# The program is the cheapest that is still correct: awk reads the file to
# score and answers 0.5 for every row. Each run is one thread, no bootstrap,
# only the raw row, on the demo's parcel records (4 columns) at 1,000 and
# 20,000 rows; the per-fit figure is the run's wall time over its fits
# (5 outer folds x (5 inner fits + 1 final fit) = 30). A run of candor's own
# logistic regression on the same settings is shown beside it for scale.
set -euo pipefail
cd "$(dirname "$0")/.."
cargo build --release --quiet
candor="${CARGO_TARGET_DIR:-$PWD/target}/release/candor"
work="$(mktemp -d)"
trap 'rm -rf "$work"' EXIT
cd "$work"

cat >answer.sh <<'SH'
#!/bin/sh
awk 'NR == 1 { print "p0,p1"; next } { print "0.5,0.5" }' "$1" >"$2"
SH

for rows in 1000 20000; do
    "$candor" demo --rows "$rows" --out "data$rows" >/dev/null
    for family in command logistic; do
        cat >"data$rows/$family.toml" <<TOML
name = "overhead"
calibrators = ["none"]
metrics = ["brier"]
[evaluation]
outer_folds = 5
inner_folds = 5
bootstrap = 0
[[dataset]]
name = "parcels"
path = "parcels.csv"
target = "late"
positive = "yes"
[[family]]
name = "$family"
kind = "$family"
$(if [ "$family" = command ]; then echo 'command = "sh ../answer.sh {score} {output} {train}"'; fi)
TOML
        start=$(date +%s.%N)
        "$candor" run "data$rows/$family.toml" --out "out$rows$family" -j 1 -q
        end=$(date +%s.%N)
        awk -v s="$start" -v e="$end" -v r="$rows" -v f="$family" \
            'BEGIN { printf "%6d rows  %-8s  run %6.2f s  per fit %7.1f ms\n", r, f, e - s, (e - s) / 30 * 1000 }'
    done
done
