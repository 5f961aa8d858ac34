#!/bin/sh
# check_fidelity.sh - end-to-end checks that reports read true and the
# command line keeps its habits: usage errors that say why, --version,
# times and frequencies written one way by every command.
#
# The unit style is checked against its written rule (docs/guide.md, "Times
# and frequencies"): a number, one space, a unit; the number below 1000 and
# at least 1 (or 0), no trailing zeros after a decimal point.
#
# Run from the project root (make test does); PM_BIN names the binary.
PM=${PM_BIN:-build/pacemap}
. tests/support/check_lib.sh

# procs_opt FILE N: "-p N", or nothing for a scenario with core classes
procs_opt() { grep -q '^procs.*:' "$1" || echo "-p $2"; }

# ---- usage errors that say why ----------------------------------------------
expect_rc 2 "simulate --fifo 0 is a usage error" simulate scenarios/rx_chain.pace --fifo 0
grep -q 'at least one token' "$TMP/err" && ok "--fifo 0 says why" || bad "--fifo 0 does not say why"

# ---- an inconsistent rate is pointed at -------------------------------------------
# A consistent decimate-and-restore loop (by hand, with c -> d at 4:1:
# q = a 4, b 1, c 1, d 4, e 1; 4*1 = 1*4 on a -> b, 1*4 = 4*1 on c -> d)
# with c -> d mistyped 3:1 instead of 4:1.  Around a -> b -> c -> d -> a the
# rates ask a to fire (1/4)(1)(3)(1) = 3/4 times as often as itself.  Both
# a -> b (1:4 -> 1:3) and c -> d (3:1 -> 4:1) could fix it alone; 4 is a
# rate used elsewhere (a -> e), 3 only on c -> d: the error points there,
# line 9, column 6 (where "c" starts).
cat > "$TMP/chan.pace" <<'PACE'
# channeliser loop, one rate mistyped
node a cycles=1
node b cycles=1
node c cycles=1
node d cycles=1
node e cycles=1
edge a -> b produce=1 consume=4
edge b -> c
edge c -> d produce=3 consume=1
edge d -> a delay=4
edge a -> e produce=1 consume=4
PACE
expect_rc 1 "inconsistent rates are an input error" check "$TMP/chan.pace"
grep -q "chan.pace:9:6: error: inconsistent rates on the cycle" "$TMP/err" &&
    ok "inconsistent rates: points at the changed edge (9:6)" ||
    bad "inconsistent rates: not at the changed edge (9:6)"
for part in "3/4 times" "a -> b 1:4 (line 7)" "b -> c 1:1 (line 8)" "c -> d 3:1 (line 9)" \
            "d -> a 1:1 (line 10)"; do
    grep -qF "$part" "$TMP/err" && ok "inconsistent rates: names '$part'" ||
        bad "inconsistent rates: no '$part'"
done

# ---- critical loops that differ in the middle print apart -------------------------
# Ten stages in a ring with one delay, and a second path around stage_5 via
# alt_5: two loops of 10 nodes x 10 cycles / 1 delay = 100 (by hand), equal
# but for their sixth node.
{
    echo "# two ten-node loops that differ only in the middle"
    i=0; chain=""
    while [ $i -lt 10 ]; do
        echo "node stage_$i cycles=10"; chain="$chain${chain:+ -> }stage_$i"; i=$((i + 1))
    done
    echo "node alt_5 cycles=10"
    echo "edge $chain"
    echo "edge stage_9 -> stage_0 delay=1"
    echo "edge stage_4 -> alt_5 -> stage_6"
} > "$TMP/two.pace"
expect_rc 0 "bound on two loops differing in the middle" bound "$TMP/two.pace"
sed -n '/^critical loops/,/^$/p' "$TMP/out" | grep 'cycles /' > "$TMP/loops"
if [ "$(wc -l < "$TMP/loops")" -eq 2 ] && [ "$(sort -u "$TMP/loops" | wc -l)" -eq 2 ] &&
    grep -q 'stage_5' "$TMP/loops" && grep -q 'alt_5' "$TMP/loops" &&
    grep -q '100 cycles / 1 delay' "$TMP/loops"; then
    ok "critical loops: two lines, told apart by stage_5 and alt_5"
else
    bad "critical loops: cannot tell the two loops apart"
fi
awk 'length($0) > 100 { exit 1 }' "$TMP/out" && ok "bound text within 100 columns" ||
    bad "bound text wider than 100 columns"

