#!/bin/bash
# A sharded sleek run on a Slurm cluster: one array task per shard, then one merge job.
#
#   bash examples/slurm_radii.sh            # submits the array and, after it, the merge
#   bash examples/slurm_radii.sh --merge    # merge by hand (e.g. after resubmitting tasks)
#
# Start it with bash, not sbatch: run by hand it submits itself as a job array
# (sbatch --array=1-SHARDS) and a merge job that waits for the whole array
# (--dependency=afterany). Every shard uses the same --seed; sample i depends only on (seed, i),
# so the merged folder equals, byte for byte, what one machine writes with the same options.
#
# A task stopped by its time limit (SIGTERM) saves its finished samples and exits with 130; the
# merge then refuses, naming the unfinished shard. Resubmit only those tasks, e.g.
#   sbatch --array=3,7 examples/slurm_radii.sh
# (a task resumes its folder and skips a shard that is already complete), then merge by hand.
# Adjust SHARDS (and the --array line to match), the options and the #SBATCH lines to your site.
#
#SBATCH --job-name=sleek-radii
#SBATCH --array=1-16
#SBATCH --cpus-per-task=4
#SBATCH --time=02:00:00
#SBATCH --signal=B:TERM@60
#SBATCH --output=slurm-%A_%a.out

set -euo pipefail
SHARDS=${SHARDS:-16}
RUN=${RUN:-runs/radii-k6}
SLEEK=${SLEEK:-target/release/sleek}
# The run's options (the same for every shard; SLEEK_OPTIONS overrides them).
read -r -a OPTIONS <<< "${SLEEK_OPTIONS:-radii --kappa 6 --at 0,0 --at 0.5,0 --samples 200000 --levels 3 --seed 2026}"

merge() {
    "$SLEEK" merge "$RUN"/shard-* --out "$RUN/merged" > "$RUN/merged.txt"
    echo "merged into $RUN/merged (table in $RUN/merged.txt)"
}

if [[ -n "${SLURM_ARRAY_TASK_ID:-}" ]]; then
    K=$SLURM_ARRAY_TASK_ID
    DIR="$RUN/shard-$K"
    export RAYON_NUM_THREADS=${SLURM_CPUS_PER_TASK:-1}
    if [[ -f "$DIR/run.json" ]]; then
        if grep -q '"state": "complete"' "$DIR/run.json"; then
            echo "shard $K/$SHARDS is already complete"
            exit 0
        fi
        exec "$SLEEK" "${OPTIONS[@]}" --shard "$K/$SHARDS" --out "$DIR" --resume --quiet
    fi
    exec "$SLEEK" "${OPTIONS[@]}" --shard "$K/$SHARDS" --out "$DIR" --quiet
fi

if [[ "${1:-}" == "--merge" || -n "${SLEEK_MERGE_JOB:-}" ]]; then
    merge
    exit 0
fi

# Run by hand: submit the array, then the merge once every task has ended (whatever its exit).
mkdir -p "$RUN"
ARRAY=$(sbatch --parsable --array="1-$SHARDS" "$0")
sbatch --dependency="afterany:$ARRAY" --job-name=sleek-merge \
    --export=ALL,SLEEK_MERGE_JOB=1 "$0"
echo "submitted array $ARRAY; the merge writes $RUN/merged"
