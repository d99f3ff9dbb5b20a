#!/bin/sh
# slurm-test.sh - `eddy2d batch --slurm` on a real single-node Slurm cluster on
# localhost: start munged, slurmctld and slurmd (no systemd: in the background,
# stopped by PID at the end), submit a batch of small cases as a job array with
# its dependent summary job, wait for the queue to empty (sacct needs a
# database, so squeue is polled), and compare the summary with a local batch of
# the same cases.  Prints PASS/FAIL/SKIP lines and "#counts"; exit 1 on failure.
#
# Needs root and Debian's slurm-wlm and munge (installed by .ci/run from
# .ci/debian-packages-norecommends).  Without slurmctld it says SKIP.
# usage: .ci/slurm-test.sh [BUILD_DIR]
set -u
cd "$(dirname "$0")/.."
B=${1:-build}
E="$(pwd)/$B/eddy2d"
. tests/harness.sh
if ! command -v slurmctld >/dev/null 2>&1 || ! command -v munged >/dev/null 2>&1; then
    echo "SKIP slurm test: slurmctld or munged is not installed (CI installs slurm-wlm and munge)"
    finish
fi
if [ "$(id -u)" -ne 0 ]; then
    echo "SKIP slurm test: starting the Slurm daemons needs root"
    finish
fi
[ -x "$E" ] || { ko "slurm test" "$E not built"; finish; }

T=$(mktemp -d /tmp/eddy2d-slurm.XXXXXX)
chmod 755 "$T"
PIDS=""
MUNGE_STARTED=0
cleanup() {
    for p in $PIDS; do
        kill "$p" 2>/dev/null
    done
    for p in $PIDS; do
        for i in 1 2 3 4 5 6 7 8 9 10; do
            kill -0 "$p" 2>/dev/null || break
            sleep 0.5
        done
        kill -9 "$p" 2>/dev/null
    done
    if [ $MUNGE_STARTED -eq 1 ] && [ -s /run/munge/munged.pid ]; then
        kill "$(cat /run/munge/munged.pid)" 2>/dev/null
    fi
    rm -rf "$T"
}
trap cleanup EXIT

# --- munge: its own user, key mode 0400, /run/munge -------------------------
mkdir -p /run/munge /var/log/munge /var/lib/munge
chown munge:munge /run/munge /var/log/munge /var/lib/munge
chmod 0755 /run/munge
if [ ! -s /etc/munge/munge.key ]; then
    mungekey --create --keyfile /etc/munge/munge.key 2>/dev/null ||
        dd if=/dev/urandom of=/etc/munge/munge.key bs=1 count=1024 2>/dev/null
fi
chown munge:munge /etc/munge/munge.key
chmod 0400 /etc/munge/munge.key
if [ -S /run/munge/munge.socket.2 ] && munge -n >/dev/null 2>&1; then
    echo "# munged already running"
else
    runuser -u munge -- /usr/sbin/munged --force || { ko "munged starts" "runuser/munged failed"; finish; }
    MUNGE_STARTED=1
    sleep 0.5
fi
munge -n | unmunge >/dev/null 2>&1 && ok "munged runs as user munge and signs credentials" ||
    { ko "munge" "munge -n | unmunge failed"; finish; }

# --- a one-node cluster on localhost ------------------------------------------
CPUS=$(nproc)
MEM=$(awk '/MemTotal/ {printf "%d", $2 / 1024 * 0.8}' /proc/meminfo)
mkdir -p "$T/etc" "$T/state" "$T/spool"
cat > "$T/etc/slurm.conf" <<EOF
ClusterName=eddyci
SlurmctldHost=localhost
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
StateSaveLocation=$T/state
SlurmdSpoolDir=$T/spool
SlurmctldPidFile=$T/slurmctld.pid
SlurmdPidFile=$T/slurmd.pid
SlurmctldLogFile=$T/slurmctld.log
SlurmdLogFile=$T/slurmd.log
SlurmctldPort=6817
SlurmdPort=6818
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
SchedulerType=sched/backfill
SelectType=select/cons_tres
SelectTypeParameters=CR_CPU
ReturnToService=2
MpiDefault=none
SlurmctldTimeout=30
SlurmdTimeout=30
NodeName=localhost NodeAddr=127.0.0.1 CPUs=$CPUS RealMemory=$MEM State=UNKNOWN
PartitionName=ci Nodes=localhost Default=YES MaxTime=INFINITE State=UP
EOF
cat > "$T/etc/cgroup.conf" <<EOF
CgroupPlugin=cgroup/v1
EOF
export SLURM_CONF="$T/etc/slurm.conf"
t0=$(date +%s)
slurmctld -D -c -f "$SLURM_CONF" > "$T/slurmctld.out" 2>&1 &
PIDS="$PIDS $!"
slurmd -D -f "$SLURM_CONF" > "$T/slurmd.out" 2>&1 &
PIDS="$PIDS $!"
up=0
for i in $(seq 1 60); do
    state=$(sinfo -h -o %t 2>/dev/null | head -n 1)
    case $state in idle*) up=1; break ;; esac
    sleep 0.5
