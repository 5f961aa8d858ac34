#!/bin/sh
# check_sweep_cli.sh - `pacemap sweep` end to end on a scenario invented
# here (a recursive smoother beside three filters; its answers are derived
# by hand in tests/test_sweep.c): JSON keys of docs/schema.json and values, CSV
# rows, SVG well-formed (parsed by Python's xml.etree), human text within
# 100 columns with the caution, no progress line when stderr is not a
# terminal, a progress line on a pseudo-terminal (util-linux `script`,
# skipped when absent), usage and input errors with their exit codes, and
# no output file left behind on an error; --jobs 1 and --jobs 4 print the
# same bytes (text, CSV, JSON).
bin="$PM_BIN"
py=/usr/bin/python3
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT
fail() { echo "FAIL: $*"; exit 1; }

cat > "$dir/rec.pace" <<'EOF'
# invented for this check: channel 0 is a first-order recursive smoother
node add cycles=10
node mul cycles=20
node f1 cycles=20
node f2 cycles=20
node f3 cycles=20
edge add -> mul
edge mul -> add delay=1
EOF
cat > "$dir/pinned.pace" <<'EOF'
# invented for this check: a loop split across two cores by pins
procs 2
comm latency=5
node a cycles=20 pin=0
node b cycles=20 pin=1
edge a -> b
edge b -> a delay=1
EOF
cat > "$dir/classes.pace" <<'EOF'
# invented for this check: named core classes
procs dsp:1 host:1
node a cycles=dsp:4,host:9
node b cycles=dsp:4,host:9
edge a -> b
EOF

# ---- JSON -------------------------------------------------------------------
"$bin" sweep "$dir/rec.pace" --json -n 200 > "$dir/out.json" 2> "$dir/err" || fail "json run"
[ -s "$dir/err" ] && fail "stderr not empty without a terminal: $(cat "$dir/err")"
$py - "$dir/out.json" <<'PY' || fail "json content"
import json, sys
d = json.load(open(sys.argv[1]))
pts = d["points"]
# default range 1..16, capped at the 5 nodes
assert [p["procs"] for p in pts] == [1, 2, 3, 4, 5], pts
for p in pts:
    for k in ("procs", "period", "lower_bound", "limit"):
        assert k in p, k
    for r in (p["period"], p["lower_bound"]):
        assert set(r) >= {"num", "den", "value"}, r
    assert p["limit"]["kind"] in ("loop", "mapping", "cores", "node", "bus")
    assert isinstance(p["limit"]["nodes"], list)
per = [(p["period"]["num"], p["period"]["den"]) for p in pts]
assert per == [(90, 1), (50, 1), (40, 1), (30, 1), (30, 1)], per
assert pts[3]["limit"]["kind"] == "loop"
assert sorted(pts[3]["limit"]["nodes"]) == ["add", "mul"]
assert d["saturation"]["procs"] == 4 and d["saturation"]["proven"] is True
w = d["what_if"]
assert w["procs"] == 4 and w["kind"] == "loop"
assert w["one_more_delay"]["iteration_bound"]["num"] == 15
assert "caution" in d
PY

"$bin" sweep "$dir/pinned.pace" -p 2..3 --json -n 200 > "$dir/pin.json" || fail "pinned run"
$py - "$dir/pin.json" <<'PY' || fail "pinned json"
import json, sys
d = json.load(open(sys.argv[1]))
for p in d["points"]:
    lim = p["limit"]
    assert lim["kind"] == "loop", lim  # the loop through the two transfers
    hops = {(t["from"], t["to"]) for t in lim["transfers"]}
    assert hops == {("a", "b"), ("b", "a")}, hops
PY

# a hand map that puts the loop's two halves on different cores
printf 'core 0: a\ncore 1: b\n' > "$dir/split.map"
sed 's/ pin=[01]//' "$dir/pinned.pace" > "$dir/free.pace"
"$bin" sweep "$dir/free.pace" --map "$dir/split.map" --json -n 200 > "$dir/map.json" ||
    fail "map run"
$py - "$dir/map.json" <<'PY' || fail "map json"
import json, sys
d = json.load(open(sys.argv[1]))
assert [p["procs"] for p in d["points"]] == [2]
lim = d["points"][0]["limit"]
assert lim["kind"] == "loop" and len(lim["transfers"]) == 2, lim
assert d["points"][0]["period"]["num"] == 50
PY

