#!/usr/bin/env bash
# Runs the shipped Slurm templates on a real, single-node Slurm cluster on
# this machine, and checks that the merged results are byte-identical to a
# single run.
#
# Installs Debian's slurm-wlm and munge (needs root and apt), writes a
# minimal slurm.conf for this host, starts munged, slurmctld and slurmd,
# submits deploy/slurm/submit.sh for experiments/quickstart.toml with
# SHARDS (default 3) array tasks plus the dependent merge job, waits for
# both, runs the quickstart on one machine, and compares records.jsonl,
# summary.csv, run.json and every report file. Leaves the daemons running
# (stop them with: pkill slurmd; pkill slurmctld; pkill munged).
set -euo pipefail
cd "$(dirname "$0")/.."
repo="$PWD"
shards="${SHARDS:-3}"

if ! command -v slurmctld >/dev/null || ! command -v munged >/dev/null; then
    export DEBIAN_FRONTEND=noninteractive
    apt-get update -qq
    apt-get install -y -qq slurm-wlm munge >/dev/null
fi

cargo build --release --quiet
candor="${CARGO_TARGET_DIR:-$repo/target}/release/candor"

# munge: a key and the daemon.
install -d -o munge -g munge -m 0700 /etc/munge /var/lib/munge /var/log/munge
install -d -o munge -g munge -m 0755 /run/munge
if [ ! -s /etc/munge/munge.key ]; then
    dd if=/dev/urandom of=/etc/munge/munge.key bs=1024 count=1 status=none
fi
chown munge:munge /etc/munge/munge.key
chmod 0400 /etc/munge/munge.key
if ! pgrep -x munged >/dev/null; then
    runuser -u munge -- /usr/sbin/munged
fi

# slurm.conf for one node: this host, its CPUs and memory as slurmd sees
# them; processes tracked without cgroups, no accounting database.
host="$(hostname -s)"
node="$(slurmd -C | head -1 | sed "s/^NodeName=[^ ]*/NodeName=$host/")"
install -d /etc/slurm /var/spool/slurmctld /var/spool/slurmd /var/log/slurm
cat >/etc/slurm/slurm.conf <<CONF
ClusterName=candor-local
SlurmctldHost=$host
AuthType=auth/munge
SlurmUser=root
StateSaveLocation=/var/spool/slurmctld
SlurmdSpoolDir=/var/spool/slurmd
SlurmctldPidFile=/run/slurmctld.pid
SlurmdPidFile=/run/slurmd.pid
SlurmctldLogFile=/var/log/slurm/slurmctld.log
SlurmdLogFile=/var/log/slurm/slurmd.log
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
SchedulerType=sched/backfill
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
ReturnToService=2
MinJobAge=600
MpiDefault=none
$node State=UNKNOWN
PartitionName=local Nodes=$host Default=YES MaxTime=INFINITE State=UP
CONF
pgrep -x slurmctld >/dev/null || slurmctld
for _ in $(seq 30); do
    scontrol ping 2>/dev/null | grep -q UP && break
    sleep 1
done
pgrep -x slurmd >/dev/null || slurmd
for _ in $(seq 60); do
    state="$(sinfo -h -N -o %t 2>/dev/null | head -1 || true)"
    [ "$state" = idle ] && break
    [ "$state" = down ] || [ "$state" = "down*" ] && scontrol update nodename="$host" state=resume || true
    sleep 1
done
sinfo

# The array and the merge, as a user of deploy/ would submit them.
work="$(mktemp -d /tmp/candor-slurm.XXXXXX)"
cd "$work"
CANDOR="$candor" "$repo/deploy/slurm/submit.sh" "$repo/experiments/quickstart.toml" "$work/sharded" "$shards" | tee submit.txt
merge_job="$(sed -n 's/.*merge: job \([0-9]*\).*/\1/p' submit.txt)"
start=$(date +%s)
while squeue -h -j "$merge_job" 2>/dev/null | grep -q .; do
    sleep 2
    if [ $(( $(date +%s) - start )) -gt 1800 ]; then
        echo "the merge job did not finish within 30 minutes" >&2
        exit 1
    fi
done
echo "jobs done after $(( $(date +%s) - start )) s; their states:"
scontrol show job "$merge_job" | grep -o 'JobState=[A-Z]*' | sed "s/^/  merge $merge_job: /"
for f in candor-shard-*.out candor-merge-*.out; do
    echo "--- $f"
    cat "$f"
done

# One machine, the same manifest.
"$candor" run "$repo/experiments/quickstart.toml" --out "$work/single" --quiet
compare() {
    (cd "$1" && { ls records.jsonl summary.csv run.json; find report -type f; } | sort | xargs sha256sum)
}
if diff <(compare "$work/single") <(compare "$work/sharded") >/dev/null; then
    echo "identical: records.jsonl, summary.csv, run.json and $(find "$work/single/report" -type f | wc -l) report files of $shards Slurm shards + merge and of a single run"
    cat "$work/sharded/shards/balance.md"
else
    diff <(compare "$work/single") <(compare "$work/sharded") >&2 || true
    echo "the merged results differ from a single run" >&2
    exit 1
fi
