#!/bin/sh
# demo.sh - a short tour of pacemap on the invented demo scenarios.
#
# Usage: sh scenarios/demo.sh [PATH-TO-PACEMAP]     (make demo runs it)
#
# Runs check, bound and dot on every shipped scenario, then the later
# commands (schedule, simulate, sweep, run) on a few of them.  A command
# that answers "not available yet" (exit 2) is skipped with a note, so the
# script keeps working while commands are being added.  DOT files and,
# when Graphviz is installed, SVG drawings go to a demo folder next to the
# binary (build/demo/ for build/pacemap).  Exits non-zero if a command
# that is available fails.
PM=${1:-build/pacemap}
DIR=$(dirname "$0")
OUT=$(dirname "$PM")/demo
status=0

if [ ! -x "$PM" ]; then
    echo "demo: no pacemap binary at '$PM' (run make first)" >&2
    exit 2
fi
mkdir -p "$OUT" || exit 1

# run TITLE CMD...: print a heading, run the command, show its output;
# skip it quietly when the command is not available yet.
run() {
    title=$1
    shift
    printf '\n==== %s\n$ pacemap %s\n' "$title" "$*"
    out=$("$PM" "$@" 2>&1)
    rc=$?
    if [ "$rc" -eq 2 ] && printf '%s' "$out" | grep -q 'not available yet'; then
        printf '(skipped: "pacemap %s" is not available yet)\n' "$1"
        return 0
    fi
    printf '%s\n' "$out"
    if [ "$rc" -ne 0 ]; then
        printf '(exit status %s)\n' "$rc"
        status=1
    fi
    return 0
}

# draw NAME: DOT text to $OUT/NAME.dot, and an SVG when Graphviz is there.
draw() {
    name=$1
    file="$DIR/$name.pace"
    printf '\n==== the graph of %s, critical loops in red\n$ pacemap dot %s > %s\n' \
        "$name" "$file" "$OUT/$name.dot"
    "$PM" dot "$file" > "$OUT/$name.dot.tmp" 2> "$OUT/$name.dot.err"
    rc=$?
    if [ "$rc" -eq 2 ] && grep -q 'not available yet' "$OUT/$name.dot.err"; then
        echo '(skipped: "pacemap dot" is not available yet)'
        rm -f "$OUT/$name.dot.tmp" "$OUT/$name.dot.err"
        return 0
    fi
    if [ "$rc" -ne 0 ]; then
        cat "$OUT/$name.dot.err"
        rm -f "$OUT/$name.dot.tmp" "$OUT/$name.dot.err"
        status=1
        return 0
    fi
    mv "$OUT/$name.dot.tmp" "$OUT/$name.dot"
    rm -f "$OUT/$name.dot.err"
    if command -v dot > /dev/null 2>&1; then
        if dot -Tsvg "$OUT/$name.dot" -o "$OUT/$name.svg"; then
            echo "wrote $OUT/$name.dot and $OUT/$name.svg (open it in a web browser)"
        else
            echo "Graphviz could not lay out $OUT/$name.dot"
            status=1
        fi
    else
        echo "wrote $OUT/$name.dot (install graphviz to draw it: dot -Tsvg)"
    fi
}

echo "pacemap demo: five invented scenarios (see the comment at the top of each)"

for name in filterbank rx_chain crossover sonar; do
    run "$name: is the scenario valid, what does it hold?" check "$DIR/$name.pace"
    run "$name: the floor no schedule can beat" bound "$DIR/$name.pace"
    draw "$name"
done

# What more cores buy: the floors for one and two cores of the receive
# chain, and of the crossover against its real-time budget.
run "rx_chain on 1 core: the work binds" bound "$DIR/rx_chain.pace" -p 1
run "crossover on 1 core: does it fit the budget?" bound "$DIR/crossover.pace" -p 1

# The later stages: a mapping, what it achieves, how far cores help.
run "rx_chain: a mapping onto 2 cores" schedule "$DIR/rx_chain.pace" -p 2
run "rx_chain: what that mapping achieves, iterations overlapping" \
    simulate "$DIR/rx_chain.pace" -p 2 -n 200
run "rx_chain: how far more cores help" sweep "$DIR/rx_chain.pace" -p 1..6
run "filterbank: how far more cores help" sweep "$DIR/filterbank.pace" -p 1..10
# A multirate chain: one iteration is one period of its repetition vector.
run "rx_decimating: rates, repetition vector, budget" check "$DIR/rx_decimating.pace"
run "rx_decimating: the tracking loop at the low rate sets the floor" \
    bound "$DIR/rx_decimating.pace" -p 2
run "rx_decimating: simulated on 2 cores" simulate "$DIR/rx_decimating.pace" -p 2 -n 200
# Real threads need two free processing units; on a smaller or busy
# machine this step may fail without failing the demo.
saved=$status
run "crossover: the mapping with threads on real cores" \
    run "$DIR/crossover.pace" -p 2 -n 200
if [ "$status" -ne "$saved" ]; then
    echo "(the real-core run is optional in this demo: it needs 2 processing units)"
    status=$saved
fi

printf '\n'
if [ "$status" -ne 0 ]; then
    echo "demo: some commands failed (see above)"
else
    echo "demo: done"
fi
exit "$status"
