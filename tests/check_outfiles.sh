#!/bin/sh
# check_outfiles.sh - output files appear whole or not at all (docs/simulation.md,
# "Outputs"; include/pacemap/outfile.h).
#
# For every command option that writes a file (--svg, --vcd, --emit-map):
#   - a failing run (bad scenario, or a bad --map) leaves no file and no
#     temporary file behind;
#   - a failing run leaves an existing file untouched: same bytes, same mtime;
#   - a run into a folder that does not exist fails cleanly (exit 1, one
#     error line) and leaves nothing behind;
#   - a successful run writes the file completely (format terminator, final
#     newline) and replaces an existing file, leaving no temporary file.
# A case whose command answers "not available yet" (exit 2) or does not know
# the option yet is skipped with a note.  The same rules are first checked
# on pm_outfile itself through tests/helpers/outfile_probe.c.  Needs PM_BIN
# and PM_HELPERS (tests/run.sh sets them).
set -u
: "${PM_BIN:?PM_BIN must name the pacemap binary}"
tmp=$(mktemp -d "${TMPDIR:-/tmp}/pm-outfiles.XXXXXX") || exit 1
trap 'rm -rf "$tmp"' EXIT INT TERM
pass=0
fail=0
skip=0

cat > "$tmp/good.pace" <<'PACE'
# invented test scenario: a three-node loop on two cores
procs 2
node a cycles=3
node b cycles=4
node c cycles=2
edge a -> b -> c
edge c -> a delay=1
PACE
cat > "$tmp/bad.pace" <<'PACE'
procs 2
node a cycles=3
node b cycles=-4
PACE
printf 'core 0: a b\ncore 1: c a\n' > "$tmp/bad.map"
OLD='previous content, must survive'

ok() { pass=$((pass + 1)); }
bad() { fail=$((fail + 1)); echo "FAIL: $*"; }

# run OUTPUT_DIR ARGS...: run pacemap in a clean output folder; sets rc,
# leaves stderr in $tmp/err.  Returns 1 (and counts a skip) when the command
# or option is not there yet.
run() {
    "$PM_BIN" "$@" > "$tmp/out" 2> "$tmp/err"
    rc=$?
    if [ "$rc" -eq 2 ] && grep -q 'not available yet' "$tmp/err"; then
        return 1
    fi
    if [ "$rc" -eq 2 ] && grep -q "unknown option" "$tmp/err"; then
        return 1
    fi
    return 0
}

# no_temp DIR: no temporary file of pm_outfile left in DIR.
no_temp() {
    left=$(ls -A "$1" | grep '\.tmp\.' || true)
    [ -z "$left" ] || { bad "temporary file left behind: $left ($label)"; return 1; }
    return 0
}

# one_error_line: stderr is exactly one line "...: error: ..."
one_error_line() {
    n=$(wc -l < "$tmp/err")
    if [ "$n" -ne 1 ] || ! grep -q ': error: ' "$tmp/err"; then
        bad "expected one error line ($label), got:"
        sed 's/^/    /' "$tmp/err"
        return 1
    fi
    return 0
}

# complete FILE: the whole document was written.
complete() {
    f=$1
    [ -s "$f" ] || { bad "empty output ($label)"; return 1; }
    [ "$(tail -c 1 "$f" | od -An -c | tr -d ' ')" = '\n' ] ||
        { bad "no final newline ($label)"; return 1; }
    case "$f" in
    *.svg) grep -q '</svg>' "$f" || { bad "SVG without </svg> ($label)"; return 1; } ;;
    *.vcd) grep -q 'enddefinitions' "$f" || { bad "VCD without header ($label)"; return 1; } ;;
    *.map) grep -q '^core 0:' "$f" || { bad "map without 'core 0:' ($label)"; return 1; } ;;
    esac
    return 0
}

# case_fail SCENARIO OPTION NAME ARGS...: the run must fail without touching
# the output, fresh or existing.
case_fail() {
    scen=$1 opt=$2 name=$3
    shift 3
    label="$* $opt ($scen)"
    d="$tmp/case"
    rm -rf "$d" && mkdir "$d"
    run "$@" "$tmp/$scen" "$opt" "$d/$name" || { skip=$((skip + 1)); echo "skip: $label: $(head -n 1 "$tmp/err")"; return; }
    if [ "$rc" -ne 1 ]; then bad "exit $rc, expected 1 ($label)"; return; fi
    one_error_line || return
    [ ! -e "$d/$name" ] || { bad "failing run created $name ($label)"; return; }
    no_temp "$d" || return
    printf '%s\n' "$OLD" > "$d/$name"
    touch -d '2001-02-03 04:05:06' "$d/$name"
    before=$(stat -c '%y %s' "$d/$name")
    run "$@" "$tmp/$scen" "$opt" "$d/$name"
    [ "$rc" -eq 1 ] || { bad "exit $rc on second run ($label)"; return; }
    [ "$(cat "$d/$name")" = "$OLD" ] || { bad "existing $name changed ($label)"; return; }
    [ "$(stat -c '%y %s' "$d/$name")" = "$before" ] || { bad "mtime of $name changed ($label)"; return; }
    no_temp "$d" || return
    ok
}

