#!/usr/bin/env bash
# Kill test for atomic outputs (docs/hostile-input.md).
#
# On a generated large raster (tens of millions of cells, made once with
# ../shared/tools/make-landscape.py), `areal range --overwrite` is killed with SIGKILL at a
# random moment between its start and just after its expected end, several times, starting either from
# no output folder or from the complete result of a different run (A). After each kill the
# output folder must be absent (only when there was none before) or byte-identical to one of
# the two complete results, A or the killed run's own (B), read back through GDAL (classes.tif
# checksum) and a JSON parser (summary.json). Finally a run that is not killed must succeed,
# give B and leave no temporary folder.
#
# Environment: AREAL_BIN (default target/release/areal, built if missing), KILL_TEST_DIR
# (default target/kill-test), KILL_TEST_ROUNDS (default 6), LANDSCAPE_TOOL (default
# ../shared/tools/make-landscape.py), KILL_TEST_SEED (random seed for the kill times).
set -euo pipefail
cd "$(dirname "$0")/.."

BIN=${AREAL_BIN:-target/release/areal}
WORK=${KILL_TEST_DIR:-target/kill-test}
ROUNDS=${KILL_TEST_ROUNDS:-6}
TOOL=${LANDSCAPE_TOOL:-../shared/tools/make-landscape.py}
RANDOM=${KILL_TEST_SEED:-$$}
PY=.venv/bin/python

fail() { echo "kill test: FAIL: $*" >&2; exit 1; }
say() { echo "kill test: $*" >&2; }

[ -f "$TOOL" ] || fail "landscape generator not found at $TOOL (set LANDSCAPE_TOOL)"
if ! "$PY" -c "import numpy, rasterio" 2>/dev/null; then
  say "setting up .venv with numpy and rasterio"
  python3 -m venv .venv
  .venv/bin/pip install -q numpy rasterio
fi
[ -x "$BIN" ] || cargo build --release --quiet
command -v gdalinfo >/dev/null || fail "gdalinfo not found (bash scripts/setup.sh installs gdal-bin)"
mkdir -p "$WORK"

# A 6400 x 4800 grid (30.7 M cells) at 45 arc-seconds; made once, then reused.
LAND="$WORK/land"
if [ ! -f "$LAND.tif" ]; then
  say "generating $LAND.tif"
  "$PY" "$TOOL" --bbox -20 -30 60 30 --res-arcsec 45 --points 400 --seed 11 \
    --quiet --out "$LAND"
fi

ARGS_A=(range --suitability "$LAND.tif" --records "$LAND.occ.csv" --omission 5
  --accessible "$LAND.m.geojson" --quiet --overwrite)
ARGS_B=(range --suitability "$LAND.tif" --records "$LAND.occ.csv" --omission 10
  --buffer-km 400 --quiet --overwrite)
run_a() { "$BIN" "${ARGS_A[@]}" --out "$1" >/dev/null; }
run_b() { "$BIN" "${ARGS_B[@]}" --out "$1" >/dev/null; }

REF_A="$WORK/ref-a" REF_B="$WORK/ref-b" OUT="$WORK/out"
rm -rf "$REF_A" "$REF_B" "$OUT" "$WORK"/.out.areal-*
run_a "$REF_A"
start=$(date +%s%N)
run_b "$REF_B"
T_MS=$(( ($(date +%s%N) - start) / 1000000 ))
cmp -s "$REF_A/summary.json" "$REF_B/summary.json" && fail "runs A and B must differ"
say "reference runs done; run B takes $T_MS ms"

# Which reference does folder $1 equal, byte for byte, and read back? Prints a, b or none.
same_as() {
  local d=$1 ref name
  for ref in a b; do
    local r="$WORK/ref-$ref" ok=1
    [ "$(ls -A "$d" | sort)" = "$(ls -A "$r" | sort)" ] || ok=0
    if [ $ok = 1 ]; then
      for name in $(ls -A "$r"); do cmp -s "$d/$name" "$r/$name" || ok=0; done
    fi
    if [ $ok = 1 ]; then
      "$PY" -c "import json,sys; json.load(open(sys.argv[1]))" "$d/summary.json" || ok=0
      [ "$(gdalinfo -checksum "$d/classes.tif" | grep Checksum)" = \
        "$(gdalinfo -checksum "$r/classes.tif" | grep Checksum)" ] || ok=0
    fi
    if [ $ok = 1 ]; then echo $ref; return; fi
  done
  echo none
}

declare -A seen=()
kills=0
for round in $(seq 1 "$ROUNDS"); do
  rm -rf "$OUT"
  if (( round % 2 == 0 )); then before=a; cp -r "$REF_A" "$OUT"; else before=none; fi
  delay_ms=$(( T_MS * (5 + RANDOM % 106) / 100 ))
  # The binary itself in the background (not a subshell), so the SIGKILL reaches it.
  "$BIN" "${ARGS_B[@]}" --out "$OUT" >/dev/null & pid=$!
  sleep "$(awk "BEGIN{print $delay_ms/1000}")"
  if kill -KILL "$pid" 2>/dev/null; then killed=killed; else killed=finished; fi
  wait "$pid" 2>/dev/null || true
  [ -d "/proc/$pid" ] && fail "round $round: process $pid still running"
  if [ ! -e "$OUT" ]; then
    after=absent
    [ $before = none ] || fail "round $round: the previous result vanished (killed after $delay_ms ms)"
  else
    after=$(same_as "$OUT")
    [ "$after" != none ] || fail "round $round: $OUT holds a mix or a partial result (killed after $delay_ms ms)"
    [ "$after" = b ] || [ $before = a ] || fail "round $round: result A appeared from nowhere"
  fi
  seen[$after]=$(( ${seen[$after]:-0} + 1 ))
  [ $killed = killed ] && kills=$((kills + 1))
  say "round $round: before=$before, $killed at $delay_ms ms, folder=$after"
done

run_b "$OUT" || fail "a run after the kills failed"
if [ "$(same_as "$OUT")" != b ]; then
  for name in $(ls -A "$REF_B"); do cmp -s "$OUT/$name" "$REF_B/$name" || say "differs from B: $name"; done
  say "files: $(ls -A "$OUT" | tr '\n' ' ')"
  fail "the run after the kills did not give result B"
fi
left=$(ls -A "$WORK" | grep -c 'areal-' || true)
[ "$left" = 0 ] || fail "temporary folders left beside $OUT: $(ls -A "$WORK" | grep areal-)"
(( kills > 0 )) || fail "no run was killed before it finished; the raster is too small for this machine"
say "ok: $kills of $ROUNDS runs killed; outcomes: $(for k in "${!seen[@]}"; do printf '%s=%s ' "$k" "${seen[$k]}"; done)"
