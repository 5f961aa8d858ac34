/*
 * bound_internal.h - pieces the bound module's files share (bound.c,
 * bound_howard.c, bound_loops.c, karp.c); not part of the public API.
 */
#ifndef PACEMAP_BOUND_INTERNAL_H
#define PACEMAP_BOUND_INTERNAL_H

#include "pacemap/bound.h"
#include "pacemap/scc.h"

typedef __int128 bnd_i128;

/* Node times (pm_graph_min_cycles) after checking that the graph is
 * single-rate, every node can run somewhere and the sums fit in 62 bits.
 * *t is malloc'd (nnodes entries).  *total and *largest may be NULL. */
int bound_node_times(const pm_graph *g, int64_t **t, int64_t *total,
                     uint32_t *largest, pm_diag *diag);

/* PM_EZERODELAY with its diagnostic when a loop of g carries no delay. */
int bound_check_zero_delay(const pm_graph *g, pm_diag *diag);

/* A policy cycle's ratio p/q (reduced) and the smallest node on it. */
typedef struct howard_cycle {
    int64_t p, q;
    uint32_t root;
} howard_cycle;

/* Policy iteration state over the whole graph; parts are solved one by
 * one and each leaves one entry in `cycles` (its bound and worst loop). */
typedef struct howard {
    const pm_graph *g;
    const int64_t *t;
    const uint32_t *comp;  /* strongly connected part of each node */
    uint32_t *pol;         /* policy: chosen out-edge of each node */
    uint32_t *cyc;         /* index in `cycles` of the node's policy cycle,
                            * PM_NONE outside the parts with loops */
    bnd_i128 *x;           /* biases scaled by the cycle's q */
    uint32_t *stack;
    howard_cycle *cycles;
    uint32_t ncycles, cycles_cap;
} howard;

int howard_init(howard *h, const pm_graph *g, const int64_t *t, const uint32_t *comp);
void howard_free(howard *h);

/* Solve the part made of nodes[0..len) (component comp_id).  On return the
 * part's bound and worst-loop root are cycles[ncycles - 1] and every node
 * of the part has cyc == ncycles - 1. */
int howard_solve_part(howard *h, const uint32_t *nodes, uint32_t len, uint32_t comp_id);

/* The certificate: for every edge u -> v inside a part with bound p/q,
 * q*t(u) - p*d + x(v) <= x(u).  Returns PM_OK or PM_EINVAL (a bug). */
int howard_certify(const howard *h);

/* Edge e is tight under the certified potentials and lies in a part whose
 * bound is p/q. */
bool howard_tight(const howard *h, uint32_t e, int64_t p, int64_t q);

/* Fill loop with the policy cycle through `root` (rotated to its smallest
 * node); nodes/edges point into `store` (2 * len entries available). */
void howard_policy_loop(const howard *h, uint32_t root, uint32_t *store, pm_loop *loop);

/* Critical loops of g: simple cycles of the edges tight for lambda = p/q,
 * at most max + 1 of them found (out->critical_truncated when more). */
int bound_critical_loops(const howard *h, int64_t p, int64_t q, uint32_t max,
                         pm_bound *out);

/* Sums of node times and delays of a loop given by its edges. */
void bound_loop_sums(const pm_graph *g, const int64_t *t, pm_loop *loop);

#endif
