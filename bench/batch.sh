#!/usr/bin/env bash
# Batch benchmark: 40 regional species, each its own 2,000 x 2,000 suitability raster (30",
# ../shared/tools/make-landscape.py, 4 regions x 10 worlds), run (a) as a shell loop of
# `areal range` over the manifest, one species after the other, and (b) as `areal batch` on the
# same manifest (default --jobs: the number of cores; the batch also writes batch.csv,
# batch.gpkg and richness.tif). Both run REPEAT times, alternating, in one session; the ratio is
# the loop's median wall time over the batch's. Writes docs/bench-batch.md.
#
# Usage: bash bench/batch.sh [--repeat N] [--out FILE]
set -euo pipefail
cd "$(dirname "$0")/.."
REPEAT=2 OUT_MD=docs/bench-batch.md
while [ $# -gt 0 ]; do
  case $1 in
    --repeat) REPEAT=$2; shift 2 ;;
    --out) OUT_MD=$2; shift 2 ;;
    *) echo "bench/batch.sh: unknown option $1" >&2; exit 2 ;;
  esac
done
TOOL=${LANDSCAPE_TOOL:-../shared/tools/make-landscape.py}
DATA=bench-data/batch
BIN=$(realpath target/release/areal)
[ -x .venv/bin/python ] || python3 -m venv .venv
.venv/bin/python -c "import numpy, rasterio" 2>/dev/null || .venv/bin/pip install -q numpy rasterio
cargo build --release --quiet --bin areal
mkdir -p "$DATA"; DATA=$(realpath "$DATA")   # absolute, as the batch makes manifest paths

# 40 landscapes: 4 regions (16.67 degrees square at 30" = 2000 x 2000 cells) x 10 worlds each.
regions=("10 -10" "-70 -30" "100 0" "-10 40")
n=0
{
  echo "species,suitability,records,omission,accessible,buffer_km"
  for r in 0 1 2 3; do
    read -r west south <<<"${regions[$r]}"
    east=$(python3 -c "print($west + 2000 * 30 / 3600)"); north=$(python3 -c "print($south + 2000 * 30 / 3600)")
    got=0 seed=$((1000 * (r + 1)))
    while [ $got -lt 10 ]; do
      seed=$((seed + 1)); p="$DATA/r${r}s$seed"
      if [ ! -f "$p.tif" ] || [ ! -f "$p.occ.csv" ]; then
        .venv/bin/python "$TOOL" --bbox "$west" "$south" "$east" "$north" --res-arcsec 30 \
          --points 300 --seed $seed --quiet --out "$p" 2>/dev/null || { rm -f "$p".*; continue; }
      fi
      got=$((got + 1)); n=$((n + 1))
      if [ $((n % 2)) = 0 ]; then
        echo "sp$(printf %02d $n),r${r}s$seed.tif,r${r}s$seed.occ.csv,5,r${r}s$seed.m.geojson,"
      else
        echo "sp$(printf %02d $n),r${r}s$seed.tif,r${r}s$seed.occ.csv,10,,150"
      fi
    done
  done
} > "$DATA/manifest.csv"
echo "bench/batch: 40 species in $DATA/manifest.csv" >&2