done
if [ $up -eq 1 ]; then
    ok "a one-node cluster comes up ($(($(date +%s) - t0)) s)"
else
    ko "cluster up" "node state '$state'; $(tail -5 "$T/slurmctld.log" "$T/slurmd.log" 2>&1)"
    finish
fi

# --- the same cases locally and as a job array --------------------------------
mkdir -p "$T/in"
for k in 1 2 3; do
    cat > "$T/in/c$k.json" <<JSON
{"name":"c$k","length_unit":"mm","domain":{"x":[0,40],"y":[-60,60],"x_boundary":"periodic"},
 "regions":[{"name":"plate","material":"copper_annealed","box":[0,-$((k + 2)),40,0],"moving":true},
            {"name":"n","material":"ndfeb_35","box":[1,3,19,9],"magnetization_angle":90},
            {"name":"s","material":"ndfeb_35","box":[21,3,39,9],"magnetization_angle":-90}],
 "speeds":[1,5,25]}
JSON
done
# one file with two variants: four array tasks in all
cat > "$T/in/v.json" <<'JSON'
{"name":"v","length_unit":"mm","domain":{"x":[0,40],"y":[-60,60],"x_boundary":"periodic"},
 "regions":[{"name":"plate","material":"aluminium_6061_t6","box":[0,-5,40,0],"moving":true},
            {"name":"n","material":"ndfeb_35","box":[1,3,19,9],"magnetization_angle":90},
            {"name":"s","material":"ndfeb_35","box":[21,3,39,9],"magnetization_angle":-90}],
 "speeds":[2,20], "variants":{"regions.n.box.1":[3,4]}}
JSON
"$E" batch "$T/in" -o "$T/local" -q
[ $? -eq 0 ] && ok "local batch of 5 cases" || ko "local batch" "failed"
t0=$(date +%s)
"$E" batch "$T/in" -o "$T/array" --slurm --case-timeout 300 > "$T/submit.out" 2>&1
rc=$?
if [ $rc -eq 0 ] && grep -q "array job [0-9]*, summary job [0-9]*" "$T/submit.out"; then
    ok "--slurm submits the array and the summary job ($(grep -o 'array job.*' "$T/submit.out"))"
else
    ko "--slurm submission" "exit $rc: $(cat "$T/submit.out")"
    finish
fi
empty=0
for i in $(seq 1 240); do
    if [ -z "$(squeue -h 2>/dev/null)" ]; then
        empty=1
        break
    fi
    sleep 0.5
done
t1=$(date +%s)
[ $empty -eq 1 ] && ok "the queue empties ($((t1 - t0)) s for 5 tasks and the summary)" ||
    ko "queue" "still running after 120 s: $(squeue 2>&1)"
n=$(ls "$T"/array/*/input.hash 2>/dev/null | wc -l)
[ "$n" -eq 5 ] && ok "every array task finished its case (5 completion markers)" ||
    ko "array tasks" "$n of 5; $(cat "$T"/array/slurm/*.out 2>/dev/null | tail -5)"
strip() { cut -d, -f1,3- "$1" | sed 's/,[^,]*$//'; } # no source column, no seconds
if [ -s "$T/array/summary.csv" ] && strip "$T/local/summary.csv" > "$T/l.csv" &&
    strip "$T/array/summary.csv" > "$T/a.csv" && cmp -s "$T/l.csv" "$T/a.csv"; then
    ok "the summary job's summary equals the local batch's, number for number"
else
    ko "summary" "$(diff "$T/l.csv" "$T/a.csv" 2>&1 | head -5); $(cat "$T/array/slurm/summary.out" 2>&1)"
fi
grep -q "5 cases: 5 ok" "$T/array/summary.html" && ok "summary.html of the Slurm run: 5 ok" ||
    ko "summary.html" "$(grep -o '<p id="counts">[^<]*' "$T/array/summary.html" 2>&1)"
# resubmitting a finished batch submits nothing
"$E" batch "$T/in" -o "$T/array" --slurm > "$T/resubmit.out" 2>&1
grep -q "nothing to submit" "$T/resubmit.out" && ok "a finished batch is not submitted again" ||
    ko "resubmission" "$(cat "$T/resubmit.out")"
finish