# ---- bound says a multirate scenario was expanded -----------------------------------
# rx_decimating: track fires once; dec2 consumes 2 per firing from chan
# (chan 2), dec4 feeds chan 1:1 (dec4 2), mix -> dec4 consumes 4 (mix 8),
# adc and nco feed mix 1:1 (8 each): 1 + 1 + 2 + 2 + 8 + 8 + 8 = 30
# firings of 7 nodes (by hand).
expect_rc 0 "bound on a multirate scenario" bound scenarios/rx_decimating.pace
head -n 2 "$TMP/out" | grep -q '7 nodes -> 30 firings' && head -n 2 "$TMP/out" | grep -q 'expanded' &&
    ok "bound says 7 nodes -> 30 firings, expanded" || bad "bound does not say it expanded"
expect_rc 0 "bound on a single-rate scenario" bound scenarios/rx_chain.pace
grep -q 'firings\|expanded' "$TMP/out" && bad "single rate: speaks of expansion" ||
    ok "single rate: no word of expansion"

# ---- pictures: own palette, text inside, a legend ----------------------------------
# The colours used before the project's own palette, taken from the code it
# replaced (two third-party palettes): none may come back, in the sources or
# in any output.
OLD_COLOURS="#c0392b #e67e22 #fdecea #fdf2e9 #9ecae1 #fdd0a2 #a1d99b #dadaeb #fcbba1 #d9d9d9"
have_py=false
/usr/bin/python3 -c 'import xml.etree.ElementTree' 2> /dev/null && have_py=true
$have_py || echo "note: python3 not installed: SVG and palette checks skipped"
if $have_py; then
    /usr/bin/python3 tests/ref/svg_check.py palette sim/write/palette.c > "$TMP/err" 2>&1 &&
        ok "palette: lightness steps (CIELAB L*)" || bad "palette: lightness rule broken"
fi
long="$TMP/a_scenario_file_with_a_rather_long_name_to_stretch_every_caption_of_it.pace"
{ printf 'title "%s"\n' "$(printf 'A long title that goes on %.0s' 1 2 3 4 5 6)"
  grep -v '^title' scenarios/rx_chain.pace; } > "$long"
