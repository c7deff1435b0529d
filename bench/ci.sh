#!/usr/bin/env bash
# CI smoke run of the benchmark on the S size (2.5' global, 8640 x 4320), plus the
# streaming-equals-in-memory check on the same raster. Keeps the bench scripts working;
# the figures of a CI run are not the committed ones (docs/performance.md).
set -euo pipefail
cd "$(dirname "$0")/.."
bash bench/run.sh --sizes S --out target/bench-S.md
AREAL_EQUALITY_TIF=bench-data/S.tif AREAL_EQUALITY_RECORDS=bench-data/S.occ.csv \
  cargo test --release --test streaming large_raster_from_the_environment -- --nocapture
# The spill path: the same S run with the range model's in-memory budget cut to 1 MB (its
# runs go to a file in the run's temporary folder) gives byte-identical tables and summary.
for budget in 1 384; do
  AREAL_MODEL_BUDGET_MB=$budget target/release/areal range --suitability bench-data/S.tif \
    --records bench-data/S.occ.csv --omission 5 --accessible bench-data/S.m.geojson \
    --vectors --out "target/spill-$budget" --overwrite --quiet > /dev/null
done
for f in patches.csv records.csv summary.json classes.tif range.geojson patches.geojson report.html map.png; do
  cmp "target/spill-1/$f" "target/spill-384/$f" || { echo "spill path: $f differs" >&2; exit 1; }
done
echo "spill path: outputs identical with a 1 MB model budget"
