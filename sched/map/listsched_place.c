/*
 * listsched_place.c - the list scheduler's placement loops: which core
 * each node goes to, and when it would start there.
 *
 * Default mode (ls_heft): nodes leave a ready heap by upward rank; each
 * goes to the core where it would finish first, with insertion into
 * remembered idle gaps and estimates of its sends, receives and bus
 * transfers; under the loop rule's period guard, cores that would push a
 * core's work past the floor are tried last.  Greedy mode (ls_greedy):
 * Graham's list scheduling in time order, transfers ignored.  Not here:
 * the ranks, the map and the schedule built from the placements
 * (listsched.c), which nodes the loop rule groups and its floor
 * (listsched_loops.c).
 */
#include "sched_internal.h"

#include <stdlib.h>
#include <string.h>

/* ---- earliest-finish placement with insertion ------------------------------ */

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

int ls_heft(ls_ctx *x)
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

/* ---- Graham's greedy mode ----------------------------------------------- */

/* Ready nodes: larger rank first, then smaller id. */
static bool ls_less(const void *ctx, uint32_t a, uint32_t b)
{
    const ls_ctx *x = ctx;
    if (x->rank[a] != x->rank[b])
        return x->rank[a] > x->rank[b];
    return a < b;
}

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

int ls_greedy(ls_ctx *x, const pm_sched_opts *o, pm_diag *diag)
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
