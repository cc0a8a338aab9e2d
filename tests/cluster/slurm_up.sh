#!/usr/bin/env bash
# Bring up a single-node Slurm cluster for the tests, from Debian's packages.
#
#   tests/cluster/slurm_up.sh DIR
#
# Everything lives under DIR: slurm.conf (point SLURM_CONF at DIR/etc/slurm.conf),
# the munge key and socket, a MariaDB data directory for job accounting,
# the daemons' state, spool and logs, and DIR/run/*.pid, the process ids of
# the five daemons (mariadbd, munged, slurmdbd, slurmctld, slurmd) that
# tests/cluster/slurm_down.sh DIR stops.  The node is this host
# (`hostname -s`), all addresses are 127.0.0.1, processes are tracked
# without cgroups (proctrack/linuxproc, task/none).  The script returns
# when the node is idle, or fails (exit 1) naming the daemon and its log.
# Missing packages are installed with apt-get (needs root).
set -euo pipefail

DIR="${1:?usage: slurm_up.sh DIR (a scratch directory for the cluster)}"
mkdir -p "$DIR/log"
DIR="$(cd "$DIR" && pwd)"
TIMEOUT_S="${SLURM_UP_TIMEOUT_S:-60}"
CLUSTER=mdsimtest
NODE="$(hostname -s)"
START_S=$SECONDS

step() {  # a line per step, with the seconds since the start, in DIR/log/up.log
    echo "$((SECONDS - START_S)) s: $1" >>"$DIR/log/up.log"
}

fail() {
    step "failed: $1"
    echo "slurm_up: $1 ($((SECONDS - START_S)) s after the start; logs in $DIR/log)" >&2
    if [ -n "${2:-}" ] && [ -f "$2" ]; then
        echo "--- last lines of $2:" >&2
        tail -n 20 "$2" >&2
    fi
    exit 1
}

# -- packages ------------------------------------------------------------------------
PACKAGES="slurmctld slurmd slurm-client munge slurmdbd mariadb-server"
need_install=0
for exe in slurmctld slurmd slurmdbd sbatch sacctmgr munged mariadbd mariadb-install-db; do
    PATH="$PATH:/usr/sbin:/sbin" command -v "$exe" >/dev/null 2>&1 || need_install=1
done
if [ "$need_install" = 1 ]; then
    [ "$(id -u)" = 0 ] || fail "Slurm's packages are missing and this is not root: install $PACKAGES"
    echo "slurm_up: installing $PACKAGES" >&2
    export DEBIAN_FRONTEND=noninteractive
    apt-get update -qq >"$DIR/apt.log" 2>&1 || fail "apt-get update failed" "$DIR/apt.log"
    apt-get install -y -qq $PACKAGES >>"$DIR/apt.log" 2>&1 \
        || fail "apt-get install $PACKAGES failed" "$DIR/apt.log"
fi
export PATH="$PATH:/usr/sbin:/sbin"

mkdir -p "$DIR"/{etc,run,log,state,spool,munge,db}
step "packages present"
chmod 0755 "$DIR" "$DIR/run" "$DIR/munge"

# -- free TCP ports on 127.0.0.1: controller, node daemon, accounting daemon, database ---
free_port() {  # a port in 20000-59999 that nothing on 127.0.0.1 listens on, not in $TAKEN
    local p
    while :; do
        p=$((20000 + (RANDOM * 32768 + RANDOM) % 40000))
        case " $TAKEN " in *" $p "*) continue ;; esac
        if ! (exec 3<>"/dev/tcp/127.0.0.1/$p") 2>/dev/null; then
            TAKEN="$TAKEN $p"
            echo "$p"
            return
        fi
    done
}
TAKEN=""
P_CTLD=$(free_port); TAKEN="$TAKEN $P_CTLD"
P_SLURMD=$(free_port); TAKEN="$TAKEN $P_SLURMD"
P_DBD=$(free_port); TAKEN="$TAKEN $P_DBD"
P_SQL=$(free_port)
step "ports $P_CTLD $P_SLURMD $P_DBD $P_SQL"

MUNGE_SOCKET="$DIR/munge/munge.socket"
SQL_SOCKET="$DIR/run/mysqld.sock"

