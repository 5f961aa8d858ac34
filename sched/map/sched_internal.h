/*
 * sched_internal.h - pieces shared by the scheduler's files (listsched.c,
 * listsched_place.c, listsched_loops.c, schedtime.c, levels.c, timeline.c,
 * loopfloor.c); not part of the API.
 *
 * A timeline is the busy/free picture of one core or of the bus: free from
 * `tail` onwards, plus at most PM_SCHED_GAPS remembered idle gaps before the
 * tail (sorted, disjoint).  When a new gap would overflow the array the
 * oldest gap is forgotten (treated as busy): placement stays O(gaps) and a
 * forgotten gap only makes a schedule later, never invalid.
 */
#ifndef PACEMAP_SCHED_INTERNAL_H
#define PACEMAP_SCHED_INTERNAL_H

#include <stdbool.h>
#include <stdint.h>

#include "pacemap/graph.h"
#include "pacemap/sched.h"

typedef struct sched_gap {
    int64_t a, b; /* free over [a, b) */
} sched_gap;

typedef struct sched_lane {
    int64_t tail;
    int64_t maxlen;  /* longest remembered gap: a longer job goes to the tail */
    uint32_t ngaps;
    sched_gap gaps[PM_SCHED_GAPS];
} sched_lane;

/* Earliest s >= r with [s, s + w) free on the lane (w >= 0).  A zero-length
 * placement never falls strictly inside a busy interval. */
int64_t sched_lane_fit(const sched_lane *l, int64_t r, int64_t w);
/* Like sched_lane_fit for a send or receive: zero cycles occupy nothing,
 * so they happen at r itself. */
int64_t sched_lane_fit_occ(const sched_lane *l, int64_t r, int64_t w);
/* Mark [s, s + w) busy; s must come from sched_lane_fit(l, ., w).  A
 * zero-length job (a node of 0 cycles) splits the gap it falls in. */
void sched_lane_reserve(sched_lane *l, int64_t s, int64_t w);
/* For sends, receives and bus transfers: zero cycles reserve nothing. */
void sched_lane_reserve_occ(sched_lane *l, int64_t s, int64_t w);

/* a + b saturating at INT64_MAX; sets *overflow when it saturates. */
int64_t sched_add(int64_t a, int64_t b, bool *overflow);

/* Kahn order of the zero-delay edges into order[n] (pm_order_zero_delay,
 * first in, first out).
 * PM_EZERODELAY with diag naming the loop (pm_order_check_zero_delay). */
int sched_topo(const pm_graph *g, uint32_t *order, pm_diag *diag);

/* Strongly connected components over all edges (pm_scc_compute, same
 * numbering).  comp[v] in [0, *ncomp); *cyclic (ncomp entries, malloc'd)
 * says whether a component holds a cycle (two nodes or a self-loop). */
int sched_scc(const pm_graph *g, uint32_t *comp, uint32_t *ncomp, bool **cyclic);

/* Common input checks: finalized, single rate, zero-delay DAG, every node
 * runnable on some core, pins in range.  order (may be NULL) receives the
 * topological order of sched_topo. */
int sched_check_graph(const pm_graph *g, uint32_t *order, pm_diag *diag);

/* An empty schedule for g (slots and busy zeroed, no transfers); NULL on
 * ENOMEM. */
pm_schedule *sched_schedule_alloc(const pm_graph *g);

struct sched_adj;
/* pm_sched_from_map without the input checks (g checked, m fits g); adj is
 * g's compact adjacency or NULL (then built here). */
int sched_time_map(const pm_graph *g, const pm_map *m, const struct sched_adj *adj,
                   pm_schedule **out, pm_diag *diag);

/* Whether core c may run v (pin and class). */
bool sched_allowed(const pm_graph *g, uint32_t v, uint32_t c);

/* Transfer cost latency + per_word * words of edge e (saturating). */
int64_t sched_edge_cost(const pm_graph *g, uint32_t e, bool *overflow);

/* The zero-delay edges in compact adjacency arrays (the hot loops of the
 * scheduler touch nothing else): in-edges of v are [in_off[v], in_off[v+1])
 * in the graph's in-edge order, out-edges likewise. */
typedef struct sched_adj {
    uint32_t *in_off, *in_src, *in_edge;
    int64_t *in_cost;    /* latency + per_word * words */
    uint32_t *out_off, *out_dst, *out_edge;
    int64_t *out_cost;
    uint32_t maxin;      /* largest zero-delay in-degree */
} sched_adj;

/* PM_ENOMEM; *overflow set when a cost saturates. */
int sched_adj_build(const pm_graph *g, sched_adj *a, bool *overflow);
void sched_adj_free(sched_adj *a);

/* A binary min-heap of node ids ordered by a caller's "less" function. */
typedef bool (*sched_less_fn)(const void *ctx, uint32_t a, uint32_t b);
typedef struct sched_heap {
    uint32_t *v;
    uint32_t n;
    sched_less_fn less;
    const void *ctx;
} sched_heap;

/* Room for cap ids; PM_ENOMEM. */
int sched_heap_init(sched_heap *h, uint32_t cap, sched_less_fn less, const void *ctx);
void sched_heap_free(sched_heap *h);
void sched_heap_push(sched_heap *h, uint32_t id);
uint32_t sched_heap_pop(sched_heap *h);

/* ---- the list scheduler (listsched*.c) ------------------------------------ */

/* The list scheduler's working state: listsched.c makes it and ranks the
 * nodes, listsched_loops.c marks the loop rule's groups and floor,
 * listsched_place.c places every node (slot, seq). */
typedef struct ls_ctx {
    const pm_graph *g;
    sched_adj a;         /* zero-delay edges, compact */
    uint32_t P;
    double *rank;
    sched_lane *lanes;
    sched_lane bus;
    pm_slot *slot;
    uint32_t *seq;       /* placement order of each node */
    uint32_t *byseq;     /* node placed i-th */
    uint32_t nplaced;
    uint32_t *deps;
    uint32_t *cluster;   /* loop part kept on one core, or PM_NONE */
    uint32_t *cl_core;   /* core of each such part once chosen, or PM_NONE */
    bool *cl_class_ok;   /* part x class: every member may run there */
    int64_t *arr;        /* per in-edge of the node being placed: remote arrival */
    uint32_t *mark;      /* per core: node id + 1 when a producer of it sits there */
    uint32_t *nsent;     /* per node: sends committed so far */
    /* period guard of the loop rule (cap 0: off) */
    int64_t cap;         /* the rule's period floor T */
    bool capping;        /* while choosing: only cores that stay within cap */
    int64_t *load;       /* per core: committed cycles per iteration */
    int64_t *pend;       /* per core: unplaced work of groups bound there */
    int64_t *cl_left;    /* per group: work of its unplaced members */
    uint64_t *via;       /* per node: cores (bit c % 64) of it and its ancestors */
    int64_t *first;      /* per core: earliest start placed there */
    bool overflow;
} ls_ctx;

static inline int64_t ls_max(int64_t a, int64_t b)
{
    return a > b ? a : b;
}

/* Mark the groups the loop rule keeps on one core and set its floor
 * (listsched_loops.c); PM_ENOMEM. */
int ls_loop_parts(ls_ctx *x, const pm_sched_opts *o);

/* Place every node (listsched_place.c): earliest finish with insertion,
 * or Graham's greedy mode (PM_EINVAL, with diag, for a bad priority
 * list). */
int ls_heft(ls_ctx *x);
int ls_greedy(ls_ctx *x, const pm_sched_opts *o, pm_diag *diag);

#endif
