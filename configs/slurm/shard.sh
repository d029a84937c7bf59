#!/bin/bash
# One shard of a quenchwise screen: one task of a Slurm job array.
#
# submit.sh (beside this file) submits it for you. By hand, from the folder
# where shards/ and logs/ should go (4 shards here):
#     mkdir -p logs
#     sbatch --array=0-3 configs/slurm/shard.sh configs/demo-screen.toml [PROGRAM]
# Task K of the N tasks runs
#     quenchwise screen CONFIG --out shards/shard-K --shard K/N
# with K = $SLURM_ARRAY_TASK_ID and N = $SLURM_ARRAY_TASK_COUNT.
# To rerun task 2 alone (it continues from the chunks it kept), say how many
# shards the run has, since an array of one task has a count of 1:
#     sbatch --array=2 --export=ALL,QUENCHWISE_SHARDS=4 configs/slurm/shard.sh configs/demo-screen.toml [PROGRAM]
# Arguments: the config, the quenchwise program (default: quenchwise on the
# PATH). merge.sh combines the shard folders.
#
# Resources: site-dependent defaults, change them for your cluster.
#   --time           a shard takes about first_pass_points / shards / 30000
#                    seconds on one CPU for the demo config (a release build
#                    did 30 000-50 000 candidates per second per CPU, whole
#                    runs and the kernel alone, on a 2-core test machine,
#                    2026-12-03); your models, limits and CPUs may be
#                    slower: time a small run first and leave a margin.
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

if [ $# -lt 1 ] || [ -z "${SLURM_ARRAY_TASK_ID:-}" ]; then
  echo "shard.sh: submit it as a job array: sbatch --array=0-3 $0 CONFIG [PROGRAM]" >&2
  exit 2
fi
CONFIG=$1
QUENCHWISE=${2:-quenchwise}
K=$SLURM_ARRAY_TASK_ID
# N: the array's task count, unless a rerun of some tasks names the count.
N=${QUENCHWISE_SHARDS:-$SLURM_ARRAY_TASK_COUNT}

if ! [[ "$N" =~ ^[1-9][0-9]*$ ]] || [ "$K" -ge "$N" ]; then
  echo "shard.sh: task $K of $N shards: tasks are numbered 0..$((N - 1)) (an array --array=0-$((N - 1)); a rerun sets QUENCHWISE_SHARDS)" >&2
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

echo "shard $K/$N of $CONFIG on $(hostname), $(date)${HOW:+, $HOW}"
# exec: the time-limit signal reaches quenchwise, which stops cleanly.
exec "$QUENCHWISE" screen "$CONFIG" --out "$OUT" --shard "$K/$N" \
  --threads "${SLURM_CPUS_PER_TASK:-1}" $HOW
