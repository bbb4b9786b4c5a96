#!/usr/bin/env bash
# Wall time of candor against the scikit-learn reference grid on the same
# datasets, protocol and families, run one right after the other on this
# machine. Prints the median of RUNS runs of each and their ratio.
#
# Needs: a release build (cargo build --release), python3, and the peer's
# folder (default ../shared/peer). The peer's Python packages are installed
# into .peer-venv on first use.
set -euo pipefail
cd "$(dirname "$0")/.."
RUNS=${RUNS:-3}
PEER=${PEER:-../shared/peer}
if [ ! -x .peer-venv/bin/python ]; then
    python3 -m venv .peer-venv
    .peer-venv/bin/pip install -q scikit-learn pandas numpy scipy joblib threadpoolctl
fi
cargo build --release -q
median() { sort -n | awk '{a[NR]=$1} END {print a[int((NR+1)/2)]}'; }
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
for i in $(seq "$RUNS"); do
    rm -rf "$tmp/candor"
    s=$(date +%s.%N)
    ./target/release/candor run experiments/peer_binary.toml --out "$tmp/candor" --threads 2 -q
    e=$(date +%s.%N)
    echo "$e - $s" | bc >> "$tmp/candor.times"
    s=$(date +%s.%N)
    .peer-venv/bin/python "$PEER/peer_grid.py" datasets/spambase.csv datasets/magic_gamma.csv \
        --models logreg,nbayes,tree,forest,adaboost,knn,svm,gboost,mlp --style efficient --jobs 2 --outer 5 --inner 5 --bins 15 \
        --seed 0 --out "$tmp/peer.json" >/dev/null
    e=$(date +%s.%N)
    echo "$e - $s" | bc >> "$tmp/peer.times"
done
c=$(median < "$tmp/candor.times")
p=$(median < "$tmp/peer.times")
printf 'candor median %.2f s, peer median %.2f s, peer/candor %.2f\n' "$c" "$p" "$(echo "$p / $c" | bc -l)"