loop() {  # the shell loop a user would write: one areal range per manifest row
  local out=$1
  rm -rf "$out"; mkdir -p "$out"
  tail -n +2 "$DATA/manifest.csv" | while IFS=, read -r sp suit rec om acc buf; do
    args=(range --suitability "$DATA/$suit" --records "$DATA/$rec" --omission "$om" --out "$out/$sp" --quiet)
    [ -n "$acc" ] && args+=(--accessible "$DATA/$acc")
    [ -n "$buf" ] && args+=(--buffer-km "$buf")
    "$BIN" "${args[@]}" >/dev/null
  done
}
batch() { rm -rf "$1"; "$BIN" batch "$DATA/manifest.csv" --out "$1" --quiet >/dev/null; }
export -f batch
# Wall and CPU (user + sys of the process tree) seconds of one command, via /usr/bin/time.
timed() { /usr/bin/time -f "%e %U %S" -o "$WORK_T" "$@"; read -r w u s <"$WORK_T"; echo "$w $(python3 -c "print(f'{$u + $s:.2f}')")"; }
WORK_T=$(mktemp)
export -f loop; export BIN DATA
declare -a T_LOOP T_BATCH C_LOOP C_BATCH LOAD
for i in $(seq 1 "$REPEAT"); do
  LOAD+=("$(cut -d' ' -f1 /proc/loadavg)")
  read -r w c < <(timed bash -c 'loop target/bench-batch-loop'); T_LOOP+=("$w"); C_LOOP+=("$c")
  read -r w c < <(timed bash -c "$(declare -f batch); batch target/bench-batch-batch"); T_BATCH+=("$w"); C_BATCH+=("$c")
  echo "bench/batch: round $i (load ${LOAD[-1]}): loop ${T_LOOP[-1]} s (cpu ${C_LOOP[-1]}), batch ${T_BATCH[-1]} s (cpu ${C_BATCH[-1]})" >&2
done
rm -f "$WORK_T"
# The same results both ways.
for d in target/bench-batch-loop/*/; do
  sp=$(basename "$d")
  for f in classes.tif patches.csv records.csv summary.json; do
    cmp -s "$d/$f" "target/bench-batch-batch/$sp/$f" || { echo "bench/batch: $sp/$f differs between loop and batch" >&2; exit 1; }
  done
done
median() { printf '%s\n' "$@" | sort -n | awk '{a[NR]=$1} END {print (NR % 2) ? a[(NR+1)/2] : (a[NR/2] + a[NR/2+1]) / 2}'; }
ML=$(median "${T_LOOP[@]}") MB=$(median "${T_BATCH[@]}")
RATIO=$(python3 -c "print(f'{$ML / $MB:.2f}')")
CORES=$(nproc)
{
  echo "# Batch benchmark: \`areal batch\` against a shell loop of \`areal range\`"
  echo
  echo "Written by \`bash bench/batch.sh --repeat $REPEAT\` on $(date -u +%Y-%m-%d) (areal $("$BIN" --version | cut -d' ' -f2), $CORES cores, $(uname -m))."
  echo "40 regional species, each its own 2,000 x 2,000 float32 suitability raster (30\", 4 regions x 10"
  echo "generated worlds, ../shared/tools/make-landscape.py), 300 records each; half with M as a polygon"
  echo "(omission 5 %), half with a 150 km record buffer (omission 10 %). Loop: one \`areal range\` per row"
  echo "(each run decodes on every core). Batch: \`areal batch\` with its default --jobs ($CORES) and one decode"
  echo "thread per species, including its gather (batch.csv, batch.gpkg of 40 ranges polygonized by the"
  echo "species' workers, richness.tif on the grid shared by the most species). Both produce"
  echo "byte-identical species folders (classes.tif, patches.csv, summary.json; checked). Wall times in"
  echo "seconds, alternating loop and batch in one session on a shared machine; ratio of the medians."
  echo
  echo "| round | load average (1 min) | loop wall (s) | loop CPU (s) | batch wall (s) | batch CPU (s) |"
  echo "|---|---|---|---|---|---|"
  for i in $(seq 0 $((REPEAT - 1))); do
    echo "| $((i + 1)) | ${LOAD[$i]} | ${T_LOOP[$i]} | ${C_LOOP[$i]} | ${T_BATCH[$i]} | ${C_BATCH[$i]} |"
  done
  echo
  echo "**Throughput ratio (loop / batch, medians): ${RATIO} x** (goal >= 1.3 x)."
  echo
  echo "CPU: user + sys seconds of the whole process tree (/usr/bin/time). When the CPU columns are"
  echo "equal and the machine's load average exceeds its cores, the wall times measure the CPU"
  echo "share each side got, not the batch's concurrency; read the ratio only from an idle machine."
} > "$OUT_MD"
echo "bench/batch: ratio $RATIO x; report in $OUT_MD" >&2
