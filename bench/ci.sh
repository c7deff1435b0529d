#!/usr/bin/env bash
# CI smoke run of the benchmark on the S size (2.5' global, 8640 x 4320), plus the
# streaming-equals-in-memory check on the same raster. Keeps the bench scripts working;
# the figures of a CI run are not the committed ones (docs/performance.md).
set -euo pipefail
cd "$(dirname "$0")/.."
bash bench/run.sh --sizes S --out target/bench-S.md
AREAL_EQUALITY_TIF=bench-data/S.tif AREAL_EQUALITY_RECORDS=bench-data/S.occ.csv \
  cargo test --release --test streaming large_raster_from_the_environment -- --nocapture
