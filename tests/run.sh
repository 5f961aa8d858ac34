#!/bin/sh
# Runs the whole test suite from the project root: every cmocka binary in
# $BUILD/tests, then every outside-reference script tests/check_*.sh.
# Prints one closing line "N passed, N failed" and exits non-zero on failure.
BUILD=${BUILD:-build}
export PM_BIN="$PWD/$BUILD/pacemap"
export PM_HELPERS="$PWD/$BUILD/tests/helpers"
export PM_REFDATA="${PM_REFDATA:-$PWD/../shared/refdata}"
export PM_BUILD="$BUILD"
pass=0
fail=0
failed=""
run_one() {
    name=$1
    shift
    if "$@" > "$BUILD/tests/$name.log" 2>&1; then
        pass=$((pass + 1))
        printf '  ok    %s\n' "$name"
    else
        fail=$((fail + 1))
        failed="$failed $name"
        printf '  FAIL  %s (log: %s)\n' "$name" "$BUILD/tests/$name.log"
        tail -n 20 "$BUILD/tests/$name.log" | sed 's/^/        /'
    fi
}
mkdir -p "$BUILD/tests"
for t in "$BUILD"/tests/test_*; do
    [ -x "$t" ] || continue
    case "$t" in *.d|*.log) continue ;; esac
    n=$(basename "$t")
    if [ -n "$PM_TEST_FILTER" ]; then
        case "$n" in *"$PM_TEST_FILTER"*) ;; *) continue ;; esac
    fi
    run_one "$n" "$t"
done
if [ -z "$PM_TEST_FILTER" ]; then
    for s in tests/check_*.sh; do
        [ -f "$s" ] || continue
        run_one "$(basename "$s" .sh)" sh "$s"
    done
fi
echo "tests: $pass passed, $fail failed"
[ "$fail" -eq 0 ]
