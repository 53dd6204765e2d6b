#!/usr/bin/env bash
# End-to-end test of deploy/slurm on a one-node Slurm cluster of its own (run by .ci/run after
# cargo test): installs Debian's slurmctld, slurmd, slurm-client and munge when missing, writes the
# cluster's configuration into a temporary folder, starts munged, slurmctld and slurmd, and then
#   1. runs a generated lot (42 devices × 3 conditions, failing limits and one corrupt record)
#      unsharded, as the reference;
#   2. submits it with deploy/slurm/submit.sh as an array of 4 tasks plus the merge job, waits for
#      the merge, and checks the merged report is byte-identical to the reference;
#   3. submits it again with task 3 held back (SPURLINE_TEST_PAUSE), cancels that task while it
#      runs, checks the merge job was cancelled and what status and merge say, resubmits only that
#      task (submit.sh --resume), and checks the merged report again;
#   4. stops the daemons it started (munged last) and removes its temporary files, from an EXIT trap,
#      so also when a step fails.
# One line per step. Exit status: 0 pass, 1 a check failed, 3 this environment cannot run the
# daemons (not root, or the packages cannot be installed), which .ci/run reports as a failure.
# SPURLINE names the spurline binary (default: built here with cargo's test profile).
set -uo pipefail

EXIT_CANNOT_RUN=3
t0=$(date +%s.%N)
say() { printf 'slurm: %s [%s s]\n' "$*" "$(awk -v a="$t0" -v b="$(date +%s.%N)" 'BEGIN { printf "%.1f", b - a }')"; }
fail() { echo "slurm: FAIL: $*" >&2; exit 1; }

if [ "$(id -u)" -ne 0 ]; then
  echo "slurm: cannot run here: starting munged, slurmctld and slurmd needs root (uid $(id -u))" >&2
  exit $EXIT_CANNOT_RUN
fi
repo=$(cd "$(dirname "$0")/../.." && pwd)
deploy=$repo/deploy/slurm

# ── packages ──
if ! command -v slurmctld >/dev/null || ! command -v slurmd >/dev/null || ! command -v sbatch >/dev/null \
  || ! command -v munged >/dev/null; then
  echo "slurm: installing slurmctld slurmd slurm-client munge (Debian packages)"
  export DEBIAN_FRONTEND=noninteractive
  if ! { apt-get update -qq && apt-get install -y -qq --no-install-recommends \
    slurmctld slurmd slurm-client munge >/dev/null; }; then
    echo "slurm: cannot run here: the Slurm and munge packages could not be installed" >&2
    exit $EXIT_CANNOT_RUN
  fi
fi

# ── the spurline binary ──
if [ -z "${SPURLINE:-}" ]; then
  (cd "$repo" && cargo build --locked --quiet --profile test --bin spurline) || fail "cargo build"
  SPURLINE=${CARGO_TARGET_DIR:-$repo/target}/debug/spurline
fi
[ -x "$SPURLINE" ] || fail "no spurline binary at $SPURLINE"
export SPURLINE

work=$(mktemp -d /tmp/spurline-slurm.XXXXXX) || fail "mktemp"
chmod 755 "$work"
B=$work/slurm
ctld_pid="" slurmd_pid="" munged_pid=""

