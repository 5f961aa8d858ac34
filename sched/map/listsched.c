/*
 * listsched.c - the list scheduler: decides which core runs each node and
 * in what order (a pm_map), then times that map with pm_sched_from_map.
 *
 * Default mode: upward-rank priorities with average costs, earliest-finish
 * core with insertion into remembered idle gaps (Topcuoglu, Hariri & Wu,
 * IEEE TPDS 2002), plus the loop rule (loops, or whole strongly connected
 * parts, whose work fits the period floor stay on one core; see below).  Greedy mode: Graham's plain list
 * scheduling (1969).  Timing rules live in schedtime.c; this file only uses
 * estimates of them to choose.
 */
#include "sched_internal.h"

#include "pacemap/bound.h"

#include <stdlib.h>
#include <string.h>

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

static int64_t ls_max(int64_t a, int64_t b)
{
    return a > b ? a : b;
}

/* Mean execution time of v over the cores that may run it. */
static double ls_avg_cycles(const pm_graph *g, uint32_t v)
{
    const pm_platform *p = &g->platform;
    const pm_node *n = &g->nodes[v];
    if (n->pin_core != PM_NONE)
        return (double)pm_graph_cycles_on(g, v, p->core_class[n->pin_core]);
    double sum = 0, cnt = 0;
    for (uint32_t c = 0; c < p->nclasses; c++) {
        int64_t t = pm_graph_cycles_on(g, v, c);
        if (t < 0 || (n->pin_class != PM_NONE && n->pin_class != c))
            continue;
        sum += (double)t * p->class_count[c];
        cnt += p->class_count[c];
    }
    return cnt > 0 ? sum / cnt : 0;
}

/* Upward rank over zero-delay edges, in reverse topological order. */
static void ls_ranks(ls_ctx *x, const uint32_t *topo)
{
    const pm_graph *g = x->g;
    const pm_comm *cm = &g->platform.comm;
    double share = 1.0 - 1.0 / (double)x->P;
    bool ovf = false;
    for (uint32_t k = g->nnodes; k-- > 0;) {
        uint32_t v = topo[k];
        double best = 0;
        for (uint32_t i = x->a.out_off[v]; i < x->a.out_off[v + 1]; i++) {
            double c = share * (double)sched_add(cm->send + cm->recv, x->a.out_cost[i], &ovf);
            double r = c + x->rank[x->a.out_dst[i]];
            if (r > best)
                best = r;
        }
        x->rank[v] = ls_avg_cycles(g, v) + best;
    }
}

/* Ready nodes: larger rank first, then smaller id. */
static bool ls_less(const void *ctx, uint32_t a, uint32_t b)
{
    const ls_ctx *x = ctx;
    if (x->rank[a] != x->rank[b])
        return x->rank[a] > x->rank[b];
    return a < b;
}

/* Start of the next send of placed node u.  The map rule (sched.h) runs a
 * producer's sends right after it ends, one after another, pushing back
 * whatever follows it on its core; so the estimate puts them there too,
 * not in the first idle time after nodes already placed behind u (which
 * made every remote placement look late and piled nodes onto one core). */
static int64_t ls_send_start(ls_ctx *x, uint32_t u)
{
    int64_t send = x->g->platform.comm.send, before;
    if (__builtin_mul_overflow(send, (int64_t)x->nsent[u], &before) || before > PM_MAX_VALUE) {
        x->overflow = true;
        return PM_MAX_VALUE;
    }
    return sched_add(x->slot[u].end, before, &x->overflow);
}

/* Commit the next send of u.  Where that time is still idle on u's core it
 * is reserved there; otherwise the nodes placed behind u will be pushed back
 * by `send` when the map is timed, which the estimate charges to the core's
 * availability: `send` more cycles at the tail. */
static int64_t ls_send_commit(ls_ctx *x, uint32_t u)
{
    int64_t send = x->g->platform.comm.send, ss = ls_send_start(x, u);
    sched_lane *l = &x->lanes[x->slot[u].core];
    if (send == 0)
        return ss;
    x->nsent[u]++;
    if (x->load)
        x->load[x->slot[u].core] = sched_add(x->load[x->slot[u].core], send, &x->overflow);
    if (sched_lane_fit(l, ss, send) == ss)
        sched_lane_reserve(l, ss, send);
    else
        sched_lane_reserve(l, l->tail, send);
    return ss;
}

/* Where the data of compact in-edge i would arrive on a remote core, if the
 * transfer were committed now (send right after the producer, then bus). */
static int64_t ls_remote_arrival(ls_ctx *x, uint32_t i)
{
    const pm_graph *g = x->g;
    int64_t send = g->platform.comm.send, cost = x->a.in_cost[i];
    int64_t se = sched_add(ls_send_start(x, x->a.in_src[i]), send, &x->overflow);
    if (g->platform.interconnect == PM_BUS && cost > 0)
        se = sched_lane_fit(&x->bus, se, cost);
    return sched_add(se, cost, &x->overflow);
}

