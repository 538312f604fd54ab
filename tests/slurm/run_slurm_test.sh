#!/usr/bin/env bash
# Proves the job-array path on a real Slurm: installs Debian's slurm-wlm and munge, starts a
# one-node cluster on this machine (munged, slurmctld, slurmd on loopback), submits the demo
# catalogue as a 2-task job array whose tasks run `caldera fit --shard`, waits, merges the
# shards and compares the merged tables with an unsharded run, bit for bit.
#
# Usage: tests/slurm/run_slurm_test.sh   (as root; CI runs it)
set -euo pipefail
root="$(cd "$(dirname "$0")/../.." && pwd)"
caldera="$root/target/release/caldera"
[ -x "$caldera" ] || (cd "$root" && cargo build --release --quiet --bin caldera)
# Short chains keep this test quick; the comparison is exact whatever the length. They end
# unconverged, so the outer-halo fallback is off: it would re-run every SIDM fit at 15–20 times
# the cost, and the batch tests already check that fallen-back fits merge bit for bit.
fit_args="--max-steps 1500 --no-figures --seed 3 --no-halo-fallback"

if ! command -v slurmctld >/dev/null || ! command -v munged >/dev/null; then
  export DEBIAN_FRONTEND=noninteractive
  apt-get install -y -q slurm-wlm munge >/dev/null \
    || { apt-get update -q >/dev/null && apt-get install -y -q slurm-wlm munge >/dev/null; }
fi

work="$(mktemp -d /tmp/caldera-slurm.XXXXXX)"
chmod 755 "$work"
state="$work/slurm"
mkdir -p "$state/state" "$state/spool" "$state/log" /etc/slurm /run/munge /var/log/munge /var/lib/munge /etc/munge
host="$(hostname -s)"

cleanup() {
  [ -f "$state/slurmd.pid" ] && kill "$(cat "$state/slurmd.pid")" 2>/dev/null || true
  [ -f "$state/slurmctld.pid" ] && kill "$(cat "$state/slurmctld.pid")" 2>/dev/null || true
  [ -f "$work/munged.pid" ] && kill "$(cat "$work/munged.pid")" 2>/dev/null || true
}
trap cleanup EXIT

# munge: a fresh key and a daemon on its own socket.
dd if=/dev/urandom bs=1 count=1024 of=/etc/munge/munge.key 2>/dev/null
chown -R munge:munge /etc/munge /run/munge /var/log/munge /var/lib/munge 2>/dev/null || true
chmod 400 /etc/munge/munge.key
chmod 700 /etc/munge
if [ -x /usr/sbin/munged ]; then munged_bin=/usr/sbin/munged; else munged_bin="$(command -v munged)"; fi
sudo_munge() { if id munge >/dev/null 2>&1; then su -s /bin/sh munge -c "$*"; else sh -c "$*"; fi; }
sudo_munge "$munged_bin --pid-file=$work/munged.pid.tmp" || "$munged_bin" --force
sleep 1
cp "$work/munged.pid.tmp" "$work/munged.pid" 2>/dev/null || pgrep -n munged > "$work/munged.pid"
munge -n | unmunge >/dev/null

cpus="$(nproc)"
cat > /etc/slurm/slurm.conf <<CONF
ClusterName=caldera-ci
SlurmctldHost=$host(127.0.0.1)
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
CredType=cred/munge
StateSaveLocation=$state/state
SlurmdSpoolDir=$state/spool
SlurmctldPidFile=$state/slurmctld.pid
SlurmdPidFile=$state/slurmd.pid
SlurmctldLogFile=$state/log/slurmctld.log
SlurmdLogFile=$state/log/slurmd.log
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
SchedulerType=sched/backfill
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
ReturnToService=2
MpiDefault=none
NodeName=$host NodeAddr=127.0.0.1 CPUs=$cpus State=UNKNOWN
PartitionName=ci Nodes=$host Default=YES MaxTime=INFINITE State=UP
CONF
# The default cgroup configuration is used (auto-detected); no cgroup.conf is written.
rm -f /etc/slurm/cgroup.conf

slurmctld -i
slurmd
for _ in $(seq 1 60); do
  if sinfo -h -o '%T' 2>/dev/null | grep -qE 'idle|mixed'; then break; fi
  sleep 1
done
sinfo

# Submit the catalogue as a 2-task array.
cd "$work"
cp -r "$root/demo_galaxies" "$work/demo_galaxies"
job="$(CALDERA="$caldera" CATALOGUE="$work/demo_galaxies" OUT="$work/shards" EXTRA_ARGS="$fit_args" \
  sbatch --parsable --array=1-2 --export=ALL "$root/tests/slurm/caldera_array.sbatch")"
echo "submitted job array $job"
for _ in $(seq 1 900); do
  [ -z "$(squeue -h -j "$job" 2>/dev/null)" ] && break
  sleep 2
done
[ -z "$(squeue -h -j "$job" 2>/dev/null)" ] || { echo "job array did not finish"; squeue; exit 1; }
cat "$work"/caldera-*.log || true
for k in 1 2; do
  [ -f "$work/shards/$k/results.csv" ] || { echo "task $k produced no results"; cat "$state/log/slurmd.log"; exit 1; }
done

"$caldera" --quiet merge "$work/shards/1" "$work/shards/2" --out "$work/merged"
# shellcheck disable=SC2086
"$caldera" --quiet fit "$work/demo_galaxies" --models sidm,nfw --out "$work/whole" $fit_args
for file in results.csv results.ecsv results.tex session.ron; do
  cmp "$work/merged/$file" "$work/whole/$file"
done
diff -r "$work/merged/galaxies" "$work/whole/galaxies"
echo "Slurm job array: merged shards equal the unsharded run, bit for bit"
