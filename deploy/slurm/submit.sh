#!/bin/bash
# Queues a sharded candor run on Slurm: a job array of SHARDS tasks, then
# the merge, which starts only if every task succeeded.
#
#   deploy/slurm/submit.sh MANIFEST RESULTS SHARDS
#
# CANDOR (default: `candor` on the PATH of the compute nodes) names the
# binary. Extra sbatch options (partition, account) can go in SBATCH_*
# environment variables, which sbatch reads itself.
set -euo pipefail
if [ $# -ne 3 ]; then
    echo "usage: $0 MANIFEST RESULTS SHARDS" >&2
    exit 2
fi
manifest="$(realpath "$1")"
results="$(realpath -m "$2")"
shards="$3"
here="$(cd "$(dirname "$0")" && pwd)"
export MANIFEST="$manifest" RESULTS="$results" CANDOR="${CANDOR:-candor}"

array=$(sbatch --parsable --array="1-$shards" --export=ALL "$here/candor-shards.sbatch")
merge=$(sbatch --parsable --dependency="afterok:$array" --kill-on-invalid-dep=yes \
    --export=ALL "$here/candor-merge.sbatch")
echo "shards: job array $array ($shards tasks); merge: job $merge (after every shard succeeds)"
echo "results: $results"
echo "if shard I fails: SHARD=I/$shards sbatch --export=ALL $here/candor-shards.sbatch, then sbatch --export=ALL $here/candor-merge.sbatch"
