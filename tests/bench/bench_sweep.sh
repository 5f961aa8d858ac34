#!/bin/sh
# bench_sweep.sh - wall time of `pacemap sweep` on invented random graphs
# (tests/helpers/gen_graph: times 1..100, 3 edges per node, loops with
# delays): 1,000 nodes over P = 1..16 and 10,000 nodes over P = 1..8, 200
# simulated iterations per point, three runs each, on one thread; the
# median is quoted, with the time per core count.  Then a demo scenario
# swept with --jobs 1 and --jobs 2: median CPU (user + system) and wall
# seconds of 3 runs each.  Run by `make bench` with BUILD set.
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
        "$BIN" sweep "$dir/g.pace" -p "1..$p" -n 200 -q --jobs 1 > /dev/null || exit 1
        t1=$(now)
        times="$times $(awk -v a="$t0" -v b="$t1" 'BEGIN { printf "%.3f", b - a }')"
    done
    med=$(for t in $times; do echo "$t"; done | median)
    per=$(awk -v m="$med" -v p="$p" 'BEGIN { printf "%.3f", m / p }')
    printf '  %6s nodes, P = 1..%-2s  %8s s  (%s s per core count; runs:%s)\n' \
        "$n" "$p" "$med" "$per" "$times"
done

echo "sweep --jobs: scenarios/filterbank.pace, default range, median of 3"
for j in 1 2; do
    : > "$dir/times"
    for i in 1 2 3; do
        /usr/bin/time -f "%e %U %S" -o "$dir/t" "$BIN" sweep scenarios/filterbank.pace -q \
            --jobs "$j" > /dev/null 2>&1 || exit 1
        cat "$dir/t" >> "$dir/times"
    done
    cpu=$(awk '{ printf "%.2f\n", $2 + $3 }' "$dir/times" | median)
    wall=$(awk '{ print $1 }' "$dir/times" | median)
    printf '  --jobs %s  %6s s CPU  %6s s wall\n' "$j" "$cpu" "$wall"
done
