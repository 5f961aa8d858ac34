/*
 * schedtime.c - timing of a map: given which core runs each node and in
 * what order, compute one iteration's slots and transfers by the rule of
 * sched.h (sends right after the producer, wire or bus, receive before the
 * consumer, insertion of sends/receives into idle time).  The list scheduler
 * and hand maps both end here.  It does not choose cores or orders.
 */
#include "sched_internal.h"

#include <stdlib.h>
#include <string.h>

/* A ready node with its key inline: earliest start, core, id. */
typedef struct tm_item {
    int64_t est;
    uint32_t core, v;
} tm_item;

typedef struct tm_ctx {
    const pm_graph *g;
    const sched_adj *a;    /* zero-delay edges, compact */
    sched_adj own;         /* built here when the caller has none */
    tm_item *heap;
    uint32_t nheap;
    const pm_map *m;
    pm_schedule *s;
    sched_lane *lanes;     /* one per core */
    sched_lane bus;
    uint32_t *deps;        /* producers + core predecessor not yet timed */
    uint32_t *next;        /* next node on the same core, or PM_NONE */
    int64_t *last_end;     /* per core: end of the last timed node */
    uint32_t *tr_of_edge;  /* transfer index per edge, or PM_NONE */
    bool overflow;
} tm_ctx;

void pm_sched_destroy(pm_schedule *s)
{
    if (!s)
        return;
    free(s->slots);
    free(s->busy);
    free(s->transfers);
    free(s);
}

/* Ready nodes by earliest start, then core, then node id. */
static bool tm_before(tm_item a, tm_item b)
{
    if (a.est != b.est)
        return a.est < b.est;
    return a.core != b.core ? a.core < b.core : a.v < b.v;
}

static void tm_heap_push(tm_ctx *t, tm_item it)
{
    uint32_t i = t->nheap++;
    while (i > 0 && tm_before(it, t->heap[(i - 1) / 2])) {
        t->heap[i] = t->heap[(i - 1) / 2];
        i = (i - 1) / 2;
    }
    t->heap[i] = it;
}

static uint32_t tm_heap_pop(tm_ctx *t)
{
    tm_item *h = t->heap, last = h[--t->nheap];
    uint32_t top = h[0].v, i = 0, n = t->nheap;
    for (;;) {
        uint32_t c = 2 * i + 1;
        if (c >= n)
            break;
        if (c + 1 < n && tm_before(h[c + 1], h[c]))
            c++;
        if (!tm_before(h[c], last))
            break;
        h[i] = h[c];
        i = c;
    }
    if (n > 0)
        h[i] = last;
    return top;
}

static int64_t tm_max(int64_t a, int64_t b)
{
    return a > b ? a : b;
}

static void tm_push(tm_ctx *t, uint32_t v)
{
    uint32_t c = t->m->core_of[v];
    int64_t r = t->last_end[c];
    for (uint32_t i = t->a->in_off[v]; i < t->a->in_off[v + 1]; i++)
        r = tm_max(r, t->s->slots[t->a->in_src[i]].end);
    tm_heap_push(t, (tm_item){r, c, v});
}

/* Receives of v's cross-core inputs; returns when all inputs are ready. */
static int64_t tm_inputs(tm_ctx *t, uint32_t v, uint32_t c)
{
    const pm_graph *g = t->g;
    int64_t r = t->last_end[c], recv = g->platform.comm.recv;
    for (uint32_t i = t->a->in_off[v]; i < t->a->in_off[v + 1]; i++) {
        const pm_slot *u = &t->s->slots[t->a->in_src[i]];
        if (u->core == c) {
            r = tm_max(r, u->end);
            continue;
        }
        pm_transfer *tr = &t->s->transfers[t->tr_of_edge[t->a->in_edge[i]]];
        int64_t rs = sched_lane_fit_occ(&t->lanes[c], tr->arrival, recv);
        sched_lane_reserve_occ(&t->lanes[c], rs, recv);
        tr->recv_start = rs;
        tr->recv_end = sched_add(rs, recv, &t->overflow);
        r = tm_max(r, tr->recv_end);
    }
    return r;
}

