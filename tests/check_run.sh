#!/bin/sh
# check_run.sh - `pacemap run` end to end: JSON keys of docs/schema.json, outputs
# equal to the single-threaded run, a hand map, and the errors of the
# issue (too few processing units names both counts, exit 1; usage, exit 2;
# multirate scenarios run on their single-rate expansion).  Small N; timings are not checked.
PM_BIN=${PM_BIN:-$PWD/build/pacemap}
PY=/usr/bin/python3
tmp=$(mktemp -d) || exit 1
trap 'rm -rf "$tmp"' EXIT
fail() { echo "check_run: $*"; exit 1; }

# JSON run on two cores (shared PUs allowed so a 1-PU machine passes too)
"$PM_BIN" run scenarios/crossover.pace -p 2 -n 20 --oversubscribe --json > "$tmp/out.json" \
    || fail "run --json failed"
"$PY" - "$tmp/out.json" <<'PYEOF' || fail "bad JSON"
import json, sys
d = json.load(open(sys.argv[1]))
for k in ("period_ns", "period_ns_p99", "predicted_ns"):
    assert isinstance(d[k], (int, float)) and d[k] > 0, k
assert d["period_ns_p99"] >= d["period_ns"]
assert d["outputs_match"] is True and d["order_errors"] == 0
assert len(d["cores"]) == 2 and len(d["nodes"]) == 17
PYEOF

# a hand map: every node on core 1 except the input
cat > "$tmp/two.pace" <<'PACE'
# invented two-node chain for this check
procs 2
node a cycles=2000 work=fir:16
node b cycles=2000 work=biquad:2
edge a -> b
edge b -> a delay=2
PACE
printf 'core 0: a\ncore 1: b\n' > "$tmp/two.map"
"$PM_BIN" run "$tmp/two.pace" --map "$tmp/two.map" -n 30 --oversubscribe > "$tmp/out.txt" \
    || fail "run --map failed"
grep -q "bit-identical" "$tmp/out.txt" || fail "outputs not reported identical"
grep -q "core 1: processing unit [0-9]* on physical core" "$tmp/out.txt" \
    || fail "PU choice not printed in plain words"
grep -q "L#" "$tmp/out.txt" && fail "topology written in borrowed notation"

# pinning refused (hwloc told this is not the running system): a warning,
# the run goes on unpinned and the report says so
HWLOC_THISSYSTEM=0 "$PM_BIN" run "$tmp/two.pace" -n 20 --oversubscribe > "$tmp/out.txt" \
    2> "$tmp/err.txt" || fail "unpinned run failed"
grep -q "^pacemap: warning: .*unpinned.*--cores" "$tmp/err.txt" || fail "no pinning warning"
grep -q "pace:[0-9]*:[0-9]*:" "$tmp/err.txt" && fail "pinning refused given a scenario position"
grep -q "NOT pinned" "$tmp/out.txt" || fail "report does not say unpinned"

# an affinity mask narrows the PUs: one PU for two map cores is an error
if command -v taskset > /dev/null 2>&1; then
    first=$(taskset -pc $$ 2> /dev/null | sed 's/.*: *//; s/[-,].*//')
    if [ -n "$first" ]; then
        taskset -c "$first" "$PM_BIN" run "$tmp/two.pace" 2> "$tmp/err.txt"
        [ $? -eq 1 ] || fail "affinity of one PU: wrong exit status"
        grep -q "only 1 processing unit is available" "$tmp/err.txt" || fail "mask ignored"
        grep -q "^pacemap: error: run: .*oversubscribe" "$tmp/err.txt" \
            || fail "host problem not a plain pacemap error saying what to do"
    fi
fi

# more map cores than listed PUs: error naming both counts, exit 1
"$PM_BIN" run "$tmp/two.pace" --cores 0 2> "$tmp/err.txt"
[ $? -eq 1 ] || fail "too few PUs: wrong exit status"
grep -q "2 cores but only 1 processing unit" "$tmp/err.txt" || fail "counts not named"
grep -q "^pacemap: error: " "$tmp/err.txt" || fail "too few PUs: not a plain host error"
grep -q "pace:[0-9]*:[0-9]*:" "$tmp/err.txt" && fail "host problem given a scenario position"

# a map whose core order waits on itself: refused before running, exit 1
cat > "$tmp/dl.pace" <<'PACE'
# invented four-node graph for this check
procs 2
node a cycles=10
node b cycles=10
node c cycles=10
node d cycles=10
edge b -> c
edge d -> a
PACE
printf 'core 0: a b\ncore 1: c d\n' > "$tmp/dl.map"
"$PM_BIN" run "$tmp/dl.pace" --map "$tmp/dl.map" --oversubscribe 2> "$tmp/err.txt"
[ $? -eq 1 ] || fail "deadlocked map: wrong exit status"
grep -q "deadlock" "$tmp/err.txt" || fail "deadlocked map: no reason given"

# usage errors: exit 2
"$PM_BIN" run "$tmp/two.pace" --ring x 2> /dev/null
[ $? -eq 2 ] || fail "bad --ring: wrong exit status"
"$PM_BIN" run "$tmp/two.pace" --cores 1-0 2> /dev/null
[ $? -eq 2 ] || fail "bad --cores: wrong exit status"

# a multirate scenario runs on its expansion, all firings of a node on one core
cat > "$tmp/multi.pace" <<'PACE'
# invented multirate pair for this check
node a cycles=10
node b cycles=10
edge a -> b produce=2 consume=1
PACE
"$PM_BIN" run "$tmp/multi.pace" -n 50 --oversubscribe > "$tmp/multi.txt" 2> "$tmp/err.txt"
[ $? -eq 0 ] || fail "multirate: wrong exit status"
grep -q "b#1" "$tmp/multi.txt" || fail "multirate: the firings of b are not listed"
grep -q "bit-identical" "$tmp/multi.txt" || fail "multirate: outputs differ from one thread"
exit 0
