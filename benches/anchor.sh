#!/usr/bin/env bash
# Whole-process speed of one 2^20-sample text record: spurline beside the numpy/scipy pipeline of
# benches/anchor.py, run alternately on the same record; prints the median wall and CPU (user + sys)
# time of each and their ratio. Usage: benches/anchor.sh [RUNS]   (default 7; needs python3-venv)
set -euo pipefail
runs=${1:-7}
root=$(cd "$(dirname "$0")/.." && pwd)
work=${WORK:-$(mktemp -d)}
venv=${VENV:-$work/venv}
if [ ! -x "$venv/bin/python" ]; then
    python3 -m venv "$venv"
    "$venv/bin/pip" install --quiet numpy scipy
fi
cargo build --release --quiet --manifest-path "$root/Cargo.toml"
bin="$root/target/release/spurline"
rec="$work/t20.txt"
"$bin" synth -o "$rec" --bits 16 --samples 1048576 --fin 10.1234567M --noise-rms 2 >/dev/null
timed() { /usr/bin/time -f "%e %U %S" -o "$work/t" "$@" >/dev/null && awk '{print $1, $2 + $3}' "$work/t"; }
: >"$work/s"; : >"$work/p"
for _ in $(seq "$runs"); do
    timed "$bin" analyze "$rec" --json >>"$work/s"
    timed "$venv/bin/python" "$root/benches/anchor.py" "$rec" 16 >>"$work/p"
done
echo "load average at the end: $(cut -d' ' -f1-3 /proc/loadavg); $(nproc) CPUs; numpy/scipy" \
    "$("$venv/bin/python" -c 'import numpy, scipy; print(numpy.__version__, scipy.__version__)')"
median() { sort -n | awk '{v[NR]=$1} END {print v[int((NR+1)/2)]}'; }
sw=$(cut -d' ' -f1 "$work/s" | median); sc=$(cut -d' ' -f2 "$work/s" | median)
pw=$(cut -d' ' -f1 "$work/p" | median); pc=$(cut -d' ' -f2 "$work/p" | median)
echo "spurline    median wall ${sw} s, cpu ${sc} s"
echo "numpy/scipy median wall ${pw} s, cpu ${pc} s"
awk -v a="$pw" -v b="$sw" -v c="$pc" -v d="$sc" 'BEGIN {printf "ratio: wall %.1fx, cpu %.1fx\n", a / b, c / d}'