# ---- CSV and SVG ------------------------------------------------------------
"$bin" sweep "$dir/rec.pace" -p 1..4 -n 200 --csv "$dir/out.csv" --svg "$dir/out.svg" \
    > "$dir/out.txt" || fail "csv/svg run"
[ "$(wc -l < "$dir/out.csv")" -eq 5 ] || fail "csv rows"
head -n 1 "$dir/out.csv" | grep -q '^procs,period,' || fail "csv header"
grep -q '^4,30,30/1,' "$dir/out.csv" || fail "csv row for P=4"
$py - "$dir/out.svg" <<'PY' || fail "svg"
import sys, xml.etree.ElementTree as ET
root = ET.parse(sys.argv[1]).getroot()
ns = "{http://www.w3.org/2000/svg}"
assert root.tag == ns + "svg"
lines = root.findall(ns + "polyline")
# period, iteration bound, work / P, largest node; throughput and its best
assert len(lines) == 6, len(lines)
for l in lines:
    assert len(l.get("points").split()) == 4
texts = [t.text for t in root.iter(ns + "text")]
assert "cores (P)" in texts and "period (cycles per iteration)" in texts
PY
cp "$dir/out.svg" "$dir/first.svg"
"$bin" sweep "$dir/rec.pace" -p 1..4 -n 200 --svg "$dir/out.svg" > /dev/null || fail "svg again"
cmp -s "$dir/out.svg" "$dir/first.svg" || fail "svg bytes differ between runs"

# ---- human text -------------------------------------------------------------
awk 'length($0) > 100 { bad = 1 } END { exit bad }' "$dir/out.txt" || fail "line over 100"
grep -q '^Caution' "$dir/out.txt" || fail "no caution"
grep -q 'Saturation: from P = 4' "$dir/out.txt" || fail "no saturation line"

# ---- the saturation sentence matches the table -----------------------------
# The first P whose period no later row beats is where "from P = N on the
# period stays at X" must point, with X that row's period.
cat > "$dir/fork.pace" <<'EOF'
# invented for this check: a 30-cycle branch beside six 10-cycle ones
node split cycles=0
node big cycles=30
node s1 cycles=10
node s2 cycles=10
node s3 cycles=10
node s4 cycles=10
node s5 cycles=10
node s6 cycles=10
node join cycles=0
edge split -> big -> join
edge split -> s1 -> join
edge split -> s2 -> join
edge split -> s3 -> join
edge split -> s4 -> join
edge split -> s5 -> join
edge split -> s6 -> join
EOF
for f in rec fork classes; do
    extra=
    [ "$f" = classes ] && extra="-p dsp=1..3"
    "$bin" sweep "$dir/$f.pace" -n 100 $extra > "$dir/sat.txt" || fail "$f run"
    awk -v f="$f" '
        /^ +P +/ { table = 1; next }
        table && /^ *[0-9]+ / { n++; key[n] = (f == "classes") ? $2 : $1;
                                per[n] = (f == "classes") ? $3 : $2; next }
        table { table = 0 }
        /^Saturation: from / { line = $0 }
        END {
            sat = n
            for (i = n - 1; i >= 1; i--) if (per[i] == per[sat]) sat = i; else break
            if (n == 0 || line == "") { print "no table or no sentence"; exit 1 }
            what = (f == "classes") ? "dsp = " key[sat] : "P = " key[sat]
            want = "from " what " on the period stays at " per[sat]
            if (index(line, want) == 0) { print "want: " want; print "got: " line; exit 1 }
        }' "$dir/sat.txt" || fail "saturation sentence of $f does not match its table"
    grep -q "efficiency: speedup x" "$dir/sat.txt" || fail "no efficiency base in $f"
done
grep -q 'eff. vs P=2' "$dir/sat.txt" || fail "efficiency column without its base"

