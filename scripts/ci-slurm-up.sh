#!/usr/bin/env bash
# Start a single-node Slurm for the CI test tests/it/slurm.rs (run as root, no systemd and no
# cgroups): a munge key, a configuration and spool in a temp folder, slurmctld and slurmd
# started directly. Prints the path of slurm.conf; export it as SLURM_CONF.
set -euo pipefail
dir=$(mktemp -d /tmp/stemcast-slurm.XXXXXX)
chmod 755 "$dir"
mkdir -p "$dir/state" "$dir/spool"
host=$(hostname -s)

# munge: a key if the package did not make one, its socket folder, the daemon as user munge.
if [ ! -s /etc/munge/munge.key ]; then
  if command -v mungekey >/dev/null 2>&1; then mungekey --create --force >/dev/null 2>&1 || true; fi
  [ -s /etc/munge/munge.key ] || dd if=/dev/urandom of=/etc/munge/munge.key bs=1024 count=1 2>/dev/null
fi
chown munge:munge /etc/munge/munge.key && chmod 400 /etc/munge/munge.key
mkdir -p /run/munge /var/log/munge /var/lib/munge
chown munge:munge /run/munge /var/log/munge /var/lib/munge
if ! munge -n >/dev/null 2>&1; then
  runuser -u munge -- /usr/sbin/munged
fi

cat > "$dir/slurm.conf" <<CONF
ClusterName=stemcast
SlurmctldHost=$host
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
CredType=cred/munge
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
SchedulerType=sched/builtin
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
MpiDefault=none
ReturnToService=2
StateSaveLocation=$dir/state
SlurmdSpoolDir=$dir/spool
SlurmctldPidFile=$dir/slurmctld.pid
SlurmdPidFile=$dir/slurmd.pid
SlurmctldLogFile=$dir/slurmctld.log
SlurmdLogFile=$dir/slurmd.log
NodeName=$host CPUs=$(nproc) State=UNKNOWN
PartitionName=ci Nodes=ALL Default=YES MaxTime=INFINITE State=UP
CONF
export SLURM_CONF="$dir/slurm.conf"
/usr/sbin/slurmctld -f "$SLURM_CONF"
/usr/sbin/slurmd -f "$SLURM_CONF"
for _ in $(seq 1 60); do
  if sinfo -h -o %T 2>/dev/null | grep -q idle; then
    echo "$SLURM_CONF"
    exit 0
  fi
  sleep 1
done
echo "slurm did not come up; logs in $dir" >&2
cat "$dir/slurmctld.log" "$dir/slurmd.log" >&2 || true
exit 1
