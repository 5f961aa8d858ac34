/*
 * bound_internal.h - pieces the bound module's files share (bound.c,
 * bound_howard.c, bound_loops.c, karp.c); not part of the public API.
 */
#ifndef PACEMAP_BOUND_INTERNAL_H
#define PACEMAP_BOUND_INTERNAL_H

#include "pacemap/bound.h"
#include "pacemap/scc.h"

/* Check that the graph is single-rate, every node can run somewhere and
 * the sums of node times (pm_graph_min_cycles) and of delays fit in 62
 * bits.  When t is not NULL, *t gets the node times (malloc'd).  Any other
 * out-parameter may be NULL. */
int bound_node_times(const pm_graph *g, int64_t **t, int64_t *total, int64_t *sum_delays,
                     uint32_t *largest, pm_diag *diag);

/* A policy cycle's ratio p/q (reduced) and the smallest node on it
 * (a local index). */
typedef struct howard_cycle {
    int64_t p, q;
    uint32_t root;
    uint32_t broken;     /* the policy no longer contains this cycle */
} howard_cycle;

/* Node state, packed so that the improvement step touches one cache line
 * per successor.  Narrow when every bias and step fits in 64 bits. */
typedef struct hw_narrow {
    int64_t x;           /* bias scaled by the cycle's q */
    uint32_t cyc, pol;   /* index in cycles; policy (local edge position) */
} hw_narrow;
typedef struct hw_wide {
    pm_i128 x;
    uint32_t cyc, pol;
    uint64_t pad;
} hw_wide;

/* Policy iteration state.  Nodes are renumbered ("local" index) in the
 * order of their strongly connected part, and the edges inside parts are
 * copied into a compact CSR, so that the passes run over dense arrays. */
typedef struct howard {
    const pm_graph *g;
    uint32_t n;
    const uint32_t *order; /* local -> node (the SCC order) */
    uint32_t *map;         /* node -> local */
    uint32_t *off;         /* local CSR of the edges inside parts */
    uint32_t *dst;         /* local target of each local edge */
    uint8_t *d8;           /* its delays when all are below 256 ... */
    int64_t *d64;          /* ... else here */
    int64_t *t;            /* local node times ... */
    uint32_t *t32;         /* ... or here when all fit in 32 bits */
    void *st;              /* hw_narrow or hw_wide per local node */
    uint32_t *stack;
    uint32_t *seq;         /* nodes, each after its policy successor */
    uint32_t *nxt;         /* policy successor of each local node */
    uint64_t *dirty;       /* bit per node: values changed in the last pass */
    uint64_t *aff, *sw;    /* bits: affected by / switched in the last step */
    uint64_t *oncyc;       /* bit: the node lies on its policy cycle */
    bool wide;
    howard_cycle *cycles;  /* after solving: one entry per part */
    uint32_t ncycles, cycles_cap;
} howard;

/* ---- packed state accessors (wide is constant per run) ------------------ */

static inline uint32_t *hw_cyc(const howard *h, uint32_t i)
{
    return h->wide ? &((hw_wide *)h->st)[i].cyc : &((hw_narrow *)h->st)[i].cyc;
}

static inline uint32_t *hw_pol(const howard *h, uint32_t i)
{
    return h->wide ? &((hw_wide *)h->st)[i].pol : &((hw_narrow *)h->st)[i].pol;
}

static inline pm_i128 hw_x(const howard *h, uint32_t i)
{
    return h->wide ? ((hw_wide *)h->st)[i].x : ((hw_narrow *)h->st)[i].x;
}

static inline void hw_set_x(const howard *h, uint32_t i, pm_i128 x)
{
    if (h->wide)
        ((hw_wide *)h->st)[i].x = x;
    else
        ((hw_narrow *)h->st)[i].x = (int64_t)x;
}

static inline int64_t ht(const howard *h, uint32_t i)
{
    return h->t32 ? h->t32[i] : h->t[i];
}

static inline uint32_t he_dst(const howard *h, uint32_t k)
{
    return h->dst[k];
}

static inline int64_t he_delay(const howard *h, uint32_t k)
{
    return h->d8 ? h->d8[k] : h->d64[k];
}

/* Build the local CSR from the parts of s (s->comp, dst and dly are used,
 * then may be freed by the caller; dst[k] is the target of g->out_edge[k],
 * dly[k] its delay, or dly NULL to read the delays from g).
 * sum_t, sum_d: the graph's sums (they decide the width).  Then
 * howard_alloc_state() before solving. */
int howard_init(howard *h, const pm_graph *g, const pm_scc *s, const uint32_t *dst,
                const uint8_t *dly, int64_t sum_t, int64_t sum_d);
int howard_alloc_state(howard *h);
void howard_free(howard *h);

/* Solve the part made of local nodes [a, b).  On return the part's bound
 * and worst-loop root are cycles[ncycles - 1] and every node of the part
 * has that cycle index. */
int howard_solve_part(howard *h, uint32_t a, uint32_t b);

/* The certificate: for every edge u -> v inside a part with bound p/q,
 * q*t(u) - p*d + x(v) <= x(u), in exact integers.  PM_OK or PM_EINVAL (a
 * bug).  One pass over the edges, O(E). */
int howard_certify(const howard *h);

/* Bit per local edge: tight, inside a part whose bound is p/q.  NULL on
 * ENOMEM; the caller frees.  One pass with prefetching, O(E). */
uint64_t *howard_tight_bits(const howard *h, int64_t p, int64_t q);

/* (Re)build h->map, which howard_graph_edge needs; it is not kept during
 * the iteration to save memory.  PM_ENOMEM. */
int howard_map(howard *h);

/* The graph edge behind local edge position k of local node i. */
uint32_t howard_graph_edge(const howard *h, uint32_t i, uint32_t k);

/* Fill loop with the policy cycle through local node `root` (its smallest
 * node); nodes/edges point into `store` (2 * len entries available).
 * howard_policy_len gives len. */
uint32_t howard_policy_len(const howard *h, uint32_t root);
void howard_policy_loop(const howard *h, uint32_t root, uint32_t *store, pm_loop *loop);

/* Critical loops of g: simple cycles of the edges tight for lambda = p/q,
 * at most max + 1 of them found (out->critical_truncated when more). */
int bound_critical_loops(const howard *h, int64_t p, int64_t q, uint32_t max,
                         pm_bound *out);

/* Sums of node times and delays of a loop given by its edges. */
void bound_loop_sums(const pm_graph *g, pm_loop *loop);

/* Floors helpers (floors_work.c, floors_map.c).  The class a pin fixes for
 * v, or PM_NONE; v's time on class k when it may run there (pin, cycles,
 * counts[k] > 0), else -1. */
uint32_t bound_pinned_class(const pm_graph *g, uint32_t v);
int64_t bound_class_time(const pm_graph *g, const uint32_t *counts, uint32_t v, uint32_t k);
/* Packing floor (per class when counts, else all nodes on procs cores),
 * pinned-core floor, bus floor; 0 when they do not apply. */
int bound_packing(const pm_graph *g, const uint32_t *counts, uint32_t procs, int64_t *out);
int bound_pinned(const pm_graph *g, int64_t *out, uint32_t *core);
int bound_bus(const pm_graph *g, int64_t *out);

#endif