/* Sends of v's cross-core outputs, right after v, then wire or bus. */
static void tm_outputs(tm_ctx *t, uint32_t v, uint32_t c)
{
    const pm_graph *g = t->g;
    int64_t send = g->platform.comm.send, end = t->s->slots[v].end;
    for (uint32_t i = t->a->out_off[v]; i < t->a->out_off[v + 1]; i++) {
        uint32_t ei = t->a->out_edge[i];
        if (t->tr_of_edge[ei] == PM_NONE)
            continue;
        pm_transfer *tr = &t->s->transfers[t->tr_of_edge[ei]];
        tr->send_start = sched_lane_fit_occ(&t->lanes[c], end, send);
        sched_lane_reserve_occ(&t->lanes[c], tr->send_start, send);
        tr->send_end = sched_add(tr->send_start, send, &t->overflow);
        tr->wire_start = tr->send_end;
        if (g->platform.interconnect == PM_BUS && tr->cost > 0) {
            tr->wire_start = sched_lane_fit(&t->bus, tr->send_end, tr->cost);
            sched_lane_reserve_occ(&t->bus, tr->wire_start, tr->cost);
        }
        tr->arrival = sched_add(tr->wire_start, tr->cost, &t->overflow);
    }
}

static void tm_node(tm_ctx *t, uint32_t v)
{
    uint32_t c = t->m->core_of[v];
    int64_t w = pm_graph_cycles_on(t->g, v, t->g->platform.core_class[c]);
    int64_t r = tm_inputs(t, v, c);
    int64_t s = sched_lane_fit(&t->lanes[c], r, w);
    sched_lane_reserve(&t->lanes[c], s, w);
    t->s->slots[v] = (pm_slot){c, s, sched_add(s, w, &t->overflow)};
    t->last_end[c] = t->s->slots[v].end;
    t->s->busy[c] += w;
    tm_outputs(t, v, c);
}

static void tm_release(tm_ctx *t, uint32_t v)
{
    for (uint32_t i = t->a->out_off[v]; i < t->a->out_off[v + 1]; i++)
        if (--t->deps[t->a->out_dst[i]] == 0)
            tm_push(t, t->a->out_dst[i]);
    uint32_t nx = t->next[v];
    if (nx != PM_NONE && --t->deps[nx] == 0)
        tm_push(t, nx);
}

/* Transfers (one per cross-core zero-delay edge, by edge index) and the
 * dependency counts. */
static int tm_setup(tm_ctx *t)
{
    const pm_graph *g = t->g;
    const pm_map *m = t->m;
    size_t nt = 0;
    for (uint32_t e = 0; e < g->nedges; e++) {
        const pm_edge *ed = &g->edges[e];
        bool cross = ed->delay == 0 && m->core_of[ed->src] != m->core_of[ed->dst];
        t->tr_of_edge[e] = cross ? (uint32_t)nt++ : PM_NONE;
        if (ed->delay == 0)
            t->deps[ed->dst]++;
    }
    t->s->transfers = calloc(nt + 1, sizeof *t->s->transfers);
    if (!t->s->transfers)
        return PM_ENOMEM;
    t->s->ntransfers = nt;
    for (uint32_t e = 0; e < g->nedges; e++) {
        if (t->tr_of_edge[e] == PM_NONE)
            continue;
        const pm_edge *ed = &g->edges[e];
        t->s->transfers[t->tr_of_edge[e]] = (pm_transfer){
            .edge = e, .src = ed->src, .dst = ed->dst, .from_core = m->core_of[ed->src],
            .to_core = m->core_of[ed->dst], .cost = sched_edge_cost(g, e, &t->overflow)};
    }
    for (uint32_t c = 0; c < m->ncores; c++)
        for (uint32_t i = m->off[c]; i + 1 < m->off[c + 1]; i++) {
            t->next[m->order[i]] = m->order[i + 1];
            t->deps[m->order[i + 1]]++;
        }
    return PM_OK;
}

