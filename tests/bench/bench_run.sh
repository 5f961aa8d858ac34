#!/bin/sh
# bench_run.sh - benchmark of the real-core runner (`make bench`):
#   1. the runner's host costs (dispatch, send/recv per token by size,
#      handoff idle and busy) and measured/predicted period on invented
#      graphs: nodes of at least 10 us, and random graphs with nodes of
#      100 ns to 100 us (build/tests/helpers/bench_runner, built in code);
#   2. `pacemap run -p 2` on every shipped scenario, three runs each: the
#      median of the three measured/predicted ratios.
# Prints medians and ratios; never fails on timing (the machine is shared
# and noisy), only when a run fails or its outputs differ from the
# single-threaded run.  Results are recorded by hand in docs/performance.md.
BUILD=${BUILD:-build}
ITERS=${PM_BENCH_ITERS:-2000}
PY=/usr/bin/python3
echo "== runner: handoff and measured/predicted (bench_runner, $ITERS iterations)"
"$BUILD/tests/helpers/bench_runner" "$ITERS" || exit 1

echo "== runner: shipped scenarios (pacemap run -p 2 -n $ITERS --json, three runs each)"
tmp=$(mktemp -d) || exit 1
trap 'rm -rf "$tmp"' EXIT
printf '%-28s %9s %12s %12s %12s %24s\n' scenario "min node" "predicted us" "median us" \
    "p99 us" "meas/pred: median (runs)"
for f in scenarios/*.pace; do
    [ -f "$f" ] || continue
    ok=1
    for i in 1 2 3; do
        # -p is refused (exit 2) for core classes: then the scenario's own cores
        "$BUILD/pacemap" run "$f" -p 2 -n "$ITERS" --json > "$tmp/$i.json" 2> "$tmp/err"
        st=$?
        if [ $st -eq 2 ]; then
            "$BUILD/pacemap" run "$f" -n "$ITERS" --json > "$tmp/$i.json" 2> "$tmp/err"
            st=$?
        fi
        if [ $st -ne 0 ]; then
            printf '%-28s skipped: %s\n' "$f" "$(head -n 1 "$tmp/err")"
            ok=0
            break
        fi
    done
    [ $ok -eq 1 ] || continue
    "$PY" - "$f" "$tmp" <<'PYEOF' || exit 1
import json, sys
runs = [json.load(open("%s/%d.json" % (sys.argv[2], i))) for i in (1, 2, 3)]
for d in runs:
    if not d["outputs_match"]:
        print(sys.argv[1], "outputs differ from the single-threaded run")
        sys.exit(1)
ratios = sorted(d["ratio"] for d in runs)
d = sorted(runs, key=lambda d: d["ratio"])[1]
lo = min(n["host_ns"] for n in d["nodes"])
print("%-28s %9.2f %12.2f %12.2f %12.2f %8.3f (%s)" % (sys.argv[1], lo / 1e3,
      d["predicted_ns"] / 1e3, d["period_ns"] / 1e3, d["period_ns_p99"] / 1e3, ratios[1],
      " ".join("%.3f" % r for r in ratios)))
PYEOF
done
echo "load average: $(cut -d' ' -f1-3 /proc/loadavg)"
exit 0
