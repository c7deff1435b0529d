#!/usr/bin/env bash
# Runs as a job inside the test cluster (tests/batch_slurm_test.sh): submits `areal batch` as an
# array of 3 tasks and `areal gather` with --dependency=afterok on it, waits for both and
# checks that every task and the gather job completed. Paths must be absolute (sbatch -o).
# Usage: batch_slurm_driver.sh AREAL MANIFEST OUT LOGS
set -euo pipefail
BIN=$1 MANIFEST=$2 OUT=$3 LOGS=$4
array=$(sbatch --parsable --job-name=areal-batch --array=0-2 \
  -o "$LOGS/shard-%a.out" -e "$LOGS/shard-%a.err" \
  --wrap "exec '$BIN' batch '$MANIFEST' --out '$OUT' --omission 7 --jobs 1")
gather=$(sbatch --parsable --job-name=areal-gather --dependency="afterok:$array" \
  -o "$LOGS/gather.out" -e "$LOGS/gather.err" \
  --wrap "'$BIN' gather '$OUT'; echo \$? > '$LOGS/gather.rc'")
echo "array job $array, gather job $gather (afterok:$array)"
for _ in $(seq 1 2400); do
  [ -z "$(squeue -h -j "$array,$gather" 2>/dev/null)" ] && break
  sleep 0.25
done
[ -z "$(squeue -h -j "$array,$gather" 2>/dev/null)" ] || { echo "timed out"; scancel "$array" "$gather"; exit 1; }
bad=0
while read -r line; do
  id=${line%% *}; st=$(grep -o 'JobState=[^ ]*' <<<"$line"); ec=$(grep -o ' ExitCode=[^ ]*' <<<"$line")
  echo "$id $st$ec"
  [ "$st" = JobState=COMPLETED ] || bad=1
done < <(scontrol -o show job "$array"; scontrol -o show job "$gather")
[ -f "$LOGS/gather.rc" ] || { echo "the gather job did not run"; bad=1; }
exit $bad
