/*
 * sim_internal.h - the simulator's working state, shared by its files:
 * the entry point and what both engines share (sim.c), preparation
 * (sim_prep.c), the causal engine (sim_causal.c), the point-to-point engine
 * (sim_p2p.c), token counts (sim_tokens.c) and the end-of-run analysis
 * (sim_report.c).  Not public.
 *
 * Times are kept in sliding rings of W iterations (W a power of two):
 * xr[(k & mask) * n + v] (sim_x_at) is the begin time of firing (v,k), and
 * beside it cr holds its cause, bg the bus grants, f1, lbr, lmin and lmax
 * the per-iteration fingerprints and latency bounds.  W holds every
 * iteration from the oldest a firing may still look back to (the deepest
 * delay or FIFO, the cyclicity window, plus the largest lag) up to the
 * newest begun; sim_ring_fit doubles it when the cores drift further apart
 * (tokens piling up) and stops the run with PM_ELIMIT past the memory
 * limit.
 *
 * Lags (map.h): cores run rounds; round r of v's core runs v's iteration
 * r - lag[v], none while that is negative.  Everything kept per iteration
 * (rings, fingerprints, latency, tokens, records) is kept by v's own
 * iteration, so both engines count iterations as without lags and only
 * their loops over rounds know of lags.  A run of N iterations takes
 * R = N + (largest lag) rounds; firings of iterations N and later in those
 * rounds happen (they may hold back earlier iterations on their core) but
 * count for nothing reported.
 */
#ifndef PACEMAP_SIM_INTERNAL_H
#define PACEMAP_SIM_INTERNAL_H

#include <stdbool.h>
#include <stdint.h>

#include "pacemap/sim.h"

/* An input of a node: edge from src with `delay` delays; xslot is the
 * edge's index among cross-core edges, or PM_NONE on the same core; w is
 * the source's end offset (so the input needs no look at its record). */
typedef struct sim_in {
    uint32_t src, edge, xslot, delay;
    int64_t w;
} sim_in;

/* A cross-core output, next to its node's others: its transfer time, and
 * its room (--fifo): firing k of the producer waits for firing k - back of
 * the consumer dst (back = capacity - delays). */
typedef struct sim_fo {
    uint32_t dst, edge, back, xslot;
    int64_t cost;
} sim_fo;

/* What a firing of a node needs, packed for the hot loop (times are
 * offsets from the firing's begin). */
typedef struct sim_nd {
    int64_t recv, end_off, free_off;
    int64_t last_x;             /* begin of the previous firing */
    uint32_t in_lo, in_hi;      /* inputs: ins[in_lo .. in_hi) */
    uint32_t xo_lo, xo_hi;      /* cross-core outputs: xout[xo_lo .. xo_hi) */
} sim_nd;

/* A cross-core edge. */
typedef struct sim_x {
    uint32_t edge, src, dst, pad;
    int64_t delay, cap, cost; /* cap: FIFO capacity, 0 = unbounded */
} sim_x;

/* Token count of one cross-core edge over time: pushes (producer ends) and
 * pops (consumer begins) are merged in time order; only one side can be
 * waiting for the other, so one queue suffices. */
typedef struct sim_occ {
    int64_t *q;
    uint32_t cap, head, len;
    bool pops;        /* the queue holds pops (else pushes) */
    int64_t occ, max;
    uint64_t *budget; /* bytes all queues of the run may still take (shared) */
} sim_occ;

/* The token counter of a cross-core edge (sim_tokens.c): pops counted,
 * and the begin of pop q once the consumer has begun it. */
/* A cross-core input of the firing being tried: what counting its token
 * needs once the firing begins (noted while its inputs are checked). */
typedef struct sim_take {
    uint32_t xslot;
    bool initial;   /* an initial token: nothing was pushed for it */
    int64_t push;   /* else the end of the firing that made it */
} sim_take;

typedef struct sim_cursor {
    int64_t bq;
    uint64_t q;   /* or SIM_QUEUED: the edge counts with its sim_occ queue */
    int64_t max;  /* most tokens held so far */
} sim_cursor;

#define SIM_QUEUED UINT64_MAX

/* A bus request, keyed (time, core << 32 | xslot, iteration): the oldest
 * first, then the lower core, the edge written first, the earlier
 * iteration.  cost and src ride along so that granting it needs no look
 * at the edge's record. */
