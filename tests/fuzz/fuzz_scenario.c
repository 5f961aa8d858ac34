/*
 * fuzz_scenario.c - libFuzzer target for the scenario reader
 * (pm_scenario_read_string, include/pacemap/reader.h).
 *
 * Every input must give either a finalized graph or a clean error
 * (fuzz_common.h).  A graph that reads is then walked and handed to the
 * analyses that exist (repetition vector, iteration bound and floors, a -p
 * override), so the fuzzer also reaches code that trusts the reader's
 * output.  Sizes are capped to keep each run fast.  Built by
 * tests/fuzz/run.sh, which defines PM_FUZZ_HAVE_BOUND once the bound module
 * is in the tree.
 */
#include <stddef.h>
#include <stdint.h>

#include "fuzz_common.h"
#include "pacemap/graph.h"
#include "pacemap/reader.h"
#include "pacemap/sdf.h"
#ifdef PM_FUZZ_HAVE_BOUND
#include "pacemap/bound.h"
#endif

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

/* The graph's arrays must agree with its counts: indices in range, names
 * present, per-class rows inside the class-cycle table. */
static void fuzz_walk_graph(const pm_graph *g)
{
    const pm_platform *p = &g->platform;
    if (!g->finalized || p->ncores == 0 || p->nclasses == 0)
        fuzz_fail("graph not finalized or without cores", NULL);
    for (uint32_t c = 0; c < p->ncores; c++)
        if (p->core_class[c] >= p->nclasses)
            fuzz_fail("core of an unknown class", NULL);
    for (uint32_t v = 0; v < g->nnodes; v++) {
        const pm_node *n = &g->nodes[v];
        if (!pm_graph_node_name(g, v) || pm_graph_node_name(g, v)[0] == '\0')
            fuzz_fail("node without a name", NULL);
        if (n->pin_core != PM_NONE && n->pin_core >= p->ncores)
            fuzz_fail("pin to a core that does not exist", NULL);
        if (n->pin_class != PM_NONE && n->pin_class >= p->nclasses)
            fuzz_fail("pin to a class that does not exist", NULL);
        for (uint32_t c = 0; c < p->nclasses; c++)
            if (pm_graph_cycles_on(g, v, c) > PM_MAX_VALUE)
                fuzz_fail("cycles above the scenario limit", NULL);
        (void)pm_graph_min_cycles(g, v);
    }
    for (uint32_t e = 0; e < g->nedges; e++) {
        const pm_edge *ed = &g->edges[e];
        if (ed->src >= g->nnodes || ed->dst >= g->nnodes)
            fuzz_fail("edge names a node that does not exist", NULL);
        if (ed->delay < 0 || ed->words < 0 || ed->produce < 0 || ed->consume < 0)
            fuzz_fail("negative edge attribute", NULL);
    }
}

#ifdef PM_FUZZ_HAVE_BOUND
/* The bound and the floors on the graph as read (errors are fine: a zero-
 * delay loop or an overflow is a legal answer; a crash is not). */
static void fuzz_bound(const pm_graph *g)
{
    pm_bound b;
    pm_diag d;
    pm_diag_clear(&d);
    int rc = pm_bound_compute(g, NULL, &b, &d);
    if (rc != PM_OK) {
        fuzz_check_diag(rc, NULL, &d);
        return;
    }
    pm_floors f;
    for (uint32_t p = 1; p <= 3; p++)
        (void)pm_floors_compute(g, &b, p, &f);
    pm_bound_free(&b);
}
#endif

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size > FUZZ_MAX_INPUT)
        return 0;
    pm_graph *g = NULL;
    pm_diag d;
    pm_diag_clear(&d);
    int rc = pm_scenario_read_string((const char *)data, size, "fuzz.pace", &g, &d);
    if (rc != PM_OK) {
        fuzz_check_diag(rc, g, &d);
        return 0;
    }
    if (!g)
        fuzz_fail("success without a graph", NULL);
    fuzz_walk_graph(g);
    uint64_t *rep = NULL;
    rc = pm_sdf_repetition(g, &rep, &d);
    if (rc == PM_OK && !rep)
        fuzz_fail("repetition vector missing", NULL);
    free(rep);
#ifdef PM_FUZZ_HAVE_BOUND
    fuzz_bound(g);
#endif
    /* -p on an identical-core platform: either fits or a clean error */
    if (!g->platform.classes_named) {
        rc = pm_graph_set_procs_override(g, 1 + (uint32_t)(size % 4), &d);
        if (rc != PM_OK)
            fuzz_check_diag(rc, NULL, &d);
    }
    pm_graph_destroy(g);
    return 0;
}
