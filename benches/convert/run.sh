#!/usr/bin/env bash
# Conversion benchmark (issue 5): a 10-million-row logger CSV.
#   - flumerate convert must take at most 1.5 x the time polars takes just to read the file,
#   - be at least 10 x faster than the pandas + numpy script doing the same interpolation,
#   - and peak at most 2 x the file size in memory.
# Usage (repository root): bash benches/convert/run.sh [ROWS]   (default 10000000)
# Needs python3 with pandas, numpy and pyarrow for the comparison (installed here if missing).
# Wall times and peak resident memory come from GNU time; each command runs twice, best kept.
set -euo pipefail
cd "$(dirname "$0")/../.."
rows=${1:-10000000}
work=${BENCH_DIR:-/tmp/flumerate-bench}
mkdir -p "$work"
data="$work/logger-$rows.csv"
[ -f "$data" ] || python3 benches/convert/make_logger.py "$rows" "$data"
python3 -c "import pandas, numpy, pyarrow" 2>/dev/null || pip install --quiet pandas numpy pyarrow

cargo build --release --locked --quiet --bin flumerate --example polars_read_only
target=${CARGO_TARGET_DIR:-target}/release
bin="$target/flumerate"
"$bin" rate benches/convert/bench-station.toml --from 0.0005 --to 0.825 --step 0.0005 --format csv -o "$work/rating.csv"

size=$(stat -c %s "$data")
best() { # best wall time (s) and its peak RSS (kB) of two runs
  local b=999999 m=0
  for _ in 1 2; do
    /usr/bin/time -f "%e %M" -o "$work/t" "$@" > /dev/null 2> "$work/err" || { cat "$work/err"; exit 1; }
    read -r s k < "$work/t"
    if awk "BEGIN{exit !($s < $b)}"; then b=$s; m=$k; fi
  done
  echo "$b $m"
}
read -r t_read m_read < <(best "$target/examples/polars_read_only" "$data")
read -r t_dates m_dates < <(best "$target/examples/polars_read_only" "$data" --dates)
read -r t_pq m_pq < <(best "$bin" convert "$data" --station benches/convert/bench-station.toml -o "$work/out.parquet")
read -r t_csv m_csv < <(best "$bin" convert "$data" --station benches/convert/bench-station.toml -o "$work/out.csv")
read -r t_pd m_pd < <(best python3 benches/convert/pandas_convert.py "$data" "$work/rating.csv" "$work/pandas.parquet")

mb() { awk "BEGIN{printf \"%.0f\", $1/1024}"; }
echo "file: $rows rows, $(awk "BEGIN{printf \"%.0f\", $size/1048576}") MiB"
echo "polars read only:          ${t_read} s, peak $(mb "$m_read") MiB"
echo "polars read, parsing dates: ${t_dates} s, peak $(mb "$m_dates") MiB  (flumerate parquet is $(awk "BEGIN{printf \"%.2f\", $t_pq/$t_dates}") x this)"
echo "flumerate convert parquet: ${t_pq} s, peak $(mb "$m_pq") MiB  ($(awk "BEGIN{printf \"%.2f\", $t_pq/$t_read}") x the read; target <= 1.5)"
echo "flumerate convert csv:     ${t_csv} s, peak $(mb "$m_csv") MiB  ($(awk "BEGIN{printf \"%.2f\", $t_csv/$t_read}") x the read)"
echo "pandas + numpy (parquet):  ${t_pd} s, peak $(mb "$m_pd") MiB  (flumerate is $(awk "BEGIN{printf \"%.1f\", $t_pd/$t_pq}") x faster; target >= 10)"
echo "peak memory / file size:   $(awk "BEGIN{printf \"%.2f\", $m_pq*1024/$size}") (parquet), $(awk "BEGIN{printf \"%.2f\", $m_csv*1024/$size}") (csv); target <= 2"
