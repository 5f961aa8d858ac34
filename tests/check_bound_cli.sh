#!/bin/sh
# check_bound_cli.sh - `pacemap bound` end to end: text, JSON keys of
# docs/schema.json, -p, the budget, exit codes and the loop-without-delay
# message.  The scenarios are invented here; expected values are worked out
# by hand in the comments.
set -u
PM=${PM_BIN:-build/pacemap}
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
fail() { echo "FAIL: $*"; exit 1; }

# loop a -> b -> a: (30 + 20) / 2 = 25; total 110; largest node w (60)
cat > "$T/loop.pace" <<'P'
# invented for this test
clock 600MHz
rate 48kHz
procs 2
node a cycles=30
node b cycles=20
node w cycles=60
edge a -> b delay=1
edge b -> a delay=1
edge b -> w
P
out=$("$PM" bound "$T/loop.pace") || fail "bound exit $?"
echo "$out" | grep -q "iteration bound: 25 cycles per iteration" || fail "text bound: $out"
echo "$out" | grep -q "set by: the largest node" || fail "binding (60 > 55 > 25)"
echo "$out" | grep -q "12500 cycles per iteration" || fail "budget 600 MHz / 48 kHz"
echo "$out" | awk 'length($0) > 100 { exit 1 }' || fail "a line over 100 columns"
json=$("$PM" bound "$T/loop.pace" --json -p 1) || fail "json exit"
/usr/bin/python3 - "$json" <<'PY' || fail "json keys"
import json, sys
d = json.loads(sys.argv[1])
assert d["iteration_bound"] == {"num": 25, "den": 1, "value": 25.0}, d["iteration_bound"]
assert d["critical_loops"] == [{"nodes": ["a", "b"], "cycles": 50, "delays": 2}]
assert d["total_cycles"] == 110
assert d["lower_bound"]["num"] == 110 and d["lower_bound"]["den"] == 1  # -p 1: cores
assert d["binding"] == "cores" and d["procs"] == 1
assert d["budget"]["lower_fits"] is True and d["budget"]["margin_cycles"]["num"] == 12390
PY

# feed-forward: no loop bound, null in JSON
printf 'node x cycles=5\nnode y cycles=7\nedge x -> y\n' > "$T/ff.pace"
"$PM" bound "$T/ff.pace" | grep -q "iteration bound: none" || fail "no-loop text"
"$PM" bound "$T/ff.pace" --json | grep -q '"iteration_bound": null' || fail "no-loop json"

# loop without delay: exit 1, one line FILE:LINE:COL: error: message
printf 'node p cycles=1\nnode q cycles=1\nedge p -> q\nedge q -> p\n' > "$T/zero.pace"
err=$("$PM" bound "$T/zero.pace" 2>&1 >/dev/null)
st=$?
[ "$st" -eq 1 ] || fail "zero-delay exit $st"
case "$err" in
"$T/zero.pace:4:"*": error: loop without delay: p -> q -> p (add a delay on one of its edges)") ;;
*) fail "zero-delay message: $err" ;;
esac

# usage errors exit 2
"$PM" bound > /dev/null 2>&1
[ $? -eq 2 ] || fail "no file: exit 2"
"$PM" bound "$T/loop.pace" --nope > /dev/null 2>&1
[ $? -eq 2 ] || fail "unknown option: exit 2"
"$PM" bound -h | grep -q "usage: pacemap bound" || fail "-h"
echo "check_bound_cli: ok"
