#!/usr/bin/env bash
# Screening benchmark (issue 13): the 10-million-row conversion with screening, edits and gap
# filling on (the default) must stay within 1.2 x the conversion without them.
#   - "off" is the same binary with --no-screening --fill-max 0: what the conversion cost before
#     screening existed, measured on the same build;
#   - set BASELINE=/path/to/an/older/flumerate to also time an earlier build (e.g. the last
#     release before screening) on the same file.
# An edits log with one exclude window and one offset is given too, so the edit path runs.
# Usage (repository root): bash benches/convert/screening.sh [ROWS]   (default 10000000)
# Wall time and peak memory from GNU time; each command runs three times, the best kept.
# Outputs go to $BENCH_DIR (default /tmp/flumerate-bench), a folder this script creates.
set -euo pipefail
cd "$(dirname "$0")/../.."
. benches/convert/data.sh "${1:-10000000}"
cargo build --release --locked --quiet --bin flumerate
bin="${CARGO_TARGET_DIR:-target}/release/flumerate"
edits="$work/bench-edits.csv"
printf 'start,end,action,reason,value_mm\n2010-06-01T08:00,2010-06-01T09:00,exclude,benchmark window (invented),\n2012-01-01T00:00,2012-12-31T23:59,offset,benchmark step (invented),3\n' > "$edits"

best() { # best wall time (s) and its peak RSS (kB) of three runs
  local b=999999 m=0
  for _ in 1 2 3; do
    rm -f "$work/screen.parquet"
    sync
    /usr/bin/time -f "%e %M" -o "$work/t" "$@" > "$work/out" 2> "$work/err" || { cat "$work/err"; exit 1; }
    read -r s k < "$work/t"
    if awk "BEGIN{exit !($s < $b)}"; then b=$s; m=$k; fi
  done
  echo "$b $m"
}
station=benches/convert/bench-station.toml
read -r t_off m_off < <(best "$bin" convert "$data" --station "$station" -o "$work/screen.parquet" --no-screening --fill-max 0)
read -r t_on m_on < <(best "$bin" convert "$data" --station "$station" -o "$work/screen.parquet")
read -r t_ed m_ed < <(best "$bin" convert "$data" --station "$station" -o "$work/screen.parquet" --edits "$edits")
grep -E "^(flags|screening|edit|gaps)" "$work/out" | sed 's/^/    /'
mb() { awk "BEGIN{printf \"%.0f\", $1/1024}"; }
echo "rows: $rows"
echo "screening off (--no-screening --fill-max 0): ${t_off} s, peak $(mb "$m_off") MiB"
echo "screening on (default):                      ${t_on} s, peak $(mb "$m_on") MiB  ($(awk "BEGIN{printf \"%.2f\", $t_on/$t_off}") x; target <= 1.2)"
echo "screening on, with an edits log:             ${t_ed} s, peak $(mb "$m_ed") MiB  ($(awk "BEGIN{printf \"%.2f\", $t_ed/$t_off}") x)"
if [ -n "${BASELINE:-}" ]; then
  read -r t_base m_base < <(best "$BASELINE" convert "$data" --station "$station" -o "$work/screen.parquet")
  echo "baseline build ($BASELINE):  ${t_base} s, peak $(mb "$m_base") MiB  (screening on is $(awk "BEGIN{printf \"%.2f\", $t_on/$t_base}") x this)"
fi
rm -f "$work/screen.parquet" "$work/screen.parquet.provenance.json"
