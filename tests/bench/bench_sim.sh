#!/bin/sh
# bench_sim.sh - simulator throughput (firings per CPU second) on an
# invented 100,000-node graph over 1,000 iterations on 16 cores, with
# point-to-point links and with a bus, three runs each (the median is
# quoted), and peak memory for N and 2N iterations (it must not grow).
# The bus runs give cross-core edges room for 4 tokens: without a bound,
# producers that outrun the bus pile tokens up and memory rightly grows.
# Run by `make bench` with BUILD set.  Timing lives here, never in tests.
BUILD=${BUILD:-build}
B="$BUILD/tests/helpers/bench_sim"
NODES=${PM_BENCH_NODES:-100000}
ITER=${PM_BENCH_ITER:-1000}
[ -x "$B" ] || { echo "bench_sim: $B not built"; exit 1; }

median() { sort -n | sed -n 2p; }

echo "simulate: $NODES nodes, 16 cores, firings per CPU second (median of 3)"
fifo() { [ "$1" = bus ] && echo 4; }
for ic in p2p bus; do
    rates=""
    for i in 1 2 3; do
        line=$("$B" "$NODES" "$ITER" 16 "$ic" $(fifo "$ic")) || exit 1
        rates="$rates $(echo "$line" | cut -d' ' -f3)"
    done
    med=$(for r in $rates; do echo "$r"; done | median)
    printf '  %-4s %8s iterations  %12s firings/s   (runs:%s)\n' "$ic" "$ITER" "$med" "$rates"
done
echo "  (period and steady flag of the last run: $(echo "$line" | cut -d' ' -f5-))"
echo "simulate: peak RSS for N and 2N iterations (KiB)"
for ic in p2p bus; do
    a=$("$B" "$NODES" "$ITER" 16 "$ic" $(fifo "$ic") | cut -d' ' -f4)
    b=$("$B" "$NODES" $((ITER * 2)) 16 "$ic" $(fifo "$ic") | cut -d' ' -f4)
    printf '  %-4s N=%s: %s   2N=%s: %s\n' "$ic" "$ITER" "$a" $((ITER * 2)) "$b"
done