# -- MariaDB with its own data directory ----------------------------------------------
if [ ! -d "$DIR/db/mysql" ]; then
    timeout 120 mariadb-install-db --no-defaults --datadir="$DIR/db" --user="$(id -un)" \
        --auth-root-authentication-method=normal --skip-test-db --skip-name-resolve \
        >"$DIR/log/mariadb-install.log" 2>&1 \
        || fail "mariadb-install-db failed" "$DIR/log/mariadb-install.log"
fi
step "database directory made"
setsid mariadbd --no-defaults --datadir="$DIR/db" --socket="$SQL_SOCKET" \
    --bind-address=127.0.0.1 --port="$P_SQL" --pid-file="$DIR/run/mariadbd.pid" \
    --log-error="$DIR/log/mariadbd.log" --user="$(id -un)" --skip-name-resolve \
    --innodb-buffer-pool-size=64M --innodb-log-file-size=16M --innodb-lock-wait-timeout=900 </dev/null >/dev/null 2>&1 &
echo $! >"$DIR/run/mariadbd.pid.launch"

# -- munge with its own key -------------------------------------------------------------
if [ ! -f "$DIR/munge/munge.key" ]; then
    dd if=/dev/urandom of="$DIR/munge/munge.key" bs=1024 count=1 status=none
fi
chmod 0400 "$DIR/munge/munge.key"
step "mariadbd started"
timeout 30 munged --force --key-file="$DIR/munge/munge.key" --socket="$MUNGE_SOCKET" \
    --pid-file="$DIR/run/munged.pid" --log-file="$DIR/log/munged.log" \
    --seed-file="$DIR/munge/munge.seed" >"$DIR/log/munged.start.log" 2>&1 \
    || fail "munged did not start" "$DIR/log/munged.start.log"
for _ in $(seq 50); do
    if munge -S "$MUNGE_SOCKET" -n 2>/dev/null | unmunge -S "$MUNGE_SOCKET" >/dev/null 2>&1; then
        break
    fi
    sleep 0.1
done
munge -S "$MUNGE_SOCKET" -n | unmunge -S "$MUNGE_SOCKET" >/dev/null 2>&1 \
    || fail "munge does not answer on $MUNGE_SOCKET" "$DIR/log/munged.log"
step "munge answers"

# -- wait for the database, make the accounting user ---------------------------------------
until timeout 10 mariadb-admin --no-defaults -S "$SQL_SOCKET" -u root ping >/dev/null 2>&1; do
    [ $((SECONDS - START_S)) -lt "$TIMEOUT_S" ] || fail "MariaDB did not start" "$DIR/log/mariadbd.log"
    kill -0 "$(cat "$DIR/run/mariadbd.pid.launch")" 2>/dev/null \
        || fail "mariadbd exited" "$DIR/log/mariadbd.log"
    sleep 0.2
done
timeout 30 mariadb --no-defaults -S "$SQL_SOCKET" -u root <<'SQL' || fail "could not create the accounting database user"
CREATE USER IF NOT EXISTS 'slurm'@'127.0.0.1' IDENTIFIED BY 'slurm-test';
GRANT ALL ON slurm_acct_db.* TO 'slurm'@'127.0.0.1';
CREATE USER IF NOT EXISTS 'slurm'@'localhost' IDENTIFIED BY 'slurm-test';
GRANT ALL ON slurm_acct_db.* TO 'slurm'@'localhost';
FLUSH PRIVILEGES;
SQL
step "database answers"

# -- configuration ------------------------------------------------------------------------
NODE_LINE="$(slurmd -C | head -n 1)"   # NodeName=... CPUs=... RealMemory=...
case "$NODE_LINE" in NodeName=*) ;; *) fail "slurmd -C printed no node line: $NODE_LINE" ;; esac
MEM_MB="$(sed -n 's/.*RealMemory=\([0-9]*\).*/\1/p' <<<"$NODE_LINE")"
MEM_MB=$(( MEM_MB * 9 / 10 ))  # leave some for the system
NODE_HW="$(sed -e 's/^NodeName=[^ ]* //' -e 's/RealMemory=[0-9]*//' <<<"$NODE_LINE")"
ME="$(id -un)"