# ---- the period never grows; reused maps are reported ------------------------
# An invented random graph on which a smaller core count's map may do better
# than the one found for more cores: wherever a point runs another count's
# map, its own was worse, the extra cores idle, and the text has a note.
cat > "$dir/rnd.pace" <<'EOF'
# invented for this check: a random graph with two loops
comm latency=16 send=1 recv=1
node v0 cycles=9
node v1 cycles=1
node v2 cycles=8
node v3 cycles=15
node v4 cycles=23
node v5 cycles=7
node v6 cycles=12
node v7 cycles=12
node v8 cycles=3
node v9 cycles=26
node v10 cycles=6
edge v7 -> v10 -> v8
edge v8 -> v7 delay=1
edge v10 -> v8 delay=1
edge v6 -> v9 -> v10
edge v0 -> v7
edge v2 -> v7
edge v1 -> v9
edge v2 -> v4
edge v3 -> v4
edge v2 -> v9
EOF
"$bin" sweep "$dir/rnd.pace" -p 1..5 -n 60 --no-refine --json > "$dir/rnd.json" || fail "rnd json"
"$bin" sweep "$dir/rnd.pace" -p 1..5 -n 60 --no-refine > "$dir/rnd.txt" || fail "rnd text"
$py - "$dir/rnd.json" "$dir/rnd.txt" <<'PY' || fail "reused maps"
import json, sys
from fractions import Fraction as F
d = json.load(open(sys.argv[1]))
text = open(sys.argv[2]).read()
rat = lambda r: F(r["num"], r["den"])
pts = d["points"]
for a, b in zip(pts, pts[1:]):
    assert rat(b["period"]) <= rat(a["period"]), (a["procs"], b["procs"])
for p in pts:
    if p["map_made_for"] < p["procs"]:
        assert rat(p["own_map_period"]) > rat(p["period"]), p
        assert p["idle_cores"] >= p["procs"] - p["map_made_for"], p
        note = "note: P = %d runs the map made for P = %d" % (p["procs"], p["map_made_for"])
        assert note in text, note
    else:
        assert p["own_map_period"] == p["period"], p
assert d["efficiency_base_procs"] == 1
PY

# CSV numbers in their shortest round-trip form
"$bin" sweep "$dir/rec.pace" -p 2 -n 100 --csv "$dir/short.csv" > /dev/null || fail "csv 2"
grep -q '^2,50,50/1,45,45/1,' "$dir/short.csv" || fail "csv shortest form: $(cat "$dir/short.csv")"

# ---- progress on a terminal -------------------------------------------------
if command -v script > /dev/null 2>&1; then
    script -qec "$bin sweep $dir/rec.pace -n 50 > /dev/null" /dev/null > "$dir/tty" 2>&1
    # threads end points in any order: the last line counts them all
    grep -q 'sweep: P = [1-5] done (5 of 5)' "$dir/tty" || fail "no progress line on a terminal"
    script -qec "$bin sweep $dir/rec.pace -n 50 --jobs 1 > /dev/null" /dev/null > "$dir/tty" 2>&1
    grep -q 'sweep: P = 5 done (5 of 5)' "$dir/tty" || fail "one thread: P = 5 not last"
    script -qec "$bin sweep $dir/rec.pace -n 50 --quiet > /dev/null" /dev/null > "$dir/tty" 2>&1
    grep -q 'sweep: P =' "$dir/tty" && fail "progress line despite --quiet"
else
    echo "note: util-linux script absent, progress on a terminal not checked"
fi

