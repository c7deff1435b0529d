#!/usr/bin/env bash
# The report in a real browser: installs Debian's chromium if missing (idempotent), Pillow,
# numpy, rasterio, pyproj and Playwright (PyPI, driving the Debian browser; `playwright install` is
# never run) into .venv, then runs tests/py/check_report.py and tests/py/check_change_report.py.
# Usage: bash scripts/check-report.sh [--shots DIR] [--update-docs]
set -euo pipefail
cd "$(dirname "$0")/.."
if ! command -v chromium >/dev/null; then
  echo "check-report: installing chromium" >&2
  export DEBIAN_FRONTEND=noninteractive
  apt-get update -qq
  apt-get install -y -qq chromium >/dev/null
fi
[ -x .venv/bin/python ] || python3 -m venv .venv
.venv/bin/python -c "import PIL, numpy, rasterio, pyproj, playwright" 2>/dev/null ||
  .venv/bin/pip install -q --disable-pip-version-check pillow numpy rasterio pyproj playwright
[ -x target/release/areal ] || cargo build --release --quiet
.venv/bin/python tests/py/check_report.py target/release/areal "$@"
# The change report of `areal change` (change map against change.tif, numbers, Chromium).
.venv/bin/python tests/py/check_change_report.py target/release/areal
