#!/usr/bin/env bash
# A large lot split into shards, run one after another on this machine (not in CI): per shard the
# wall time and peak memory (GNU time's maximum resident set size), then the merge at several lot
# sizes (the first 1/8, 1/4, 1/2 of the devices, and the whole lot, each split into the same number
# of shards). The figures in the README's performance section come from it.
#
#   benches/large_lot.sh [FOLDER]    (default /tmp/spurline-large-lot; removed at the end unless KEEP=1)
#   MERGE_TO=/dev/shm benches/large_lot.sh     (the merged reports on tmpfs)
#
# RECORDS (100000), CONDITIONS (4), SAMPLES (16384), SHARDS (16) and JOBS (spurline --jobs, default
# the number of CPUs) set the size. Each line gives wall time, CPU time (user + system) and peak
# memory; the merge runs three times. The records are written with `spurline synth` as raw i16le words
# (RECORDS × SAMPLES × 2 bytes: 3.3 GB at the default; check the free space first). SPURLINE names
# the binary (default target/release/spurline, built when missing).
set -euo pipefail

repo=$(cd "$(dirname "$0")/.." && pwd)
dir=${1:-/tmp/spurline-large-lot}
records=${RECORDS:-100000} conditions=${CONDITIONS:-4} samples=${SAMPLES:-16384}
shards=${SHARDS:-16} jobs=${JOBS:-$(nproc)}
devices=$((records / conditions))
# MERGE_TO: where the merged reports go (default FOLDER). Merging is mostly creating files (two per
# device), so a slow file system shows there first; /dev/shm measures spurline's own part.
merge_to=${MERGE_TO:-$dir}
bin=${SPURLINE:-$repo/target/release/spurline}
if [ -z "${SPURLINE:-}" ] && [ ! -x "$bin" ]; then (cd "$repo" && cargo build --release --bin spurline); fi
[ -e "$dir" ] && { echo "large_lot.sh: $dir exists; give another folder or remove it" >&2; exit 2; }
mkdir -p "$dir"
cleanup() { if [ "${KEEP:-0}" != 1 ]; then rm -rf "$dir"; fi; }
trap cleanup EXIT
need=$((records * samples * 2 / 1000000))
echo "lot: $devices devices × $conditions conditions = $records records of $samples samples ($need MB) in $dir"
df -hT "$dir" "$merge_to" | tail -n +2

# ── the records: one synth call each, spread over the CPUs ──
t=$(date +%s.%N)
fins=(5.1M 21.3M 37.7M 44.9M 12.7M 29.9M 2.3M 47.1M)
{
  for ((d = 1; d <= devices; d++)); do
    for ((c = 0; c < conditions; c++)); do
      printf '%d %d %s\n' "$d" "$c" "${fins[c % ${#fins[@]}]}"
    done
  done
} | xargs -P "$(nproc)" -n 600 sh -c '
  bin=$1 dir=$2 samples=$3; shift 3
  while [ $# -ge 3 ]; do
    d=$(printf "d%06d" "$1"); mkdir -p "$dir/records/$d"
    "$bin" synth --bits 14 --fs 100M --samples "$samples" --layout i16le --amplitude-dbfs -1 \
      --coherent-near "$3" --noise-rms "1.$(( $1 % 10 ))" --add-harmonic 3:-84 --seed $(( $1 * 16 + $2 )) \
      --output "$dir/records/$d/c$2.bin" >/dev/null
    rm -f "$dir/records/$d/c$2.json"
    shift 3
  done' sh "$bin" "$dir" "$samples"
echo "records written in $(awk -v a="$t" -v b="$(date +%s.%N)" 'BEGIN { printf "%.0f", b - a }') s"

# ── plans: the whole lot, and the first 1/8, 1/4, 1/2 of its devices by a devices list ──
plan_head() {
  printf 'title = "large lot"\n[converter]\nbits = 14\nsample_rate_hz = "100M"\nformat = "i16le"\n'
  printf '[analysis]\nharmonics = 5\n[records]\npattern = "records/{device}/{condition}.bin"\n'
}
plan_tail() {
  for ((c = 0; c < conditions; c++)); do
    printf '[[condition]]\nname = "c%d"\nfin_hz = "%s"\namplitude_dbfs = -1.0\n' "$c" "${fins[c % ${#fins[@]}]}"
  done
}
{ plan_head; plan_tail; } >"$dir/plan.toml"
for part in 8 4 2; do
  n=$((devices / part))
  {
    plan_head
    printf 'devices = ['
    for ((d = 1; d <= n; d++)); do printf '"d%06d",' "$d"; done
    printf ']\n'
    plan_tail
  } >"$dir/plan-$part.toml"
done
printf 'condition,metric,low,high,unit\n*,spectrum.snr_db,71,,dB\n*,spectrum.sfdr_dbc,80,,dBc\n' >"$dir/limits.csv"

timed() { # LOG command...: runs it under GNU time; prints "wall_s cpu_s peak_kB exit_status"
  local log=$1 rc=0
  shift
  /usr/bin/time -f '%e %U %S %M' -o "$log.time" "$@" >"$log" 2>&1 || rc=$?
  tail -n 1 "$log.time" | awk -v rc="$rc" '{ printf "%s %.2f %s %s\n", $1, $2 + $3, $4, rc }'
}

run_lot() { # PLAN NAME: the lot's shards one after another, then the merge
  local plan=$1 name=$2 k
  for ((k = 1; k <= shards; k++)); do
    read -r s cpu kb rc < <(timed "$dir/$name-shard$k.log" "$bin" batch "$plan" --limits "$dir/limits.csv" \
      --jobs "$jobs" --shard "$k/$shards" --out "$dir/$name/shards/$k")
    echo "$name shard $k/$shards: $s s (CPU $cpu s), peak $((kb / 1024)) MiB, exit status $rc"
  done
  # The merge three times, each into a fresh folder: the machine may be shared.
  for try in 1 2 3; do
    read -r s cpu kb rc < <(timed "$dir/$name-merge.log" "$bin" merge "$merge_to/$name-lot" "$dir/$name"/shards/*)
    echo "$name merge ($try): $s s (CPU $cpu s), peak $((kb / 1024)) MiB, exit status $rc"
    rm -rf "${merge_to:?}/$name-lot"
  done
  rm -rf "${dir:?}/$name"
}

echo "── whole lot: $records records in $shards shards, --jobs $jobs"
run_lot "$dir/plan.toml" all
read -r s cpu kb rc < <(timed "$dir/unsharded.log" "$bin" batch "$dir/plan.toml" --limits "$dir/limits.csv" \
  --jobs "$jobs" --out "$dir/unsharded")
echo "whole lot unsharded: $s s (CPU $cpu s), peak $((kb / 1024)) MiB, exit status $rc"
rm -rf "${dir:?}/unsharded"
for part in 2 4 8; do
  echo "── lot of the first $((devices / part)) devices ($((records / part)) records) in $shards shards"
  run_lot "$dir/plan-$part.toml" part$part
done
