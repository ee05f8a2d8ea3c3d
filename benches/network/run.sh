#!/usr/bin/env bash
# Network benchmark (issue 16): converting STATIONS stations × 1 year of 15-minute data with
# `flumerate network` (one Parquet dataset, summary and overview) against converting the same
# rows as one file with `flumerate convert` (to Parquet). Target: the network within ±20 % of
# the one file's time; peak memory bounded by the largest station's, not the sum. Stations that
# share a structure share one rating; the second network gives every station its own, the
# worst case (one rating tabulated per station).
# Usage (repository root): bash benches/network/run.sh [STATIONS]   (default 100 → 3.5 M rows)
# Wall time and peak memory from GNU time, best of three. Data and outputs go to $BENCH_DIR
# (default /tmp/flumerate-bench/network), a folder this script creates.
set -euo pipefail
cd "$(dirname "$0")/../.."
n=${1:-100}
work=${BENCH_DIR:-/tmp/flumerate-bench/network}
mkdir -p "$work"
[ -f "$work/network-distinct.toml" ] && [ "$(grep -c '^\[\[station\]\]' "$work/network.toml")" = "$n" ] \
  || python3 benches/network/make_network.py "$n" "$work"
cargo build --release --locked --quiet --bin flumerate
bin="${CARGO_TARGET_DIR:-target}/release/flumerate"

best() { # best wall time (s) and its peak RSS (kB) of three runs; $1 is the output to clear
  local out=$1 b=999999 m=0
  shift
  for _ in 1 2 3; do
    rm -rf "$out"
    sync
    /usr/bin/time -f "%e %M" -o "$work/t" "$@" > "$work/stdout" 2> "$work/stderr" || [ $? -eq 1 ] || { cat "$work/stderr"; exit 1; }
    read -r s k < "$work/t"
    if awk "BEGIN{exit !($s < $b)}"; then b=$s; m=$k; fi
  done
  echo "$b $m"
}
read -r t_one m_one < <(best "$work/one.parquet" "$bin" convert "$work/one-file.csv" --station benches/convert/bench-station.toml -o "$work/one.parquet")
read -r t_net m_net < <(best "$work/out" "$bin" network "$work/network.toml" -o "$work/out" --date bench)
read -r t_seq m_seq < <(best "$work/out" "$bin" network "$work/network.toml" -o "$work/out" --date bench --threads 1)
read -r t_dis m_dis < <(best "$work/out" "$bin" network "$work/network-distinct.toml" -o "$work/out" --date bench)
read -r t_small m_small < <(best "$work/small.parquet" "$bin" convert "$work/s000.csv" --station benches/convert/bench-station.toml -o "$work/small.parquet")
rows=$(( $(wc -l < "$work/one-file.csv") - 1 ))
mb() { awk "BEGIN{printf \"%.0f\", $1/1024}"; }
echo "rows: $rows ($n stations × $(( rows / n )))"
echo "one file, convert → Parquet:            ${t_one} s, peak $(mb "$m_one") MiB"
echo "network, stations in parallel:          ${t_net} s, peak $(mb "$m_net") MiB  ($(awk "BEGIN{printf \"%.2f\", $t_net/$t_one}") × the one file)"
echo "network, one station at a time:         ${t_seq} s, peak $(mb "$m_seq") MiB  ($(awk "BEGIN{printf \"%.2f\", $t_seq/$t_one}") ×)"
echo "network, every station its own rating: ${t_dis} s, peak $(mb "$m_dis") MiB  ($(awk "BEGIN{printf \"%.2f\", $t_dis/$t_one}") ×)"
echo "one station alone, convert → Parquet:   ${t_small} s, peak $(mb "$m_small") MiB"
