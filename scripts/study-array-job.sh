#!/usr/bin/env bash
# SPDX-License-Identifier: Apache-2.0
# A study as a job array: every array task runs one shard of the cases
# (`recofold study --shard auto`, which reads the task index and count the
# scheduler puts in the environment), then one merge step combines the task
# folders into a folder equal to a one-process run (README "Studies on
# clusters"). OUT must be on a filesystem every task sees.
#
# Usage:
#   scripts/study-array-job.sh submit CONFIG OUT N   Slurm: an N-task array, then the merge after it
#   scripts/study-array-job.sh task   CONFIG OUT     inside an array task (Slurm, Grid Engine, PBS Pro,
#                                                    LSF): the task's shard into OUT/task-<index>
#   scripts/study-array-job.sh merge  OUT            OUT/task-* merged into OUT/merged
#   scripts/study-array-job.sh local  CONFIG OUT N   no scheduler: the N tasks one after another here
#                                                    (as Slurm would set them), then the merge
# Other schedulers, the task line of a job script (common practice):
#   Grid Engine:  qsub -t 1-N   ... study-array-job.sh task CONFIG OUT
#   PBS Pro:      qsub -J 1-N -v RECOFOLD_SHARD_COUNT=N   ... task CONFIG OUT
#   LSF:          bsub -J "study[1-N]" -env "all, RECOFOLD_SHARD_COUNT=N"   ... task CONFIG OUT
# and the merge as a job that depends on the array (qsub -hold_jid, qsub -W
# depend=afterok:, bsub -w "done(study)").
# RECOFOLD names the program (default: recofold on the PATH).
set -euo pipefail
recofold=${RECOFOLD:-recofold}
mode=${1:-}

task_index() {
  echo "${SLURM_ARRAY_TASK_ID:-${SGE_TASK_ID:-${PBS_ARRAY_INDEX:-${LSB_JOBINDEX:-}}}}"
}

case "$mode" in
  submit)
    config=$(realpath "$2"); out=$(realpath -m "$3"); n=$4
    mkdir -p "$out"
    array=$(sbatch --parsable --array="1-$n" --job-name=recofold-study --output="$out/task-%a.log" \
      --wrap="RECOFOLD='$recofold' '$(realpath "$0")' task '$config' '$out'")
    sbatch --dependency="afterok:$array" --job-name=recofold-merge --output="$out/merge.log" \
      --wrap="RECOFOLD='$recofold' '$(realpath "$0")' merge '$out'"
    ;;
  task)
    config=$2; out=$3
    index=$(task_index)
    if [ -z "$index" ]; then
      echo "study-array-job: no array task index in the environment (run it as an array task)" >&2
      exit 2
    fi
    mkdir -p "$out"
    "$recofold" --quiet study --config "$config" --out "$out/task-$index" --shard auto
    ;;
  merge)
    out=$2
    mapfile -t tasks < <(ls -d "$out"/task-* 2>/dev/null | grep -v '\.log$' | sort -V)
    "$recofold" study --merge "${tasks[@]}" --out "$out/merged"
    ;;
  local)
    config=$2; out=$3; n=$4
    for i in $(seq 1 "$n"); do
      SLURM_ARRAY_TASK_ID=$i SLURM_ARRAY_TASK_MIN=1 SLURM_ARRAY_TASK_COUNT=$n "$0" task "$config" "$out"
    done
    "$0" merge "$out"
    ;;
  *)
    sed -n '3,25p' "$0" >&2
    exit 2
    ;;
esac
