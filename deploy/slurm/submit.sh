#!/bin/bash
# Submits a spurline lot to Slurm in one command: a job array with one shard per task (lot.sbatch)
# and the merge (merge.sbatch) as a job that runs when every task has succeeded. With --resume,
# submits again only the shards that did not finish, and the merge.
set -u

usage() {
  cat <<'TEXT'
usage: submit.sh [--shards M] [--cpus N] [--plots P] [--resume] PLAN LIMITS OUT

  PLAN    the bench plan (TOML)
  LIMITS  the limit table (CSV), or - for none
  OUT     the lot's output folder: shards in OUT/shards/K, the merged report in OUT/lot, the jobs'
          logs in OUT/logs

  --shards M  array tasks, one shard each (default 4; with --resume, the lot's own)
  --cpus N    CPUs per task, spurline's --jobs (default 1)
  --plots P   none, failures or all (default failures)
  --resume    submit again only the shards not finished (spurline merge --status OUT/shards),
              then the merge; refused while jobs of this lot are still queued or running

Give the same PLAN, LIMITS and --plots to --resume as to the first submission, from the same
folder (paths are as given; every node must see them). Other sbatch options (partition, account,
time limit) come from sbatch's environment: SBATCH_PARTITION, SBATCH_ACCOUNT, SBATCH_TIMELIMIT.
SPURLINE names the spurline binary (default: spurline on PATH).

Prints the jobs submitted; the last line is "jobs: ARRAY MERGE" (ARRAY is - when every shard had
finished). Exit status 0 submitted, 2 an error (nothing or only part submitted: see the message).
TEXT
}

shards="" cpus=1 plots=failures resume=0
while [ $# -gt 0 ]; do
  case $1 in
    --shards) shards=${2:-}; shift 2 || { usage >&2; exit 2; } ;;
    --cpus) cpus=${2:-}; shift 2 || { usage >&2; exit 2; } ;;
    --plots) plots=${2:-}; shift 2 || { usage >&2; exit 2; } ;;
    --resume) resume=1; shift ;;
    -h | --help) usage; exit 0 ;;
    --) shift; break ;;
    -?*) echo "submit.sh: unknown option $1" >&2; usage >&2; exit 2 ;;
    *) break ;;
  esac
done
if [ $# -ne 3 ]; then usage >&2; exit 2; fi
plan=$1 limits=$2 out=$3
here=$(cd "$(dirname "$0")" && pwd)
bin=${SPURLINE:-spurline}
whole() { case $2 in "" | *[!0-9]* | 0*) echo "submit.sh: $1 wants a whole number >= 1, not '$2'" >&2; exit 2 ;; esac; }
if [ -n "$shards" ]; then whole --shards "$shards"; fi
whole --cpus "$cpus"
case $plots in none | failures | all) ;; *) echo "submit.sh: --plots wants none, failures or all, not '$plots'" >&2; exit 2 ;; esac
[ -r "$plan" ] || { echo "submit.sh: cannot read the plan $plan" >&2; exit 2; }
if [ "$limits" != - ] && [ ! -r "$limits" ]; then echo "submit.sh: cannot read the limit table $limits" >&2; exit 2; fi
mkdir -p "$out/logs" "$out/shards" || exit 2
# The comment ties the jobs to this lot, so that --resume can see whether some are still queued.
tag="spurline-lot:$(cd "$out" && pwd)"

array=""
if [ "$resume" = 1 ]; then
  if squeue -h -o '%k' 2>/dev/null | grep -qxF "$tag"; then
    echo "submit.sh: jobs of $out are still queued or running (squeue); resume once they have ended" >&2
    exit 2
  fi
  if ! compgen -G "$out/shards/*/shard*.json" >/dev/null; then
    echo "submit.sh: no shard of $out has started: submitting the whole lot"
    resume=0
  else
    status=$("$bin" merge --status "$out/shards")
    rc=$?
    printf '%s\n' "$status"
    total=$(printf '%s\n' "$status" | sed -n '1s/.* in \([0-9][0-9]*\) shards$/\1/p')
    if [ -n "$shards" ] && [ "$shards" != "$total" ]; then
      echo "submit.sh: the lot in $out has $total shards, not --shards $shards" >&2
      exit 2
    fi
    shards=$total
    case $rc in
      0) array="" ;;
      1) array=$(printf '%s\n' "$status" | sed -n 's/^unfinished shards: //p') ;;
      *) echo "submit.sh: cannot resume (spurline merge --status exit status $rc)" >&2; exit 2 ;;
    esac
  fi
fi
shards=${shards:-4}
if [ "$resume" = 0 ]; then array="1-$shards"; fi

common=(--comment="$tag" --export="ALL,SPURLINE_SHARDS=$shards")
deps=()
array_job=-
if [ -n "$array" ]; then
  array_job=$(sbatch --parsable "${common[@]}" --array="$array" --cpus-per-task="$cpus" \
    --output="$out/logs/lot-%A_%a.out" "$here/lot.sbatch" "$plan" "$limits" "$out" "$plots") || {
    echo "submit.sh: sbatch refused the array" >&2
    exit 2
  }
  array_job=${array_job%%;*}
  echo "array job $array_job: shards $array of $shards into $out/shards"
  # Submitted at once, while the array's record is certainly there: afterok on a purged job id
  # would not wait. A task that fails cancels the merge (--kill-on-invalid-dep).
  deps=(--dependency="afterok:$array_job" --kill-on-invalid-dep=yes)
fi
merge_job=$(sbatch --parsable "${common[@]}" "${deps[@]}" --output="$out/logs/merge-%j.out" \
  "$here/merge.sbatch" "$out" "$shards") || {
  echo "submit.sh: sbatch refused the merge job (the array, if any, was submitted: $array_job)" >&2
  exit 2
}
merge_job=${merge_job%%;*}
echo "merge job $merge_job: the lot report in $out/lot once every shard has finished"
echo "progress: $bin merge --status $out/shards"
echo "jobs: $array_job $merge_job"
