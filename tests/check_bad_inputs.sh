#!/bin/sh
# check_bad_inputs.sh - the bad-input catalogue tests/bad/: every case gives
# its exact error line and exit status, and never anything else.
#
# A case is tests/bad/NAME.expect: directive lines starting with '#', then the
# exact stderr expected (nothing, for an input that must be accepted).
#   # cmd: bound -p 2     command and options (default: check); the input file
#                         goes right after the command word
#   # input: FILE         the file given (default NAME.pace)
#   # gen: KIND           the input is made here at test time (see gen_input)
#   # genfile: FILE       the file `gen` makes, when not the input (a map)
#   # twin                (exit 0 only) stdout equals that of the plain-LF,
#                         newline-terminated twin made by the generator
#   # needs: FEATURE      a feature still landing: the case is skipped with a
#                         note while the program answers "not supported yet"
#   # pending: REASON     the expectation waits on a change reported to its
#                         owner: a mismatch is a skip with a note, not a failure
#   # exit: N             expected exit status (default 1)
#   # note: ...           free text
# Every case runs from a scratch copy of tests/bad/, so messages name files
# as NAME.pace.  A command that answers "not available yet" (exit 2) is
# skipped with a note.  Needs PM_BIN (tests/run.sh sets it).
# usage: sh tests/check_bad_inputs.sh [NAME...]   (-v: show every output)
set -u
: "${PM_BIN:?PM_BIN must name the pacemap binary}"
verbose=no
if [ "${1:-}" = -v ]; then verbose=yes; shift; fi
src=$(cd "$(dirname "$0")/bad" && pwd) || exit 1
tmp=$(mktemp -d "${TMPDIR:-/tmp}/pm-bad.XXXXXX") || exit 1
trap 'rm -rf "$tmp"' EXIT INT TERM
w="$tmp/w"
mkdir -p "$w" "$tmp/twin"
cp "$src"/* "$w"/ && cp "$src"/* "$tmp/twin"/
pass=0
fail=0
skip=0

BASE='# invented test scenario: a two-node loop
procs 2
node a cycles=3
node b cycles=4
edge a -> b
edge b -> a delay=1'

# repeat N CHAR: N copies of CHAR
repeat() { awk -v n="$1" -v c="$2" 'BEGIN { s = ""; for (i = 0; i < n; i++) s = s c; printf "%s", s }'; }

# gen_input KIND FILE: make the input of a generated case (and its twin).
gen_input() {
    f=$1
    case "$2" in
    missing) rm -rf "$f" ;;
    dir) mkdir -p "$f" ;;
    empty) : > "$f" ;;
    binary) printf '\177ELF\002\001\001\000\000\000\000\000\000\000\000\000\003\000>\000' > "$f"
            head -c 2000 /dev/zero | tr '\0' '\377' >> "$f" ;;
    nul) printf 'procs 2\nnode a\000 cycles=4\n' > "$f" ;;
    nul_in_comment) printf 'node a cycles=4\n# a comment \000 with a NUL\n' > "$f" ;;
    crlf) printf '%s\n' "$BASE" | sed 's/$/\r/' > "$f"
          printf '%s\n' "$BASE" > "$tmp/twin/$f" ;;
    crlf_at_limit) { printf 'node a cycles=1\r\n#'; repeat 65535 x; printf '\r\n'; } > "$f"
                   printf 'node a cycles=1\n' > "$tmp/twin/$f" ;;
    bom) { printf '\357\273\277'; printf '%s\n' "$BASE"; } > "$f"
         printf '%s\n' "$BASE" > "$tmp/twin/$f" ;;
    utf8_name) printf 'node \303\251t\303\251 cycles=1\n' > "$f" ;;
    map_nul) printf 'core 0: src\000 fir mix\ncore 2: ctl\n' > "$f" ;;
    map_crlf) printf 'core 0: src fir mix\r\ncore 2: ctl\r\n' > "$f"
              printf 'core 0: src fir mix\ncore 2: ctl\n' > "$tmp/twin/$f" ;;
    map_no_final_newline) printf 'core 0: src fir mix\ncore 2: ctl' > "$f"
                          printf 'core 0: src fir mix\ncore 2: ctl\n' > "$tmp/twin/$f" ;;
    pile_up) { printf 'procs 2\nnode a cycles=1 pin=0\nnode b cycles=100 pin=1\n'
               awk 'BEGIN { for (i = 0; i < 2000; i++) print "edge a -> b" }'; } > "$f" ;;
    cr_only) printf '%s\n' "$BASE" | tr '\n' '\r' > "$f" ;;
    no_final_newline) printf '%s' "$BASE" > "$f"
                      printf '%s\n' "$BASE" > "$tmp/twin/$f" ;;
    long_line) { printf 'procs 2\nnode a cycles=1\n# '; repeat 69998 x; printf '\n'; } > "$f" ;;
    long_name) { printf 'node '; repeat 70000 n; printf ' cycles=1\n'; } > "$f" ;;
    line_at_limit) { printf 'node a cycles=1\n#'; repeat 65535 x; printf '\n'; } > "$f"
                   printf 'node a cycles=1\n' > "$tmp/twin/$f" ;;
    line_over_limit) { printf 'node a cycles=1\n#'; repeat 65536 x; printf '\n'; } > "$f" ;;
    name_at_limit) { printf 'node '; repeat 256 n; printf ' cycles=1\n'; } > "$f" ;;
    name_over_limit) { printf 'node '; repeat 257 n; printf ' cycles=1\n'; } > "$f" ;;
    *) echo "unknown gen kind '$2'" >&2; return 1 ;;
    esac
}

# directive NAME FILE: value of '# NAME: value' in FILE (empty if absent)
directive() { sed -n "s/^# $1: *//p" "$2" | head -n 1; }

