#!/usr/bin/env bash
# Whole-process speed and memory of the binary on the records of the performance targets (not in CI):
# a 2^24-sample i16le record (windowed), a 2^20-sample text record, and a lot of 1,000 i16le records
# of 2^14 samples (100 devices × 10 conditions, no limits, no plots) with --jobs 2. Each command runs
# RUNS times (default 7); the median wall time, CPU time (user + system) and peak memory (GNU time's
# maximum resident set size) are printed, with the load average, since the machine may be shared.
#
#   benches/whole_process.sh [RUNS]      WORK=DIR keeps the records there; SPURLINE names the binary;
#   BIG26=1 also runs a 2^26-sample record (128 MB of words; about 2 GB of memory).
set -euo pipefail
runs=${1:-7}
repo=$(cd "$(dirname "$0")/.." && pwd)
work=${WORK:-$(mktemp -d)}
mkdir -p "$work"
bin=${SPURLINE:-$repo/target/release/spurline}
if [ -z "${SPURLINE:-}" ]; then cargo build --release --quiet --manifest-path "$repo/Cargo.toml"; fi

[ -f "$work/b24.bin" ] || "$bin" synth -o "$work/b24.bin" --bits 16 --samples 16777216 --fin 10.1234567M \
    --noise-rms 2 --layout i16le >/dev/null
[ -f "$work/t20.txt" ] || "$bin" synth -o "$work/t20.txt" --bits 16 --samples 1048576 --fin 10.1234567M \
    --noise-rms 2 >/dev/null
if [ "${BIG26:-0}" = 1 ] && [ ! -f "$work/b26.bin" ]; then
    "$bin" synth -o "$work/b26.bin" --bits 16 --samples 67108864 --fin 10.1234567M --noise-rms 2 \
        --layout i16le >/dev/null
fi
lot=$work/lot
if [ ! -f "$lot/plan.toml" ]; then
    mkdir -p "$lot/r"
    {
        printf '[converter]\nbits = 14\nsample_rate_hz = 100e6\nformat = "i16le"\n\n'
        printf '[records]\npattern = "r/{device}/{condition}.bin"\n'
    } >"$lot/plan.toml"
    fins=()
    for k in $(seq 0 9); do
        # Odd cycle counts of 2^14 samples at 100 MHz: coherent records.
        fin=$(awk -v c=$((101 + 202 * k)) 'BEGIN {printf "%.10f", c * 100e6 / 16384}')
        fins+=("$fin")
        printf '\n[[condition]]\nname = "c%d"\nfin_hz = %s\namplitude_dbfs = -1.0\n' "$k" "$fin" >>"$lot/plan.toml"
    done
    for d in $(seq -w 0 99); do
        mkdir -p "$lot/r/d$d"
        for k in $(seq 0 9); do
            "$bin" synth -o "$lot/r/d$d/c$k.bin" --bits 14 --samples 16384 --fs 100M --fin "${fins[$k]}" \
                --noise-rms 1 --seed "$((10#$d * 10 + k + 1))" --layout i16le >/dev/null
            rm -f "$lot/r/d$d/c$k.json"
        done
    done
fi

median() { sort -n | awk '{v[NR]=$1} END {print v[int((NR+1)/2)]}'; }
measure() {
    local name=$1; shift
    : >"$work/times"
    for _ in $(seq "$runs"); do
        /usr/bin/time -f "%e %U %S %M" -o "$work/t" "$@" >/dev/null 2>&1 || true
        tail -n 1 "$work/t" >>"$work/times"
    done
    local wall cpu peak
    wall=$(awk '{print $1}' "$work/times" | median)
    cpu=$(awk '{print $2 + $3}' "$work/times" | median)
    peak=$(awk '{print $4 / 1024}' "$work/times" | median)
    printf '%-34s wall %7.3f s   cpu %7.3f s   peak %6.0f MiB\n' "$name" "$wall" "$cpu" "$peak"
}
echo "load average: $(cut -d' ' -f1-3 /proc/loadavg); $(nproc) CPUs; medians of $runs runs"
measure "2^24 i16le, windowed" "$bin" analyze "$work/b24.bin" --json
measure "2^20 text, windowed" "$bin" analyze "$work/t20.txt" --json
measure "lot 1,000 x 2^14, --jobs 2" "$bin" batch "$lot/plan.toml" --out "$work/lot-out" --jobs 2
awk -v w="$(awk '{print $1}' "$work/times" | median)" 'BEGIN {printf "%34s %.0f records/s (median wall)\n", "", 1000 / w}'
if [ "${BIG26:-0}" = 1 ]; then
    measure "2^26 i16le, windowed" "$bin" analyze "$work/b26.bin" --json
fi
