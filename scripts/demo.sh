#!/usr/bin/env bash
# Quick start, part 1: set up, build, and run areal on the bundled demo data.
set -euo pipefail
cd "$(dirname "$0")/.."
bash scripts/setup.sh
cargo build --release --quiet
./target/release/areal range \
  --suitability demo-data/suitability.tif \
  --records demo-data/records.csv \
  --omission 5 \
  --accessible demo-data/accessible.geojson \
  --out out/demo --overwrite
