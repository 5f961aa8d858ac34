/*
 * fuzz_scenario.c - libFuzzer target for the scenario reader
 * (pm_reader_read_string, include/pacemap/reader.h).
 *
 * Every input must give either a finalized graph or a clean error
 * (fuzz_common.h); a graph that reads goes through the analyses of
 * fuzz_exercise.h, so the fuzzer also reaches code that trusts the reader.
 * Built by tests/fuzz/run.sh.
 */
#include <stddef.h>
#include <stdint.h>

#include "fuzz_common.h"
#include "fuzz_exercise.h"
#include "pacemap/reader.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size > FUZZ_MAX_INPUT)
        return 0;
    pm_graph *g = NULL;
    pm_diag d;
    pm_diag_clear(&d);
    int rc = pm_reader_read_string((const char *)data, size, "fuzz.pace", &g, &d);
    if (rc != PM_OK) {
        fuzz_check_diag(rc, g, &d);
        return 0;
    }
    if (!g)
        fuzz_fail("success without a graph", NULL);
    fuzz_exercise_graph(g, 1 + (uint32_t)(size % 4));
    return 0;
}
