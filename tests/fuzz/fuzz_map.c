/*
 * fuzz_map.c - libFuzzer target for the map reader (pm_map_read_string,
 * include/pacemap/map.h).
 *
 * Each input is read against two fixed graphs read once from the built-in
 * scenarios of fuzz_graphs.h: one with core classes, per-class cycles and
 * pins, one with identical cores.  A map that reads goes through
 * fuzz_exercise_map (check, write and read back, timing, loop-time floor);
 * anything else must be a clean error (fuzz_common.h).  Built by
 * tests/fuzz/run.sh.
 */
#include <stddef.h>
#include <stdint.h>

#include "fuzz_common.h"
#include "fuzz_exercise.h"
#include "fuzz_graphs.h"
#include "pacemap/reader.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static pm_graph *fuzz_graph(const char *text, size_t len)
{
    pm_graph *g = NULL;
    pm_diag d;
    pm_diag_clear(&d);
    if (pm_reader_read_string(text, len, "fuzz.pace", &g, &d) != PM_OK)
        fuzz_fail("the built-in scenario does not read", &d);
    return g;
}

static void fuzz_one(const uint8_t *data, size_t size, const pm_graph *g)
{
    pm_map *m = NULL;
    pm_diag d;
    pm_diag_clear(&d);
    int rc = pm_map_read_string((const char *)data, size, "fuzz.map", g, &m, &d);
    if (rc != PM_OK) {
        fuzz_check_diag(rc, m, &d);
        return;
    }
    if (!m)
        fuzz_fail("success without a map", NULL);
    fuzz_exercise_map(m, g);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    static pm_graph *classes, *plain;
    if (!classes) {
        classes = fuzz_graph(fuzz_classes_scenario, sizeof fuzz_classes_scenario - 1);
        plain = fuzz_graph(fuzz_plain_scenario, sizeof fuzz_plain_scenario - 1);
    }
    if (size > FUZZ_MAX_INPUT)
        return 0;
    fuzz_one(data, size, classes);
    fuzz_one(data, size, plain);
    return 0;
}
