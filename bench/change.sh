#!/usr/bin/env bash
# Benchmark of `areal change`: set up (GDAL, a Python venv with numpy and rasterio), build,
# generate inputs and run bench/change.py. Usage: bench/change.sh [--sizes S,M,L] [--metrics]
set -euo pipefail
cd "$(dirname "$0")/.."
bash scripts/setup.sh
[ -x .venv/bin/python ] || python3 -m venv .venv
.venv/bin/python -c "import numpy, rasterio" 2>/dev/null || .venv/bin/pip install -q numpy rasterio
cargo build --release --quiet --bin areal --example decode_floor
exec .venv/bin/python bench/change.py "$@"
