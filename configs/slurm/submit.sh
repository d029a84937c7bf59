#!/bin/bash
# Run a quenchwise screen on a Slurm cluster: the first pass is split into
# SHARDS pieces that run as one job array, and a merge job, which starts only
# when every array task has succeeded, writes the results a single
# `quenchwise screen` would write (the same shortlist, byte for byte).
#
# 1. Edit the two lines marked EDIT below.
# 2. From the folder where the results should go, run:
#        bash configs/slurm/submit.sh
#    It checks the config, then submits
#        shard.sh  as array tasks 0..SHARDS-1  -> shards/shard-0, shards/shard-1, ...
#        merge.sh  after all of them            -> results/
#    Logs go to logs/ (shard-ARRAYJOB_TASK.log, merge-JOB.log).
#    Watch with `squeue --me`.
# 3. If a task failed (see its log; a time limit, a node that died), rerun it:
#        bash configs/slurm/submit.sh rerun 2        # several: rerun 2 5 7
#    The task continues from the chunks it had kept (--resume), and a new
#    merge job is submitted. (The old merge job was cancelled by Slurm when the
#    task failed; `squeue --me` no longer lists it.)
#
# Changed the config or SHARDS after a run? Delete (or rename) shards/ and
# results/ first: the tasks refuse to continue a run that meant something else.
#
# Resources (time, memory, CPUs) are the #SBATCH lines in shard.sh and
# merge.sh; your site may need more (e.g. --partition or --account).
set -euo pipefail

# ---- EDIT: the two settings --------------------------------------------
CONFIG=configs/demo-screen.toml   # your screen config, as a path from the folder you submit from
SHARDS=4                          # how many array tasks to split the first pass into
# --------------------------------------------------------------------------

# The program. Set QUENCHWISE=/path/to/quenchwise to choose one; otherwise
# `quenchwise` on your PATH, else target/release/quenchwise (a build in this
# folder). The compute nodes must see the same path (a shared file system).
if [ -z "${QUENCHWISE:-}" ]; then
  if command -v quenchwise >/dev/null; then
    QUENCHWISE=quenchwise
  elif [ -x target/release/quenchwise ]; then
    QUENCHWISE=target/release/quenchwise
  else
    echo "submit.sh: no quenchwise program: put it on your PATH or set QUENCHWISE=/path/to/quenchwise" >&2
    exit 2
  fi
fi
# An absolute path, so the jobs run this very program.
if [[ "$QUENCHWISE" != */* ]]; then
  QUENCHWISE=$(command -v "$QUENCHWISE")
fi
QUENCHWISE=$(cd "$(dirname "$QUENCHWISE")" && pwd)/$(basename "$QUENCHWISE")

# Set only for a rerun (below), never taken from your shell.
unset QUENCHWISE_SHARDS

# shard.sh and merge.sh sit beside this script.
HERE=$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)

if ! [[ "$SHARDS" =~ ^[1-9][0-9]*$ ]]; then
  echo "submit.sh: SHARDS must be a whole number of at least 1, got '$SHARDS'" >&2
  exit 2
fi

case "${1:-}" in
  "")
    TASKS="0-$((SHARDS - 1))"
    EXPORT=()   # each task takes K/N from $SLURM_ARRAY_TASK_ID/$SLURM_ARRAY_TASK_COUNT
    ;;
  rerun)
    shift
    if [ $# -eq 0 ]; then
      echo "submit.sh: which tasks? e.g. bash $0 rerun 2 5" >&2
      exit 2
    fi
    for k in "$@"; do
      if ! [[ "$k" =~ ^[0-9]+$ ]] || [ "$k" -ge "$SHARDS" ]; then
        echo "submit.sh: task '$k' is not one of 0..$((SHARDS - 1))" >&2
        exit 2
      fi
    done
    TASKS=$(IFS=,; echo "$*")
    # An array of only these tasks has a smaller task count: name the run's.
    EXPORT=(--export="ALL,QUENCHWISE_SHARDS=$SHARDS")
    ;;
  *)
    echo "usage: bash $0            submit the screen (array + merge)" >&2
    echo "       bash $0 rerun K... rerun array tasks K..., then merge again" >&2
    exit 2
    ;;
esac

# Check the config here, before anything waits in the queue.
"$QUENCHWISE" check "$CONFIG"

mkdir -p logs   # Slurm does not create the folder of a log file
ARRAY=$(sbatch --parsable --array="$TASKS" "${EXPORT[@]}" "$HERE/shard.sh" "$CONFIG" "$QUENCHWISE")
ARRAY=${ARRAY%%;*}   # some sites print "jobid;cluster"
# afterok: start only if every task succeeded; a failed task cancels the merge.
MERGE=$(sbatch --parsable --dependency="afterok:$ARRAY" --kill-on-invalid-dep=yes \
  "$HERE/merge.sh" "$QUENCHWISE")
MERGE=${MERGE%%;*}
echo "submitted array job $ARRAY (tasks $TASKS of 0-$((SHARDS - 1)); logs/shard-${ARRAY}_K.log)"
echo "submitted merge job $MERGE (runs when those tasks have succeeded; logs/merge-$MERGE.log, results in results/)"
