#!/bin/bash
# Merge the shards of a quenchwise screen into results/: the refinement, the
# shortlist, batch sheets, tables and report, the same as one unsplit run.
#
# submit.sh (beside this file) submits it after the array. By hand, from the
# folder that holds shards/ (ARRAYJOB = the array's job id):
#     sbatch --dependency=afterok:ARRAYJOB --kill-on-invalid-dep=yes configs/slurm/merge.sh [PROGRAM]
# or, once every task has finished, just `sbatch configs/slurm/merge.sh`.
# Argument: the quenchwise program (default: quenchwise on the PATH).
#
# merge checks that the shards come from the same config, files and seed and
# that together they hold every chunk of the first pass; otherwise it fails
# and its log (logs/merge-JOB.log) names the shard that is missing or
# unfinished: rerun that task (bash configs/slurm/submit.sh rerun K).
#
# The shards' checkpoints stay in shards/ after the merge (about 150 bytes
# per first-pass candidate): delete shards/ once results/ holds what you need.
#
# Resources: site-dependent defaults, change them for your cluster. The merge
# reads every shard's chunks once and refines the best seeds in parallel
# (--cpus-per-task threads); about 65 MB of memory was measured for the demo.
#SBATCH --job-name=quenchwise-merge
#SBATCH --output=logs/merge-%j.log
#SBATCH --time=01:00:00
#SBATCH --cpus-per-task=2
#SBATCH --mem=2G
set -euo pipefail

QUENCHWISE=${1:-quenchwise}

# Every shard folder a task began; a folder without a checkpoint header (its
# task failed before it kept anything) is left out, so that the merge names
# that shard as missing.
shopt -s nullglob
SHARD_DIRS=()
for d in shards/shard-*; do
  if [ -f "$d/.work/header.json" ]; then
    SHARD_DIRS+=("$d")
  else
    echo "merge.sh: $d holds no shard yet (its task failed or has not run)"
  fi
done
if [ ${#SHARD_DIRS[@]} -eq 0 ]; then
  echo "merge.sh: no shard in shards/shard-* of $(pwd): submit from the folder the array ran in, after the array" >&2
  exit 2
fi

if [ -f results/.work/header.json ]; then
  # An earlier merge was stopped (or has finished): continue it.
  HOW=--resume
else
  HOW=
fi

echo "merging ${#SHARD_DIRS[@]} shards into results/ on $(hostname), $(date)${HOW:+, $HOW}"
exec "$QUENCHWISE" merge --out results --threads "${SLURM_CPUS_PER_TASK:-1}" $HOW "${SHARD_DIRS[@]}"