/* When v's inputs would be ready on core c (receives estimated, not kept). */
static int64_t ls_ready_on(ls_ctx *x, uint32_t v, uint32_t c, int64_t r_remote)
{
    const pm_graph *g = x->g;
    int64_t recv = g->platform.comm.recv;
    if (recv == 0 && x->mark[c] != v + 1)
        return r_remote;
    int64_t r = 0;
    for (uint32_t i = x->a.in_off[v], k = 0; i < x->a.in_off[v + 1]; i++, k++) {
        const pm_slot *u = &x->slot[x->a.in_src[i]];
        if (u->core == c)
            r = ls_max(r, u->end);
        else if (recv == 0)
            r = ls_max(r, x->arr[k]);
        else
            r = ls_max(r, sched_lane_fit_occ(&x->lanes[c], x->arr[k], recv) + recv);
    }
    return r;
}

/* Whether putting v on core c keeps the core's work per iteration (placed
 * work + the unplaced rest of groups bound there + what v brings) within
 * the loop rule's floor: a core's work bounds the period from below. */
static bool ls_within_cap(const ls_ctx *x, uint32_t v, uint32_t c)
{
    uint32_t k = x->cluster[v];
    int64_t add = pm_graph_cycles_on(x->g, v, x->g->platform.core_class[c]);
    if (k != PM_NONE)
        add = x->cl_core[k] == PM_NONE ? x->cl_left[k] : 0;
    bool ovf = false; /* saturated sums only compare */
    return sched_add(sched_add(x->load[c], x->pend[c], &ovf), add, &ovf) <= x->cap;
}

/* Whether v may go to core c (pins, classes, its loop part, the guard). */
static bool ls_may_use(const ls_ctx *x, uint32_t v, uint32_t c)
{
    if (!sched_allowed(x->g, v, c))
        return false;
    if (x->capping && !ls_within_cap(x, v, c))
        return false;
    uint32_t k = x->cluster[v];
    if (k == PM_NONE)
        return true;
    if (x->cl_core[k] != PM_NONE)
        return x->cl_core[k] == c;
    return x->cl_class_ok[(size_t)k * x->g->platform.nclasses + x->g->platform.core_class[c]];
}

/* Estimate arrivals of v's producers; returns the latest (all remote). */
static int64_t ls_arrivals(ls_ctx *x, uint32_t v)
{
    int64_t r = 0;
    for (uint32_t i = x->a.in_off[v], k = 0; i < x->a.in_off[v + 1]; i++, k++) {
        x->arr[k] = ls_remote_arrival(x, i);
        r = ls_max(r, x->arr[k]);
        x->mark[x->slot[x->a.in_src[i]].core] = v + 1;
    }
    return r;
}

typedef struct ls_best {
    uint32_t core;
    int64_t end;
} ls_best;

/* Whether v on core c would take data that left c for another core and
 * comes back: with the core's order repeating every iteration, that closes
 * a loop of one delay through everything c runs from the ancestor to v
 * (a loop of the communication graph, Sriram & Bhattacharyya 2000). */
static bool ls_round_trip(const ls_ctx *x, uint32_t v, uint32_t c)
{
    for (uint32_t i = x->a.in_off[v]; i < x->a.in_off[v + 1]; i++) {
        uint32_t u = x->a.in_src[i];
        if (x->slot[u].core != c && (x->via[u] >> (c % 64) & 1))
            return true;
    }
    return false;
}

/* Evaluate core c for v; returns the start it would get there.  Under the
 * period guard a round trip whose span on c exceeds the floor is refused. */
static int64_t ls_try(ls_ctx *x, uint32_t v, uint32_t c, int64_t r_remote, ls_best *b)
{
    const pm_graph *g = x->g;
    int64_t w = pm_graph_cycles_on(g, v, g->platform.core_class[c]);
    int64_t s = sched_lane_fit(&x->lanes[c], ls_ready_on(x, v, c, r_remote), w);
    int64_t end = sched_add(s, w, &x->overflow);
    if (x->capping && end - (x->first[c] < s ? x->first[c] : s) > x->cap &&
        ls_round_trip(x, v, c))
        return s;
    if (b->core == PM_NONE || end < b->end || (end == b->end && c < b->core))
        *b = (ls_best){c, end};
    return s;
}

/* The common case - identical cores, v free to go anywhere, data ready at
 * r_remote on every core without a producer: the first core where v can
 * start at r_remote cannot be beaten by a later index, so stop there. */
static void ls_scan_uniform(ls_ctx *x, uint32_t v, int64_t r, ls_best *b)
{
    int64_t w = pm_graph_cycles_on(x->g, v, 0);
    for (uint32_t c = 0; c < x->P; c++) {
        if (x->mark[c] == v + 1)
            continue;
        const sched_lane *l = &x->lanes[c];
        int64_t s = w > l->maxlen ? (l->tail > r ? l->tail : r) : sched_lane_fit(l, r, w);
        int64_t end = s + w; /* both <= PM_MAX_VALUE: no wrap; overflow caught on commit */
        if (b->core == PM_NONE || end < b->end || (end == b->end && c < b->core))
            *b = (ls_best){c, end};
        if (s == r)
            return;
    }
}

