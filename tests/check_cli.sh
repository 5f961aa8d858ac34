#!/bin/sh
# check_cli.sh - end-to-end checks of the command line on the shipped
# scenarios: exit codes, -h, --json output (parsed with Python's json
# module and checked for the keys of docs/schema.json), DOT accepted by Graphviz,
# and error lines in the FILE:LINE:COL: error: form.
#
# Outside references: Graphviz `dot -Tsvg` must accept every DOT text;
# the scenario facts (nodes, edges, loops, work) and the iteration bound
# with its critical loops are recomputed by tests/cli_ref.py, which reads
# the scenario files itself and uses networkx (Debian python3-networkx:
# strongly_connected_components, simple_cycles).  Expected bounds of the
# demo scenarios are also derived by hand in their header comments.
#
# Run from the project root (make test does); PM_BIN names the binary.
# Prints one line per check and exits non-zero if any check fails.
PM=${PM_BIN:-build/pacemap}
PY=/usr/bin/python3
REF=tests/cli_ref.py
. tests/support/check_lib.sh

# available CMD: false when the command still answers "not available yet".
available() {
    "$PM" "$1" scenarios/rx_chain.pace > /dev/null 2> "$TMP/avail"
    ! grep -q 'not available yet' "$TMP/avail"
}

# ref LABEL MODE SCENARIO OUTPUT: compare with tests/cli_ref.py.
ref() {
    $PY "$REF" "$2" "$3" "$4" > "$TMP/err" 2>&1
    case $? in
    0) ok "$1" ;;
    77) printf 'skip  %s (%s)\n' "$1" "$(cat "$TMP/err")" ;;
    *) bad "$1" ;;
    esac
}

# json_keys LABEL KEY...: $TMP/out is JSON with these top-level keys.
json_keys() {
    label=$1
    shift
    if $PY -c '
import json, sys
d = json.load(open(sys.argv[1]))
missing = [k for k in sys.argv[2:] if k not in d]
if missing:
    sys.exit("missing keys: " + ", ".join(missing))
' "$TMP/out" "$@" 2> "$TMP/err"; then ok "$label"; else bad "$label"; fi
}

# json_schema LABEL COMMAND: $TMP/out validates against docs/schema.json's
# definition for COMMAND (python3-jsonschema; skipped when absent).
json_schema() {
    $have_schema || return 0
    if $PY -c '
import json, sys, jsonschema
schema = json.load(open("docs/schema.json"))
schema = {"$ref": "#/$defs/" + sys.argv[2], "$defs": schema["$defs"]}
jsonschema.Draft202012Validator.check_schema(schema)
jsonschema.validate(json.load(open(sys.argv[1])), schema,
                    cls=jsonschema.Draft202012Validator)
' "$TMP/out" "$2" 2> "$TMP/err"; then ok "$1"; else bad "$1"; fi
}

# error_line LABEL FILE: stderr holds one line "FILE:LINE:COL: error: ...".
error_line() {
    if [ "$(wc -l < "$TMP/err")" -eq 1 ] &&
        grep -Eq "^$2:[0-9]+:[0-9]+: error: .+" "$TMP/err"; then
        ok "$1"
    else
        bad "$1: stderr is not one FILE:LINE:COL: error: line"
        sed 's/^/      /' "$TMP/err"
    fi
}

have_dot=false
command -v dot > /dev/null 2>&1 && have_dot=true
$have_dot || echo "note: Graphviz 'dot' not installed: DOT layout checks skipped"
have_ref=false
$PY -c 'import networkx' 2> /dev/null && have_ref=true
$have_ref || echo "note: python3-networkx not installed: reference checks skipped"
have_schema=false
$PY -c 'import jsonschema' 2> /dev/null && have_schema=true
$have_schema || echo "note: python3-jsonschema not installed: schema checks skipped"
have_bound=false
available bound && have_bound=true
$have_bound || echo "note: 'bound' not available yet: its checks skipped"

