#!/bin/sh
# bench_sweep.sh - wall time of `pacemap sweep` on invented random graphs
# (tests/helpers/gen_graph: times 1..100, 3 edges per node, loops with
# delays): 1,000 nodes over P = 1..16 and 10,000 nodes over P = 1..8, 200
# simulated iterations per point, three runs each; the median is quoted,
# with the time per core count.  Run by `make bench` with BUILD set.
BUILD=${BUILD:-build}
BIN="$BUILD/pacemap"
GEN="$BUILD/tests/helpers/gen_graph"
[ -x "$GEN" ] || { echo "bench_sweep: $GEN not built"; exit 1; }
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT

median() { sort -n | sed -n 2p; }
now() { date +%s.%N; }

echo "sweep: wall seconds (median of 3), 200 iterations per core count"
for spec in "1000 16" "10000 8"; do
    set -- $spec
    n=$1
    p=$2
    "$GEN" random "$n" $((3 * n)) 7 "$dir/g.pace" "$dir/g.edges" || exit 1
    times=""
    for i in 1 2 3; do
        t0=$(now)
        "$BIN" sweep "$dir/g.pace" -p "1..$p" -n 200 -q > /dev/null || exit 1
        t1=$(now)
        times="$times $(awk -v a="$t0" -v b="$t1" 'BEGIN { printf "%.3f", b - a }')"
    done
    med=$(for t in $times; do echo "$t"; done | median)
    per=$(awk -v m="$med" -v p="$p" 'BEGIN { printf "%.3f", m / p }')
    printf '  %6s nodes, P = 1..%-2s  %8s s  (%s s per core count; runs:%s)\n' \
        "$n" "$p" "$med" "$per" "$times"
done
