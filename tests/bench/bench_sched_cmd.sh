#!/bin/sh
# bench_sched_cmd.sh - the whole `pacemap schedule` process on a random
# feed-forward graph of 10^6 nodes (tests/helpers/gen_dag.c, fixed seed) on
# 64 cores: reading the scenario, scheduling, writing the map file, and the
# text or --json report.  `pacemap check` on the same file is timed too: it
# reads and checks the scenario and prints a few lines, so the difference
# is what scheduling and the outputs cost.  Median of 3 runs of CPU seconds
# (user + system; the machine may be shared) with wall seconds beside, the
# output sizes, and peak memory.
# Target (issue 16): schedule with the map written in at most 3 s.
set -u
BUILD=${BUILD:-build}
PM="$BUILD/pacemap"
GEN="$BUILD/tests/helpers/gen_dag"
OUT="$BUILD/bench"
mkdir -p "$OUT"
for t in "$PM" "$GEN" /usr/bin/time; do
    [ -x "$t" ] || { echo "bench_sched_cmd: $t missing (run make first)"; exit 1; }
done
[ -s "$OUT/dag1m.pace" ] || "$GEN" pace 1000000 > "$OUT/dag1m.pace" || exit 1

median3() { sort -n | sed -n 2p; }

# run LABEL STDOUT-FILE ARGS...: 3 runs; prints CPU and wall medians, memory
run() {
    label=$1
    out=$2
    shift 2
    : > "$OUT/sc.times"
    for i in 1 2 3; do
        /usr/bin/time -f "%e %U %S %M" -o "$OUT/sc.t" "$PM" "$@" > "$out" \
            || { echo "bench_sched_cmd: pacemap $* failed"; exit 1; }
        cat "$OUT/sc.t" >> "$OUT/sc.times"
    done
    cpu=$(awk '{printf "%.2f\n", $2 + $3}' "$OUT/sc.times" | median3)
    wall=$(awk '{print $1}' "$OUT/sc.times" | median3)
    kb=$(awk '{print $4}' "$OUT/sc.times" | sort -n | tail -n 1)
    printf '  %-34s %7s s CPU (wall %6s s) %8s KiB\n' "$label" "$cpu" "$wall" "$kb"
}

echo "bench_sched_cmd: $(date -u '+%Y-%m-%d %H:%M UTC'), $(nproc) cores, load $(cut -d' ' -f1-3 /proc/loadavg)"
G="$OUT/dag1m.pace"
run "check" /dev/null check "$G"
run "schedule -p 64 --emit-map (text)" "$OUT/dag1m.txt" schedule "$G" -p 64 --emit-map "$OUT/dag1m.map"
run "schedule -p 64 --json" "$OUT/dag1m.json" schedule "$G" -p 64 --json
echo "  sizes: map $(wc -c < "$OUT/dag1m.map") B, text $(wc -c < "$OUT/dag1m.txt") B, json $(wc -c < "$OUT/dag1m.json") B"
