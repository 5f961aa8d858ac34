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

typedef struct tm_ctx {
    const pm_graph *g;
    const pm_map *m;
    pm_schedule *s;
    sched_lane *lanes;     /* one per core */
    sched_lane bus;
    int64_t *est;          /* earliest possible start, set when ready */
    uint32_t *deps;        /* producers + core predecessor not yet timed */
    uint32_t *next;        /* next node on the same core, or PM_NONE */
    int64_t *last_end;     /* per core: end of the last timed node */
    uint32_t *tr_of_edge;  /* transfer index per edge, or PM_NONE */
    bool overflow;
} tm_ctx;

void pm_schedule_destroy(pm_schedule *s)
{
    if (!s)
        return;
    free(s->slots);
    free(s->busy);
    free(s->transfers);
    free(s);
}

/* Ready nodes by earliest start, then core, then node id. */
static bool tm_less(const void *ctx, uint32_t a, uint32_t b)
{
    const tm_ctx *t = ctx;
    if (t->est[a] != t->est[b])
        return t->est[a] < t->est[b];
    uint32_t ca = t->m->core_of[a], cb = t->m->core_of[b];
    if (ca != cb)
        return ca < cb;
    return a < b;
}

static int64_t tm_max(int64_t a, int64_t b)
{
    return a > b ? a : b;
}

static void tm_push(tm_ctx *t, sched_heap *h, uint32_t v)
{
    const pm_graph *g = t->g;
    int64_t r = t->last_end[t->m->core_of[v]];
    for (uint32_t i = g->in_off[v]; i < g->in_off[v + 1]; i++) {
        const pm_edge *e = &g->edges[g->in_edge[i]];
        if (e->delay == 0)
            r = tm_max(r, t->s->slots[e->src].end);
    }
    t->est[v] = r;
    sched_heap_push(h, v);
}

/* Receives of v's cross-core inputs; returns when all inputs are ready. */
static int64_t tm_inputs(tm_ctx *t, uint32_t v, uint32_t c)
{
    const pm_graph *g = t->g;
    int64_t r = t->last_end[c], recv = g->platform.comm.recv;
    for (uint32_t i = g->in_off[v]; i < g->in_off[v + 1]; i++) {
        uint32_t ei = g->in_edge[i];
        const pm_edge *e = &g->edges[ei];
        if (e->delay != 0)
            continue;
        if (t->m->core_of[e->src] == c) {
            r = tm_max(r, t->s->slots[e->src].end);
            continue;
        }
        pm_transfer *tr = &t->s->transfers[t->tr_of_edge[ei]];
        int64_t rs = sched_lane_fit_occ(&t->lanes[c], tr->arrival, recv);
        sched_lane_reserve(&t->lanes[c], rs, recv);
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
    for (uint32_t i = g->out_off[v]; i < g->out_off[v + 1]; i++) {
        uint32_t ei = g->out_edge[i];
        if (t->tr_of_edge[ei] == PM_NONE)
            continue;
        pm_transfer *tr = &t->s->transfers[t->tr_of_edge[ei]];
        tr->send_start = sched_lane_fit_occ(&t->lanes[c], end, send);
        sched_lane_reserve(&t->lanes[c], tr->send_start, send);
        tr->send_end = sched_add(tr->send_start, send, &t->overflow);
        tr->wire_start = tr->send_end;
        if (g->platform.interconnect == PM_BUS && tr->cost > 0) {
            tr->wire_start = sched_lane_fit(&t->bus, tr->send_end, tr->cost);
            sched_lane_reserve(&t->bus, tr->wire_start, tr->cost);
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

static void tm_release(tm_ctx *t, sched_heap *h, uint32_t v)
{
    const pm_graph *g = t->g;
    for (uint32_t i = g->out_off[v]; i < g->out_off[v + 1]; i++) {
        const pm_edge *e = &g->edges[g->out_edge[i]];
        if (e->delay == 0 && --t->deps[e->dst] == 0)
            tm_push(t, h, e->dst);
    }
    uint32_t nx = t->next[v];
    if (nx != PM_NONE && --t->deps[nx] == 0)
        tm_push(t, h, nx);
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
    sched_heap h;
    if (sched_heap_init(&h, g->nnodes, tm_less, t) != PM_OK)
        return PM_ENOMEM;
    int rc = tm_setup(t);
    for (uint32_t v = 0; rc == PM_OK && v < g->nnodes; v++)
        if (t->deps[v] == 0)
            tm_push(t, &h, v);
    uint32_t done = 0;
    while (rc == PM_OK && h.n > 0) {
        uint32_t v = sched_heap_pop(&h);
        tm_node(t, v);
        tm_release(t, &h, v);
        done++;
    }
    sched_heap_free(&h);
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

static pm_schedule *tm_alloc_schedule(const pm_graph *g)
{
    pm_schedule *s = calloc(1, sizeof *s);
    if (!s)
        return NULL;
    s->nnodes = g->nnodes;
    s->ncores = g->platform.ncores;
    s->slots = calloc((size_t)g->nnodes + 1, sizeof *s->slots);
    s->busy = calloc((size_t)s->ncores + 1, sizeof *s->busy);
    if (!s->slots || !s->busy) {
        pm_schedule_destroy(s);
        return NULL;
    }
    return s;
}

int pm_sched_from_map(const pm_graph *g, const pm_map *m, pm_schedule **out,
                      pm_diag *diag)
{
    *out = NULL;
    int rc = sched_check_graph(g, diag);
    if (rc == PM_OK)
        rc = pm_map_check(m, g, diag);
    if (rc != PM_OK)
        return rc;
    size_t n = (size_t)g->nnodes + 1, p = (size_t)g->platform.ncores + 1;
    tm_ctx t = {.g = g, .m = m};
    t.s = tm_alloc_schedule(g);
    t.lanes = calloc(p, sizeof *t.lanes);
    t.est = malloc(n * sizeof *t.est);
    t.deps = calloc(n, sizeof *t.deps);
    t.next = malloc(n * sizeof *t.next);
    t.last_end = calloc(p, sizeof *t.last_end);
    t.tr_of_edge = malloc(((size_t)g->nedges + 1) * sizeof *t.tr_of_edge);
    rc = PM_ENOMEM;
    if (t.s && t.lanes && t.est && t.deps && t.next && t.last_end && t.tr_of_edge) {
        for (uint32_t v = 0; v < g->nnodes; v++)
            t.next[v] = PM_NONE;
        rc = tm_run(&t, diag);
    }
    if (rc == PM_OK)
        *out = t.s;
    else
        pm_schedule_destroy(t.s);
    free(t.lanes);
    free(t.est);
    free(t.deps);
    free(t.next);
    free(t.last_end);
    free(t.tr_of_edge);
    return rc;
}
