#!/bin/bash
# One shard of a quenchwise screen: one task of a Slurm job array.
#
# submit.sh (beside this file) submits it for you. By hand, from the folder
# where shards/ and logs/ should go (4 shards here):
#     mkdir -p logs
#     sbatch --array=0-3 configs/slurm/shard.sh configs/demo-screen.toml 4 [PROGRAM]
# and to rerun task 2 only (it continues from what it kept):
#     sbatch --array=2 configs/slurm/shard.sh configs/demo-screen.toml 4 [PROGRAM]
# Arguments: the config, the number of shards, the quenchwise program
# (default: quenchwise on the PATH).
#
# Task K writes shards/shard-K/ (its share of the first pass, in .work/);
# merge.sh combines them. Nothing here needs editing, except the resources.
#
# Resources: site-dependent defaults, change them for your cluster.
#   --time           a shard takes about first_pass_points / shards / 10000
#                    seconds on one CPU for the demo config (a release build
#                    did about 10 000 candidates per second per CPU); your
#                    models and limits may be slower: time a small run first.
#                    At the limit quenchwise stops at a safe point, and the
#                    task can be rerun to continue.
#   --cpus-per-task  worker threads of the shard; more shards use a cluster
#                    better than more threads per shard.
#   --mem            about 40 MB was measured for a demo shard; a shard
#                    holds one chunk of rows at a time.
#SBATCH --job-name=quenchwise-shard
#SBATCH --output=logs/shard-%A_%a.log
#SBATCH --time=02:00:00
#SBATCH --cpus-per-task=1
#SBATCH --mem=1G
set -euo pipefail

if [ $# -lt 2 ] || [ -z "${SLURM_ARRAY_TASK_ID:-}" ]; then
  echo "shard.sh: submit it as a job array: sbatch --array=0-3 $0 CONFIG 4 [PROGRAM]" >&2
  exit 2
fi
CONFIG=$1
SHARDS=$2
QUENCHWISE=${3:-quenchwise}
K=$SLURM_ARRAY_TASK_ID

# The shard count comes from the arguments, not from $SLURM_ARRAY_TASK_COUNT:
# an array resubmitted to rerun one task has a count of 1.
if ! [[ "$SHARDS" =~ ^[1-9][0-9]*$ ]] || [ "$K" -ge "$SHARDS" ]; then
  echo "shard.sh: task $K but $SHARDS shards: tasks are numbered 0..$((SHARDS - 1))" >&2
  exit 2
fi

OUT=shards/shard-$K
mkdir -p shards
if [ -f "$OUT/.work/header.json" ]; then
  # A rerun: continue from the chunks this shard kept (done ones are skipped).
  HOW=--resume
elif [ -e "$OUT/.quenchwise-files" ]; then
  # A first try stopped before it kept anything: start this shard again
  # (--force removes only files quenchwise wrote there).
  HOW=--force
else
  HOW=
fi

echo "shard $K/$SHARDS of $CONFIG on $(hostname), $(date)${HOW:+, $HOW}"
# exec: the time-limit signal reaches quenchwise, which stops cleanly.
exec "$QUENCHWISE" screen "$CONFIG" --out "$OUT" --shard "$K/$SHARDS" \
  --threads "${SLURM_CPUS_PER_TASK:-1}" $HOW
