# Sourced by the conversion benchmarks (run from the repository root, after `set -euo pipefail`):
# the working folder $work ($BENCH_DIR, default /tmp/flumerate-bench, created here) and the
# synthetic logger file $data of ${1:-10000000} rows (invented; made once, kept for reruns).
rows=${1:-10000000}
work=${BENCH_DIR:-/tmp/flumerate-bench}
mkdir -p "$work"
data="$work/logger-$rows.csv"
[ -f "$data" ] || python3 benches/convert/make_logger.py "$rows" "$data"
