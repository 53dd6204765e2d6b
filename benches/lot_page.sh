#!/usr/bin/env bash
# The lot page of a large lot (not in CI): a lot of DEVICES (1000) × 3 conditions is written with
# `spurline synth` and run by `spurline batch` against a limit table with guardbands (some devices
# fail, so the page has failing rows and device plots to link), then its `index.html` is weighed and
# loaded RUNS (5) times in headless chromium (`--dump-dom`, which returns once the page is loaded and
# laid out). Printed: the page's size, the median and the highest load time, and the same for an
# empty page (chromium's own start), so the page's share is the difference. Targets: under 3 MB and
# under 3 s.
#
#   benches/lot_page.sh [FOLDER]     (default /tmp/spurline-lot-page; removed at the end unless KEEP=1)
#
# SAMPLES (4096) sets the record length (the page does not depend on it). SPURLINE names the binary
# (default target/release/spurline, built when missing); CHROMIUM the browser (default chromium).
set -euo pipefail

repo=$(cd "$(dirname "$0")/.." && pwd)
dir=${1:-/tmp/spurline-lot-page}
devices=${DEVICES:-1000} samples=${SAMPLES:-4096} runs=${RUNS:-5}
bin=${SPURLINE:-$repo/target/release/spurline}
browser=${CHROMIUM:-chromium}
if [ -z "${SPURLINE:-}" ] && [ ! -x "$bin" ]; then (cd "$repo" && cargo build --release --bin spurline); fi
command -v "$browser" >/dev/null || { echo "lot_page.sh: $browser not found" >&2; exit 2; }
[ -e "$dir" ] && { echo "lot_page.sh: $dir exists; give another folder or remove it" >&2; exit 2; }
mkdir -p "$dir"
cleanup() { if [ "${KEEP:-0}" != 1 ]; then rm -rf "$dir"; fi; }
trap cleanup EXIT

fins=(5.1M 21.3M 44.9M)
t=$(date +%s.%N)
{
  for ((d = 1; d <= devices; d++)); do
    for c in 0 1 2; do printf '%d %d %s\n' "$d" "$c" "${fins[c]}"; done
  done
} | xargs -P "$(nproc)" -n 600 sh -c '
  bin=$1 dir=$2 samples=$3; shift 3
  while [ $# -ge 3 ]; do
    d=$(printf "d%04d" "$1"); mkdir -p "$dir/records/$d"
    "$bin" synth --bits 14 --fs 100M --samples "$samples" --layout i16le --amplitude-dbfs -1 \
      --coherent-near "$3" --noise-rms "1.$(( $1 % 10 ))" --harmonic 3:-8$(( $1 % 7 )) \
      --seed $(( $1 * 4 + $2 )) --output "$dir/records/$d/c$2.bin" >/dev/null
    rm -f "$dir/records/$d/c$2.json"
    shift 3
  done' sh "$bin" "$dir" "$samples"
echo "records: $devices devices × 3 conditions written in $(awk -v a="$t" -v b="$(date +%s.%N)" 'BEGIN { printf "%.0f", b - a }') s"

{
  printf 'title = "lot page benchmark"\n[converter]\nbits = 14\nsample_rate_hz = "100M"\nformat = "i16le"\n'
  printf '[analysis]\nharmonics = 5\n[records]\npattern = "records/{device}/{condition}.bin"\n'
  for c in 0 1 2; do
    printf '[[condition]]\nname = "c%d"\nfin_hz = "%s"\namplitude_dbfs = -1.0\n' "$c" "${fins[c]}"
  done
} >"$dir/plan.toml"
# Limits that some devices fail (the noisier ones on SNR, the larger third harmonics on SFDR).
printf 'condition,metric,low,high,unit,guardband\n*,spectrum.snr_db,76.5,,dB,0.2\n*,spectrum.sfdr_dbc,82,,dBc,0.5\n*,spectrum.enob_bits,12,,bits,\n' \
  >"$dir/limits.csv"
t=$(date +%s.%N)
rc=0
"$bin" batch "$dir/plan.toml" --limits "$dir/limits.csv" --plots failures --jobs "$(nproc)" \
  --out "$dir/lot" >"$dir/batch.log" 2>&1 || rc=$?
echo "batch: $(awk -v a="$t" -v b="$(date +%s.%N)" 'BEGIN { printf "%.1f", b - a }') s, exit status $rc (1: some limit failed)"
page=$dir/lot/index.html
bytes=$(stat -c %s "$page")
echo "page: $bytes bytes ($(awk -v b="$bytes" 'BEGIN { printf "%.2f", b / 1e6 }') MB), $(grep -o '<svg' "$page" | wc -l) inline plots, $(grep -o '<tr' "$page" | wc -l) table rows"

load() { # URL: seconds for chromium to load, lay out and dump the page
  local s
  s=$(date +%s.%N)
  "$browser" --headless --no-sandbox --disable-gpu --no-first-run --disable-background-networking \
    --disable-component-update --disable-sync --user-data-dir="$dir/profile" --dump-dom "$1" \
    >"$dir/dom.html" 2>/dev/null
  awk -v a="$s" -v b="$(date +%s.%N)" 'BEGIN { printf "%.3f\n", b - a }'
}
printf '<!DOCTYPE html><title>empty</title>\n' >"$dir/empty.html"
stats() { sort -n | awk '{ v[NR] = $1 } END { printf "median %.2f s, highest %.2f s", v[int((NR + 1) / 2)], v[NR] }'; }
load "file://$dir/empty.html" >/dev/null # the profile's first start
echo "empty page:  $(for ((i = 0; i < runs; i++)); do load "file://$dir/empty.html"; done | stats)"
echo "lot page:    $(for ((i = 0; i < runs; i++)); do load "file://$page"; done | stats)"
grep -q '<table id="lot">' "$dir/dom.html" && echo "the browser built the page's table" \
  || { echo "lot_page.sh: the browser's DOM has no lot table" >&2; exit 1; }
