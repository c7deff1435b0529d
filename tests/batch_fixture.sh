#!/usr/bin/env bash
# Batch fixture: generated landscapes (../shared/tools/make-landscape.py, in .venv) and the demo,
# with a manifest of 20 species: 12 on one shared 480 x 360 grid, 4 on a second grid, 2 on the
# demo grid, one whose records file is bad and one whose raster is missing.
#
# Usage: bash tests/batch_fixture.sh DIR   (made once; reused when DIR/manifest.csv exists)
# Environment: LANDSCAPE_TOOL (default ../shared/tools/make-landscape.py).
set -euo pipefail
cd "$(dirname "$0")/.."
DIR=${1:?usage: batch_fixture.sh DIR}
TOOL=${LANDSCAPE_TOOL:-../shared/tools/make-landscape.py}
[ -f "$DIR/manifest.csv" ] && exit 0
[ -f "$TOOL" ] || { echo "batch fixture: landscape generator not found at $TOOL (set LANDSCAPE_TOOL)" >&2; exit 1; }
if ! .venv/bin/python -c "import numpy, rasterio" 2>/dev/null; then
  echo "batch fixture: setting up .venv with numpy and rasterio" >&2
  python3 -m venv .venv
  .venv/bin/pip install -q numpy rasterio
fi
mkdir -p "$DIR.tmp"
land() { .venv/bin/python "$TOOL" --quiet --workers 1 "$@"; }
# Grid 1: 80 x 60 degrees at 10' (seeds chosen so each world has records near its home region).
for s in 1 2 4 5 6 7; do land --bbox -20 -30 60 30 --res-arcsec 600 --points 60 --seed $s --out "$DIR.tmp/g1s$s"; done
# Grid 2: 40 x 30 degrees at 15'.
for s in 1 2; do land --bbox 0 -10 40 20 --res-arcsec 900 --points 40 --seed $s --out "$DIR.tmp/g2s$s"; done
cp demo-data/suitability.tif demo-data/records.csv demo-data/accessible.geojson "$DIR.tmp/"
printf 'decimalLongitude,decimalLatitude\nnot-a-number,12\n' > "$DIR.tmp/bad.csv"
{
  echo "species,suitability,records,omission,threshold,accessible,buffer_km,hull_buffer_km,connectivity,vectors"
  for s in 1 2 4 5 6 7; do
    echo "g1_s${s}_m,g1s$s.tif,g1s$s.occ.csv,5,,g1s$s.m.geojson,,,,"
    echo "g1_s${s}_buf,g1s$s.tif,g1s$s.occ.csv,10,,,400,,4,"
  done
  echo "g2_s1_hull,g2s1.tif,g2s1.occ.csv,0,,,,300,,true"
  echo "g2_s1_all,g2s1.tif,g2s1.occ.csv,,0.6,,,,,"
  echo "g2_s2_m,g2s2.tif,g2s2.occ.csv,5,,g2s2.m.geojson,,,,"
  echo "g2_s2_buf,g2s2.tif,g2s2.occ.csv,,,,250,,,"
  echo "demo_m,suitability.tif,records.csv,5,,accessible.geojson,,,,"
  echo "demo_buf,suitability.tif,records.csv,,0.55,,150,,,"
  echo "bad_records,suitability.tif,bad.csv,5,,,,,,"
  echo "missing_raster,no-such-raster.tif,records.csv,5,,,,,,"
} > "$DIR.tmp/manifest.csv"
rm -rf "$DIR"; mv "$DIR.tmp" "$DIR"
echo "batch fixture: $DIR (20 species)" >&2