/* Earliest-finish core for v; ties to the smaller core index.  Cores that
 * hold a producer are tried first; among the others, with one class and no
 * receive cost, a core where v can start as soon as its remote data arrive
 * cannot be beaten by a later index, so the scan stops there. */
static uint32_t ls_scan(ls_ctx *x, uint32_t v, int64_t r_remote)
{
    const pm_graph *g = x->g;
    ls_best b = {PM_NONE, 0};
    if (g->nodes[v].pin_core != PM_NONE) {
        if (ls_may_use(x, v, g->nodes[v].pin_core))
            ls_try(x, v, g->nodes[v].pin_core, r_remote, &b);
        return b.core;
    }
    for (uint32_t i = x->a.in_off[v]; i < x->a.in_off[v + 1]; i++) {
        uint32_t c = x->slot[x->a.in_src[i]].core;
        if (ls_may_use(x, v, c))
            ls_try(x, v, c, r_remote, &b);
    }
    if (g->platform.nclasses == 1 && g->platform.comm.recv == 0 && !x->capping &&
        g->nodes[v].pin_class == PM_NONE && x->cluster[v] == PM_NONE) {
        ls_scan_uniform(x, v, r_remote, &b);
        return b.core;
    }
    for (uint32_t c = 0; c < x->P; c++)
        if (x->mark[c] != v + 1 && ls_may_use(x, v, c))
            ls_try(x, v, c, r_remote, &b);
    return b.core;
}

/* With the loop rule's guard on, first among the cores that stay within
 * the period floor; when none does, among all. */
static uint32_t ls_pick_core(ls_ctx *x, uint32_t v)
{
    int64_t r_remote = ls_arrivals(x, v);
    uint32_t c = PM_NONE;
    if (x->cap > 0) {
        x->capping = true;
        c = ls_scan(x, v, r_remote);
        x->capping = false;
    }
    return c != PM_NONE ? c : ls_scan(x, v, r_remote);
}

/* The guard's bookkeeping: v of w cycles now runs on core c. */
static void ls_account(ls_ctx *x, uint32_t v, uint32_t c, int64_t w)
{
    uint32_t k = x->cluster[v];
    bool ovf = false;
    if (!x->load)
        return;
    x->load[c] = sched_add(x->load[c], w, &ovf);
    x->via[v] = (uint64_t)1 << (c % 64);
    for (uint32_t i = x->a.in_off[v]; i < x->a.in_off[v + 1]; i++)
        x->via[v] |= x->via[x->a.in_src[i]];
    if (x->slot[v].start < x->first[c])
        x->first[c] = x->slot[v].start;
    if (k == PM_NONE)
        return;
    if (x->cl_core[k] == PM_NONE)
        x->pend[c] = sched_add(x->pend[c], x->cl_left[k], &ovf);
    int64_t t = x->cl_left[k] < w ? x->cl_left[k] : w; /* class cycles may exceed the min */
    x->cl_left[k] -= t;
    x->pend[c] -= t;
}

/* Commit v on core c: the transfers it needs, then v itself. */
static void ls_commit(ls_ctx *x, uint32_t v, uint32_t c)
{
    const pm_graph *g = x->g;
    const pm_comm *cm = &g->platform.comm;
    int64_t r = 0;
    for (uint32_t i = x->a.in_off[v]; i < x->a.in_off[v + 1]; i++) {
        const pm_slot *u = &x->slot[x->a.in_src[i]];
        if (u->core == c) {
            r = ls_max(r, u->end);
            continue;
        }
        int64_t cost = x->a.in_cost[i];
        int64_t ws = sched_add(ls_send_commit(x, x->a.in_src[i]), cm->send, &x->overflow);
        if (g->platform.interconnect == PM_BUS && cost > 0) {
            ws = sched_lane_fit(&x->bus, ws, cost);
            sched_lane_reserve_occ(&x->bus, ws, cost);
        }
        int64_t rs = sched_lane_fit_occ(&x->lanes[c], sched_add(ws, cost, &x->overflow), cm->recv);
        sched_lane_reserve_occ(&x->lanes[c], rs, cm->recv);
        r = ls_max(r, sched_add(rs, cm->recv, &x->overflow));
        if (x->load)
            x->load[c] = sched_add(x->load[c], cm->recv, &x->overflow);
    }
    int64_t w = pm_graph_cycles_on(g, v, g->platform.core_class[c]);
    int64_t s = sched_lane_fit(&x->lanes[c], r, w);
    sched_lane_reserve(&x->lanes[c], s, w);
    x->slot[v] = (pm_slot){c, s, sched_add(s, w, &x->overflow)};
    x->seq[v] = x->nplaced++;
    ls_account(x, v, c, w);
    if (x->cluster[v] != PM_NONE)
        x->cl_core[x->cluster[v]] = c;
}

/* The ready list: a binary heap with the key stored inline (the ranks of
 * a million nodes do not fit in cache). Larger rank first, then smaller id. */
typedef struct ls_item {
    double rank;
    uint32_t v;
} ls_item;

