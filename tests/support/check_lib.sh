# check_lib.sh - what the end-to-end check scripts share: pass/fail counts,
# a temporary folder removed on exit, and a runner that keeps a command's
# output.  Sourced from the project root (make test runs the scripts
# there) after PM names the pacemap binary.

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
