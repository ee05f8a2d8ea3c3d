#!/usr/bin/env bash
# The flumerate demo on the invented scenario of examples/README.md: four weeks of the Ridgeway
# canal flume's pressure logger converted to discharge (series, daily summary, hydrograph), then
# the station checks, ratings and tailwater check behind it.
# Run from the repository root:  bash examples/demo.sh      Writes out/ (ignored by git).
set -euo pipefail
cd "$(dirname "$0")/.."

cargo build --locked --quiet
bin="${CARGO_TARGET_DIR:-target}/debug/flumerate"
mkdir -p out

echo "== 1. convert the canal flume's logger export to discharge (barometric compensation, drift"
echo "      against three field visits, the October clock change, a gap, a spike screened and filled,"
echo "      a failed reading, and the hydrographer's edits log)"
"$bin" convert examples/ridgeway-logger.csv --station ratings/ridgeway-canal-flume.toml \
    --baro examples/ridgeway-baro.csv --visits examples/ridgeway-visits.csv \
    --edits examples/ridgeway-edits.csv \
    -o out/ridgeway-series.csv --daily out/ridgeway-daily.csv --monthly out/ridgeway-monthly.csv \
    --plot out/ridgeway-hydrograph.png --plot-stage
echo "   series: out/ridgeway-series.csv   daily: out/ridgeway-daily.csv   plot: out/ridgeway-hydrograph.png"

echo
echo "== 2. check the canal flume's station file and the limits of its method"
"$bin" check ratings/ridgeway-canal-flume.toml

echo
echo "== 3. its rating table (text; CSV and JSON carry full precision)"
"$bin" rate ratings/ridgeway-canal-flume.toml

echo
echo "== 4. every demo station rated to out/ (CSV, SI) and the weir also in US units"
for station in ratings/*.toml; do
    name=$(basename "$station" .toml)
    "$bin" rate "$station" --format csv -o "out/$name.csv"
    echo "   out/$name.csv"
done
"$bin" rate ratings/alder-brook-weir.toml --units us --format csv -o out/alder-brook-weir-us.csv
echo "   out/alder-brook-weir-us.csv"

echo
echo "== 5. does the canal flume stay modular when the canal backs up? (exit 1 means: drowned somewhere)"
code=0
"$bin" tailwater ratings/ridgeway-canal-flume.toml --plot out/ridgeway-canal-flume-tailwater.png || code=$?
[ "$code" -le 1 ] || exit "$code"   # 1 = drowned somewhere (expected here); 2 = an error
echo "   chart: out/ridgeway-canal-flume-tailwater.png"

echo
echo "== 6. the canal flume's field sheet for the gauge house (one printable page)"
"$bin" sheet ratings/ridgeway-canal-flume.toml -o out/ridgeway-sheet.html

echo
echo "== 7. the canal flume's rating against two seasons of field gaugings (exit 1: it departs)"
code=0
"$bin" gaugings ratings/ridgeway-canal-flume.toml examples/ridgeway-gaugings.csv \
    --plot out/ridgeway-gaugings-rating.png --plot-deviation out/ridgeway-gaugings-deviation.png \
    --write-calibration out/ridgeway-calibrated.toml || code=$?
[ "$code" -le 1 ] || exit "$code"
echo "   charts: out/ridgeway-gaugings-*.png   calibrated copy: out/ridgeway-calibrated.toml"

echo
echo "== 8. standard structures: the works' V-notch and the lateral's Parshall flume (published ratings)"
"$bin" structures parshall-1ft
"$bin" sheet ratings/mill-lane-outfall-vnotch.toml -o out/mill-lane-outfall-vnotch-sheet.html
"$bin" sheet ratings/kestrel-lateral-parshall.toml -o out/kestrel-lateral-parshall-sheet.html
code=0
"$bin" tailwater ratings/kestrel-lateral-parshall.toml --plot out/kestrel-lateral-parshall-tailwater.png || code=$?
[ "$code" -le 1 ] || exit "$code"   # 1 = the lateral drowns the flume somewhere

echo
echo "== 9. the whole network at once (exit 1: the Kestrel lateral's export is broken on purpose)"
code=0
"$bin" network examples/network/harrow-vale.toml -o out/network || code=$?
[ "$code" -le 1 ] || exit "$code"
echo "   dataset: out/network/series/   summary: out/network/daily.csv   overview: out/network/overview.html"

echo
echo "== 10. one cross-section by hand: critical depth and alternate depths"
"$bin" section --shape trapezoid --width 0.3 --side-slope 1 --discharge 0.1 --energy 0.4
