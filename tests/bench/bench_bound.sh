#!/bin/sh
# bench_bound.sh - `pacemap check` and `pacemap bound` against the Boost
# Graph Library's maximum_cycle_ratio (Howard's policy iteration,
# howard_cycle_ratio.hpp) on two generated graphs of 1,000,000 nodes
# (tests/helpers/gen_graph.c, fixed seeds, so every run sees the same bytes):
#   random - 4,000,000 random edges with 0..3 delays
#   chain  - a filter chain: biquad sections with state self-loops, mixers,
#            4 tracking loops of 100,000 nodes (about 4.6 edges per node)
# pacemap: whole process (read + check, or read + bound + certificate),
# median of 3 runs of CPU seconds (user + system; the machine may be shared,
# so CPU time is the fair figure) with the wall seconds beside, and peak
# memory (/usr/bin/time), bytes per edge.  Boost: one whole-process run of
# tests/helpers/bgl_mcr on the same graph in the same run (CPU seconds; its
# own call alone in brackets), capped at BOUND_BOOST_CAP wall seconds (on a
# loaded machine give it room: its CPU time is what is compared).
# BOUND_GRAPHS picks the graphs (default: random chain).
# Targets (issue 16): check <= 0.05 x Boost, bound <= 0.1 x Boost on the
# random graph and <= 0.05 x on the chain, <= 100 bytes per edge.
set -u
BUILD=${BUILD:-build}
CAP=${BOUND_BOOST_CAP:-600}
PM="$BUILD/pacemap"
GEN="$BUILD/tests/helpers/gen_graph"
BGL="$BUILD/tests/helpers/bgl_mcr"
OUT="$BUILD/bench"
mkdir -p "$OUT"
for t in "$PM" "$GEN" "$BGL" /usr/bin/time; do
    [ -x "$t" ] || { echo "bench_bound: $t missing (run make first)"; exit 1; }
done

[ -s "$OUT/random.edges" ] || "$GEN" random 1000000 4000000 1 "$OUT/random.pace" "$OUT/random.edges" || exit 1
[ -s "$OUT/chain.edges" ] || "$GEN" chain 1000000 1 "$OUT/chain.pace" "$OUT/chain.edges" || exit 1

median3() { sort -n | sed -n 2p; }

# pm_runs CMD GRAPH: 3 runs of `pacemap CMD`; sets pm_cpu, pm_wall, pm_kb
pm_runs() {
    c=$1
    g=$2
    : > "$OUT/$g.$c.times"
    for i in 1 2 3; do
        /usr/bin/time -f "%e %U %S %M" -o "$OUT/$g.pm.t" "$PM" "$c" "$OUT/$g.pace" \
            > "$OUT/$g.$c.out" || { echo "bench_bound: pacemap $c failed on $g"; exit 1; }
        cat "$OUT/$g.pm.t" >> "$OUT/$g.$c.times"
    done
    pm_cpu=$(awk '{printf "%.2f\n", $2 + $3}' "$OUT/$g.$c.times" | median3)
    pm_wall=$(awk '{print $1}' "$OUT/$g.$c.times" | median3)
    pm_kb=$(awk '{print $4}' "$OUT/$g.$c.times" | sort -n | tail -n 1)
}

one() { # graph name
    g=$1
    edges=$(head -n 1 "$OUT/$g.edges" | awk '{print $3}')
    if timeout "$CAP" /usr/bin/time -f "%e %U %S %M" -o "$OUT/$g.bgl.t" "$BGL" -t "$OUT/$g.edges" \
        > "$OUT/$g.bgl.out" 2> "$OUT/$g.bgl.err"; then
        bgl_s=$(awk '{printf "%.2f", $2 + $3}' "$OUT/$g.bgl.t")
        bgl_call=$(awk '/^seconds/ {print $2}' "$OUT/$g.bgl.err")
        bgl_txt="$bgl_s s CPU (its call alone: $bgl_call s wall)"
        bgl_cmp=$bgl_s
    else
        # its CPU time when stopped is unknown (a loaded machine gives it less
        # than the wall time), so no ratio is claimed
        bgl_txt="> $CAP s wall (stopped, CPU time unknown)"
        bgl_cmp=""
    fi
    echo "$g: $edges edges; boost $bgl_txt"
    for c in check bound; do
        pm_runs "$c" "$g"
        bpe=$(awk -v k="$pm_kb" -v e="$edges" 'BEGIN { printf "%.1f", k * 1024 / e }')
        ratio=-
        [ -n "$bgl_cmp" ] &&
            ratio=$(awk -v a="$pm_cpu" -v b="$bgl_cmp" 'BEGIN { printf "%.3f", a / b }')
        printf '  %-6s %7s s CPU (wall %6s s) %8s KiB %6s B/edge   ratio %s\n' \
            "$c" "$pm_cpu" "$pm_wall" "$pm_kb" "$bpe" "$ratio"
    done
    grep -m 1 "iteration bound" "$OUT/$g.bound.out" | sed 's/^/        pacemap /'
    head -c 60 "$OUT/$g.bgl.out" | head -n 1 | sed 's/^/        boost   /'
}

echo "bench_bound: $(date -u '+%Y-%m-%d %H:%M UTC'), $(nproc) cores, load $(cut -d' ' -f1-3 /proc/loadavg)"
for g in ${BOUND_GRAPHS:-random chain}; do
    one "$g"
done