for f in scenarios/*.pace "$long"; do
    n=$(basename "$f" .pace | cut -c1-20)
    p=$(procs_opt "$f" 2)
    sp=$(procs_opt "$f" 1..2)
    # shellcheck disable=SC2086
    "$PM" schedule "$f" $p --svg "$TMP/$n.sched.svg" > /dev/null 2>&1
    # shellcheck disable=SC2086
    "$PM" simulate "$f" $p -n 50 --svg "$TMP/$n.sim.svg" > /dev/null 2>&1
    # shellcheck disable=SC2086
    "$PM" sweep "$f" $sp -n 50 --svg "$TMP/$n.sweep.svg" > /dev/null 2>&1
    "$PM" dot "$f" > "$TMP/$n.dot" 2> /dev/null
    for o in "$TMP/$n".*.svg "$TMP/$n.dot"; do
        [ -s "$o" ] || { bad "no output $(basename "$o")"; continue; }
        hit=""
        for c in $OLD_COLOURS; do grep -qi "$c" "$o" && hit="$hit $c"; done
        [ -z "$hit" ] && ok "no old colour in $(basename "$o")" ||
            bad "old colour$hit in $(basename "$o")"
    done
    if $have_py; then
        /usr/bin/python3 tests/ref/svg_check.py fit "$TMP/$n".*.svg > "$TMP/err" 2>&1 &&
            ok "every text inside the SVGs of $n" || bad "text outside an SVG of $n"
    fi
    for o in "$TMP/$n.sched.svg" "$TMP/$n.sim.svg"; do
        grep -q 'fill by iteration' "$o" && ok "legend in $(basename "$o")" ||
            bad "no legend in $(basename "$o")"
    done
done
hit=""
for c in $OLD_COLOURS; do grep -rqi "$c" sim sched include && hit="$hit $c"; done
[ -z "$hit" ] && ok "no old colour in the sources" || bad "old colour$hit in the sources"

# ---- --quiet on every command, the caution kept ----------------------------------------
for c in check bound schedule simulate run sweep dot; do
    "$PM" "$c" -h > "$TMP/out" 2>&1
    grep -q -- '--quiet' "$TMP/out" && ok "$c -h lists --quiet" || bad "$c -h has no --quiet"
done
for c in "bound" "schedule -p 2" "simulate -p 2 -n 50" "sweep -p 1..2 -n 50" "run -p 2 -n 20"; do
    name=${c%% *}
    # shellcheck disable=SC2086
    "$PM" $c scenarios/rx_chain.pace > "$TMP/loud" 2> /dev/null
    # shellcheck disable=SC2086
    "$PM" $c --quiet scenarios/rx_chain.pace > "$TMP/out" 2> "$TMP/err"
    rc=$?
    if [ "$name" = run ] && [ "$rc" -ne 0 ]; then
        printf 'skip  run --quiet (run cannot start here: %s)\n' "$(head -n 1 "$TMP/err")"
        continue
    fi
    [ "$rc" -eq 0 ] && ok "$name --quiet (exit 0)" || bad "$name --quiet: exit $rc"
    n=$(grep -c '^Caution: ' "$TMP/out")
    [ "$n" -eq 1 ] && [ "$(grep -A1 '^Caution: ' "$TMP/out" | wc -l)" -eq 1 ] &&
        ok "$name --quiet: the caution in one line, last" || bad "$name --quiet: caution not one line"
    grep '^Caution: ' "$TMP/out" | grep -q 'validate on target hardware' &&
        ok "$name --quiet: the caution says validate on target hardware" ||
        bad "$name --quiet: caution lost its point"
    [ "$(wc -l < "$TMP/out")" -lt "$(wc -l < "$TMP/loud")" ] &&
        ok "$name --quiet prints less" || bad "$name --quiet prints as much as without"
    # shellcheck disable=SC2086
    "$PM" $c --json scenarios/rx_chain.pace > "$TMP/out" 2> /dev/null
    /usr/bin/python3 -c 'import json,sys; d=json.load(open(sys.argv[1])); sys.exit("caution" not in d or "validate" not in d["caution"])' "$TMP/out" 2> "$TMP/err" &&
        ok "$name --json has the caution" || bad "$name --json has no caution"
done
"$PM" sweep -q -p 1..2 -n 50 scenarios/rx_chain.pace > "$TMP/out" 2> "$TMP/err"
[ ! -s "$TMP/err" ] && grep -q '^Caution: ' "$TMP/out" &&
    ok "sweep -q: no progress, one-line caution" || bad "sweep -q: progress or caution wrong"

# ---- version ------------------------------------------------------------------
version=$(sed -n 's/^#define PM_VERSION "\(.*\)"/\1/p' include/pacemap/version.h)
for opt in --version -V; do
    expect_rc 0 "pacemap $opt" "$opt"
    [ "$(cat "$TMP/out")" = "pacemap $version" ] && ok "$opt prints pacemap $version" ||
        bad "$opt prints '$(cat "$TMP/out")', want 'pacemap $version'"
done

# ---- one style for times and frequencies ---------------------------------------
# units_ok FILE: every "NUMBER UNIT" of time or frequency follows the rule.
units_ok() {
    grep -Eo '[0-9][0-9.]*[ ]*(s|ms|us|ns|ps|Hz|kHz|MHz|GHz)\b' "$1" |
        grep -Ev '^[0-9]+\.?[0-9]* (cycles|s)$' > "$TMP/units"
    grep -Ev '^(0|[1-9][0-9]{0,2}(\.[0-9]*[1-9])?) (ms|us|ns|ps|kHz|MHz|GHz|Hz|s)$' \
        "$TMP/units" > "$TMP/err"
    # a bare "N s" is seconds only when a clock is involved; the rule still holds
    [ ! -s "$TMP/err" ]
}
# microseconds written out, or a unit glued to its number, break the style
no_glued() { ! grep -Eq '[0-9](us|ns|ms|MHz|kHz|GHz)\b|microseconds' "$1"; }

for f in scenarios/*.pace; do
    n=$(basename "$f" .pace)
    p=$(procs_opt "$f" 2)
    sp=$(procs_opt "$f" 1..2)
    for c in "check" "bound" "bound $p" "schedule $p" "simulate $p -n 50" \
             "sweep $sp -n 50" "dot"; do
        # shellcheck disable=SC2086
        if ! "$PM" $c "$f" > "$TMP/o.txt" 2> "$TMP/err"; then
            bad "units: $c $n failed"
            continue
        fi
        if units_ok "$TMP/o.txt" && no_glued "$TMP/o.txt"; then
            ok "units: $c $n"
        else
            bad "units: $c $n"
        fi
    done
done

echo "check_fidelity: $pass passed, $fail failed"
[ "$fail" -eq 0 ]
