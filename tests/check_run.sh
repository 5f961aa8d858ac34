#!/bin/sh
# check_run.sh - `pacemap run` end to end: JSON against docs/schema.json, outputs
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
# shared PUs: each thread counts only the time it ran, never above 100 %
for c in d["cores"]:
    assert 0 <= c["busy"] <= 1 and 0 <= c["wait"] <= 1 - c["busy"] + 1e-9, c
    m = c["model_ns"]
    assert min(m.values()) >= 0
h = d["host_costs"]
assert h["dispatch_ns"]["p99"] >= h["dispatch_ns"]["median"] >= 0
sizes = [z["words"] for z in h["sizes"]]
assert sizes == sorted(sizes) and 66 in sizes, sizes  # 64 samples + 2 words
for k in ("latency", "per_word", "send", "recv"):
    assert h["comm_cycles"][k] >= 0, k
for n in d["nodes"]:
    assert n["host_cycles"] >= 0
PYEOF

# every key run --json prints is in docs/schema.json: plain, --host-map and
# --paced documents validate against it with no key left undescribed
"$PM_BIN" run scenarios/rx_chain.pace -p 2 -n 50 --oversubscribe --paced --json \
    > "$tmp/paced.json" || fail "run --paced --json failed"
"$PM_BIN" run scenarios/rx_chain.pace -p 2 -n 50 --oversubscribe --host-map --json \
    > "$tmp/hm.json" || fail "run --host-map failed"
if "$PY" -c 'import jsonschema' 2> /dev/null; then
    "$PY" - "$tmp/out.json" "$tmp/paced.json" "$tmp/hm.json" <<'PYEOF' || fail "schema"
import json, sys, jsonschema
defs = json.load(open("docs/schema.json"))["$defs"]
schema = {"$ref": "#/$defs/run", "$defs": defs}
jsonschema.Draft202012Validator.check_schema(schema)
def undescribed(doc, sch, where):
    """Keys of doc that sch does not list (following $ref and oneOf)."""
    while "$ref" in sch:
        sch = defs[sch["$ref"].split("/")[-1]]
    if "oneOf" in sch:
        sch = next((s for s in sch["oneOf"] if s.get("type") != "null"), {})
    if isinstance(doc, dict):
        props = sch.get("properties", {})
        out = [where + "." + k for k in doc if k not in props]
        for k, v in doc.items():
            if k in props:
                out += undescribed(v, props[k], where + "." + k)
        return out
    if isinstance(doc, list) and "items" in sch:
        return [x for v in doc for x in undescribed(v, sch["items"], where + "[]")]
    return []
for f in sys.argv[1:]:
    doc = json.load(open(f))
    jsonschema.validate(doc, schema, cls=jsonschema.Draft202012Validator)
    missing = undescribed(doc, defs["run"], "run")
    assert not missing, "keys not in the schema: %s" % missing
assert "paced" in json.load(open(sys.argv[2]))
PYEOF
else
    echo "note: python3-jsonschema not installed: run's schema check skipped"
fi

# the regression of the fidelity issue: two map cores on one PU showed a
# busy share of 136 %; now each core counts only the time its thread ran
"$PM_BIN" run scenarios/rx_chain.pace -p 2 -n 200 --cores 0 --oversubscribe > "$tmp/os.txt" \
    || fail "oversubscribed run failed"
"$PY" - "$tmp/os.txt" <<'PYEOF' || fail "busy share above 100 % on a shared PU"
import re, sys
line = [l for l in open(sys.argv[1]) if l.startswith("busy share")][0]
shares = [float(x) for x in re.findall(r"([0-9.]+)%", line)]
assert len(shares) == 2 and all(0 <= x <= 100 for x in shares), line
PYEOF

# the host's costs ready to paste: a comm line and node lines the reader takes
"$PM_BIN" run scenarios/rx_chain.pace -p 2 -n 50 --oversubscribe > "$tmp/host.txt" \
    || fail "run for the host costs failed"
grep -q "handoff latency, both cores busy" "$tmp/host.txt" || fail "no busy handoff"
grep -q "dispatch per firing" "$tmp/host.txt" || fail "no dispatch cost"
grep -q "^where the period goes" "$tmp/host.txt" || fail "no breakdown of the period"
{
    echo "# rx_chain with this host's costs, pasted from run's report"
    echo "clock 400MHz"
    echo "procs 2"
    grep "^  comm latency=" "$tmp/host.txt" | sed 's/^  //'
    sed -n 's/^  \(node [^ ]* cycles=.*\)/\1/p' "$tmp/host.txt"
    grep "^edge" scenarios/rx_chain.pace
} > "$tmp/pasted.pace"
"$PM_BIN" check "$tmp/pasted.pace" > /dev/null || fail "pasted host costs do not read back"
awk 'length > 100 { exit 1 }' "$tmp/host.txt" || fail "report wider than 100 columns"
# one unit style: every time a number and the unit that keeps it below 1000
# (the regression: "278342 ns"); the columns stay aligned
"$PY" - "$tmp/host.txt" <<'PYEOF' || fail "times not in the one unit style"
import re, sys
text = open(sys.argv[1]).read()
times = re.findall(r"([0-9.]+) (ps|ns|us|ms|s)\b", text)
assert times, "no times found"
for num, unit in times:
    assert float(num) < 1000 or unit == "s", num + " " + unit
assert not re.search(r"[0-9]{4,}(\.[0-9]+)? ns", text), "large ns value"
want = r"^(predicted|measured) period +[0-9.]+ (ps|ns|us|ms|s)  "
assert len(re.findall(want, text, re.M)) == 2, "period lines"
rows = [l for l in text.splitlines() if re.match(r"^[01] +[0-9.]+ [pnum]?s ", l)]
assert len(rows) == 2 and len({len(r) for r in rows}) == 1, rows  # breakdown aligned
PYEOF

# --host-map (run above) maps with those costs and says how the scenario's map compares
"$PY" - "$tmp/hm.json" <<'PYEOF' || fail "bad --host-map JSON"
import json, sys
d = json.load(open(sys.argv[1]))
assert d["host_map"] is True and d["scenario_map_predicted_ns"] > 0
assert d["outputs_match"] is True
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