# case_good OPTION NAME ARGS...: writes the whole file, fresh and over an
# existing one; a folder that does not exist is a clean error.
case_good() {
    opt=$1 name=$2
    shift 2
    label="$* $opt (good.pace)"
    d="$tmp/case"
    rm -rf "$d" && mkdir "$d"
    run "$@" "$tmp/good.pace" "$opt" "$d/$name" || { skip=$((skip + 1)); echo "skip: $label: $(head -n 1 "$tmp/err")"; return; }
    [ "$rc" -eq 0 ] || { bad "exit $rc, expected 0 ($label): $(head -n 1 "$tmp/err")"; return; }
    complete "$d/$name" || return
    no_temp "$d" || return
    cp "$d/$name" "$tmp/first"
    printf '%s\n' "$OLD" > "$d/$name"
    run "$@" "$tmp/good.pace" "$opt" "$d/$name"
    [ "$rc" -eq 0 ] || { bad "exit $rc over an existing file ($label)"; return; }
    cmp -s "$d/$name" "$tmp/first" || { bad "rewrite differs from the first write ($label)"; return; }
    no_temp "$d" || return
    run "$@" "$tmp/good.pace" "$opt" "$d/no/such/folder/$name"
    [ "$rc" -eq 1 ] || { bad "exit $rc for a missing folder, expected 1 ($label)"; return; }
    one_error_line || return
    no_temp "$d" || return
    ok
}

# The library itself (tests/helpers/outfile_probe.c drives pm_outfile).
probe_cases() {
    p="$PM_HELPERS/outfile_probe"
    d="$tmp/probe"
    rm -rf "$d" && mkdir "$d"
    label="outfile_probe"
    "$p" "$d/o.txt" commit 2> "$tmp/err" || { bad "probe commit failed: $(cat "$tmp/err")"; return; }
    [ "$(wc -l < "$d/o.txt")" -eq 1000 ] && [ "$(tail -n 1 "$d/o.txt")" = "line 1000 of the probe output" ] ||
        { bad "probe commit did not write the whole file"; return; }
    no_temp "$d" || return
    cp "$d/o.txt" "$tmp/probe_full"
    touch -d '2001-02-03 04:05:06' "$d/o.txt"
    before=$(stat -c '%y %s' "$d/o.txt")
    "$p" "$d/o.txt" abort || { bad "probe abort failed"; return; }
    [ "$(stat -c '%y %s' "$d/o.txt")" = "$before" ] && cmp -s "$d/o.txt" "$tmp/probe_full" ||
        { bad "abort touched the existing file"; return; }
    no_temp "$d" || return
    "$p" "$d/fresh.txt" abort || { bad "probe abort failed"; return; }
    [ ! -e "$d/fresh.txt" ] || { bad "abort left a file"; return; }
    no_temp "$d" || return
    # killed before commit: the old file is intact (the temporary file is
    # necessarily left, since nothing runs after SIGKILL)
    "$p" "$d/o.txt" kill 2> /dev/null
    [ "$(stat -c '%y %s' "$d/o.txt")" = "$before" ] && cmp -s "$d/o.txt" "$tmp/probe_full" ||
        { bad "a killed writer changed the existing file"; return; }
    rm -f "$d"/*.tmp.*
    "$p" "$d/no/such/dir/o.txt" commit 2> "$tmp/err"
    [ $? -eq 1 ] && one_error_line || { bad "open in a missing folder did not fail cleanly"; return; }
    ok
}
if [ -x "${PM_HELPERS:-}/outfile_probe" ]; then
    probe_cases
else
    skip=$((skip + 1))
    echo "skip: outfile_probe helper not built (PM_HELPERS=${PM_HELPERS:-unset})"
fi

for spec in "schedule -p 2|--svg|g.svg" "schedule -p 2|--emit-map|g.map" \
            "simulate -p 2 -n 8|--svg|s.svg" "simulate -p 2 -n 8|--vcd|s.vcd" \
            "sweep -p 1..3|--svg|w.svg"; do
    args=${spec%%|*}
    rest=${spec#*|}
    opt=${rest%%|*}
    name=${rest#*|}
    # shellcheck disable=SC2086
    case_fail bad.pace "$opt" "$name" $args
    # shellcheck disable=SC2086
    case_good "$opt" "$name" $args
done
for spec in "schedule -p 2|--svg|g.svg" "schedule -p 2|--emit-map|g.map" \
            "simulate -p 2 -n 8|--svg|s.svg" "simulate -p 2 -n 8|--vcd|s.vcd"; do
    args=${spec%%|*}
    rest=${spec#*|}
    opt=${rest%%|*}
    name=${rest#*|}
    # shellcheck disable=SC2086
    case_fail good.pace "$opt" "$name" $args --map "$tmp/bad.map"
done

# A map written by --emit-map is complete enough to be read back.
if [ -f "$tmp/first" ] && run schedule "$tmp/good.pace" -p 2 --emit-map "$tmp/rt.map" &&
   [ "$rc" -eq 0 ]; then
    if run schedule "$tmp/good.pace" -p 2 --map "$tmp/rt.map" && [ "$rc" -eq 0 ]; then ok
    else bad "an emitted map does not read back: $(head -n 1 "$tmp/err")"; fi
fi

echo "check_outfiles: $pass passed, $fail failed, $skip skipped"
[ "$fail" -eq 0 ]
