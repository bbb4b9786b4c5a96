#!/usr/bin/env bash
# How the merge scales with the number of cells: a synthetic experiment of
# REPEATS x 10 folds x FAMILIES cells (default 100 x 10 x 10 = 10,000: the
# demo's 2,000 parcel records, cheap naive Bayes families), computed by two
# shards, then merged.
# Prints the time and peak memory of the shards and of the merge, and the
# size of the cell files.
set -euo pipefail
cd "$(dirname "$0")/.."
cargo build --release --quiet
candor="${CARGO_TARGET_DIR:-$PWD/target}/release/candor"
families="${FAMILIES:-10}"
repeats="${REPEATS:-100}"
work="$(mktemp -d)"
trap 'rm -rf "$work"' EXIT
cd "$work"
"$candor" demo --rows 2000 >/dev/null
{
    cat <<TOML
name = "merge_scale"
calibrators = ["none", "platt"]
metrics = ["brier", "ece"]
[evaluation]
outer_folds = 10
repeats = $repeats
inner_folds = 2
bootstrap = 0
[[dataset]]
name = "parcels"
path = "parcels.csv"
target = "late"
positive = "yes"
TOML
    for f in $(seq "$families"); do
        printf '[[family]]\nname = "nb%s"\nkind = "naive_bayes"\nparams = { variance_floor = %s }\n' "$f" "1e-$f"
    done
} >m.toml
for s in 1 2; do
    /usr/bin/time -f "shard $s/2: %e s, peak %M KB" "$candor" run m.toml --out out --shard "$s/2" -q
done
echo "cell files: $(find out/cells -name '*.json' | wc -l), $(du -sh out/cells | cut -f1) on disk"
/usr/bin/time -f "merge (with the report): %e s, peak %M KB" "$candor" merge out -q
/usr/bin/time -f "of which the report alone: %e s" "$candor" report out >/dev/null
echo "records.jsonl: $(du -h out/records.jsonl | cut -f1)"
