/*
 * bound_gen.h - deterministic random graphs for the bound tests and the
 * bench generator (header only; every function is static).
 *
 * Graphs never hold a loop without delay: an edge u -> v with u < v may
 * carry 0 delays, every other edge (backward or a self-loop) at least 1.
 * The numbers come from tk_rand (tests/support/testkit.h), so a seed gives
 * the same graph on every machine.
 */
#ifndef PACEMAP_TESTS_BOUND_GEN_H
#define PACEMAP_TESTS_BOUND_GEN_H

#include <stdint.h>
#include <stdio.h>

#include "pacemap/graph.h"
#include "../support/testkit.h"

/* One random edge drawn from the generator state *s: nodes, delay in
 * [0, maxd] forward, [1, maxd] otherwise (maxd >= 1). */
static inline void gen_edge(uint64_t *s, uint32_t n, uint32_t maxd, uint32_t *u,
                            uint32_t *v, int64_t *d)
{
    *u = tk_rand(s, n);
    *v = tk_rand(s, n);
    *d = *u < *v ? tk_rand(s, maxd + 1) : 1 + tk_rand(s, maxd);
}

/* A random pm_graph with n nodes named n0.., m edges, times in [0, maxt]. */
static inline pm_graph *gen_graph_random(uint64_t seed, uint32_t n, uint32_t m,
                                         uint32_t maxt, uint32_t maxd)
{
    uint64_t r = seed;
    pm_graph *g = pm_graph_create("random");
    char name[32];
    for (uint32_t i = 0; g && i < n; i++) {
        int len = snprintf(name, sizeof name, "n%u", i);
        if (pm_graph_add_node(g, name, (size_t)len, tk_rand(&r, maxt + 1), NULL) != 0)
            return pm_graph_destroy(g), NULL;
    }
    for (uint32_t i = 0; g && i < m; i++) {
        pm_edge e = pm_graph_edge_default(0, 0);
        gen_edge(&r, n, maxd, &e.src, &e.dst, &e.delay);
        if (pm_graph_add_edge(g, &e, NULL) != 0)
            return pm_graph_destroy(g), NULL;
    }
    if (g && pm_graph_finalize(g) != 0)
        return pm_graph_destroy(g), NULL;
    return g;
}

#endif
