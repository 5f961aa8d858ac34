/*
 * fuzz_map.c - libFuzzer target for the map reader (pm_map_read_string,
 * include/pacemap/map.h).
 *
 * Each input is read against two fixed graphs read once from the built-in
 * scenarios of fuzz_graphs.h: one with core classes, per-class cycles and
 * pins, one with identical cores.  A map that reads must pass pm_map_check and survive a
 * round trip (pm_map_write, then read again, gives the same map); anything
 * else must be a clean error (fuzz_common.h).  Built by tests/fuzz/run.sh.
 */
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>

#include "fuzz_common.h"
#include "fuzz_graphs.h"
#include "pacemap/graph.h"
#include "pacemap/map.h"
#include "pacemap/reader.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static pm_graph *fuzz_graph(const char *text, size_t len)
{
    pm_graph *g = NULL;
    pm_diag d;
    pm_diag_clear(&d);
    if (pm_scenario_read_string(text, len, "fuzz.pace", &g, &d) != PM_OK)
        fuzz_fail("the built-in scenario does not read", &d);
    return g;
}

static int fuzz_map_equal(const pm_map *a, const pm_map *b)
{
    if (a->ncores != b->ncores || a->nnodes != b->nnodes)
        return 0;
    for (uint32_t c = 0; c <= a->ncores; c++)
        if (a->off[c] != b->off[c])
            return 0;
    return memcmp(a->order, b->order, a->nnodes * sizeof *a->order) == 0 &&
           memcmp(a->core_of, b->core_of, a->nnodes * sizeof *a->core_of) == 0;
}

/* Write m, read it back against the same graph: the same map. */
static void fuzz_round_trip(const pm_map *m, const pm_graph *g)
{
    char *buf = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&buf, &len);
    if (!f)
        return;
    int rc = pm_map_write(m, g, f);
    fclose(f);
    if (rc != PM_OK)
        fuzz_fail("pm_map_write failed on a valid map", NULL);
    pm_map *again = NULL;
    pm_diag d;
    pm_diag_clear(&d);
    if (pm_map_read_string(buf, len, "again.map", g, &again, &d) != PM_OK)
        fuzz_fail("a written map does not read back", &d);
    if (!fuzz_map_equal(m, again))
        fuzz_fail("a written map reads back different", NULL);
    pm_map_destroy(again);
    free(buf);
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
    if (pm_map_check(m, g, &d) != PM_OK)
        fuzz_fail("a map that reads fails pm_map_check", &d);
    fuzz_round_trip(m, g);
    pm_map_destroy(m);
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
