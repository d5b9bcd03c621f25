#!/bin/bash
# A sharded sleek run on one workstation with GNU parallel, then the merge.
#
#   bash examples/parallel_radii.sh
#
# Each shard runs single-threaded in its own folder. Interrupting the script (Ctrl-C) stops the
# running shards with their finished samples saved (parallel passes SIGINT and waits, see
# --termseq); running the script again resumes them and skips the complete ones. The merged
# folder equals what `sleek radii … --out DIR` writes on one machine, byte for byte.
set -euo pipefail
export SHELL=/bin/bash  # parallel runs the exported function with $SHELL
export SHARDS=${SHARDS:-8}
export RUN=${RUN:-runs/radii-k3}
export SLEEK=${SLEEK:-target/release/sleek}
export SLEEK_OPTIONS=${SLEEK_OPTIONS:-"radii --kappa 3 --at 0,0 --samples 40000 --levels 2 --seed 7"}
JOBS=${JOBS:-$(nproc)}

shard() {
    local k=$1 dir="$RUN/shard-$1" options
    read -r -a options <<< "$SLEEK_OPTIONS"
    if [[ -f "$dir/run.json" ]]; then
        if grep -q '"state": "complete"' "$dir/run.json"; then
            return 0
        fi
        RAYON_NUM_THREADS=1 "$SLEEK" "${options[@]}" --shard "$k/$SHARDS" --out "$dir" \
            --resume --quiet
    else
        RAYON_NUM_THREADS=1 "$SLEEK" "${options[@]}" --shard "$k/$SHARDS" --out "$dir" --quiet
    fi
}
export -f shard

seq 1 "$SHARDS" | parallel --jobs "$JOBS" --halt now,fail=1 \
    --termseq INT,60000,TERM,5000,KILL,25 shard {}
"$SLEEK" merge "$RUN"/shard-* --out "$RUN/merged"
