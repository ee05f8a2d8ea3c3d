#!/usr/bin/env bash
# Conversion benchmark (issues 5 and 17): a 10-million-row logger CSV converted by flumerate
# (screening on, as by default) beside what a user would script instead, measured in one
# interleaved run (each command once per round, three rounds, best kept):
#   - the bare polars read (examples/polars_read_only.rs): no work at all;
#   - the lean polars script (benches/convert/polars_lean.py): read, parse times with the
#     format, np.interp, write CSV / Parquet;
#   - the pandas + numpy script (benches/convert/pandas_convert.py).
# Targets (issue 17): flumerate → CSV ≤ 1.0 × the lean script → CSV; flumerate → Parquet ≤ 0.6 ×
# the lean script → Parquet; ≥ 5 × faster than the pandas script; peak memory ≤ 1.5 × the file.
# Usage (repository root): bash benches/convert/run.sh [ROWS]   (default 10000000)
# Needs python3 with polars, pandas, numpy and pyarrow (installed here if missing).
# Wall times and peak resident memory come from GNU time. Output files are removed (and the
# removal synced) before each run. Data and outputs go to $BENCH_DIR (default
# /tmp/flumerate-bench), a folder this script creates.
set -euo pipefail
cd "$(dirname "$0")/../.."
. benches/convert/data.sh "${1:-10000000}"
python3 -c "import polars, pandas, numpy, pyarrow" 2>/dev/null || pip install --quiet polars pandas numpy pyarrow

cargo build --release --locked --quiet --bin flumerate --example polars_read_only
target=${CARGO_TARGET_DIR:-target}/release
bin="$target/flumerate"
"$bin" rate benches/convert/bench-station.toml --from 0.0005 --to 0.825 --step 0.0005 --format csv -o "$work/rating.csv"
station=benches/convert/bench-station.toml

size=$(stat -c %s "$data")
declare -A best_t best_m
run() { # run NAME OUTPUT(or "") COMMAND...: one timed run, the best per name kept
  local name=$1 out=$2
  shift 2
  if [ -n "$out" ]; then rm -f "$out"; fi
  sync
  /usr/bin/time -f "%e %M" -o "$work/t" "$@" > /dev/null 2> "$work/err" || { cat "$work/err"; exit 1; }
  read -r s k < "$work/t"
  if [ -z "${best_t[$name]:-}" ] || awk "BEGIN{exit !($s < ${best_t[$name]})}"; then best_t[$name]=$s; best_m[$name]=$k; fi
}
for round in 1 2 3; do
  echo "round $round of 3" >&2
  run read "" "$target/examples/polars_read_only" "$data"
  run lean_csv "$work/lean.csv" python3 benches/convert/polars_lean.py "$data" "$work/rating.csv" "$work/lean.csv"
  run fl_csv "$work/out.csv" "$bin" convert "$data" --station "$station" -o "$work/out.csv"
  run lean_pq "$work/lean.parquet" python3 benches/convert/polars_lean.py "$data" "$work/rating.csv" "$work/lean.parquet"
  run fl_pq "$work/out.parquet" "$bin" convert "$data" --station "$station" -o "$work/out.parquet"
  run pandas "$work/pandas.parquet" python3 benches/convert/pandas_convert.py "$data" "$work/rating.csv" "$work/pandas.parquet"
done
t_read=${best_t[read]}; t_lean_csv=${best_t[lean_csv]}; t_csv=${best_t[fl_csv]}
t_lean_pq=${best_t[lean_pq]}; t_pq=${best_t[fl_pq]}; t_pd=${best_t[pandas]}
m_csv=${best_m[fl_csv]}; m_pq=${best_m[fl_pq]}
mb() { awk "BEGIN{printf \"%.0f\", $1/1024}"; }
r() { awk "BEGIN{printf \"%.2f\", $1/$2}"; }
echo "file: $rows rows, $(awk "BEGIN{printf \"%.0f\", $size/1048576}") MiB; best of three interleaved rounds"
echo "polars read only:                ${t_read} s"
echo "lean polars script → CSV:        ${t_lean_csv} s"
echo "flumerate convert → CSV:         ${t_csv} s, peak $(mb "$m_csv") MiB  ($(r "$t_csv" "$t_lean_csv") × the lean script; target ≤ 1.0)"
echo "lean polars script → Parquet:    ${t_lean_pq} s"
echo "flumerate convert → Parquet:     ${t_pq} s, peak $(mb "$m_pq") MiB  ($(r "$t_pq" "$t_lean_pq") × the lean script; target ≤ 0.6)"
echo "pandas + numpy → Parquet:        ${t_pd} s  (flumerate is $(r "$t_pd" "$t_pq") × faster; target ≥ 5)"
echo "peak memory / file size:         $(awk "BEGIN{printf \"%.2f\", $m_pq*1024/$size}") (Parquet), $(awk "BEGIN{printf \"%.2f\", $m_csv*1024/$size}") (CSV); target ≤ 1.5"
echo "SHA-256 of flumerate's CSV:      $(sha256sum "$work/out.csv" | cut -d' ' -f1)"

# the Parquet output reads back elsewhere: pyarrow sees every row and the contract's columns
python3 - "$work/out.parquet" "$rows" <<'PY'
import sys
import pyarrow.parquet as pq
t = pq.read_table(sys.argv[1])
want = ["time", "stage_m", "head_m", "discharge_m3s", "discharge_low_m3s", "discharge_high_m3s", "flag", "line", "counted_line"]
assert t.column_names == want, t.column_names
assert t.num_rows == int(sys.argv[2]), t.num_rows
print(f"pyarrow reads the Parquet output back: {t.num_rows} rows, columns as in design.md")
PY

echo
for out in out.csv out.parquet; do
  echo "where flumerate's time goes → ${out##*.} (one run, FLUMERATE_TIMING=1):"
  rm -f "$work/$out"
  sync
  FLUMERATE_TIMING=1 "$bin" convert "$data" --station "$station" -o "$work/$out" 2>&1 >/dev/null |
    sed -n 's/^timing: /  /p'
done
t_hash=$(python3 -c "import hashlib, sys, time
t = time.time(); h = hashlib.sha256()
with open(sys.argv[1], 'rb') as f:
    for b in iter(lambda: f.read(1 << 20), b''): h.update(b)
print(f'{time.time() - t:.2f}')" "$data")
csv_size=$(stat -c %s "$work/out.csv")
t_write=999
for _ in 1 2 3; do # best of three: this file system's write times vary a lot run to run
  rm -f "$work/zeros"
  sync
  t=$(python3 -c "import sys, time
t = time.time(); b = bytes(1 << 22)
with open(sys.argv[1], 'wb') as f:
    for _ in range(int(sys.argv[2]) // len(b)): f.write(b)
print(f'{time.time() - t:.2f}')" "$work/zeros" "$csv_size")
  if awk "BEGIN{exit !($t < $t_write)}"; then t_write=$t; fi
done
rm -f "$work/zeros"
echo "unavoidable costs on this machine (one core each):"
echo "  SHA-256 of the logger file (provenance): ${t_hash} s"
echo "  writing $((csv_size / 1048576)) MiB (the CSV output's size) from Python, nothing else: ${t_write} s"
