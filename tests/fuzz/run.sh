#!/bin/sh
# run.sh - build the libFuzzer targets and run each for SECONDS.
#
# usage: sh tests/fuzz/run.sh SECONDS     (from the project root; `make fuzz`)
#
# Builds the library sources (sched/*/*.c and sim/*/*.c except the
# command line's folder, sim/cli/) and tests/fuzz/fuzz_*.c with clang -fsanitize=fuzzer,address,
# undefined into build-fuzz/, seeds a corpus per target from scenarios/,
# tests/bad/, tests/fuzz/corpus/ and tests/fuzz/regress/, replays the
# regression inputs, then fuzzes each target for SECONDS.  Exits non-zero on
# the first crash, sanitizer report, leak or timeout; the input that caused
# it is saved as build-fuzz/TARGET-crash-* (or -leak-, -timeout-, -oom-:
# libFuzzer's artifacts).
# Inputs named tests/fuzz/regress/known-* reproduce reported bugs not fixed
# yet: they are neither replayed nor seeded (the fuzzer may find them again).
# Environment: FUZZ_CC (default clang), FUZZ_MAX_LEN (default 4096),
# FUZZ_CFLAGS (added to every compile: -DFUZZ_SKIP_KNOWN steers the exercise
# around the open known-* bugs so the fuzzer can look for new ones;
# -DFUZZ_NO_SIM leaves the simulator out).
set -u
secs=${1:-30}
case "$secs" in ''|*[!0-9]*) echo "usage: sh tests/fuzz/run.sh SECONDS" >&2; exit 2 ;; esac
cd "$(dirname "$0")/../.." || exit 2
CC=${FUZZ_CC:-clang}
MAXLEN=${FUZZ_MAX_LEN:-4096}
OUT=build-fuzz
SAN="-fsanitize=address,undefined -fno-sanitize-recover=all -fno-omit-frame-pointer"
CFLAGS="-std=c11 -g -O1 -Iinclude -Itests/fuzz -D_POSIX_C_SOURCE=200809L -D_DEFAULT_SOURCE $SAN ${FUZZ_CFLAGS:-}"

if ! command -v "$CC" >/dev/null 2>&1; then
    echo "fuzz: $CC not found (install clang: make deps)" >&2
    exit 2
fi
mkdir -p "$OUT/obj" || exit 2

# Library objects, rebuilt when the source or any header is newer.
newest_header=$(ls -t include/pacemap/*.h sched/*/*.h sim/*/*.h 2>/dev/null | head -n 1)
objs=""
for src in sched/*/*.c sim/*/*.c; do
    case "$src" in sim/cli/*) continue ;; esac
    obj="$OUT/obj/$(echo "$src" | tr / _ | sed 's/\.c$/.o/')"
    objs="$objs $obj"
    if [ -f "$obj" ] && [ "$obj" -nt "$src" ] && [ "$obj" -nt "$newest_header" ]; then
        continue
    fi
    echo "  CC      $src"
    # shellcheck disable=SC2086
    $CC $CFLAGS -fsanitize=fuzzer-no-link -c "$src" -o "$obj" || exit 2
done

# Seeds: copy rather than point at the folders, so that only inputs of the
# right kind reach each target and the committed folders stay untouched.
seed() { # seed DIR GLOB...
    dir=$1
    shift
    rm -rf "$dir"
    mkdir -p "$dir"
    for f in "$@"; do
        [ -f "$f" ] && cp "$f" "$dir/$(echo "$f" | tr / _)"
    done
    return 0
}
regress=$(ls tests/fuzz/regress/* 2>/dev/null | grep -v '/known-')
# shellcheck disable=SC2086
seed "$OUT/seed-scenario" scenarios/*.pace tests/bad/*.pace tests/fuzz/corpus/scenario/* $regress
# shellcheck disable=SC2086
seed "$OUT/seed-map" tests/bad/*.map tests/fuzz/corpus/map/* $regress

status=0
for target in scenario map; do
    bin="$OUT/fuzz_$target"
    echo "  CCLD    tests/fuzz/fuzz_$target.c"
    # shellcheck disable=SC2086
    $CC $CFLAGS -fsanitize=fuzzer "tests/fuzz/fuzz_$target.c" $objs \
        -lhwloc -lm -lpthread -o "$bin" || exit 2
    corpus="$OUT/corpus-$target"
    mkdir -p "$corpus"
    dict=""
    [ -f "tests/fuzz/$target.dict" ] && dict="-dict=tests/fuzz/$target.dict"
    # Regression inputs first: a crash once found must stay fixed.
    if [ -n "$regress" ]; then
        # shellcheck disable=SC2086
        if ! "$bin" -runs=1 $regress > "$OUT/regress-$target.log" 2>&1; then
            echo "fuzz: $target: a regression input fails again (log: $OUT/regress-$target.log)"
            tail -n 30 "$OUT/regress-$target.log"
            status=1
            continue
        fi
    fi
    echo "fuzz: $target for ${secs}s (log: $OUT/fuzz-$target.log)"
    # shellcheck disable=SC2086
    "$bin" -max_total_time="$secs" -max_len="$MAXLEN" -timeout=10 -rss_limit_mb=2048 \
        -print_final_stats=1 $dict -artifact_prefix="$OUT/$target-" \
        "$corpus" "$OUT/seed-$target" > "$OUT/fuzz-$target.log" 2>&1
    rc=$?
    grep -E '^stat::number_of_executed_units|^#[0-9]+.*DONE' "$OUT/fuzz-$target.log" | tail -n 2
    if [ "$rc" -ne 0 ]; then
        echo "fuzz: $target FAILED (exit $rc); input saved as:"
        ls "$OUT/$target"-crash-* "$OUT/$target"-timeout-* "$OUT/$target"-leak-* \
            "$OUT/$target"-oom-* 2>/dev/null
        grep -E 'ERROR|SUMMARY|contract broken|runtime error' "$OUT/fuzz-$target.log" | head -n 10
        echo "fuzz: copy the input into tests/fuzz/regress/ once the bug is understood"
        status=1
    fi
done
[ "$status" -eq 0 ] && echo "fuzz: no crash found"
exit "$status"
