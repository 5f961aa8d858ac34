#!/bin/sh
# bench_mapper.sh - the period-first mapper (pm_mapper_map, default budgets:
# 1 s, 4000 evaluations) on random feed-forward graphs of 100, 1,000 and
# 10,000 nodes (generator: tests/helpers/gen_dag.c, invented data) with
# transfers costing latency 10 + 1 per word and 4 cycles to send and to
# receive, on 4, 16 and 64 cores.  For each case: median wall and CPU
# milliseconds over several runs, and the period against the proven floor
# for that core count (pm_bound_floors' map_floor, which counts no
# transfer, so a ratio above 1 is not necessarily a loss).
# Checks: the median run takes at most the 1 s budget plus 0.5 s of CPU
# time (the budget is wall-clock, and the map in hand when it ends is
# still judged once; on a shared machine wall time also counts waiting for
# a core, so the check uses CPU time), and no period is below its floor.
BUILD=${BUILD:-build}
GEN="$BUILD/tests/helpers/gen_dag"
MAP="$BUILD/tests/helpers/bench_mapper"
for x in "$GEN" "$MAP"; do
    [ -x "$x" ] || { echo "bench_mapper: $x not built"; exit 1; }
done
tmp=$(mktemp -d) || exit 1
trap 'rm -rf "$tmp"' EXIT
echo "bench_mapper: pm_mapper_map, default budgets (median of runs; machine may be shared)"
printf '  %6s %5s %5s %9s %9s %9s %11s %7s %6s %s\n' nodes cores runs wall_ms cpu_ms period \
    floor ratio evals timed_out
status=0
for spec in 100:5 1000:3 10000:3; do
    n=${spec%%:*}
    reps=${spec##*:}
    { echo "comm latency=10 per-word=1 send=4 recv=4"; "$GEN" pace "$n" 11; } > "$tmp/g$n.pace" \
        || { echo "bench_mapper: generator failed"; exit 1; }
    for p in 4 16 64; do
        : > "$tmp/runs"
        i=0
        while [ $i -lt "$reps" ]; do
            "$MAP" "$tmp/g$n.pace" "$p" >> "$tmp/runs" || exit 1
            i=$((i + 1))
        done
        line=$(sort -n -k1 "$tmp/runs" | awk -v r="$reps" 'NR == int((r + 1) / 2) { print }')
        wall=$(sort -n -k1 "$tmp/runs" | awk -v r="$reps" 'NR == int((r + 1) / 2) { print $1 }')
        cpu=$(sort -n -k2 "$tmp/runs" | awk -v r="$reps" 'NR == int((r + 1) / 2) { print $2 }')
        set -- $line
        printf '  %6s %5s %5s %9s %9s %9s %11s %7s %6s %s\n' "$n" "$p" "$reps" "$wall" "$cpu" \
            "$3" "$4" "$5" "$6" "$7"
        if ! awk -v w="$cpu" 'BEGIN { exit !(w <= 1500) }'; then
            echo "  OVER budget: $n nodes on $p cores took more than 1.5 s of CPU (median)"
            status=1
        fi
        if awk '$3 < $4 { bad = 1 } END { exit !bad }' "$tmp/runs"; then
            echo "  WRONG: a period below its floor ($n nodes, $p cores)"
            status=1
        fi
    done
done
exit $status