typedef struct sim_ev {
    int64_t time;
    uint64_t order;
    uint64_t iter;
    int64_t cost;
    uint32_t src;
    uint32_t pad;
} sim_ev;

/* A granted bus transfer of (xslot, iteration `iter`), all in one place
 * so that a grant and a read each touch one record of the ring. */
typedef struct sim_grant {
    int64_t arrival, request;  /* grant = arrival - the edge's cost */
    uint64_t iter;             /* whose transfer this is; UINT64_MAX: none yet */
    uint64_t prev_iter;        /* the transfer the bus finished just before, */
    uint32_t prev_xs;          /* when this one waited for it: xslot + 1, else 0 */
    uint32_t pad;
} sim_grant;

/* One core's bus requests not granted yet, in key order: a core asks in
 * firing order, so requests come sorted but for ties of time (a ring that
 * doubles). */
typedef struct sim_reqs {
    sim_ev *a;
    uint32_t cap, head, len;
} sim_reqs;

/* All requests not granted yet: per core, and a winner tree over the
 * cores' first requests (tree[1] is the next to grant). */
typedef struct sim_bq {
    sim_reqs *q;
    uint32_t *tree;   /* 2 * leaves core ids, PM_NONE where empty */
    uint32_t leaves;
    size_t len;
} sim_bq;

typedef struct sim {
    const pm_graph *g;
    const pm_map *m;
    uint64_t N;
    uint32_t n, P, nx;
    bool bus, fifo;
    bool lags;                /* some node has a lag (map.h) */
    uint32_t lag_max;         /* the largest lag */
    uint64_t R;               /* rounds the cores run: N + lag_max */
    uint32_t *core_lag;       /* per core: the largest lag of its nodes */
    int64_t span;             /* deepest look-back in iterations (delays, FIFO) */
    uint32_t cmax;
    /* per node */
    int64_t *t, *recv, *send;
    sim_nd *nd;
    uint32_t *in_off;
    sim_in *ins;
    uint32_t *xout_off, *xout;   /* cross-core out edges (xslots) */
    sim_fo *fo;                  /* the same, as room conditions */
    uint32_t *xs_of;             /* per edge: its xslot or PM_NONE */
    uint32_t *pos_of;            /* position of v in its core's order */
    uint64_t *done;              /* firings begun */
    uint32_t *wait_head;         /* first core waiting for this node */
    sim_x *x;
    sim_occ *occ;
    sim_cursor *cur;             /* per xslot */
    sim_take *take;              /* the tried firing's cross-core inputs */
    uint32_t ntake;
    uint64_t occ_budget;         /* what the occ queues may still allocate */
    /* per core */
    uint32_t *pos, *cnt, *first;
    uint64_t *iter;
    int64_t *free;
    uint32_t *wait_next, *wait_node, *wait_edge;
    bool *wait_fifo, *queued;
    bool *lagged, *relax;        /* held by the lag limit / let go once */
    uint32_t nlagged;            /* cores held by the lag limit */
    uint32_t *runq, runq_head, runq_len; /* cores that may fire */
    /* rings */
    uint32_t W;
    uint64_t mask;
    int64_t *xr;        /* begin times, W * n */
    uint32_t *cr;       /* causes, W * n: kind | edge << 3 */
    sim_grant *bg;      /* bus grants, W * nx */
    uint64_t *f1;       /* fingerprint of each iteration's begin differences */
    int64_t *lmin, *lmax;
    uint64_t completed, max_iter;
    uint64_t valid_lo;  /* every node's times from this iteration on are held */
    uint64_t last_break[PM_SIM_MAX_CYCLICITY + 1];
    uint64_t *lbr;      /* bus: last_break as it was after each iteration */
    uint64_t end;       /* iterations the analysis looks at (N minus the tail) */
    int64_t *half;      /* begin times of iteration N/2 */
    /* events */
    sim_bq pend;                 /* bus requests not granted yet */
    int64_t bus_free;
    uint32_t bus_last;  /* xslot + 1 of the last granted transfer, 0 = none */
    uint64_t bus_last_iter;
    /* results gathered while running */
    int64_t makespan, lat_max;
    uint64_t firings;
    uint32_t record;
    pm_sim_firing *trace;
    size_t ntrace, trace_cap;
    pm_sim_transfer *tr;
    size_t ntr, tr_cap;
    /* a paced run (sim_pace.c) and per-edge capacities */
    const pm_sim_pace *pace;
    bool caps;                   /* some edge has a capacity of its own */
    uint32_t *pq, *pph;          /* per node: firings per iteration, which one */
    bool *pin, *psink;           /* per node: input, sink */
    int64_t *sink_end;           /* per iteration < N: last end of a sink firing */
    uint64_t overruns, first_overrun;
} sim;