run_case() {
    name=$1
    exp="$src/$name.expect"
    cmd=$(directive cmd "$exp")
    [ -n "$cmd" ] || cmd=check
    input=$(directive input "$exp")
    [ -n "$input" ] || input="$name.pace"
    want_rc=$(directive exit "$exp")
    [ -n "$want_rc" ] || want_rc=1
    gen=$(directive gen "$exp")
    genfile=$(directive genfile "$exp")
    [ -n "$genfile" ] || genfile=$input
    needs=$(directive needs "$exp")
    pending=$(directive pending "$exp")
    grep -v '^#' "$exp" > "$tmp/want"
    if [ -n "$gen" ]; then
        (cd "$w" && gen_input "$genfile" "$gen") || { fail=$((fail + 1)); return; }
    fi
    word=${cmd%% *}
    rest=""
    [ "$word" = "$cmd" ] || rest=${cmd#* }
    # shellcheck disable=SC2086
    (cd "$w" && "$PM_BIN" "$word" "$input" $rest > "$tmp/out" 2> "$tmp/err")
    rc=$?
    [ "$verbose" = yes ] && { echo "== $name (exit $rc)"; cat "$tmp/err"; }
    if [ "$rc" -eq 2 ] && grep -q 'not available yet' "$tmp/err"; then
        skip=$((skip + 1))
        echo "skip: $name: $(head -n 1 "$tmp/err")"
        return
    fi
    if [ -n "$needs" ] && grep -q 'not supported yet\|not available yet' "$tmp/err"; then
        skip=$((skip + 1))
        echo "skip: $name needs $needs: $(head -n 1 "$tmp/err")"
        return
    fi
    if [ "$rc" -ne "$want_rc" ] || ! cmp -s "$tmp/err" "$tmp/want"; then
        if [ -n "$pending" ]; then
            skip=$((skip + 1))
            echo "skip: $name pending ($pending): got exit $rc $(head -n 1 "$tmp/err")"
            return
        fi
        fail=$((fail + 1))
        echo "FAIL: $name: pacemap $word $input $rest"
        echo "  expected (exit $want_rc):"
        sed 's/^/    /' "$tmp/want"
        echo "  got (exit $rc):"
        sed 's/^/    /' "$tmp/err"
        return
    fi
    if grep -q '^# twin' "$exp"; then
        # shellcheck disable=SC2086
        (cd "$tmp/twin" && "$PM_BIN" "$word" "$input" $rest > "$tmp/twin_out" 2>&1)
        if ! cmp -s "$tmp/out" "$tmp/twin_out"; then
            fail=$((fail + 1))
            echo "FAIL: $name: output differs from its plain twin"
            diff "$tmp/twin_out" "$tmp/out" | head -n 10
            return
        fi
    fi
    [ -z "$pending" ] || echo "note: $name now passes: drop its '# pending' line"
    pass=$((pass + 1))
}

if [ $# -gt 0 ]; then
    names="$*"
else
    names=$(cd "$src" && ls ./*.expect | sed 's|^\./||; s|\.expect$||')
fi
for n in $names; do
    run_case "$n"
done
echo "check_bad_inputs: $pass passed, $fail failed, $skip skipped"
[ "$fail" -eq 0 ]
