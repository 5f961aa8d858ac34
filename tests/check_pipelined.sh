#!/bin/sh
# check_pipelined.sh - end-to-end checks of the period-first mapper on the
# command line: --mapper and --no-refine (usage errors exit 2), the
# default map never slower than the list scheduler's, schedule --pipelined
# (JSON against docs/schema.json, --emit-map writing the lags), a map
# with lags given back to schedule (no makespan, --svg refused, no file
# left) and to simulate.
#
# Outside check: the period schedule --pipelined reports is the maximum
# cycle ratio of the map's IPC graph; simulate runs the same map file on
# the event-driven engines, which compute no cycle ratio, and must reach
# the same steady period.
#
# Run from the project root (make test does); PM_BIN names the binary.
PM=${PM_BIN:-build/pacemap}
PY=/usr/bin/python3
. tests/support/check_lib.sh

# period FILE: the "num/den" of simulate's text output.
period() {
    sed -n 's/^period  *[0-9.e+]* cycles per iteration (\([0-9]*\/[0-9]*\)).*/\1/p' "$1"
}

expect_rc 2 "simulate --mapper with an unknown name" simulate scenarios/rx_chain.pace --mapper fast
grep -q "mapper" "$TMP/err" && ok "the usage error names --mapper" || bad "usage error text"
expect_rc 2 "simulate --mapper period with --no-refine" simulate scenarios/rx_chain.pace \
    --mapper period --no-refine
expect_rc 2 "run --mapper with an unknown name" run scenarios/rx_chain.pace --mapper x

for f in rx_chain crossover filterbank rx_decimating; do
    s=scenarios/$f.pace
    "$PM" simulate "$s" -p 2 -n 300 > "$TMP/def" 2> "$TMP/err" || bad "$f: simulate"
    "$PM" simulate "$s" -p 2 -n 300 --mapper list > "$TMP/list" 2> "$TMP/err" || bad "$f: list"
    a=$(period "$TMP/def")
    b=$(period "$TMP/list")
    if $PY -c "from fractions import Fraction as F; import sys; sys.exit(F('$a') > F('$b'))"; then
        ok "$f: the default map ($a) is no slower than the list scheduler's ($b)"
    else
        bad "$f: default $a slower than list $b"
    fi
    rm -f "$TMP/p.map"
    expect_rc 0 "$f: schedule --pipelined --emit-map" schedule "$s" -p 2 --pipelined \
        --emit-map "$TMP/p.map" --json
    cp "$TMP/out" "$TMP/p.json"
    if [ -n "$(command -v $PY)" ] && $PY -c 'import jsonschema' 2> /dev/null; then
        if $PY -c '
import json, sys, jsonschema
schema = json.load(open("docs/schema.json"))
schema = {"$ref": "#/$defs/schedule", "$defs": schema["$defs"]}
jsonschema.validate(json.load(open(sys.argv[1])), schema, cls=jsonschema.Draft202012Validator)
' "$TMP/p.json" 2> "$TMP/err"; then ok "$f: JSON matches the schema"; else bad "$f: schema"; fi
    fi
    ipc=$($PY -c '
import json, sys
p = json.load(open(sys.argv[1]))["pipelined"]
m = sum(1 for core in p["map"] for x in core if x["lag"] > 0)
print("%d/%d %d" % (p["period"]["num"], p["period"]["den"], m))
' "$TMP/p.json")
    set -- $ipc
    lagged=$(grep -o @ "$TMP/p.map" | wc -l)
    [ "$2" -eq "$lagged" ] && ok "$f: the map file holds the $2 lagged nodes" ||
        bad "$f: $lagged lags in the file, $2 in the JSON"
    "$PM" simulate "$s" -p 2 -n 300 --map "$TMP/p.map" > "$TMP/sim" 2> "$TMP/err" ||
        bad "$f: simulate --map of the pipelined map"
    [ "$(period "$TMP/sim")" = "$1" ] && ok "$f: simulated period = IPC ratio ($1)" ||
        bad "$f: simulated $(period "$TMP/sim"), IPC ratio $1"
done

# A hand map with lags: timed by its period only.
printf 'core 0: mixer@1 chan_filt@1 pll.pdet@1 pll.filt@1 pll.nco@1\ncore 1: adc agc.amp agc.pwr agc.filt demod@2 sink@2\n' \
    > "$TMP/hand.map"
expect_rc 0 "schedule --map with lags" schedule scenarios/rx_chain.pace -p 2 --map "$TMP/hand.map"
grep -q "^makespan" "$TMP/out" && bad "a makespan printed for a lagged map" ||
    ok "no makespan printed for a lagged map"
grep -q "^period" "$TMP/out" && ok "its period is printed" || bad "no period"
expect_rc 0 "schedule --map with lags --json" schedule scenarios/rx_chain.pace -p 2 \
    --map "$TMP/hand.map" --json
$PY -c 'import json, sys; d = json.load(open(sys.argv[1])); sys.exit(d["makespan"] is not None or "pipelined" not in d)' \
    "$TMP/out" && ok "JSON: makespan null, pipelined present" || bad "JSON of a lagged map"
expect_rc 1 "schedule --map with lags --svg" schedule scenarios/rx_chain.pace -p 2 \
    --map "$TMP/hand.map" --svg "$TMP/x.svg"
[ ! -e "$TMP/x.svg" ] && ok "no chart file left" || bad "a chart file was written"
grep -Eq '^[^:]+:[0-9]+:[0-9]+: error: ' "$TMP/err" && ok "one error line" || bad "error line"

echo "check_pipelined: $pass passed, $fail failed"
[ "$fail" -eq 0 ]