stop_all() {
  local rc=$?
  trap - EXIT
  if [ -n "$ctld_pid" ]; then
    # Our cluster's jobs only: its controller is ours.
    scancel --quiet --user=root 2>/dev/null
    for _ in $(seq 50); do
      squeue -h 2>/dev/null | grep -q . || break
      sleep 0.2
    done
    scontrol shutdown >/dev/null 2>&1
  fi
  for pid in $ctld_pid $slurmd_pid; do
    for _ in $(seq 75); do kill -0 "$pid" 2>/dev/null || break; sleep 0.2; done
    kill -0 "$pid" 2>/dev/null && kill -TERM "$pid" 2>/dev/null
  done
  # munge last: the Slurm commands above need it.
  if [ -n "$munged_pid" ]; then
    kill -TERM "$munged_pid" 2>/dev/null
    for _ in $(seq 25); do kill -0 "$munged_pid" 2>/dev/null || break; sleep 0.2; done
  fi
  if [ "$rc" -ne 0 ] && [ -d "$B/log" ]; then
    echo "slurm: logs of the failed run:" >&2
    tail -n 20 "$B"/log/*.log "$work"/out*/logs/* >&2 2>/dev/null
  fi
  rm -rf "$work"
  say "step 4: daemons stopped (munged last), temporary files removed; exit status $rc"
  exit "$rc"
}
trap stop_all EXIT
trap 'exit 1' INT TERM

# ── cluster ──
mkdir -p "$B/munge" "$B/state" "$B/spool" "$B/run" "$B/log"
chmod 755 "$B" "$B/munge" # munge's socket folder must be world-executable
dd if=/dev/urandom of="$B/munge/munge.key" bs=1024 count=1 status=none
chmod 400 "$B/munge/munge.key"
munged --key-file="$B/munge/munge.key" --socket="$B/munge/munge.socket.2" \
  --log-file="$B/munge/munged.log" --pid-file="$B/munge/munged.pid" \
  --seed-file="$B/munge/munged.seed" || fail "munged did not start"
munged_pid=$(cat "$B/munge/munged.pid")

free_port() { ! ss -Htln "sport = :$1" | grep -q .; }
ctld_port=6817 slurmd_port=6818
if ! free_port $ctld_port || ! free_port $slurmd_port; then
  for p in $(seq 16817 2 16899); do
    if free_port "$p" && free_port $((p + 1)); then ctld_port=$p slurmd_port=$((p + 1)); break; fi
  done
fi
host=$(hostname -s)
cat >"$B/slurm.conf" <<CONF
ClusterName=spurlinetest
SlurmctldHost=$host(127.0.0.1)
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
CredType=cred/munge
AuthInfo=socket=$B/munge/munge.socket.2
SlurmctldPort=$ctld_port
SlurmdPort=$slurmd_port
StateSaveLocation=$B/state
SlurmdSpoolDir=$B/spool
SlurmctldPidFile=$B/run/slurmctld.pid
SlurmdPidFile=$B/run/slurmd.pid
SlurmctldLogFile=$B/log/slurmctld.log
SlurmdLogFile=$B/log/slurmd.log
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
JobCompType=jobcomp/filetxt
JobCompLoc=$B/log/jobcomp.txt
SelectType=select/cons_tres
SelectTypeParameters=CR_CPU
SchedulerType=sched/backfill
DependencyParameters=kill_invalid_depend
MpiDefault=none
ReturnToService=2
MailProg=/bin/true
NodeName=$host NodeAddr=127.0.0.1 CPUs=$(nproc) RealMemory=1024 State=UNKNOWN
PartitionName=test Nodes=$host Default=YES MaxTime=INFINITE State=UP
CONF
export SLURM_CONF=$B/slurm.conf
slurmctld -f "$SLURM_CONF" || fail "slurmctld did not start"
for _ in $(seq 50); do [ -s "$B/run/slurmctld.pid" ] && break; sleep 0.1; done
ctld_pid=$(cat "$B/run/slurmctld.pid")
slurmd -f "$SLURM_CONF" || fail "slurmd did not start"
for _ in $(seq 50); do [ -s "$B/run/slurmd.pid" ] && break; sleep 0.1; done
slurmd_pid=$(cat "$B/run/slurmd.pid")
for _ in $(seq 150); do
  [ "$(sinfo -h -o %t 2>/dev/null)" = idle ] && break
  sleep 0.2
done
[ "$(sinfo -h -o %t)" = idle ] || fail "the node did not come up: $(sinfo -h 2>&1)"
say "cluster up: munged, slurmctld (port $ctld_port), slurmd on $host with $(nproc) CPUs ($(sbatch --version))"

# ── step 1: the lot and its reference ──
lot=$work/lot
mkdir -p "$lot"
cat >"$lot/plan.toml" <<'PLAN'
title = "Cluster test lot: simulated 12-bit converters, three inputs"
[converter]
bits = 12
sample_rate_hz = "100M"
format = "i16le"
[analysis]
harmonics = 5
[records]
pattern = "records/{device}/{condition}.bin"
[[condition]]
name = "fin_5M"
fin_hz = "5.1M"
amplitude_dbfs = -1.0
[[condition]]
name = "fin_21M"
fin_hz = "21.3M"
amplitude_dbfs = -1.0
[[condition]]
name = "fin_37M"
fin_hz = "37.7M"
amplitude_dbfs = -1.0
PLAN
cat >"$lot/limits.csv" <<'LIMITS'
condition,metric,low,high,unit,guardband
*,spectrum.snr_db,64,,dB,1
*,spectrum.harmonics.h3.dbc,,-70,dBc,
LIMITS
devices=42
for ((d = 1; d <= devices; d++)); do
  dev=$(printf 'dut%02d' "$d")
  mkdir -p "$lot/records/$dev"
  noise=$(awk -v d="$d" 'BEGIN { printf "%.2f", 0.2 + 0.04 * d }')
  h3=$((-90 + d / 2))
  c=0
  for spec in fin_5M:5.1M fin_21M:21.3M fin_37M:37.7M; do
    c=$((c + 1))
    "$SPURLINE" synth --bits 12 --fs 100M --samples 4096 --layout i16le --amplitude-dbfs -1 \
      --coherent-near "${spec#*:}" --noise-rms "$noise" --harmonic "3:$h3" --seed $((10 * d + c)) \
      --output "$lot/records/$dev/${spec%%:*}.bin" >/dev/null || fail "synth $dev ${spec%%:*}"
  done
done
# One corrupt record: an error row, so the error path goes through the shards too.
printf '\001\002\003' >"$lot/records/dut17/fin_21M.bin"
ref=$work/reference
"$SPURLINE" batch "$lot/plan.toml" --limits "$lot/limits.csv" --plots failures --jobs 2 \
  --out "$ref" >"$work/reference.log" 2>&1
ref_rc=$?
[ "$ref_rc" -eq 2 ] || fail "the reference run exited $ref_rc, not 2 (error row): $(tail -3 "$work/reference.log")"
files=$(find "$ref" -type f | wc -l)
say "step 1: reference: $devices devices × 3 conditions unsharded, exit status $ref_rc, $files files"

# Waits until none of the jobs given is queued or running (at most $2 seconds).
wait_gone() {
  local jobs=$1 limit=$2 start=$SECONDS
  while squeue -h -j "$jobs" 2>/dev/null | grep -q .; do
    [ $((SECONDS - start)) -lt "$limit" ] || fail "jobs $jobs still queued after $limit s: $(squeue -h -j "$jobs")"
    sleep 0.5
  done
}
# A finished job's state and exit code, from the controller (kept for MinJobAge, 300 s).
job_state() { scontrol show job "$1" -o 2>/dev/null | grep -o 'JobState=[A-Z_]* .*ExitCode=[0-9:]*' | sed 's/ .* / /'; }
jobs_of() { sed -n 's/^jobs: //p' "$1"; }
same_report() {
  diff -r "$ref" "$1" >"$work/diff.txt" 2>&1 || fail "$2: the merged report differs from the reference: $(head -5 "$work/diff.txt")"
}

# ── step 2: the array and the merge ──
out=$work/out1
cd "$work" || fail "cd"
"$deploy/submit.sh" --shards 4 "$lot/plan.toml" "$lot/limits.csv" "$out" >"$work/submit1.log" 2>&1 \
  || fail "submit.sh: $(cat "$work/submit1.log")"
read -r array merge_job <<<"$(jobs_of "$work/submit1.log")"
wait_gone "$array,$merge_job" 120
merge_state=$(job_state "$merge_job")
[ "$merge_state" = "JobState=FAILED ExitCode=2:0" ] \
  || fail "merge job $merge_job: '$merge_state', not failed with exit status 2 (the reference's)"
for k in 1 2 3 4; do
  s=$(job_state "${array}_$k")
  [ "$s" = "JobState=COMPLETED ExitCode=0:0" ] || fail "array task $k: '$s'"
done
same_report "$out/lot" "step 2"
say "step 2: array job $array (4 tasks, exit status 0 with failing limits and an error row) and merge job $merge_job (exit status 2, as the reference): merged report identical"

# ── step 3: a task cancelled while it runs, resubmitted alone ──
out=$work/out2
SPURLINE_TEST_PAUSE=3:600 "$deploy/submit.sh" --shards 4 "$lot/plan.toml" "$lot/limits.csv" "$out" \
  >"$work/submit2.log" 2>&1 || fail "submit.sh: $(cat "$work/submit2.log")"
read -r array merge_job <<<"$(jobs_of "$work/submit2.log")"
start=$SECONDS
until [ "$(squeue -h -j "${array}_3" -o %T 2>/dev/null)" = RUNNING ] \
  && grep -q pausing "$out/logs/lot-${array}_3.out" 2>/dev/null; do
  [ $((SECONDS - start)) -lt 120 ] || fail "task 3 of $array never ran: $(squeue -h -j "$array")"
  sleep 0.3
done
# Resuming while the lot's jobs still run is refused.
"$deploy/submit.sh" --resume "$lot/plan.toml" "$lot/limits.csv" "$out" >"$work/early.log" 2>&1
early_rc=$?
[ "$early_rc" -eq 2 ] && grep -q "still queued or running" "$work/early.log" \
  || fail "submit.sh --resume while the array runs: exit status $early_rc: $(cat "$work/early.log")"
scancel "${array}_3" || fail "scancel ${array}_3"
wait_gone "$array,$merge_job" 120
s=$(job_state "${array}_3")
case $s in "JobState=CANCELLED "*) ;; *) fail "task 3 after scancel: '$s'" ;; esac
s=$(job_state "$merge_job")
case $s in "JobState=CANCELLED "*) ;; *) fail "merge job after a task was cancelled: '$s', not cancelled" ;; esac
[ ! -e "$out/lot/summary.csv" ] || fail "a merged report was written although a task was cancelled"
status=$("$SPURLINE" merge --status "$out/shards")
st_rc=$?
[ "$st_rc" -eq 1 ] || fail "merge --status exit status $st_rc, not 1: $status"
grep -q '^3 of 4 shards finished' <<<"$status" || fail "merge --status: $status"
grep -qx 'unfinished shards: 3' <<<"$status" || fail "merge --status: $status"
"$SPURLINE" merge "$work/by-hand" "$out"/shards/{1,2,3,4} >"$work/merge.log" 2>&1
m_rc=$?
[ "$m_rc" -eq 2 ] || fail "merge with shard 3 unfinished exit status $m_rc, not 2"
grep -q "no folder of shard 3/4 among the 4 given; run it again: .* --shard 3/4 --out $out/shards/3" "$work/merge.log" \
  || fail "merge does not name shard 3/4 with its command: $(cat "$work/merge.log")"
"$deploy/submit.sh" --resume "$lot/plan.toml" "$lot/limits.csv" "$out" >"$work/submit3.log" 2>&1 \
  || fail "submit.sh --resume: $(cat "$work/submit3.log")"
grep -q "shards 3 of 4" "$work/submit3.log" || fail "submit.sh --resume: $(cat "$work/submit3.log")"
read -r again merge_job <<<"$(jobs_of "$work/submit3.log")"
wait_gone "$again,$merge_job" 120
grep -q 'SPURLINE_SHARDS=4.*SLURM_ARRAY_TASK_COUNT=1' "$out/logs/lot-${again}_3.out" \
  || fail "the resubmitted task did not read SPURLINE_SHARDS over its count of 1: $(cat "$out/logs/lot-${again}_3.out")"
s=$(job_state "$merge_job")
[ "$s" = "JobState=FAILED ExitCode=2:0" ] || fail "merge job after the resume: '$s'"
same_report "$out/lot" "step 3"
say "step 3: task 3 of array $array cancelled while running (resume refused before; merge job cancelled; status 3 of 4 finished; merge named shard 3/4 and its command); task 3 resubmitted alone as job $again (SLURM_ARRAY_TASK_COUNT=1, SPURLINE_SHARDS=4), merge job $merge_job: merged report identical"
