#!/bin/sh
# check_paced.sh - `simulate --paced` end to end: the JSON keys the docs
# promise (paced.interval/latency/overruns/keeps_up, max_tokens with bytes,
# buffers with --fit-buffers), capacity lines written by --emit-map and
# honoured by --map, the interval clock/rate of the scenario (400 MHz /
# 500 kHz = 800 cycles, worked by hand), and that --paced leaves the
# unpaced period as it was.  Needs PM_BIN (tests/run.sh sets it).
set -u
: "${PM_BIN:?PM_BIN must name the pacemap binary}"
tmp=$(mktemp -d "${TMPDIR:-/tmp}/pm-paced.XXXXXX") || exit 1
trap 'rm -rf "$tmp"' EXIT INT TERM
scn=scenarios/rx_chain.pace
fail() { echo "FAIL: $*"; exit 1; }

"$PM_BIN" simulate "$scn" -p 3 -n 200 --json > "$tmp/plain.json" || fail "plain run"
"$PM_BIN" simulate "$scn" -p 3 -n 200 --paced --fit-buffers --emit-map "$tmp/fit.map" \
    --json > "$tmp/paced.json" || fail "paced run"
grep -q '^capacity ' "$tmp/fit.map" || fail "no capacity line in the emitted map"
"$PM_BIN" simulate "$scn" -p 3 -n 200 --map "$tmp/fit.map" --paced --json \
    > "$tmp/again.json" || fail "paced run of the fitted map"
"$PM_BIN" simulate "$scn" -p 3 -n 200 --paced --fit-buffers --emit-map "$tmp/no/such/dir.map" \
    > /dev/null 2>&1 && fail "an unwritable map file was accepted"
[ -e "$tmp/no/such/dir.map" ] && fail "a half-written map file"
/usr/bin/python3 - "$tmp" <<'PY' || exit 1
import json, sys
d = sys.argv[1]
plain, paced, again = (json.load(open(f"{d}/{n}.json")) for n in ("plain", "paced", "again"))
p = paced["paced"]
assert p["interval"] == {"num": 800, "den": 1, "value": 800}, p["interval"]  # 400e6 / 500e3
for k in ("min", "max", "mean", "p99"):
    assert k in p["latency"], k
assert p["latency"]["min"] <= p["latency"]["p99"] <= p["latency"]["max"]
assert isinstance(p["overruns"], int) and isinstance(p["keeps_up"], bool)
assert paced["period"] == plain["period"], "--paced changed the unpaced period"
for e in paced["max_tokens"]:
    assert {"from", "to", "tokens", "bytes"} <= set(e), e
for b in paced["buffers"]:
    assert {"from", "to", "capacity", "bytes"} <= set(b), b
    assert b["capacity"] >= 1
assert again["paced"]["keeps_up"], "the fitted map does not keep up"
try:
    import jsonschema
except ImportError:
    jsonschema = None
if jsonschema:
    schema = json.load(open("docs/schema.json"))
    schema = {"$ref": "#/$defs/simulate", "$defs": schema["$defs"]}
    for doc in (plain, paced, again):
        jsonschema.validate(doc, schema, cls=jsonschema.Draft202012Validator)
PY
# run --paced: every firing waits for its release, so each measured
# iteration's last sink ends after that iteration's release (latency > 0;
# a source running ahead of its samples would make it negative).
"$PM_BIN" run "$scn" -p 2 -n 60 --oversubscribe --paced --json > "$tmp/run.json" \
    || fail "run --paced"
/usr/bin/python3 - "$tmp/run.json" <<'PY' || exit 1
import json, sys
p = json.load(open(sys.argv[1]))["paced"]
lat = p["latency_ns"]
assert p["interval"] == {"num": 800, "den": 1, "value": 800}, p["interval"]
assert 0 < lat["min"] <= lat["median"] <= lat["p99"] <= lat["max"], lat
assert isinstance(p["overruns"], int) and p["overruns"] >= 0
assert p["predicted"] is None or p["predicted"]["latency_ns_min"] > 0
PY
echo "check_paced: ok"
