#!/usr/bin/env bash
# A real single-node Slurm cluster on loopback (Debian's slurm-wlm and munge), used to run
# `heft batch` as a 2-task job array plus the gather step, and to check that the merged
# table equals an unsharded run's (planet rows, run folders aside).
#
#   scripts/slurm-loopback.sh            # needs root (daemons) and slurm-wlm installed
#
# The binary is $HEFT if set, else target/release/heft. Everything lives in a temporary
# folder; the daemons are stopped on exit.
set -euo pipefail
cd "$(dirname "$0")/.."
repo=$PWD
heft=${HEFT:-$repo/target/release/heft}
for cmd in slurmctld slurmd munged sbatch; do
    command -v "$cmd" > /dev/null || { echo "$cmd not found: apt-get install slurm-wlm" >&2; exit 2; }
done
[ -x "$heft" ] || { echo "no heft binary at $heft (set HEFT)" >&2; exit 2; }
work=$(mktemp -d)
cleanup() {
    for pid in "$work"/slurmd.pid "$work"/slurmctld.pid "$work"/munged.pid; do
        [ -s "$pid" ] && kill "$(cat "$pid")" 2> /dev/null || true
    done
    sleep 1
    rm -rf "$work"
}
trap cleanup EXIT
mkdir -p "$work"/{state,spool,munge,targets}
host=$(hostname -s)

# munge: a fresh key and socket in the work folder.
dd if=/dev/urandom of="$work/munge/munge.key" bs=1024 count=1 status=none
chmod 600 "$work/munge/munge.key"
munged --force --key-file="$work/munge/munge.key" --socket="$work/munge/socket" \
    --pid-file="$work/munged.pid" --log-file="$work/munge/munged.log" \
    --seed-file="$work/munge/seed"
export MUNGE_SOCKET="$work/munge/socket"

cat > "$work/slurm.conf" <<CONF
ClusterName=heftloop
SlurmctldHost=$host(127.0.0.1)
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
AuthInfo=socket=$work/munge/socket
CredType=cred/munge
StateSaveLocation=$work/state
SlurmdSpoolDir=$work/spool
SlurmctldPidFile=$work/slurmctld.pid
SlurmdPidFile=$work/slurmd.pid
SlurmctldLogFile=$work/slurmctld.log
SlurmdLogFile=$work/slurmd.log
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
MpiDefault=none
SchedulerType=sched/backfill
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
ReturnToService=2
NodeName=$host NodeAddr=127.0.0.1 CPUs=$(nproc) State=UNKNOWN
PartitionName=loop Nodes=ALL Default=YES MaxTime=INFINITE State=UP
CONF
export SLURM_CONF="$work/slurm.conf"
slurmctld
slurmd
for _ in $(seq 30); do
    sinfo -h -o %T 2> /dev/null | grep -q idle && break
    sleep 1
done
sinfo -h -o "%P %T %D" | grep -q idle || {
    echo "the loopback cluster did not come up" >&2
    cat "$work/slurmctld.log" "$work/slurmd.log" >&2
    exit 1
}

# Eight invented targets (40 epochs of a sinusoid each) and the job array.
for i in $(seq 0 7); do
    d="$work/targets/t$i"
    mkdir -p "$d"
    python3 - "$d" "$i" <<'PY'
import math, sys
d, i = sys.argv[1], int(sys.argv[2])
p = 3.0 + 0.9 * i
with open(f"{d}/rv.csv", "w") as f:
    f.write("time,rv,rv_err\n")
    for k in range(40):
        t = 2460000.0 + 2.1 * k + 0.3 * math.sin(k)
        f.write(f"{t:.5f},{12.0 * math.sin(2 * math.pi * t / p) + 1.3 * math.cos(2.7 * k):.3f},1.5\n")
with open(f"{d}/target.toml", "w") as f:
    f.write(f'name = "loop {i}"\n[star]\nmass_msun = 1.0\nmass_err_msun = 0.05\n'
            '[[data]]\nfile = "rv.csv"\n[settings]\norbit = "circular"\ntrend = 0\n'
            'max_signals = 1\ndraws = 500\naudit = false\n')
PY
done
cat > "$work/job.sh" <<JOB
#!/usr/bin/env bash
#SBATCH --job-name=heft-batch
#SBATCH --array=1-2
#SBATCH --cpus-per-task=1
#SBATCH --output=$work/job-%a.out
# heft reads SLURM_ARRAY_TASK_ID / _MIN / _COUNT and runs its shard.
"$heft" batch "$work/targets" --threads 1
JOB
sbatch --wait "$work/job.sh"
"$heft" batch "$work/targets" --gather
cp "$work/targets/batch-summary.csv" "$work/sharded.csv"
"$heft" batch "$work/targets" --threads 2 > /dev/null
# Compare without the run_dir column (folders differ between invocations).
strip() { python3 -c 'import csv,sys; rows=list(csv.reader(open(sys.argv[1]))); i=rows[0].index("run_dir"); print("\n".join(",".join(r[:i]+r[i+1:]) for r in rows))' "$1"; }
if [ "$(strip "$work/sharded.csv")" = "$(strip "$work/targets/batch-summary.csv")" ]; then
    echo "slurm job array (2 tasks) + gather = unsharded batch: $(($(wc -l < "$work/sharded.csv") - 1)) rows"
else
    echo "sharded and unsharded tables differ" >&2
    diff <(strip "$work/sharded.csv") <(strip "$work/targets/batch-summary.csv") >&2
    exit 1
fi