#define SIM_LBR (PM_SIM_MAX_CYCLICITY + 1)
#define SIM_CAUSE(c) ((pm_sim_cause)((c) & 7u))
#define SIM_CAUSE_EDGE(c) ((c) >> 3)

static inline int64_t *sim_x_at(const sim *s, uint32_t v, uint64_t k)
{
    return &s->xr[(size_t)(k & s->mask) * s->n + v];
}

/* The node run by core c just before position `pos` (wrapping to the last
 * node of the previous iteration); *back is 1 when it wrapped. */
uint32_t sim_prev_on_core(const sim *s, uint32_t c, uint32_t pos, uint32_t *back);

/* First iteration whose times the rings still hold for every node. */
uint64_t sim_window_lo(const sim *s);

/* Grow o's queue (doubling); PM_ELIMIT past the per-edge and shared limits. */
int sim_occ_grow(sim_occ *o);

static inline int sim_occ_queue(sim_occ *o, int64_t t, bool pop)
{
    if (o->len == o->cap) {
        int rc = sim_occ_grow(o);
        if (rc)
            return rc;
    }
    o->q[(o->head + o->len++) & (o->cap - 1)] = t;
    o->pops = pop;
    return PM_OK;
}

static inline int64_t sim_occ_front(const sim_occ *o)
{
    return o->q[o->head];
}

static inline void sim_occ_drop(sim_occ *o)
{
    o->head = (o->head + 1) & (o->cap - 1);
    o->len--;
}

static inline void sim_occ_apply_push(sim_occ *o)
{
    if (++o->occ > o->max)
        o->max = o->occ;
}

/* A token pushed at time t.  Pops at the same time go first: a slot
 * freed and refilled in the same cycle is one slot (docs/simulation.md). */
static inline int sim_occ_push(sim_occ *o, int64_t t)
{
    if (o->len && o->pops) {
        while (o->len && sim_occ_front(o) <= t) {
            o->occ--;
            sim_occ_drop(o);
        }
        if (o->len) {
            sim_occ_apply_push(o);
            return PM_OK;
        }
    }
    return sim_occ_queue(o, t, false);
}

static inline int sim_occ_pop(sim_occ *o, int64_t t)
{
    if (o->len && !o->pops) {
        while (o->len && sim_occ_front(o) < t) {
            sim_occ_apply_push(o);
            sim_occ_drop(o);
        }
        if (o->len) {
            o->occ--;
            return PM_OK;
        }
    }
    return sim_occ_queue(o, t, true);
}

static inline void sim_occ_flush(sim_occ *o)
{
    while (o->len) {
        if (o->pops)
            o->occ--;
        else
            sim_occ_apply_push(o);
        sim_occ_drop(o);
    }
}

/* Spread (node, begin difference) over 64 bits; one multiply is enough,
 * since a collision can only hide a period, never report a wrong one. */
static inline uint64_t sim_mix(uint64_t d, uint32_t v)
{
    uint64_t z = (d + ((uint64_t)v << 32) + v) * UINT64_C(0x9e3779b97f4a7c15);
    return z ^ (z >> 29);
}

/* Count push `push` of cursor t, whose consumer began iteration k at x;
 * col[(j & mask) * stride] is the consumer's begin in iteration j.
 * Between iterations either every pop begun is counted (q = k + 1) or
 * t->bq holds pop q's begin.  Which pops a push passes depends on two
 * cores' timing, so the usual cases (none, one or two) are taken without
 * branches; the ring is read in a loop only when a push passes more.  The
 * caller moves the edge to its queue once k + 1 - q reaches the ring's
 * depth (sim_tokens_to_queue). */
