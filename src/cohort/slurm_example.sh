#!/bin/bash
# Fit a cohort as a Slurm job array: one task per shard, then merge the tables.
# Adjust the paths, the number of shards (here 10) and the resources to your cluster.
#
#   sbatch fit-cohort.sh                       # submits tasks 1..10
#   trialdesk merge results/ --out cohort_params.csv   # after all tasks have finished
#
# Each task lists the same cohort folder, sorts the subject folders by name and takes every
# 10th of them (task K takes subjects K, K+10, K+20, ...), so tasks never overlap and together
# cover every subject. A task writes results/<subject>/params.csv and trials.csv.
#SBATCH --job-name=trialdesk-fit
#SBATCH --array=1-10
#SBATCH --cpus-per-task=2
#SBATCH --mem=2G
#SBATCH --time=01:00:00
#SBATCH --output=logs/fit_%A_%a.log

set -euo pipefail

COHORT=/data/cohort-2026-spring   # a folder of subject folders
RESULTS=results                   # per-subject tables land in $RESULTS/<subject>/
SHARDS=10                         # must match --array above

mkdir -p "$RESULTS" logs
# Each task uses the cores Slurm gave it.
export RAYON_NUM_THREADS="${SLURM_CPUS_PER_TASK:-1}"

trialdesk fit "$COHORT" --shard "${SLURM_ARRAY_TASK_ID}/${SHARDS}" --out "$RESULTS"

# Merge once every task is done, e.g. in a follow-up job:
#   sbatch --dependency=afterok:<array job id> --wrap "trialdesk merge $RESULTS --out cohort_params.csv"