# ---- errors -----------------------------------------------------------------
expect() { # expected exit status, then the command
    want=$1
    shift
    "$@" > /dev/null 2> "$dir/err"
    got=$?
    [ "$got" -eq "$want" ] || fail "exit $got, expected $want: $*"
}
expect 2 "$bin" sweep "$dir/rec.pace" -p 0..3
expect 2 "$bin" sweep "$dir/rec.pace" -p 3..2
expect 2 "$bin" sweep "$dir/rec.pace" -p 1..300
expect 2 "$bin" sweep "$dir/pinned.pace" -p 1..3
grep -q "node 'b' is pinned to core 1" "$dir/err" || fail "pin message: $(cat "$dir/err")"
expect 2 "$bin" sweep "$dir/classes.pace" -p 1..2
grep -q "core classes" "$dir/err" || fail "classes message"
grep -q "dsp=1..4" "$dir/err" || fail "classes message without the way to vary one"
expect 0 "$bin" sweep "$dir/classes.pace"
expect 0 "$bin" sweep "$dir/classes.pace" -p host=1..2 -n 50
expect 2 "$bin" sweep "$dir/classes.pace" -p dps=1..2
grep -q "did you mean 'dsp'" "$dir/err" || fail "no suggestion: $(cat "$dir/err")"
expect 2 "$bin" sweep "$dir/rec.pace" -p dsp=1..2
grep -q "identical cores" "$dir/err" || fail "class on identical cores: $(cat "$dir/err")"
expect 2 "$bin" sweep "$dir/rec.pace" -p 4..2
grep -q "reversed (4 > 2); write 2..4" "$dir/err" || fail "reversed: $(cat "$dir/err")"
expect 2 "$bin" sweep "$dir/rec.pace" -p ""
grep -q "empty" "$dir/err" || fail "empty range: $(cat "$dir/err")"
expect 2 "$bin" sweep "$dir/rec.pace" -p 2..
grep -q "both ends" "$dir/err" || fail "half range: $(cat "$dir/err")"
expect 2 "$bin" sweep "$dir/classes.pace" -p dsp=3..1
expect 1 "$bin" sweep "$dir/missing.pace"
expect 0 "$bin" sweep "$dir/rec.pace" -p 2..9 -n 50
grep -q "warning: .*5 nodes" "$dir/err" || fail "no warning when capping at the node count"
expect 1 "$bin" sweep "$dir/rec.pace" -n 50 --svg "$dir/no/such/dir/x.svg"
[ -e "$dir/no/such/dir/x.svg" ] && fail "svg left behind"
expect 2 "$bin" sweep "$dir/free.pace" --map "$dir/split.map" -p 2..3
expect 1 "$bin" sweep "$dir/free.pace" --map "$dir/split.map" -p 1
expect 2 "$bin" sweep "$dir/rec.pace" --jobs 0
grep -q "jobs must be at least 1" "$dir/err" || fail "jobs 0: $(cat "$dir/err")"
expect 2 "$bin" sweep "$dir/rec.pace" --jobs two
expect 2 "$bin" sweep "$dir/rec.pace" --jobs -3
expect 2 "$bin" sweep "$dir/rec.pace" --jobs

# ---- --jobs: the same bytes on one thread and on four ----------------------------
# The list scheduler's maps (--no-refine): the period-first mapper stops at
# a wall-clock budget, so its maps may differ between any two runs.  The
# demo scenarios, the ones above, and random graphs (Python's seeded
# random, edges forward, some back with a delay, transfer costs).
$py - "$dir" <<'PY' || fail "random graphs"
import random, sys
rng = random.Random(1616)
for k in range(4):
    n = rng.randint(5, 12)
    lines = ["comm latency=%d send=%d recv=%d" % (rng.randint(0, 40), rng.randint(0, 5),
                                                   rng.randint(0, 5))]
    lines += ["node v%d cycles=%d" % (v, rng.randint(1, 30)) for v in range(n)]
    for _ in range(n + rng.randint(0, n)):
        a = rng.randint(0, n - 2)
        b = rng.randint(a + 1, n - 1)
        lines.append("edge v%d -> v%d delay=1" % (b, a) if rng.random() < 0.2
                     else "edge v%d -> v%d" % (a, b))
    open("%s/rand%d.pace" % (sys.argv[1], k), "w").write("\n".join(lines) + "\n")
PY
for f in scenarios/*.pace "$dir"/rec.pace "$dir"/rand*.pace; do
    for j in 1 4; do
        "$bin" sweep "$f" --no-refine -n 200 --jobs $j --csv "$dir/j$j.csv" \
            > "$dir/j$j.txt" 2>&1 || fail "$f --jobs $j"
        "$bin" sweep "$f" --no-refine -n 200 --jobs $j --json > "$dir/j$j.json" ||
            fail "$f --jobs $j --json"
    done
    for ext in txt csv json; do
        cmp -s "$dir/j1.$ext" "$dir/j4.$ext" || fail "$f: --jobs 1 and 4 differ ($ext)"
    done
done
"$bin" sweep "$dir/classes.pace" -p host=1..3 -n 50 --jobs 3 > "$dir/j3.txt" &&
    "$bin" sweep "$dir/classes.pace" -p host=1..3 -n 50 --jobs 1 | cmp -s - "$dir/j3.txt" ||
    fail "classes: --jobs 1 and 3 differ"

expect 0 "$bin" sweep -h
"$bin" sweep -h | awk 'length($0) > 100 { bad = 1 } END { exit bad }' || fail "help over 100"
exit 0
