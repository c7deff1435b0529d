#!/usr/bin/env bash
# Installs what areal needs on a fresh Debian machine (run as root): GDAL with its
# development files, pkg-config, and python3-venv (for the GeoJSON reference check and
# tests/kill_test.sh, which make numpy/rasterio/shapely/pyproj venvs), python3-dev (the
# Python package's build), and R with terra, sf, jsonlite, lwgeom and testthat from Debian
# (the R package's tests). Safe to run again; it installs only what is missing.
set -euo pipefail
need=()
for pkg in libgdal-dev pkg-config gdal-bin python3-venv python3-dev \
  r-base-core r-cran-terra r-cran-sf r-cran-jsonlite r-cran-lwgeom r-cran-testthat; do
  dpkg-query -W -f='${Status}' "$pkg" 2>/dev/null | grep -q "install ok installed" || need+=("$pkg")
done
if [ ${#need[@]} -gt 0 ]; then
  echo "setup: installing ${need[*]}" >&2
  export DEBIAN_FRONTEND=noninteractive
  apt-get update -qq
  apt-get install -y -qq --no-install-recommends "${need[@]}" >/dev/null
fi
command -v cargo >/dev/null || { echo "setup: cargo not found; install the Rust toolchain (rustup) first" >&2; exit 1; }
