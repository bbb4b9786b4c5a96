#!/usr/bin/env bash
# Wall time of candor against scripts/sklearn_reference.py (the same
# protocol written with scikit-learn) on the same datasets and families,
# run one right after the other on this machine. Prints the median of RUNS
# runs of each and their ratio.
#
# Needs: cargo, python3 and bc. The Python packages, at the versions the
# README's figures were measured with, are installed into .sk-venv on
# first use.
set -euo pipefail
cd "$(dirname "$0")/.."
RUNS=${RUNS:-3}
if [ ! -x .sk-venv/bin/python ]; then
    python3 -m venv .sk-venv
    .sk-venv/bin/pip install -q scikit-learn==1.9.1 pandas numpy scipy joblib threadpoolctl
fi
cargo build --release -q
median() { sort -n | awk '{a[NR]=$1} END {print a[int((NR+1)/2)]}'; }
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
for i in $(seq "$RUNS"); do
    rm -rf "$tmp/candor"
    s=$(date +%s.%N)
    ./target/release/candor run experiments/speed_binary.toml --out "$tmp/candor" --threads 2 -q
    e=$(date +%s.%N)
    echo "$e - $s" | bc >> "$tmp/candor.times"
    s=$(date +%s.%N)
    .sk-venv/bin/python scripts/sklearn_reference.py datasets/spambase.csv datasets/magic_gamma.csv \
        --jobs 2 --outer-folds 5 --inner-folds 5 --bins 15 --seed 0 --out "$tmp/sklearn.json" >/dev/null
    e=$(date +%s.%N)
    echo "$e - $s" | bc >> "$tmp/sklearn.times"
done
c=$(median < "$tmp/candor.times")
p=$(median < "$tmp/sklearn.times")
printf 'candor median %.2f s, scikit-learn median %.2f s, ratio %.2f (load: %s)\n' \
    "$c" "$p" "$(echo "$p / $c" | bc -l)" "$(cut -d' ' -f1-3 /proc/loadavg)"
