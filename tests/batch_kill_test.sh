#!/usr/bin/env bash
# Kill test of `areal batch` (docs/cluster.md, "Resume"): on the batch fixture
# (tests/batch_fixture.sh, 20 species), a batch is SIGKILLed at a random moment, started again
# and killed again, then resumed to the end; every round must give the batch.csv of an
# uninterrupted batch (less the seconds column) and the same bytes in every species folder.
# After each kill every species folder present must pass `areal verify` (no partial folder),
# and after the resume no temporary folder or lock is left.
#
# Environment: AREAL_BIN (default target/release/areal), BATCH_KILL_DIR (default
# target/batch-kill), BATCH_KILL_ROUNDS (default 10), BATCH_KILL_SEED.
set -euo pipefail
cd "$(dirname "$0")/.."
BIN=$(realpath "${AREAL_BIN:-target/release/areal}")
WORK=${BATCH_KILL_DIR:-target/batch-kill}
ROUNDS=${BATCH_KILL_ROUNDS:-10}
RANDOM=${BATCH_KILL_SEED:-$$}
FIX=target/batch-fixture
fail() { echo "batch kill test: FAIL: $*" >&2; exit 1; }
say() { echo "batch kill test: $*" >&2; }

[ -x "$BIN" ] || cargo build --release --quiet
bash tests/batch_fixture.sh "$FIX"
rm -rf "$WORK"; mkdir -p "$WORK"
ARGS=(batch "$FIX/manifest.csv" --omission 7 --jobs 2 --quiet)
batch() { "$BIN" "${ARGS[@]}" --out "$1" >/dev/null 2>&1; }
strip_seconds() { cut -d, -f1-12,14- "$1/batch.csv"; }

start=$(date +%s%N)
batch "$WORK/ref" || [ $? = 6 ] || fail "reference batch failed"
T_MS=$(( ($(date +%s%N) - start) / 1000000 ))
[ -f "$WORK/ref/batch.csv" ] || fail "reference batch wrote no batch.csv"
say "reference batch takes $T_MS ms; $ROUNDS rounds"

check_folders() {  # every species folder present verifies against its run file
  local d=$1 sp
  for sp in "$d"/*/; do
    [ -d "$sp" ] || continue
    "$BIN" verify "$sp" >/dev/null 2>&1 || fail "round $r: ${sp} is not a complete run folder after a kill"
  done
}

for r in $(seq 1 "$ROUNDS"); do
  out="$WORK/out"
  rm -rf "$out"
  for k in 1 2; do
    "$BIN" "${ARGS[@]}" --out "$out" >/dev/null 2>&1 & pid=$!   # areal itself, not a subshell
    ms=$(( RANDOM % (T_MS + 50) ))
    sleep "$(printf '%d.%03d' $((ms / 1000)) $((ms % 1000)))"
    kill -9 "$pid" 2>/dev/null || true
    wait "$pid" 2>/dev/null || true
    [ -d "$out" ] && check_folders "$out"
    say "round $r: kill $k after $ms ms: $(ls "$out" 2>/dev/null | grep -vc '\.' || true) species folders"
  done
  batch "$out" || [ $? = 6 ] || fail "round $r: resume failed"
  diff <(strip_seconds "$WORK/ref") <(strip_seconds "$out") >/dev/null || fail "round $r: batch.csv differs from the uninterrupted batch"
  for sp in "$WORK"/ref/*/; do
    name=$(basename "$sp")
    for f in classes.tif patches.csv records.csv summary.json areal-run.toml; do
      cmp -s "$sp/$f" "$out/$name/$f" || fail "round $r: $name/$f differs"
    done
  done
  cmp -s "$WORK/ref/richness.tif" "$out/richness.tif" || fail "round $r: richness.tif differs"
  left=$(find "$out" -name '*areal-tmp*' -o -name 'lock-*' -o -name '.*.tmp-*' | head -3)
  [ -z "$left" ] || fail "round $r: left behind: $left"
done
say "PASS: $ROUNDS rounds"
