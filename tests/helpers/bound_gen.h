/*
 * bound_gen.h - deterministic random graphs for the bound tests and the
 * bench generator (header only; every function is static).
 *
 * Graphs never hold a loop without delay: an edge u -> v with u < v may
 * carry 0 delays, every other edge (backward or a self-loop) at least 1.
 * The generator is xorshift64* (Vigna, "An experimental exploration of
 * Marsaglia's xorshift generators, scrambled", ACM TOMS 2016), so a seed
 * gives the same graph on every machine.
 */
#ifndef PACEMAP_TESTS_BOUND_GEN_H
#define PACEMAP_TESTS_BOUND_GEN_H

#include <stdint.h>
#include <stdio.h>

#include "pacemap/graph.h"

typedef struct gen_rng {
    uint64_t s;
} gen_rng;

static inline uint64_t gen_next(gen_rng *r)
{
    r->s ^= r->s >> 12;
    r->s ^= r->s << 25;
    r->s ^= r->s >> 27;
    return r->s * 2685821657736338717ULL;
}

/* Uniform in [0, n) (n > 0; the tiny modulo bias does not matter here). */
static inline uint32_t gen_below(gen_rng *r, uint32_t n)
{
    return (uint32_t)((gen_next(r) >> 11) % n);
}

static inline gen_rng gen_seed(uint64_t seed)
{
    gen_rng r = { seed * 0x9E3779B97F4A7C15ULL + 1 };
    for (int i = 0; i < 4; i++)
        gen_next(&r);
    return r;
}

/* One random edge: nodes, delay in [0, maxd] forward, [1, maxd] otherwise. */
static inline void gen_edge(gen_rng *r, uint32_t n, uint32_t maxd, uint32_t *u,
                            uint32_t *v, int64_t *d)
{
    *u = gen_below(r, n);
    *v = gen_below(r, n);
    *d = *u < *v ? gen_below(r, maxd + 1) : 1 + gen_below(r, maxd);
}

/* A random pm_graph with n nodes named n0.., m edges, times in [0, maxt]. */
static inline pm_graph *gen_graph_random(uint64_t seed, uint32_t n, uint32_t m,
                                         uint32_t maxt, uint32_t maxd)
{
    gen_rng r = gen_seed(seed);
    pm_graph *g = pm_graph_create("random");
    char name[32];
    for (uint32_t i = 0; g && i < n; i++) {
        int len = snprintf(name, sizeof name, "n%u", i);
        if (pm_graph_add_node(g, name, (size_t)len, gen_below(&r, maxt + 1), NULL) != 0)
            return pm_graph_destroy(g), NULL;
    }
    for (uint32_t i = 0; g && i < m; i++) {
        pm_edge e = pm_edge_default(0, 0);
        gen_edge(&r, n, maxd, &e.src, &e.dst, &e.delay);
        if (pm_graph_add_edge(g, &e, NULL) != 0)
            return pm_graph_destroy(g), NULL;
    }
    if (g && pm_graph_finalize(g) != 0)
        return pm_graph_destroy(g), NULL;
    return g;
}

#endif