static void tm_finish(tm_ctx *t)
{
    pm_schedule *s = t->s;
    const pm_comm *cm = &t->g->platform.comm;
    for (uint32_t v = 0; v < s->nnodes; v++)
        s->makespan = tm_max(s->makespan, s->slots[v].end);
    for (size_t i = 0; i < s->ntransfers; i++) {
        s->busy[s->transfers[i].from_core] += cm->send;
        s->busy[s->transfers[i].to_core] += cm->recv;
    }
}

static int tm_run(tm_ctx *t, pm_diag *diag)
{
    const pm_graph *g = t->g;
    int rc = tm_setup(t);
    for (uint32_t v = 0; rc == PM_OK && v < g->nnodes; v++)
        if (t->deps[v] == 0)
            tm_push(t, v);
    uint32_t done = 0;
    while (rc == PM_OK && t->nheap > 0) {
        uint32_t v = tm_heap_pop(t);
        tm_node(t, v);
        tm_release(t, v);
        done++;
    }
    if (rc == PM_OK && done < g->nnodes) {
        uint32_t v = 0;
        while (t->deps[v] == 0)
            v++;
        pm_diag_set(diag, g->file, 0, 0,
                    "node '%s' can never start: the map's order on core %u contradicts "
                    "the graph's edges without delay",
                    pm_graph_node_name(g, v), t->m->core_of[v]);
        rc = PM_EDEADLOCK;
    }
    if (rc == PM_OK && t->overflow) {
        pm_diag_set(diag, g->file, 0, 0, "schedule times exceed 62 bits");
        rc = PM_ERANGE;
    }
    if (rc == PM_OK)
        tm_finish(t);
    return rc;
}

pm_schedule *sched_schedule_alloc(const pm_graph *g)
{
    pm_schedule *s = calloc(1, sizeof *s);
    if (!s)
        return NULL;
    s->nnodes = g->nnodes;
    s->ncores = g->platform.ncores;
    s->slots = calloc((size_t)g->nnodes + 1, sizeof *s->slots);
    s->busy = calloc((size_t)s->ncores + 1, sizeof *s->busy);
    if (!s->slots || !s->busy) {
        pm_sched_destroy(s);
        return NULL;
    }
    return s;
}

int pm_sched_from_map(const pm_graph *g, const pm_map *m, pm_schedule **out,
                      pm_diag *diag)
{
    *out = NULL;
    int rc = sched_check_graph(g, NULL, diag);
    if (rc == PM_OK)
        rc = pm_map_check(m, g, diag);
    return rc == PM_OK ? sched_time_map(g, m, NULL, out, diag) : rc;
}

int sched_time_map(const pm_graph *g, const pm_map *m, const sched_adj *adj,
                   pm_schedule **out, pm_diag *diag)
{
    *out = NULL;
    int rc;
    size_t n = (size_t)g->nnodes + 1, p = (size_t)g->platform.ncores + 1;
    tm_ctx t = {.g = g, .m = m};
    t.s = sched_schedule_alloc(g);
    t.lanes = calloc(p, sizeof *t.lanes);
    t.heap = malloc(n * sizeof *t.heap);
    t.deps = calloc(n, sizeof *t.deps);
    t.next = malloc(n * sizeof *t.next);
    t.last_end = calloc(p, sizeof *t.last_end);
    t.tr_of_edge = malloc(((size_t)g->nedges + 1) * sizeof *t.tr_of_edge);
    rc = PM_ENOMEM;
    t.a = adj ? adj : &t.own;
    if (t.s && t.lanes && t.heap && t.deps && t.next && t.last_end && t.tr_of_edge &&
        (adj || sched_adj_build(g, &t.own, &t.overflow) == PM_OK)) {
        for (uint32_t v = 0; v < g->nnodes; v++)
            t.next[v] = PM_NONE;
        rc = tm_run(&t, diag);
    }
    if (rc == PM_OK)
        *out = t.s;
    else
        pm_sched_destroy(t.s);
    free(t.lanes);
    free(t.heap);
    sched_adj_free(&t.own);
    free(t.deps);
    free(t.next);
    free(t.last_end);
    free(t.tr_of_edge);
    return rc;
}