static bool ls_item_before(ls_item a, ls_item b)
{
    return a.rank != b.rank ? a.rank > b.rank : a.v < b.v;
}

static void ls_rq_push(ls_item *h, uint32_t *n, ls_item it)
{
    uint32_t i = (*n)++;
    while (i > 0 && ls_item_before(it, h[(i - 1) / 2])) {
        h[i] = h[(i - 1) / 2];
        i = (i - 1) / 2;
    }
    h[i] = it;
}

static uint32_t ls_rq_pop(ls_item *h, uint32_t *n)
{
    uint32_t top = h[0].v, i = 0;
    ls_item last = h[--*n];
    for (;;) {
        uint32_t c = 2 * i + 1;
        if (c >= *n)
            break;
        if (c + 1 < *n && ls_item_before(h[c + 1], h[c]))
            c++;
        if (!ls_item_before(h[c], last))
            break;
        h[i] = h[c];
        i = c;
    }
    if (*n > 0)
        h[i] = last;
    return top;
}

static void ls_release(ls_ctx *x, ls_item *h, uint32_t *n, uint32_t v)
{
    for (uint32_t i = x->a.out_off[v]; i < x->a.out_off[v + 1]; i++) {
        uint32_t w = x->a.out_dst[i];
        if (--x->deps[w] == 0)
            ls_rq_push(h, n, (ls_item){x->rank[w], w});
    }
}

static void ls_count_deps(ls_ctx *x)
{
    for (uint32_t v = 0; v < x->g->nnodes; v++)
        x->deps[v] = x->a.in_off[v + 1] - x->a.in_off[v];
}

static int ls_heft(ls_ctx *x)
{
    const pm_graph *g = x->g;
    uint32_t n = 0;
    ls_item *h = malloc(((size_t)g->nnodes + 1) * sizeof *h);
    if (!h)
        return PM_ENOMEM;
    ls_count_deps(x);
    for (uint32_t v = 0; v < g->nnodes; v++)
        if (x->deps[v] == 0)
            ls_rq_push(h, &n, (ls_item){x->rank[v], v});
    int rc = PM_OK;
    while (n > 0) {
        uint32_t v = ls_rq_pop(h, &n);
        uint32_t c = ls_pick_core(x, v);
        if (c == PM_NONE) {
            rc = PM_EPLATFORM; /* unreachable: checked up front */
            break;
        }
        ls_commit(x, v, c);
        ls_release(x, h, &n, v);
    }
    free(h);
    return rc;
}

/* ---- the loop rule ------------------------------------------------------ *
 *
 * Why: in self-timed execution every cycle of the inter-processor
 * communication graph bounds the period by its time over its delays, and a
 * cross-core edge on a loop adds its transfer (send + wire + recv) to that
 * loop's time (Sriram & Bhattacharyya, "Embedded Multiprocessors", 2000).
 * On the other hand a core's work per iteration bounds the period too, so
 * gathering a group on one core costs nothing as long as the group's work
 * stays within the floor the period has anyway:
 *   T = max(ceil(total work / P), largest node, ceil(iteration bound))
 * (smallest cycles of each node; opts.target_period replaces T).  A loop
 * with d delays lets its nodes overlap at most d iterations, so a loop of
 * one delay already forces a period >= its work: splitting it gains nothing
 * and pays transfers on every lap - and its work is <= the iteration bound
 * <= T, so the rule keeps it.  Per strongly connected part with a loop:
 *   1. its work W <= T: the whole part stays on one core;
 *   2. else its worst loop (the one setting the part's bound, Ito & Parhi
 *      1995, from pm_bound_compute) has work <= T: that loop's nodes stay
 *      on one core, the part's other nodes go where they finish first;
 *   3. else the part is scheduled loop-blind: no single core can carry its
 *      worst loop within T, transfers are the price of spreading it.
 * Pins and classes that rule a group's single core out also leave it free. */

static int64_t ls_target(const ls_ctx *x, const pm_sched_opts *o, const pm_bound *b)
{
    if (o && o->target_period > 0)
        return o->target_period;
    int64_t total = 0, largest = 0;
    bool ovf = false;
    for (uint32_t v = 0; v < x->g->nnodes; v++) {
        int64_t t = pm_graph_min_cycles(x->g, v);
        total = sched_add(total, t, &ovf);
        largest = ls_max(largest, t);
    }
    int64_t t = ls_max((total + x->P - 1) / x->P, largest);
    return b && b->has_loop ? ls_max(t, pm_rat_ceil(b->iteration_bound)) : t;
}

/* Fix a group's core from pins and its classes from every member; false
 * when the members' constraints cannot be met on one core. */