for f in scenarios/*.pace; do
    n=$(basename "$f" .pace)
    expect_rc 0 "check $n" check "$f"
    grep -q 'the scenario is valid' "$TMP/out" && ok "check $n says valid" ||
        bad "check $n: no 'the scenario is valid' line"
    expect_rc 0 "check --json $n" check --json "$f"
    json_keys "check --json $n has the schema keys" nodes edges loops total_cycles repetition
    json_schema "check --json $n follows docs/schema.json" check
    if $have_ref; then
        ref "check $n agrees with the networkx reference" check "$f" "$TMP/out"
    fi

    expect_rc 0 "dot $n" dot "$f"
    cp "$TMP/out" "$TMP/$n.dot"
    if $have_dot; then
        dot -Tsvg "$TMP/$n.dot" -o "$TMP/$n.svg" 2> "$TMP/err" && [ -s "$TMP/$n.svg" ] &&
            ok "dot $n is accepted by Graphviz" || bad "dot $n is not accepted by Graphviz"
    fi
    if $have_ref; then
        ref "dot $n marks exactly the critical loops of the reference" dot "$f" "$TMP/$n.dot"
    fi
    expect_rc 0 "dot --json $n" dot --json "$f"
    json_keys "dot --json $n has its keys" dot iteration_bound critical_loops
    json_schema "dot --json $n follows docs/schema.json" dot
    $PY -c 'import json,sys; sys.exit(json.load(open(sys.argv[1]))["dot"] != open(sys.argv[2]).read())' \
        "$TMP/out" "$TMP/$n.dot" 2> "$TMP/err" &&
        ok "dot --json $n carries the same DOT text" || bad "dot --json $n: DOT text differs"

    if $have_bound && grep -Eq 'produce=|consume=' "$f" &&
        ! "$PM" bound "$f" > /dev/null 2>&1; then
        printf 'skip  bound %s (multirate: bound does not take it yet)\n' "$n"
    elif $have_bound; then
        expect_rc 0 "bound $n" bound "$f"
        expect_rc 0 "bound --json $n" bound --json "$f"
        json_keys "bound --json $n has the schema keys" iteration_bound critical_loops \
            total_cycles lower_bound
        json_schema "bound --json $n follows docs/schema.json" bound
        if $have_ref; then
            ref "bound $n agrees with the networkx reference" bound "$f" "$TMP/out"
        fi
    fi
done

# Bounds derived by hand in the scenario comments (rx_chain: carrier loop
# 80+260+70+40+90 = 540 over 1 delay; crossover: low limiter 700+2300+900
# = 3900; sonar: 900+1200+400+700 = 3200; filterbank: no loop).
for pair in rx_chain:540 crossover:3900 sonar:3200 filterbank:null; do
    n=${pair%%:*}
    want=${pair#*:}
    "$PM" dot --json "scenarios/$n.pace" > "$TMP/out" 2> "$TMP/err"
    got=$($PY -c 'import json,sys; b=json.load(open(sys.argv[1]))["iteration_bound"]
print("null" if b is None else ("%d" % b["num"] if b["den"] == 1 else "%d/%d" % (b["num"], b["den"])))' \
        "$TMP/out" 2>> "$TMP/err")
    [ "$got" = "$want" ] && ok "$n: iteration bound $want as derived by hand" ||
        bad "$n: iteration bound '$got', derived by hand: $want"
done

# Usage errors: exit 2 and a "pacemap: error:" line.
for cmd in check dot; do
    expect_rc 2 "$cmd without a file" "$cmd"
    grep -q '^pacemap: error: ' "$TMP/err" && ok "$cmd without a file says why" ||
        bad "$cmd without a file: no 'pacemap: error:' line"
    expect_rc 2 "$cmd with an unknown option" "$cmd" scenarios/rx_chain.pace --bogus
    expect_rc 2 "$cmd with two files" "$cmd" scenarios/rx_chain.pace scenarios/sonar.pace
    expect_rc 0 "$cmd -h" "$cmd" -h
    grep -q "^usage: pacemap $cmd" "$TMP/out" && ok "$cmd -h prints its usage" ||
        bad "$cmd -h: no usage line"
done
expect_rc 2 "check -p 0" check scenarios/rx_chain.pace -p 0
expect_rc 2 "check -p x" check scenarios/rx_chain.pace -p x
expect_rc 2 "check -p above the core limit" check scenarios/rx_chain.pace -p 4097
expect_rc 2 "sweep -n 0" sweep scenarios/rx_chain.pace -n 0
expect_rc 2 "check -p on a scenario with core classes" check scenarios/sonar.pace -p 2
expect_rc 0 "check -p 7" check --json scenarios/rx_chain.pace -p 7
$PY -c 'import json,sys; sys.exit(json.load(open(sys.argv[1]))["platform"]["cores"] != 7)' \
    "$TMP/out" 2> "$TMP/err" && ok "check -p 7 reports 7 cores" || bad "check -p 7: cores not 7"

# Input errors: exit 1 and one FILE:LINE:COL: error: line.
printf 'node a cycles=10\nedge a -> nosuch\n' > "$TMP/unknown.pace"
printf 'node a cycles=1\nnode b cycles=2\nedge a -> b\nedge b -> a\n' > "$TMP/zero.pace"
printf 'node a cycles=1\nedge a -> a\n' > "$TMP/self.pace"
for cmd in check dot; do
    expect_rc 1 "$cmd on an unknown node" "$cmd" "$TMP/unknown.pace"
    error_line "$cmd on an unknown node: error line" "$TMP/unknown.pace"
    expect_rc 1 "$cmd on a loop without delay" "$cmd" "$TMP/zero.pace"
    error_line "$cmd on a loop without delay: error line" "$TMP/zero.pace"
    grep -Eq 'a -> b|b -> a' "$TMP/err" && ok "$cmd names the loop's nodes in order" ||
        bad "$cmd does not name the loop's nodes"
    expect_rc 1 "$cmd on a self-loop without delay" "$cmd" "$TMP/self.pace"
    expect_rc 1 "$cmd on a missing file" "$cmd" "$TMP/missing.pace"
    [ -s "$TMP/out" ] && bad "$cmd printed output on error" || ok "$cmd prints nothing on error"
done

# A multirate graph: check either solves it (then the repetition vector
# must balance every edge: firings(src) x produce = firings(dst) x consume,
# Lee & Messerschmitt, IEEE Trans. Computers 1987) or reports one error
# line and exits 1 while multirate analysis is not available; dot draws it
# either way, rates at the edge ends.
printf 'node src cycles=10\nnode dec cycles=30\nnode sink cycles=5\nedge src -> dec produce=1 consume=4 words=2\nedge dec -> sink\n' \
    > "$TMP/multi.pace"
"$PM" check --json "$TMP/multi.pace" > "$TMP/out" 2> "$TMP/err"
rc=$?
case $rc in
0)
    $PY -c '
import json, sys
rep = json.load(open(sys.argv[1]))["repetition"]
sys.exit(not (rep["src"] == 4 * rep["dec"] and rep["dec"] == rep["sink"] and rep["dec"] >= 1))
' "$TMP/out" 2> "$TMP/err" && ok "check balances a multirate graph" ||
        bad "check: multirate repetition vector does not balance"
    ;;
1) error_line "check on a multirate graph, not supported yet: error line" "$TMP/multi.pace" ;;
*) bad "check on a multirate graph: exit status $rc" ;;
esac
expect_rc 0 "dot on a multirate graph" dot "$TMP/multi.pace"
grep -q 'taillabel="1", headlabel="4"' "$TMP/out" && ok "dot shows the rates at the edge ends" ||
    bad "dot does not show the rates"
if $have_dot; then
    dot -Tsvg "$TMP/out" -o "$TMP/multi.svg" 2> "$TMP/err" &&
        ok "Graphviz accepts the multirate drawing" || bad "Graphviz rejects the multirate drawing"
fi

# Names that need quoting in DOT (dots, underscores).
printf 'node a.b cycles=3\nnode _x9 cycles=4\nedge a.b -> _x9 -> a.b delay=2 words=4\n' \
    > "$TMP/names.pace"
expect_rc 0 "dot with dotted names" dot "$TMP/names.pace"
if $have_dot; then
    dot -Tsvg "$TMP/out" -o "$TMP/names.svg" 2> "$TMP/err" &&
        ok "Graphviz accepts dotted names" || bad "Graphviz rejects dotted names"
fi
grep -q '"a.b" -> "_x9"' "$TMP/out" && ok "dot quotes node names" ||
    bad "dot does not quote node names"
grep -q '2D 4w' "$TMP/out" && ok "dot labels delays and words" ||
    bad "dot edge label lacks '2D 4w'"

# A title with characters DOT would misread, if the reader takes it.
printf 'title "say \\"hi\\" \\\\N {x}"\nnode a cycles=1\n' > "$TMP/title.pace"
if "$PM" check "$TMP/title.pace" > /dev/null 2>&1; then
    expect_rc 0 "dot with a title that needs escaping" dot "$TMP/title.pace"
    if $have_dot; then
        dot -Tsvg "$TMP/out" -o "$TMP/title.svg" 2> "$TMP/err" &&
            ok "Graphviz accepts the escaped title" || bad "Graphviz rejects the title"
    fi
else
    echo "note: the reader refuses quotes or backslashes in titles; title check skipped"
fi

echo "check_cli: $pass passed, $fail failed"
[ "$fail" -eq 0 ]
