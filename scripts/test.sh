#!/usr/bin/env bash
# Quick start, part 2: set up and run the whole test suite (unit, doc, end-to-end).
set -euo pipefail
cd "$(dirname "$0")/.."
bash scripts/setup.sh
cargo test --release --all-targets
cargo test --release --doc
# Reference-library check of the GeoJSON outputs: shapely and pyproj (PyPI) in .venv.
[ -x .venv/bin/python ] || python3 -m venv .venv
.venv/bin/pip install --quiet --disable-pip-version-check 'shapely>=2' pyproj
.venv/bin/python tests/py/check_geojson.py target/release/areal
# EOO and AOO against shapely + pyproj (tests/py/check_eoo.py), in a venv at the repo root.
if [ ! -x .venv/bin/python ]; then
  python3 -m venv .venv || { echo "test: python3 -m venv failed; install python3-venv (apt-get install python3-venv) and run again" >&2; exit 1; }
fi
.venv/bin/python -c "import shapely, pyproj, numpy" 2>/dev/null || .venv/bin/pip install -q -r tests/py/requirements.txt
.venv/bin/python tests/py/check_eoo.py target/release/areal
# The Python package (python/): built against the library by maturin through pip, then
# pytest reads the demo's outputs with rasterio, pandas, geopandas and pyproj and compares
# the package's run with the CLI's.
.venv/bin/pip install --quiet --disable-pip-version-check -r python/requirements-test.txt
.venv/bin/pip install --quiet --disable-pip-version-check ./python
AREAL_BIN="$PWD/target/release/areal" .venv/bin/python -m pytest -q python/tests
# The R package (r/): installed into .rlib, testthat reads every demo output with terra and
# sf and compares the package's run with the CLI's.
mkdir -p .rlib
R CMD INSTALL --no-multiarch -l .rlib r >/dev/null
R_LIBS=.rlib AREAL_BIN="$PWD/target/release/areal" \
  Rscript -e 'library(areal); testthat::test_dir("r/tests/testthat", stop_on_failure = TRUE)'
# The report: map.png decoded by Pillow against classes.tif, report.html in headless Chromium.
bash scripts/check-report.sh
# Atomic outputs: SIGKILL part way through runs on a large generated raster.
bash tests/kill_test.sh
# Batches: SIGKILL and resume (10 rounds), a full disk, and a real Slurm job array with a
# dependent gather on a single-node cluster (installs slurm-wlm's daemons and munge; root).
bash tests/batch_kill_test.sh
bash tests/batch_disk_full.sh
bash tests/batch_slurm_test.sh
