#!/usr/bin/env bash
# Disk-full test of `areal batch` (docs/cluster.md, "Durability"): a batch of the batch fixture
# (tests/batch_fixture.sh) into a 400 KB tmpfs must stop with an output error (exit 4) naming
# a species folder, leave only complete species folders (each passes `areal verify`) and no
# temporary folder; after the filesystem is grown, the same command resumes and gives the
# batch.csv of a batch that never ran out of space (less the seconds column).
#
# Mounting needs root (CI runs as root). Where mount is refused, the test uses a file-size
# limit instead (ulimit -f, with SIGXFSZ ignored so writes fail with EFBIG) and says so.
set -euo pipefail
cd "$(dirname "$0")/.."
BIN=$(realpath "${AREAL_BIN:-target/release/areal}")
WORK=$(realpath -m "${BATCH_DISK_DIR:-target/batch-disk}")
FIX=target/batch-fixture
fail() { echo "batch disk-full test: FAIL: $*" >&2; exit 1; }
say() { echo "batch disk-full test: $*" >&2; }
[ -x "$BIN" ] || cargo build --release --quiet
bash tests/batch_fixture.sh "$FIX"
mountpoint -q "$WORK/small" 2>/dev/null && umount "$WORK/small"
rm -rf "$WORK"; mkdir -p "$WORK/small"
ARGS=(batch "$FIX/manifest.csv" --omission 7 --jobs 1 --quiet)
"$BIN" "${ARGS[@]}" --out "$WORK/ref" >/dev/null 2>&1 || [ $? = 6 ] || fail "reference batch failed"

OUT="$WORK/small/b"
if [ "${BATCH_DISK_MODE:-tmpfs}" = tmpfs ] && mount -t tmpfs -o size=400k areal-batch-test "$WORK/small" 2>/dev/null; then
  MODE=tmpfs
  trap 'umount "$WORK/small" 2>/dev/null || true' EXIT
  say "a 400 KB tmpfs at $WORK/small"
  set +e; "$BIN" "${ARGS[@]}" --out "$OUT" >"$WORK/full.out" 2>"$WORK/full.err"; rc=$?; set -e
else
  MODE=ulimit
  say "mount refused here (or BATCH_DISK_MODE=ulimit): using a file-size limit of 16 KB (ulimit -f 16) instead of a small filesystem"
  set +e; ( trap '' XFSZ; ulimit -f 16; exec "$BIN" "${ARGS[@]}" --out "$OUT" ) >"$WORK/full.out" 2>"$WORK/full.err"; rc=$?; set -e
fi
err=$(cat "$WORK/full.err")
[ "$rc" = 4 ] || fail "expected exit 4 on a full disk, got $rc: $err"
echo "$err" | grep -q "areal: error: $OUT/[A-Za-z0-9_]*: the disk is full" || fail "the error does not name the species folder: $err"
say "full ($MODE): $err"
n=0
for sp in "$OUT"/*/; do
  [ -d "$sp" ] || continue
  "$BIN" verify "$sp" >/dev/null 2>&1 || fail "$sp is not a complete run folder"
  n=$((n + 1))
done
[ "$n" -ge 1 ] && [ "$n" -lt 18 ] || fail "expected some but not all species complete before the disk filled, got $n"
left=$(find "$OUT" -name '*areal-tmp*' | head -3)
[ -z "$left" ] || fail "temporary folders left: $left"
say "$n species complete and verified before the disk filled"

# Space is back: the same command resumes and completes.
if [ "$MODE" = tmpfs ]; then mount -o remount,size=64m "$WORK/small"; fi
"$BIN" "${ARGS[@]}" --out "$OUT" >/dev/null 2>&1 || [ $? = 6 ] || fail "the resume failed"
diff <(cut -d, -f1-12,14- "$WORK/ref/batch.csv") <(cut -d, -f1-12,14- "$OUT/batch.csv") || fail "batch.csv after the resume differs"
for sp in "$WORK"/ref/*/; do
  name=$(basename "$sp")
  cmp -s "$sp/classes.tif" "$OUT/$name/classes.tif" || fail "$name/classes.tif differs after the resume"
done
say "PASS ($MODE): resumed to the batch.csv of an uninterrupted batch"
