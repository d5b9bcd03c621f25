#!/bin/bash
# A sharded sleek run on one workstation with GNU parallel, then the merge.
#
#   bash examples/parallel_radii.sh
#
# Each shard runs single-threaded and writes its own folder; interrupting the script (Ctrl-C)
# stops every shard with its finished samples saved, and running the script again resumes them.
# The merged folder equals what `sleek radii … --out DIR` writes on one machine, byte for byte.
set -euo pipefail
SHARDS=${SHARDS:-8}
JOBS=${JOBS:-$(nproc)}
RUN=${RUN:-runs/radii-k3}
SLEEK=${SLEEK:-target/release/sleek}
OPTIONS=${SLEEK_OPTIONS:-"radii --kappa 3 --at 0,0 --samples 40000 --levels 2 --seed 7"}

shard() {
    local k=$1 dir="$RUN/shard-$1"
    if [[ -f "$dir/run.json" ]] && grep -q '"state": "complete"' "$dir/run.json"; then
        return 0
    fi
    local resume=""
    [[ -f "$dir/run.json" ]] && resume="--resume"
    RAYON_NUM_THREADS=1 $SLEEK $OPTIONS --shard "$k/$SHARDS" --out "$dir" $resume --quiet
}
export -f shard
export RUN SLEEK OPTIONS SHARDS

seq 1 "$SHARDS" | parallel --jobs "$JOBS" --halt now,fail=1 shard {}
$SLEEK merge "$RUN"/shard-* --out "$RUN/merged"
