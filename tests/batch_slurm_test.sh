#!/usr/bin/env bash
# A real Slurm job array (docs/cluster.md): on a throw-away single-node cluster
# (../shared/cluster/slurm-single-node.sh: munged, slurmctld, slurmd as root, Debian
# slurm-wlm 22.05), the batch fixture (tests/batch_fixture.sh) runs as an array of 3 tasks,
# each taking its shard from SLURM_ARRAY_TASK_ID/COUNT, and `areal gather` as a job with
# --dependency=afterok on the array. The result must equal an unsharded batch: batch.csv (less
# the seconds column), richness.tif and every species' outputs, byte for byte.
#
# The cluster script runs one command as a job; here that command is
# tests/batch_slurm_driver.sh, which submits the array and the dependent gather with sbatch
# from inside the cluster and waits for both.
#
# Needs root. Installs slurmctld, slurmd, slurm-client and munge with apt-get when missing.
# Environment: AREAL_BIN, SLURM_SINGLE_NODE (default ../shared/cluster/slurm-single-node.sh),
# BATCH_SLURM_DIR (default target/batch-slurm).
set -euo pipefail
cd "$(dirname "$0")/.."
BIN=$(realpath "${AREAL_BIN:-target/release/areal}")
CLUSTER=${SLURM_SINGLE_NODE:-../shared/cluster/slurm-single-node.sh}
WORK=$(realpath -m "${BATCH_SLURM_DIR:-target/batch-slurm}")
FIX=$(realpath -m target/batch-fixture)
fail() { echo "batch slurm test: FAIL: $*" >&2; exit 1; }
say() { echo "batch slurm test: $*" >&2; }

[ "$(id -u)" = 0 ] || fail "needs root (slurmd launches jobs as root); run it as root"
[ -f "$CLUSTER" ] || fail "cluster script not found at $CLUSTER (set SLURM_SINGLE_NODE)"
if ! command -v slurmctld >/dev/null || ! command -v munged >/dev/null || ! command -v sbatch >/dev/null; then
  say "installing slurmctld slurmd slurm-client munge (apt-get)"
  pkgs=(slurmctld slurmd slurm-client munge)
  DEBIAN_FRONTEND=noninteractive apt-get install -y --no-install-recommends "${pkgs[@]}" >/dev/null ||
    { apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y --no-install-recommends "${pkgs[@]}" >/dev/null; } ||
    fail "apt-get could not install ${pkgs[*]}"
fi
[ -x "$BIN" ] || cargo build --release --quiet
bash tests/batch_fixture.sh "$FIX"
rm -rf "$WORK"; mkdir -p "$WORK/logs"; chmod 755 "$WORK" "$WORK/logs"

"$BIN" batch "$FIX/manifest.csv" --out "$WORK/ref" --omission 7 --quiet >/dev/null 2>&1 || [ $? = 6 ] || fail "reference batch failed"

say "starting a single-node cluster; array of 3 shards, then gather with afterok"
bash "$CLUSTER" -a 0 -t 900 -l "$WORK/cluster-logs" --show-output -- \
  bash "$PWD/tests/batch_slurm_driver.sh" "$BIN" "$FIX/manifest.csv" "$WORK/out" "$WORK/logs" ||
  fail "the cluster run failed (exit $?); see the output above and $WORK/cluster-logs"

for i in 0 1 2; do
  grep -q "shard $i/3 (from the Slurm array variables)" "$WORK/logs/shard-$i.err" ||
    fail "task $i did not take shard $i/3 from Slurm: $(cat "$WORK/logs/shard-$i.err")"
done
[ "$(cat "$WORK/logs/gather.rc")" = 6 ] || fail "gather exit $(cat "$WORK/logs/gather.rc"), expected 6 (two species fail)"
diff <(cut -d, -f1-12,14- "$WORK/ref/batch.csv") <(cut -d, -f1-12,14- "$WORK/out/batch.csv") ||
  fail "batch.csv of the Slurm array differs from the unsharded batch"
cmp -s "$WORK/ref/richness.tif" "$WORK/out/richness.tif" || fail "richness.tif differs"
for sp in "$WORK"/ref/*/; do
  name=$(basename "$sp")
  for f in classes.tif patches.csv records.csv summary.json areal-run.toml; do
    cmp -s "$sp/$f" "$WORK/out/$name/$f" || fail "$name/$f differs"
  done
done
say "PASS: 3-task Slurm array + dependent gather equal the unsharded batch"
