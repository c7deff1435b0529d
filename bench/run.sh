#!/usr/bin/env bash
# Benchmark: set up (GDAL, a Python venv with numpy, rasterio, scipy), build, generate
# inputs and run bench/run.py. Usage: bench/run.sh [--sizes S,M,L] [other run.py options]
set -euo pipefail
cd "$(dirname "$0")/.."
bash scripts/setup.sh
[ -x .venv/bin/python ] || python3 -m venv .venv
.venv/bin/python -c "import numpy, rasterio, scipy" 2>/dev/null || .venv/bin/pip install -q numpy rasterio scipy
cargo build --release --quiet --bin areal --example decode_floor
exec .venv/bin/python bench/run.py "$@"
