#!/usr/bin/env bash
# The render-farm check: a one-node Slurm cluster on loopback (munged, slurmctld, slurmd,
# from Debian's packages, installed here when missing), the README's job-array sweep
# (examples/farm/odile_sweep.sbatch) submitted over four tasks, and the same sweep run whole
# for comparison. Run by tests/farm.rs, which checks the tables:
#     tests/farm/run.sh HEFT_BINARY OUTPUT_FOLDER
# writes OUTPUT_FOLDER/sharded (the job array's folder) and OUTPUT_FOLDER/whole.
set -euo pipefail
heft=$1
out=$2
root=$(cd "$(dirname "$0")/../.." && pwd)
work=$(mktemp -d)
cleanup() {
    # Never fails, so the check's own status is what the script exits with: the daemons are
    # stopped, waited for (munged writes its seed file as it exits), then their folder goes.
    set +e
    local stopped=()
    for f in "$work"/slurmd.pid "$work"/slurmctld.pid "$work"/munge/munged.pid; do
        if [ -f "$f" ]; then
            stopped+=("$(cat "$f")")
            kill "$(cat "$f")" 2>/dev/null
        fi
    done
    for p in "${stopped[@]}"; do
        for _ in $(seq 50); do
            kill -0 "$p" 2>/dev/null || break
            sleep 0.1
        done
    done
    rm -rf "$work" 2>/dev/null || true
}
trap cleanup EXIT

if ! command -v slurmctld >/dev/null || ! command -v slurmd >/dev/null || ! command -v munged >/dev/null; then
    if [ "$(id -u)" != 0 ]; then
        echo "farm check: Slurm and munge are missing and this user cannot install them (apt-get needs root)" >&2
        exit 1
    fi
    echo "farm check: installing Slurm and munge from Debian's packages" >&2
    export DEBIAN_FRONTEND=noninteractive
    apt-get install -y -q slurm-wlm munge >/dev/null 2>&1 || {
        apt-get update -q >/dev/null
        apt-get install -y -q slurm-wlm munge >/dev/null
    }
fi

# munge: a key of our own, its socket in the work folder.
mkdir -p "$work/munge"
head -c 1024 /dev/urandom > "$work/munge/munge.key"
chmod 400 "$work/munge/munge.key"
if [ "$(id -u)" = 0 ]; then
    chown -R munge:munge "$work/munge"
    as_munge=(runuser -u munge --)
else
    as_munge=()
fi
chmod 755 "$work"
"${as_munge[@]}" munged --key-file="$work/munge/munge.key" --socket="$work/munge/munge.socket" \
    --pid-file="$work/munge/munged.pid" --log-file="$work/munge/munged.log" --seed-file="$work/munge/seed"

# slurm: one node on loopback, ports picked at random so that two checks do not meet.
port=$((20000 + RANDOM % 20000))
mkdir -p "$work/state" "$work/spool"
cat > "$work/slurm.conf" <<CONF
ClusterName=heftcheck
SlurmctldHost=localhost(127.0.0.1)
SlurmUser=$(id -un)
SlurmdUser=$(id -un)
AuthType=auth/munge
AuthInfo=socket=$work/munge/munge.socket
StateSaveLocation=$work/state
SlurmdSpoolDir=$work/spool
SlurmctldPidFile=$work/slurmctld.pid
SlurmdPidFile=$work/slurmd.pid
SlurmctldPort=$port
SlurmdPort=$((port + 1))
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
ReturnToService=2
SchedulerType=sched/backfill
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
JobCompType=jobcomp/none
AccountingStorageType=accounting_storage/none
MpiDefault=none
NodeName=localhost NodeAddr=127.0.0.1 CPUs=$(nproc) State=UNKNOWN
PartitionName=farm Nodes=localhost Default=YES MaxTime=INFINITE State=UP
CONF
export SLURM_CONF="$work/slurm.conf"
slurmctld -f "$SLURM_CONF" -L "$work/slurmctld.log"
slurmd -f "$SLURM_CONF" -N localhost -L "$work/slurmd.log"
for _ in $(seq 60); do
    if sinfo -h -o %T 2>/dev/null | grep -q idle; then break; fi
    sleep 0.5
done
sinfo -h -o %T | grep -q idle || { echo "farm check: the node did not come up" >&2; cat "$work"/*.log >&2; exit 1; }

# The README's sweep as a job array of four tasks over three points (one task gets none),
# then the same sweep whole.
mkdir -p "$out"
cd "$root"
sbatch --wait --quiet --array=0-3 --cpus-per-task=1 --output="$work/task-%a.log" \
    --export=ALL,HEFT="$heft",OUT="$out/sharded",SPEEDS=3,DEPTHS=1 \
    examples/farm/odile_sweep.sbatch || {
    echo "farm check: the job array failed" >&2
    cat "$work"/task-*.log >&2 || true
    exit 1
}
"$heft" sweep graphs/jump.graph --quiet \
    --vary "odile.takeoff_speed=2.2..2.6 m/s:3" --vary "odile.crouch_depth=25..35 cm:1" \
    --out "$out/whole"
