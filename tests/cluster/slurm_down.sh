#!/usr/bin/env bash
# Stop the test cluster that tests/cluster/slurm_up.sh DIR started.
#
#   tests/cluster/slurm_down.sh DIR
#
# Cancels the cluster's jobs, then stops each daemon by the process id it
# recorded under DIR/run (slurmd, slurmctld, slurmdbd, mariadbd, munged):
# SIGTERM, and SIGKILL after 10 s.  A pid file whose process is gone, or
# now belongs to another program, is skipped.  Nothing else is touched.
set -uo pipefail

DIR="${1:?usage: slurm_down.sh DIR (the directory given to slurm_up.sh)}"
export PATH="$PATH:/usr/sbin:/sbin"
if [ -f "$DIR/etc/slurm.conf" ] && [ -f "$DIR/run/slurmctld.pid" ]; then
    export SLURM_CONF="$DIR/etc/slurm.conf"
    timeout 10 scancel --quiet --full --state=RUNNING --signal=KILL "--user=$(id -un)" 2>/dev/null
    timeout 10 scancel --quiet "--user=$(id -un)" 2>/dev/null
    for _ in $(seq 30); do   # let the job steps end while slurmd still runs
        [ -z "$(timeout 5 squeue -h -t running,completing -o %i 2>/dev/null)" ] && break
        sleep 0.3
    done
fi

stop() {  # stop NAME PIDFILE: the process in PIDFILE, if it is still NAME
    local name="$1" file="$2" pid comm
    [ -f "$file" ] || return 0
    pid="$(tr -dc 0-9 <"$file")"
    [ -n "$pid" ] || return 0
    comm="$(cat "/proc/$pid/comm" 2>/dev/null)" || return 0
    [ "$comm" = "$name" ] || return 0
    kill -TERM "$pid" 2>/dev/null
    for _ in $(seq 100); do
        kill -0 "$pid" 2>/dev/null || return 0
        sleep 0.1
    done
    echo "slurm_down: $name ($pid) ignored SIGTERM for 10 s; sending SIGKILL" >&2
    kill -KILL "$pid" 2>/dev/null
    return 0
}

stop slurmd "$DIR/run/slurmd.pid"
stop slurmctld "$DIR/run/slurmctld.pid"
stop slurmdbd "$DIR/run/slurmdbd.pid"
stop mariadbd "$DIR/run/mariadbd.pid"
stop mariadbd "$DIR/run/mariadbd.pid.launch"
stop munged "$DIR/run/munged.pid"
echo "slurm_down: stopped the daemons recorded in $DIR/run" >&2
exit 0
