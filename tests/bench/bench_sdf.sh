#!/bin/sh
# bench_sdf.sh - medians of the multirate path (repetition vector,
# one-iteration check, expansion, expanded map) on graphs near the
# expansion's size guard.  Run by `make bench`.
BUILD=${BUILD:-build}
exec "$BUILD/tests/helpers/sdf_bench" "${SDF_BENCH_RUNS:-5}"
