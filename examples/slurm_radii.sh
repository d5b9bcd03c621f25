#!/bin/bash
# A sharded sleek run on a Slurm cluster: one array task per shard, then one merge job.
#
#   sbatch examples/slurm_radii.sh          # submits the array, and the merge after it
#
# Every shard uses the same --seed; sample i depends only on (seed, i), so the merged folder
# equals, byte for byte, what one machine would have written with the same options. A task
# that is killed (time limit, pre-emption) is resubmitted with --resume and loses nothing but
# the samples it was computing. Adjust SHARDS, the options and the #SBATCH lines to your site.
#
#SBATCH --job-name=sleek-radii
#SBATCH --array=1-16
#SBATCH --cpus-per-task=4
#SBATCH --time=02:00:00
#SBATCH --output=slurm-%A_%a.out

set -euo pipefail
SHARDS=16
RUN=${RUN:-runs/radii-k6}
SLEEK=${SLEEK:-target/release/sleek}
# The run's options (the same for every shard; SLEEK_OPTIONS overrides them).
read -r -a OPTIONS <<< "${SLEEK_OPTIONS:-radii --kappa 6 --at 0,0 --at 0.5,0 --samples 200000 --levels 3 --seed 2026}"

if [[ -n "${SLURM_ARRAY_TASK_ID:-}" ]]; then
    K=$SLURM_ARRAY_TASK_ID
    DIR="$RUN/shard-$K"
    export RAYON_NUM_THREADS=${SLURM_CPUS_PER_TASK:-1}
    if [[ -f "$DIR/run.json" ]] && ! grep -q '"state": "complete"' "$DIR/run.json"; then
        "$SLEEK" "${OPTIONS[@]}" --shard "$K/$SHARDS" --out "$DIR" --resume --quiet
    else
        "$SLEEK" "${OPTIONS[@]}" --shard "$K/$SHARDS" --out "$DIR" --quiet
    fi
    # The last task to finish does not know it is last: the merge is a separate job (below).
    exit 0
fi

# Run by hand (not as an array task): submit the array, then the merge once every task is done.
ARRAY=$(sbatch --parsable "$0")
sbatch --dependency=afterok:"$ARRAY" --job-name=sleek-merge --wrap \
    "$SLEEK merge $RUN/shard-* --out $RUN/merged > $RUN/merged.txt"
echo "submitted array $ARRAY; results in $RUN/merged"
