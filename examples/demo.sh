#!/usr/bin/env bash
# The flumerate demo: rates the invented demo stations of examples/README.md.
# Run from the repository root:  bash examples/demo.sh
# Writes out/ (ignored by git) and prints the canal flume's rating.
set -euo pipefail
cd "$(dirname "$0")/.."

cargo build --locked --quiet
bin="${CARGO_TARGET_DIR:-target}/debug/flumerate"
mkdir -p out

echo "== 1. check the canal flume's station file and the limits of its method"
"$bin" check ratings/ridgeway-canal-flume.toml

echo
echo "== 2. its rating table (text; CSV and JSON carry full precision)"
"$bin" rate ratings/ridgeway-canal-flume.toml

echo
echo "== 3. every demo station rated to out/ (CSV, SI) and the weir also in US units"
for station in ratings/*.toml; do
    name=$(basename "$station" .toml)
    "$bin" rate "$station" --format csv -o "out/$name.csv"
    echo "   out/$name.csv"
done
"$bin" rate ratings/alder-brook-weir.toml --units us --format csv -o out/alder-brook-weir-us.csv
echo "   out/alder-brook-weir-us.csv"

echo
echo "== 4. does the canal flume stay modular when the canal backs up? (exit 1 means: drowned somewhere)"
code=0
"$bin" tailwater ratings/ridgeway-canal-flume.toml --plot out/ridgeway-canal-flume-tailwater.png || code=$?
[ "$code" -le 1 ] || exit "$code"   # 1 = drowned somewhere (expected here); 2 = an error
echo "   chart: out/ridgeway-canal-flume-tailwater.png"

echo
echo "== 5. one cross-section by hand: critical depth and alternate depths"
"$bin" section --shape trapezoid --width 0.3 --side-slope 1 --discharge 0.1 --energy 0.4