cat >"$DIR/etc/slurm.conf" <<CONF
# A single-node test cluster; written by tests/cluster/slurm_up.sh
ClusterName=$CLUSTER
SlurmctldHost=$NODE(127.0.0.1)
SlurmctldPort=$P_CTLD
SlurmdPort=$P_SLURMD
SlurmUser=$ME
SlurmdUser=root
AuthType=auth/munge
AuthInfo=socket=$MUNGE_SOCKET
CredType=cred/munge
StateSaveLocation=$DIR/state
SlurmdSpoolDir=$DIR/spool/slurmd-%n
SlurmctldPidFile=$DIR/run/slurmctld.pid
SlurmdPidFile=$DIR/run/slurmd.pid
SlurmctldLogFile=$DIR/log/slurmctld.log
SlurmdLogFile=$DIR/log/slurmd.log
SlurmctldDebug=info
SlurmdDebug=info
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/slurmdbd
AccountingStorageHost=127.0.0.1
AccountingStoragePort=$P_DBD
AccountingStoragePass=$MUNGE_SOCKET
JobCompType=jobcomp/none
SchedulerType=sched/backfill
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
MpiDefault=none
SwitchType=switch/none
ReturnToService=2
KillWait=5
MinJobAge=600
InactiveLimit=0
SlurmctldTimeout=60
SlurmdTimeout=120
MailProg=/bin/true
NodeName=$NODE NodeAddr=127.0.0.1 NodeHostname=$NODE $NODE_HW RealMemory=$MEM_MB State=UNKNOWN
PartitionName=debug Nodes=$NODE Default=YES MaxTime=INFINITE State=UP
CONF

cat >"$DIR/etc/slurmdbd.conf" <<CONF
# Job accounting for the test cluster; written by tests/cluster/slurm_up.sh
AuthType=auth/munge
AuthInfo=socket=$MUNGE_SOCKET
DbdAddr=127.0.0.1
DbdHost=$NODE
DbdPort=$P_DBD
SlurmUser=$ME
PidFile=$DIR/run/slurmdbd.pid
LogFile=$DIR/log/slurmdbd.log
DebugLevel=info
StorageType=accounting_storage/mysql
StorageHost=127.0.0.1
StoragePort=$P_SQL
StorageUser=slurm
StoragePass=slurm-test
StorageLoc=slurm_acct_db
CONF
chmod 0600 "$DIR/etc/slurmdbd.conf"
export SLURM_CONF="$DIR/etc/slurm.conf"

# -- the Slurm daemons ----------------------------------------------------------------------
timeout 30 slurmdbd >"$DIR/log/slurmdbd.start.log" 2>&1 || fail "slurmdbd did not start" "$DIR/log/slurmdbd.log"
until timeout 20 sacctmgr -i add cluster "$CLUSTER" >"$DIR/log/sacctmgr.log" 2>&1 \
        || grep -q "already exists" "$DIR/log/sacctmgr.log"; do
    [ $((SECONDS - START_S)) -lt "$TIMEOUT_S" ] || fail "slurmdbd does not answer" "$DIR/log/slurmdbd.log"
    sleep 0.3
done
step "slurmdbd answers"
timeout 30 slurmctld >"$DIR/log/slurmctld.start.log" 2>&1 || fail "slurmctld did not start" "$DIR/log/slurmctld.log"
timeout 30 slurmd >"$DIR/log/slurmd.start.log" 2>&1 || fail "slurmd did not start" "$DIR/log/slurmd.log"

until [ "$(timeout 10 sinfo -h -N -n "$NODE" -o %T 2>/dev/null)" = "idle" ]; do
    [ $((SECONDS - START_S)) -lt "$TIMEOUT_S" ] || fail "node $NODE is not idle after ${TIMEOUT_S} s: \
$(sinfo -h -N -o '%T %E' 2>&1)" "$DIR/log/slurmctld.log"
    sleep 0.3
done
step "node idle"
echo "slurm_up: cluster $CLUSTER up in $((SECONDS - START_S)) s; export SLURM_CONF=$SLURM_CONF" >&2
