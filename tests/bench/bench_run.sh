#!/bin/sh
# bench_run.sh - benchmark of the real-core runner (`make bench`):
#   1. handoff latency between two pinned threads and measured/predicted
#      period on invented graphs with nodes of at least 10 us
#      (build/tests/helpers/bench_runner, graphs built in code);
#   2. `pacemap run` on every shipped scenario that names real kernels
#      (work=fir/biquad/fft), when the scenario reader can load it.
# Prints medians and ratios; never fails on timing (the machine is shared
# and noisy), only when a run fails or its outputs differ from the
# single-threaded run.  Results are recorded by hand in docs/performance.md.
BUILD=${BUILD:-build}
ITERS=${PM_BENCH_ITERS:-2000}
PY=/usr/bin/python3
echo "== runner: handoff and measured/predicted (bench_runner, $ITERS iterations)"
"$BUILD/tests/helpers/bench_runner" "$ITERS" || exit 1

echo "== runner: scenarios with real kernels (pacemap run -n $ITERS --json)"
tmp=$(mktemp) || exit 1
trap 'rm -f "$tmp"' EXIT
printf '%-28s %9s %12s %12s %12s %9s\n' scenario "min node" "predicted us" "median us" \
    "p99 us" meas/pred
for f in scenarios/*.pace; do
    [ -f "$f" ] || continue
    grep -q 'work=' "$f" || continue
    # two cores where the scenario has identical cores (-p is refused, exit
    # 2, for core classes: then the scenario's own cores)
    "$BUILD/pacemap" run "$f" -p 2 -n "$ITERS" --json > "$tmp" 2> "$tmp.err"
    st=$?
    if [ $st -eq 2 ]; then
        "$BUILD/pacemap" run "$f" -n "$ITERS" --json > "$tmp" 2> "$tmp.err"
        st=$?
    fi
    if [ $st -ne 0 ]; then
        printf '%-28s skipped: %s\n' "$f" "$(head -n 1 "$tmp.err")"
        rm -f "$tmp.err"
        continue
    fi
    rm -f "$tmp.err"
    "$PY" - "$f" "$tmp" <<'PYEOF' || exit 1
import json, sys
d = json.load(open(sys.argv[2]))
if not d["outputs_match"]:
    print(sys.argv[1], "outputs differ from the single-threaded run")
    sys.exit(1)
lo = min(n["host_ns"] for n in d["nodes"])
print("%-28s %9.1f %12.1f %12.1f %12.1f %9.4f" % (sys.argv[1], lo / 1e3,
      d["predicted_ns"] / 1e3, d["period_ns"] / 1e3, d["period_ns_p99"] / 1e3, d["ratio"]))
PYEOF
done
exit 0