static inline __attribute__((always_inline)) void
sim_cursor_push(sim_cursor *t, const int64_t *col, size_t stride, uint64_t mask, uint64_t k,
                int64_t x, int64_t push)
{
    uint64_t q = t->q;
    int64_t b = q == k ? x : t->bq;
    for (int step = 0; step < 2; step++) {
        bool pass = b <= push && q <= k;
        q += pass;
        uint64_t r = q < k ? q : k; /* row k is at hand; older rows only when needed */
        int64_t next = q < k ? col[(size_t)(r & mask) * stride] : x;
        b = pass ? next : b;
    }
    while (__builtin_expect(b <= push && q <= k, 0)) {
        q++;
        b = q < k ? col[(size_t)(q & mask) * stride] : x;
    }
    t->q = q, t->bq = b;
    int64_t held = (int64_t)(k + 1 - q);
    t->max = held > t->max ? held : t->max;
}

/* Preparation (sim_prep.c).  sim_init builds the arrays and rings for g
 * and m; sim_free releases them, also after a failed sim_init. */
int sim_init(sim *s, const pm_graph *g, const pm_map *m, const pm_sim_opts *o,
             pm_diag *diag);
void sim_free(sim *s);

/* Make room in the rings for iterations [completed - look-back, max_iter];
 * PM_ELIMIT, with the reason in diag, past the memory limit. */
int sim_ring_fit(sim *s, pm_diag *diag);

/* malloc for large arrays, on huge pages where the system has them. */
void *sim_alloc_big(size_t bytes);

/* Token counters (sim_tokens.c). */
int sim_tokens_init(sim *s);
int sim_tokens_to_queue(sim *s, sim_cursor *t, uint32_t xs, const int64_t *col, size_t stride,
                        uint64_t k);
int sim_tokens_queued(sim *s, uint32_t xs, uint64_t k, int64_t begin, int64_t push);
int sim_tokens_tail(sim *s);

/* The consumer of edge xs (cursor t; its begins at col, as in
 * sim_cursor_push) began iteration k at x and took a token: an initial one,
 * or the one pushed at `push`.  Both engines count through here. */
static inline __attribute__((always_inline)) int
sim_tokens_take(sim *s, sim_cursor *t, uint32_t xs, const int64_t *col, size_t stride,
                uint64_t k, int64_t x, bool initial, int64_t push)
{
    if (__builtin_expect(t->q == SIM_QUEUED, 0))
        return sim_tokens_queued(s, xs, k, x, push);
    if (initial) {
        if (t->q == k)
            t->bq = x;
        return PM_OK;
    }
    sim_cursor_push(t, col, stride, s->mask, k, x, push);
    if (__builtin_expect(k + 1 - t->q >= s->W, 0))
        return sim_tokens_to_queue(s, t, xs, col, stride, k);
    return PM_OK;
}

/* Iteration bookkeeping and trace records shared by both engines. */
void sim_slot_reset(sim *s, uint64_t k);
void sim_iteration_done(sim *s, uint64_t k);
int sim_record_firing(sim *s, uint32_t c, uint32_t v, uint64_t k, int64_t x);
int sim_record_transfer(sim *s, uint32_t xs, uint64_t k, int64_t req, int64_t gr);

/* The point-to-point engine (sim_p2p.c); 1 when it cannot run this map. */
int sim_loop_p2p(sim *s, pm_diag *diag);

/* The causal engine (sim_causal.c), for a bus and for maps the
 * point-to-point engine cannot run; the queue of bus requests it grants
 * from (sim_init makes it on a bus, sim_free frees it). */
int sim_loop_causal(sim *s, pm_diag *diag);
int sim_bq_init(sim_bq *b, uint32_t cores);
void sim_bq_free(sim_bq *b, uint32_t cores);

/* Paced runs (sim_pace.c): preparation, the release of (v,k), what a
 * firing that began at x adds to latency and overruns, the result. */
int sim_pace_init(sim *s, const pm_sim_opts *o, pm_diag *diag);
void sim_pace_free(sim *s);
int64_t sim_pace_release(const sim *s, uint32_t v, uint64_t k);
void sim_pace_note(sim *s, uint32_t v, uint64_t k, int64_t x);
int sim_pace_report(const sim *s, pm_sim_result *r);

/* End-of-run analysis (sim_report.c). */
int sim_report_steady(sim *s, pm_sim_result *r);
int sim_report_chain(sim *s, pm_sim_result *r);
int sim_report_deadlock(sim *s, pm_sim_result *r, pm_diag *diag);
int sim_report_resources(sim *s, pm_sim_result *r);

#endif
