#!/bin/sh
# bench_bound.sh - `pacemap bound` against the Boost Graph Library's
# maximum_cycle_ratio (Howard's policy iteration, howard_cycle_ratio.hpp) on
# two generated graphs of 1,000,000 nodes (tests/helpers/gen_graph.c, fixed
# seeds, so every run sees the same bytes):
#   random - 4,000,000 random edges with 0..3 delays
#   chain  - a filter chain: biquad sections with state self-loops, mixers,
#            4 tracking loops of 100,000 nodes (about 4.6 edges per node)
# pacemap: whole process (read + bound + certificate), median of 3 runs,
# wall seconds and peak memory (/usr/bin/time), bytes per edge.  Boost: one
# whole-process run of tests/helpers/bgl_mcr on the same graph in the same
# run (its own call alone in brackets), capped at BOUND_BOOST_CAP seconds.
# Target (issue 2): pacemap <= 0.2 x Boost, <= 100 bytes per edge.
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

one() { # graph name
    g=$1
    edges=$(head -n 1 "$OUT/$g.edges" | awk '{print $3}')
    : > "$OUT/$g.pm.times"
    for i in 1 2 3; do
        /usr/bin/time -f "%e %M" -o "$OUT/$g.pm.t" "$PM" bound "$OUT/$g.pace" > "$OUT/$g.pm.out" \
            || { echo "bench_bound: pacemap failed on $g"; exit 1; }
        cat "$OUT/$g.pm.t" >> "$OUT/$g.pm.times"
    done
    pm_s=$(awk '{print $1}' "$OUT/$g.pm.times" | median3)
    pm_kb=$(awk '{print $2}' "$OUT/$g.pm.times" | sort -n | tail -n 1)
    bpe=$(awk -v k="$pm_kb" -v e="$edges" 'BEGIN { printf "%.1f", k * 1024 / e }')
    if timeout "$CAP" /usr/bin/time -f "%e %M" -o "$OUT/$g.bgl.t" "$BGL" -t "$OUT/$g.edges" \
        > "$OUT/$g.bgl.out" 2> "$OUT/$g.bgl.err"; then
        bgl_s=$(awk '{print $1}' "$OUT/$g.bgl.t")
        bgl_call=$(awk '/^seconds/ {print $2}' "$OUT/$g.bgl.err")
        ratio=$(awk -v a="$pm_s" -v b="$bgl_s" 'BEGIN { printf "%.3f", a / b }')
        bgl_txt="$bgl_s s (call $bgl_call s)"
    else
        bgl_txt="> $CAP s (stopped)"
        ratio=$(awk -v a="$pm_s" -v b="$CAP" 'BEGIN { printf "< %.3f", a / b }')
    fi
    printf '%-7s %9s edges  pacemap %7s s %8s KiB %6s B/edge   boost %-28s ratio %s\n' \
        "$g" "$edges" "$pm_s" "$pm_kb" "$bpe" "$bgl_txt" "$ratio"
    grep -m 1 "iteration bound" "$OUT/$g.pm.out" | sed 's/^/        pacemap /'
    head -c 60 "$OUT/$g.bgl.out" | head -n 1 | sed 's/^/        boost   /'
}

echo "bench_bound: $(date -u '+%Y-%m-%d %H:%M UTC'), $(nproc) cores, load $(cut -d' ' -f1-3 /proc/loadavg)"
one random
one chain