static bool ls_part_fits(ls_ctx *x, uint32_t k, const uint32_t *members, uint32_t len)
{
    const pm_platform *p = &x->g->platform;
    bool *ok = &x->cl_class_ok[(size_t)k * p->nclasses], any = false;
    x->cl_core[k] = PM_NONE;
    for (uint32_t c = 0; c < p->nclasses; c++)
        ok[c] = p->class_count[c] > 0;
    for (uint32_t i = 0; i < len; i++) {
        const pm_node *n = &x->g->nodes[members[i]];
        if (n->pin_core != PM_NONE) {
            if (x->cl_core[k] != PM_NONE && x->cl_core[k] != n->pin_core)
                return false;
            x->cl_core[k] = n->pin_core;
        }
        for (uint32_t c = 0; c < p->nclasses; c++)
            ok[c] = ok[c] && pm_graph_cycles_on(x->g, members[i], c) >= 0 &&
                    (n->pin_class == PM_NONE || n->pin_class == c);
    }
    for (uint32_t c = 0; c < p->nclasses; c++)
        any = any || ok[c];
    if (x->cl_core[k] != PM_NONE && !ok[p->core_class[x->cl_core[k]]])
        return false;
    return any;
}

/* Make members[0..len) group k when their work fits T and one core may
 * run them all; true when done. */
static bool ls_keep(ls_ctx *x, uint32_t k, const uint32_t *members, uint32_t len, int64_t T)
{
    int64_t work = 0;
    bool ovf = false;
    for (uint32_t i = 0; i < len; i++)
        work = sched_add(work, pm_graph_min_cycles(x->g, members[i]), &ovf);
    if (len < 2 || work > T || !ls_part_fits(x, k, members, len)) {
        x->cl_core[k] = PM_NONE;
        return false;
    }
    for (uint32_t i = 0; i < len; i++)
        x->cluster[members[i]] = k;
    x->cl_left[k] = work;
    return true;
}

/* Steps 1-3 above for every part, given the nodes grouped by part. */
static void ls_apply_rule(ls_ctx *x, const uint32_t *comp, const uint32_t *start,
                          const uint32_t *members, const bool *cyclic, uint32_t ncomp,
                          const pm_bound *b, int64_t T)
{
    for (uint32_t k = 0; k < ncomp; k++)
        x->cl_core[k] = PM_NONE;
    for (uint32_t k = 0; k < ncomp; k++)
        if (cyclic[k])
            ls_keep(x, k, members + start[k], start[k + 1] - start[k], T);
    for (uint32_t j = 0; b && j < b->nparts; j++) {
        const pm_part *pt = &b->parts[j];
        uint32_t k = comp[pt->first_node];
        if (x->cluster[pt->first_node] == PM_NONE && pt->worst.len < start[k + 1] - start[k])
            ls_keep(x, k, pt->worst.nodes, pt->worst.len, T);
    }
}

/* Nodes grouped by part (counting sort, ids ascending): part k holds
 * members[start[k] .. start[k+1]). */
static void ls_group(const pm_graph *g, const uint32_t *comp, uint32_t ncomp, uint32_t *start,
                     uint32_t *members)
{
    for (uint32_t v = 0; v < g->nnodes; v++)
        start[comp[v] + 1]++;
    for (uint32_t k = 0; k < ncomp; k++)
        start[k + 1] += start[k];
    for (uint32_t v = 0; v < g->nnodes; v++)
        members[start[comp[v]]++] = v;
    for (uint32_t k = ncomp; k > 0; k--)
        start[k] = start[k - 1];
    start[0] = 0;
}

/* The bound of g for the rule; false (no loop information) when it cannot
 * be had, e.g. sums past 62 bits: the rule then works from the work alone. */
static bool ls_bound(const pm_graph *g, pm_bound *b)
{
    pm_diag d;
    pm_diag_clear(&d);
    if (pm_bound_compute(g, NULL, b, &d) == PM_OK)
        return true;
    pm_bound_free(b);
    return false;
}

/* Mark the groups that the loop rule keeps on one core. */
static int ls_loop_parts(ls_ctx *x, const pm_sched_opts *o)
{
    const pm_graph *g = x->g;
    uint32_t ncomp = 0, *comp = malloc(((size_t)g->nnodes + 1) * sizeof *comp);
    uint32_t *start = NULL, *members = NULL;
    bool *cyclic = NULL;
    int rc = comp ? sched_scc(g, comp, &ncomp, &cyclic) : PM_ENOMEM;
    if (rc == PM_OK) {
        start = calloc((size_t)ncomp + 2, sizeof *start);
        members = malloc(((size_t)g->nnodes + 1) * sizeof *members);
        x->cl_core = malloc(((size_t)ncomp + 1) * sizeof *x->cl_core);
        x->cl_class_ok = calloc(((size_t)ncomp + 1) * g->platform.nclasses, 1);
        x->cl_left = calloc((size_t)ncomp + 1, sizeof *x->cl_left);
        x->load = calloc((size_t)x->P + 1, sizeof *x->load);
        x->pend = calloc((size_t)x->P + 1, sizeof *x->pend);
        x->via = calloc((size_t)g->nnodes + 1, sizeof *x->via);
        x->first = malloc(((size_t)x->P + 1) * sizeof *x->first);
        rc = start && members && x->cl_core && x->cl_class_ok && x->cl_left && x->load &&
                     x->pend && x->via && x->first
                 ? PM_OK
                 : PM_ENOMEM;
    }
    if (rc == PM_OK) {
        pm_bound b = {0};
        bool have = ls_bound(g, &b);
        ls_group(g, comp, ncomp, start, members);
        for (uint32_t c = 0; c < x->P; c++)
            x->first[c] = PM_MAX_VALUE;
        x->cap = ls_target(x, o, have ? &b : NULL);
        ls_apply_rule(x, comp, start, members, cyclic, ncomp, have ? &b : NULL, x->cap);
        if (have)
            pm_bound_free(&b);
    }
    free(comp);
    free(start);
    free(members);
    free(cyclic);
    return rc;
}

