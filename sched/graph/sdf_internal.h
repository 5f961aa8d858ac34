/*
 * sdf_internal.h - what sdf.c (repetition vector, one-iteration check) and
 * expand.c (single-rate expansion, maps of expanded graphs) share: local
 * adjacency, token-count simulation, 128-bit helpers and a bounded text
 * builder for diagnostics.  Not part of the public API.
 */
#ifndef PACEMAP_SDF_INTERNAL_H
#define PACEMAP_SDF_INTERNAL_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "pacemap/graph.h"
#include "pacemap/rational.h"


/* Out- and in-edges of every node (CSR), built from the edge array so that
 * an unfinalized graph works too. */
typedef struct sdf_adj {
    uint32_t *out_off, *out_edge;
    uint32_t *in_off, *in_edge;
} sdf_adj;

int sdf_adj_build(const pm_graph *g, sdf_adj *a);
void sdf_adj_free(sdf_adj *a);

/* Token counts of one iteration being simulated. */
typedef struct sdf_tokens {
    const pm_graph *g;
    const sdf_adj *adj;
    const uint64_t *rep;
    pm_u128 *tokens; /* per edge: tokens on it now */
    uint64_t *fired;  /* per node: firings done in this iteration */
} sdf_tokens;

int sdf_tokens_init(sdf_tokens *s, const pm_graph *g, const sdf_adj *a,
                    const uint64_t *rep);
void sdf_tokens_free(sdf_tokens *s);
/* How many more firings v can do now (inputs and its count allow). */
uint64_t sdf_tokens_ready(const sdf_tokens *s, uint32_t v);
/* Fire v k times (k <= sdf_tokens_ready). */
void sdf_tokens_fire(sdf_tokens *s, uint32_t v, uint64_t k);

/* PM_OK when rep has a positive entry per node and balances every edge,
 * else PM_EINVAL (diag says which edge). */
int sdf_check_balance(const pm_graph *g, const uint64_t *rep, pm_diag *diag);

/* What maps of the expansion check first (sched/map/mapexpand.c): rep
 * balances g and the firings fit PM_SDF_MAX_FIRINGS; then *first (owned)
 * holds the expanded id of each node's firing 0, first[n] the total. */
int sdf_firing_ids(const pm_graph *g, const uint64_t *rep, uint32_t **first, pm_diag *diag);

/* a * b into *out; false when the product does not fit 128 bits. */
bool sdf_mul128(pm_u128 a, pm_u128 b, pm_u128 *out);
/* Floor division and the matching non-negative remainder, b > 0. */
pm_i128 sdf_floordiv(pm_i128 a, pm_i128 b);

/* A text buffer that stops growing at its capacity and then ends in "...". */
typedef struct sdf_text {
    char buf[400];
    size_t len;
    bool full;
} sdf_text;

void sdf_text_add(sdf_text *t, const char *s);
void sdf_text_u128(sdf_text *t, pm_u128 v);

#endif
