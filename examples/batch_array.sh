#!/bin/bash
# Slurm-style batch array: one shard of the same run per array task, then one merge job.
#
#   jobid=$(sbatch --parsable --array=0-15 examples/batch_array.sh)
#   sbatch --dependency=afterok:$jobid --wrap \
#       "sunrecoil merge runs/b8_1e9.h5 runs/shards/b8_1e9.shard-*.h5"
#
# Every task must use the same configuration, --events and --seed (the seed fixes the run;
# shard I of N then writes chunks [I*K/N, (I+1)*K/N) of its K chunks). A task killed by the
# time limit is continued by resubmitting it: --resume picks up its .NAME.tmp file.
#SBATCH --job-name=sunrecoil-shard
#SBATCH --cpus-per-task=2
#SBATCH --time=02:00:00
#SBATCH --output=runs/logs/shard-%a.log
set -euo pipefail

N_SHARDS=${SLURM_ARRAY_TASK_COUNT:-16}
I=${SLURM_ARRAY_TASK_ID:?run as a batch array task (or set SLURM_ARRAY_TASK_ID)}
OUT=runs/shards/b8_1e9.shard-$(printf '%04d' "$I").h5
mkdir -p runs/shards runs/logs

RESUME=()
if [ -e "runs/shards/.$(basename "$OUT").tmp" ]; then
    RESUME=(--resume)                    # a previous attempt of this task was killed
fi
sunrecoil generate configs/water_cherenkov.toml --events 1000000000 --seed 20310101 \
    --shard "$I/$N_SHARDS" -o "$OUT" --quiet "${RESUME[@]}"