/* ---- Graham's greedy mode ----------------------------------------------- */

typedef struct gr_state {
    uint32_t *ready;   /* ready nodes sorted by list position */
    uint32_t nready;
    const uint32_t *pos;
    int64_t *core_until;
} gr_state;

/* Running nodes by end time, then id. */
static bool gr_less(const void *ctx, uint32_t a, uint32_t b)
{
    const ls_ctx *x = ctx;
    if (x->slot[a].end != x->slot[b].end)
        return x->slot[a].end < x->slot[b].end;
    return a < b;
}

static void gr_add_ready(gr_state *s, uint32_t v)
{
    uint32_t i = s->nready++;
    while (i > 0 && s->pos[s->ready[i - 1]] > s->pos[v]) {
        s->ready[i] = s->ready[i - 1];
        i--;
    }
    s->ready[i] = v;
}

/* Every idle core, lowest index first, takes the first ready node it may run. */
static void gr_assign(ls_ctx *x, gr_state *s, sched_heap *run, int64_t t)
{
    for (uint32_t c = 0; c < x->P && s->nready > 0; c++) {
        if (s->core_until[c] > t)
            continue;
        for (uint32_t i = 0; i < s->nready; i++) {
            uint32_t v = s->ready[i];
            if (!sched_allowed(x->g, v, c))
                continue;
            memmove(&s->ready[i], &s->ready[i + 1], (s->nready - i - 1) * sizeof *s->ready);
            s->nready--;
            int64_t w = pm_graph_cycles_on(x->g, v, x->g->platform.core_class[c]);
            x->slot[v] = (pm_slot){c, t, sched_add(t, w, &x->overflow)};
            x->seq[v] = x->nplaced++;
            s->core_until[c] = x->slot[v].end;
            sched_heap_push(run, v);
            break;
        }
    }
}

static void gr_finish_until(ls_ctx *x, gr_state *s, sched_heap *run, int64_t t)
{
    while (run->n > 0 && x->slot[run->v[0]].end <= t) {
        uint32_t u = sched_heap_pop(run);
        for (uint32_t i = x->a.out_off[u]; i < x->a.out_off[u + 1]; i++)
            if (--x->deps[x->a.out_dst[i]] == 0)
                gr_add_ready(s, x->a.out_dst[i]);
    }
}

static int gr_run(ls_ctx *x, gr_state *s)
{
    const pm_graph *g = x->g;
    sched_heap run;
    if (sched_heap_init(&run, g->nnodes, gr_less, x) != PM_OK)
        return PM_ENOMEM;
    ls_count_deps(x);
    for (uint32_t v = 0; v < g->nnodes; v++)
        if (x->deps[v] == 0)
            gr_add_ready(s, v);
    int64_t t = 0;
    int rc = PM_OK;
    for (;;) {
        gr_finish_until(x, s, &run, t);
        gr_assign(x, s, &run, t);
        if (run.n == 0) {
            if (x->nplaced < g->nnodes)
                rc = PM_EPLATFORM; /* unreachable: every node has a core */
            break;
        }
        t = ls_max(t, x->slot[run.v[0]].end);
    }
    sched_heap_free(&run);
    return rc;
}

/* The priority list: given (checked to be a permutation) or by rank. */
static int gr_positions(ls_ctx *x, const pm_sched_opts *o, uint32_t *pos, pm_diag *diag)
{
    uint32_t n = x->g->nnodes;
    for (uint32_t v = 0; v < n; v++)
        pos[v] = PM_NONE;
    if (!o->priority) {
        sched_heap h;
        if (sched_heap_init(&h, n, ls_less, x) != PM_OK)
            return PM_ENOMEM;
        for (uint32_t v = 0; v < n; v++)
            sched_heap_push(&h, v);
        for (uint32_t i = 0; i < n; i++)
            pos[sched_heap_pop(&h)] = i;
        sched_heap_free(&h);
        return PM_OK;
    }
    for (uint32_t i = 0; i < n; i++) {
        uint32_t v = o->priority[i];
        if (v >= n || pos[v] != PM_NONE) {
            pm_diag_set(diag, x->g->file, 0, 0,
                        "the priority list must name every node exactly once");
            return PM_EINVAL;
        }
        pos[v] = i;
    }
    return PM_OK;
}

