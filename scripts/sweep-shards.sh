#!/bin/sh
# Run one `dryfront season sweep` as N shards on this machine, then merge them into the sweep's own result.
#
#   scripts/sweep-shards.sh N OUT -- SWEEP-OPTIONS...        (every option of `season sweep` except --shard/--out)
#
# Shard K writes OUT/shard-K/sweep-shard-K-of-N.json; the merged result (sweep.csv, byte-identical to an
# unsharded sweep with the same options) goes to OUT/merged. With GNU parallel installed the shards run side by
# side (one thread each unless RAYON_NUM_THREADS says otherwise; -j follows SHARD_JOBS, default one per core);
# without it, or with SHARD_PLAIN=1, they run one after another in a plain loop. DRYFRONT names the binary
# (default: dryfront on the PATH). Exits non-zero when any shard or the merge fails.
set -eu
if [ $# -lt 3 ] || [ "$3" != "--" ]; then
    echo "usage: $0 N OUT -- SWEEP-OPTIONS..." >&2
    exit 2
fi
n=$1
out=$2
shift 3
bin=${DRYFRONT:-dryfront}
mkdir -p "$out"
if [ -z "${SHARD_PLAIN:-}" ] && command -v parallel >/dev/null 2>&1; then
    RAYON_NUM_THREADS=${RAYON_NUM_THREADS:-1} \
        parallel -q --halt now,fail=1 -j "${SHARD_JOBS:-100%}" \
        "$bin" season sweep "$@" --shard "{}/$n" --out "$out/shard-{}" ::: $(seq 1 "$n")
else
    k=1
    while [ "$k" -le "$n" ]; do
        "$bin" season sweep "$@" --shard "$k/$n" --out "$out/shard-$k"
        k=$((k + 1))
    done
fi
"$bin" season merge --out "$out/merged" "$out"/shard-*/sweep-shard-*-of-"$n".json
