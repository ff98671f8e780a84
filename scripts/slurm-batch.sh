#!/usr/bin/env bash
# One part of a sharded `stemcast batch` run as a Slurm job array task (docs/commands.md#batch).
#
#   sbatch --array=1-8 scripts/slurm-batch.sh SCENARIO.toml TREES.csv PREFIX [batch options]
#   stemcast merge PREFIX.part*.csv --out PREFIX.csv
#
# Task K of the array writes PREFIX.partK.csv (with its run record); `--shard from-env` turns
# the task id into the part (arrays numbered from 0 or 1 both work), and `--resume` lets a
# requeued or killed task continue where it stopped. Set STEMCAST to the binary's path if it is
# not on PATH, and --cpus-per-task for more threads per task.
#SBATCH --job-name=stemcast-batch
#SBATCH --output=stemcast-batch-%A_%a.log
set -euo pipefail
if [ "$#" -lt 3 ]; then
  echo "usage: sbatch --array=1-N $0 SCENARIO.toml TREES.csv PREFIX [batch options]" >&2
  exit 2
fi
scenario=$1 trees=$2 prefix=$3
shift 3
exec "${STEMCAST:-stemcast}" batch "$scenario" --trees "$trees" --shard from-env \
  --out "$prefix.part${SLURM_ARRAY_TASK_ID}.csv" --threads "${SLURM_CPUS_PER_TASK:-1}" \
  --resume "$@"