static int ls_greedy(ls_ctx *x, const pm_sched_opts *o, pm_diag *diag)
{
    size_t n = (size_t)x->g->nnodes + 1;
    gr_state s = {0};
    uint32_t *pos = malloc(n * sizeof *pos);
    s.ready = malloc(n * sizeof *s.ready);
    s.core_until = calloc((size_t)x->P + 1, sizeof *s.core_until);
    int rc = pos && s.ready && s.core_until ? PM_OK : PM_ENOMEM;
    if (rc == PM_OK)
        rc = gr_positions(x, o, pos, diag);
    s.pos = pos;
    if (rc == PM_OK)
        rc = gr_run(x, &s);
    free(pos);
    free(s.ready);
    free(s.core_until);
    return rc;
}

/* ---- the map ------------------------------------------------------------ */

typedef struct ls_key {
    uint32_t core, seq, v;
    int64_t start, end;
} ls_key;

static int ls_key_cmp(const void *pa, const void *pb)
{
    const ls_key *a = pa, *b = pb;
    if (a->core != b->core)
        return a->core < b->core ? -1 : 1;
    if (a->start != b->start)
        return a->start < b->start ? -1 : 1;
    if (a->end != b->end)
        return a->end < b->end ? -1 : 1;
    return a->seq < b->seq ? -1 : (a->seq > b->seq);
}

/* Per core, nodes by (start, end, placement order): a total order that
 * agrees with every zero-delay edge, so the map can be timed. */
/* Placement order is nearly start order on each core: insertion sort,
 * falling back to qsort when the input turns out to be far from sorted. */
static void ls_sort_core(ls_key *k, size_t len)
{
    size_t moves = 0, budget = 4 * len + 64;
    for (size_t i = 1; i < len; i++) {
        ls_key t = k[i];
        size_t j = i;
        while (j > 0 && ls_key_cmp(&k[j - 1], &t) > 0) {
            k[j] = k[j - 1];
            j--;
            if (++moves > budget) {
                k[j] = t;
                qsort(k, len, sizeof *k, ls_key_cmp);
                return;
            }
        }
        k[j] = t;
    }
}

/* Counting sort by core in placement order, then each core by time. */
static void ls_sort_keys(const ls_ctx *x, ls_key *k, uint32_t *at, const uint32_t *counts)
{
    uint32_t n = x->g->nnodes;
    for (uint32_t c = 0, sum = 0; c < x->P; sum += counts[c], c++)
        at[c] = sum;
    for (uint32_t i = 0; i < n; i++) {
        uint32_t v = x->byseq[i];
        const pm_slot *sl = &x->slot[v];
        k[at[sl->core]++] = (ls_key){sl->core, i, v, sl->start, sl->end};
    }
    for (uint32_t c = 0, sum = 0; c < x->P; sum += counts[c], c++)
        ls_sort_core(k + sum, counts[c]);
}

static int ls_make_map(ls_ctx *x, pm_map **out)
{
    uint32_t n = x->g->nnodes, P = x->P;
    ls_key *k = malloc(((size_t)n + 1) * sizeof *k);
    uint32_t *flat = malloc(((size_t)n + 1) * sizeof *flat);
    uint32_t *counts = calloc((size_t)P + 1, sizeof *counts);
    uint32_t *at = calloc((size_t)P + 1, sizeof *at);
    const uint32_t **lists = calloc((size_t)P + 1, sizeof *lists);
    x->byseq = malloc(((size_t)n + 1) * sizeof *x->byseq);
    int rc = PM_ENOMEM;
    if (k && flat && counts && at && lists && x->byseq) {
        for (uint32_t v = 0; v < n; v++) {
            x->byseq[x->seq[v]] = v;
            counts[x->slot[v].core]++;
        }
        ls_sort_keys(x, k, at, counts);
        for (uint32_t v = 0; v < n; v++)
            flat[v] = k[v].v;
        for (uint32_t c = 0, sum = 0; c < P; sum += counts[c], c++)
            lists[c] = flat + sum;
        rc = pm_map_create(P, n, lists, counts, out);
    }
    free(k);
    free(flat);
    free(counts);
    free(at);
    free(lists);
    return rc;
}

/* ---- the schedule --------------------------------------------------------- */

/* Without send/receive occupancy and without a bus, timing the map gives
 * exactly the times the insertion scheduler found: a node that did not
 * start as soon as its data were ready starts at the end of the node
 * before it on its core, which is the map rule.  (Greedy mode ignores
 * transfer times while choosing, so it is always re-timed.)  Skipping the
 * second pass saves a third of the time on large graphs; the tests check
 * the identity on random graphs through map round trips. */
static bool ls_direct_ok(const pm_graph *g, const pm_sched_opts *o)
{
    const pm_platform *p = &g->platform;
    return !o->greedy && p->comm.send == 0 && p->comm.recv == 0 && p->interconnect == PM_P2P;
}

