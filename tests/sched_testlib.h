/*
 * sched_testlib.h - small graph builders shared by the scheduler tests
 * (header-only, static functions; included by tests/test_sched*.c).
 */
#ifndef PACEMAP_TEST_SCHED_TESTLIB_H
#define PACEMAP_TEST_SCHED_TESTLIB_H

#include <stdint.h>
#include <string.h>

#include "pacemap/graph.h"
#include "support/testkit.h" /* tk_rand, the tests' random generator */

/* A graph with P identical cores. */
static inline pm_graph *tl_graph(uint32_t P)
{
    pm_graph *g = pm_graph_create("test");
    pm_graph_set_cores(g, 1, NULL, &P);
    return g;
}

static inline uint32_t tl_node(pm_graph *g, const char *name, int64_t cycles)
{
    uint32_t id = PM_NONE;
    pm_graph_add_node(g, name, strlen(name), cycles, &id);
    return id;
}

static inline void tl_edge(pm_graph *g, uint32_t a, uint32_t b, int64_t delay, int64_t words)
{
    pm_edge e = pm_graph_edge_default(a, b);
    e.delay = delay;
    e.words = words;
    pm_graph_add_edge(g, &e, NULL);
}

static inline void tl_comm(pm_graph *g, int64_t lat, int64_t pw, int64_t send, int64_t recv,
                           pm_interconnect ic)
{
    g->platform.comm = (pm_comm){lat, pw, send, recv};
    g->platform.interconnect = ic;
}

#endif