static int ls_direct(ls_ctx *x, pm_schedule **out)
{
    const pm_graph *g = x->g;
    pm_schedule *s = sched_schedule_alloc(g);
    size_t nt = 0;
    for (uint32_t e = 0; s && e < g->nedges; e++)
        nt += g->edges[e].delay == 0 && x->slot[g->edges[e].src].core != x->slot[g->edges[e].dst].core;
    if (s)
        s->transfers = calloc(nt + 1, sizeof *s->transfers);
    if (!s || !s->transfers) {
        pm_schedule_destroy(s);
        return PM_ENOMEM;
    }
    for (uint32_t v = 0; v < g->nnodes; v++) {
        s->slots[v] = x->slot[v];
        s->busy[x->slot[v].core] += x->slot[v].end - x->slot[v].start;
        s->makespan = ls_max(s->makespan, x->slot[v].end);
    }
    for (uint32_t e = 0; e < g->nedges; e++) {
        const pm_edge *ed = &g->edges[e];
        const pm_slot *u = &x->slot[ed->src], *w = &x->slot[ed->dst];
        if (ed->delay != 0 || u->core == w->core)
            continue;
        int64_t cost = sched_edge_cost(g, e, &x->overflow), at = u->end + cost;
        s->transfers[s->ntransfers++] = (pm_transfer){e, ed->src, ed->dst, u->core, w->core,
                                                     u->end, u->end, u->end, at, at, at, cost};
    }
    *out = s;
    return PM_OK;
}

/* ---- entry point -------------------------------------------------------- */

static void ls_free(ls_ctx *x)
{
    free(x->rank);
    free(x->lanes);
    free(x->slot);
    free(x->seq);
    free(x->byseq);
    free(x->deps);
    free(x->cluster);
    free(x->cl_core);
    free(x->cl_class_ok);
    free(x->arr);
    free(x->mark);
    free(x->nsent);
    free(x->load);
    free(x->pend);
    free(x->cl_left);
    free(x->via);
    free(x->first);
    sched_adj_free(&x->a);
}

static int ls_alloc(ls_ctx *x, const pm_graph *g)
{
    size_t n = (size_t)g->nnodes + 1, p = (size_t)g->platform.ncores + 1;
    x->g = g;
    if (sched_adj_build(g, &x->a, &x->overflow) != PM_OK)
        return PM_ENOMEM;
    uint32_t maxin = x->a.maxin;
    x->P = g->platform.ncores;
    x->rank = malloc(n * sizeof *x->rank);
    x->lanes = calloc(p, sizeof *x->lanes);
    x->slot = calloc(n, sizeof *x->slot);
    x->seq = calloc(n, sizeof *x->seq);
    x->deps = calloc(n, sizeof *x->deps);
    x->cluster = malloc(n * sizeof *x->cluster);
    x->arr = malloc(((size_t)maxin + 1) * sizeof *x->arr);
    x->mark = calloc(p, sizeof *x->mark);
    x->nsent = calloc(n, sizeof *x->nsent);
    if (!x->rank || !x->lanes || !x->slot || !x->seq || !x->deps || !x->cluster ||
        !x->arr || !x->mark || !x->nsent)
        return PM_ENOMEM;
    for (uint32_t v = 0; v < g->nnodes; v++)
        x->cluster[v] = PM_NONE;
    return PM_OK;
}

/* Without a delayed edge there is no loop (zero-delay loops are refused). */
static bool ls_has_delay(const pm_graph *g)
{
    for (uint32_t e = 0; e < g->nedges; e++)
        if (g->edges[e].delay != 0)
            return true;
    return false;
}

static int ls_decide(ls_ctx *x, const pm_sched_opts *o, const uint32_t *topo, pm_diag *diag)
{
    int rc = PM_OK;
    ls_ranks(x, topo);
    if (rc == PM_OK && !o->greedy && !o->loop_blind && ls_has_delay(x->g))
        rc = ls_loop_parts(x, o);
    if (rc == PM_OK)
        rc = o->greedy ? ls_greedy(x, o, diag) : ls_heft(x);
    if (rc == PM_OK && x->overflow) {
        pm_diag_set(diag, x->g->file, 0, 0, "schedule times exceed 62 bits");
        rc = PM_ERANGE;
    }
    return rc;
}

int pm_sched_list(const pm_graph *g, const pm_sched_opts *opts, pm_schedule **out,
                  pm_map **map, pm_diag *diag)
{
    static const pm_sched_opts defaults = {0};
    const pm_sched_opts *o = opts ? opts : &defaults;
    if (out)
        *out = NULL;
    if (map)
        *map = NULL;
    uint32_t *topo = g && g->finalized ? malloc(((size_t)g->nnodes + 1) * sizeof *topo) : NULL;
    if (g && g->finalized && !topo)
        return PM_ENOMEM;
    int rc = sched_check_graph(g, topo, diag);
    ls_ctx x = {0};
    pm_map *m = NULL;
    if (rc == PM_OK)
        rc = ls_alloc(&x, g);
    if (rc == PM_OK)
        rc = ls_decide(&x, o, topo, diag);
    if (rc == PM_OK)
        rc = ls_make_map(&x, &m);
    free(topo);
    if (rc == PM_OK && out && ls_direct_ok(g, o))
        rc = ls_direct(&x, out);
    else if (rc == PM_OK && out)
        rc = sched_time_map(g, m, &x.a, out, diag);
    ls_free(&x);
    if (rc == PM_OK && map)
        *map = m;
    else
        pm_map_destroy(m);
    return rc;
}
