/*
 * sweep_limit.c - name what limits one point of a sweep, with evidence.
 *
 * Every kind is a quantity the period can never be below for the map
 * simulated, compared exactly with the achieved period T:
 *   loop     T is the iteration bound, or T is the ratio of a loop of the
 *            graph counting the transfers the map put on it (the
 *            simulator's critical chain is made of that loop's data edges
 *            only: a cycle of the inter-processor communication graph,
 *            Sriram & Bhattacharyya 2000);
 *   node     T is the largest node's time on its core's class;
 *   cores    T is the busiest core's occupancy (recv + run + send cycles
 *            per iteration);
 *   bus      T is the bus's occupancy (every transfer of one iteration);
 *   mapping  none of these: the map made a cycle of core orders and
 *            transfers of its own (the critical chain is the evidence).
 * Ties go in that order.  What it does not do: decide anything from
 * floating point.
 */
#include "sweep_internal.h"

#include <stdlib.h>
#include <string.h>

void sweep_limit_free(pm_sweep_limit *l)
{
    if (!l)
        return;
    free(l->nodes);
    free(l->edges);
    free(l->hops);
    free(l->orders);
    memset(l, 0, sizeof *l);
}

static pm_limit_kind limit_kind(const pm_sweep_point *pt, bool graph_loop)
{
    const pm_floors *f = &pt->floors;
    pm_rat t = pt->period;
    if ((f->has_loop && pm_rat_cmp(t, f->loop) == 0) || graph_loop)
        return PM_LIMIT_LOOP;
    if (pm_rat_cmp(t, pm_rat_int(pt->largest_cycles)) == 0)
        return PM_LIMIT_NODE;
    if (pm_rat_cmp(t, pm_rat_int(pt->busiest)) == 0)
        return PM_LIMIT_CORES;
    if (pt->bus_busy > 0 && pm_rat_cmp(t, pm_rat_int(pt->bus_busy)) == 0)
        return PM_LIMIT_BUS;
    if (pm_rat_cmp(t, f->lower_bound) >= 0)
        return PM_LIMIT_MAPPING;
    /* below a floor: only an unsteady estimate can be; name the floor */
    return f->binding == PM_FLOOR_LOOP ? PM_LIMIT_LOOP
           : f->binding == PM_FLOOR_NODE ? PM_LIMIT_NODE : PM_LIMIT_CORES;
}

/* Walk the chain in time order: element i = r->critical[n - 1 - i]; the
 * link from element i to element i + 1 is described by the earlier one's
 * `via` (how it held the later one back). */
typedef struct limit_walk {
    const pm_graph *g;
    const pm_map *m;
    const pm_sim_result *r;
    uint32_t n;      /* elements, without the repeated first one when closed */
} limit_walk;

static const pm_sim_step *walk_elem(const limit_walk *w, uint32_t i)
{
    return &w->r->critical[w->r->ncritical - 1 - i];
}

static int64_t limit_cost(const pm_graph *g, uint32_t e)
{
    const pm_comm *c = &g->platform.comm;
    return c->latency + c->per_word * g->edges[e].words;
}

/* Record the link from element i to the next one. */
static void limit_link(const limit_walk *w, uint32_t i, pm_sweep_limit *l, uint32_t *data)
{
    const pm_sim_step *a = walk_elem(w, i), *b = walk_elem(w, i + 1);
    uint32_t e = a->via_edge;
    switch (a->via) {
    case PM_CAUSE_ORDER:
        l->orders[l->norders++] = (pm_sweep_order){a->core, a->node, b->node,
                                                   a->iteration < b->iteration};
        break;
    case PM_CAUSE_EDGE:
        if (b->node == PM_NONE) /* producer -> its bus transfer: counted at BUS */
            break;
        if (w->m->core_of[w->g->edges[e].src] != w->m->core_of[w->g->edges[e].dst])
            l->hops[l->nhops++] = (pm_sweep_hop){e, a->core, b->core, limit_cost(w->g, e),
                                                 false};
        data[1 + data[0]++] = e;
        break;
    case PM_CAUSE_BUS:
        l->hops[l->nhops++] = (pm_sweep_hop){e, w->m->core_of[w->g->edges[e].src],
                                             b->core, limit_cost(w->g, e), true};
        data[1 + data[0]++] = e;
        break;
    case PM_CAUSE_BUS_BUSY:
        l->nbus_waits++;
        break;
    default:
        break;
    }
}

static int limit_alloc(pm_sweep_limit *l, uint32_t n)
{
    size_t k = (size_t)n + 1;
    l->nodes = calloc(k, sizeof *l->nodes);
    l->hops = calloc(k, sizeof *l->hops);
    l->orders = calloc(k, sizeof *l->orders);
    return l->nodes && l->hops && l->orders ? PM_OK : PM_ENOMEM;
}

/* One core's order only, no transfer: the busiest core's load. */
static uint32_t limit_single_core(const limit_walk *w, const pm_sweep_limit *l)
{
    if (l->nhops || l->nbus_waits || l->norders == 0 || w->n == 0)
        return PM_NONE;
    uint32_t c = walk_elem(w, 0)->core;
    for (uint32_t i = 0; i < w->n; i++)
        if (walk_elem(w, i)->core != c)
            return PM_NONE;
    return c;
}

/* The chain as evidence; data[0] counts its data links, data[1..] their
 * edges in time order (a loop of the graph when they close the whole
 * chain). */
static int limit_from_chain(const limit_walk *w, pm_sweep_limit *l, uint32_t *data)
{
    int rc = limit_alloc(l, w->n);
    if (rc != PM_OK)
        return rc;
    for (uint32_t i = 0; i < w->n; i++) {
        const pm_sim_step *a = walk_elem(w, i);
        if (a->node != PM_NONE)
            l->nodes[l->nnodes++] = a->node;
        if (i + 1 < w->r->ncritical)
            limit_link(w, i, l, data);
    }
    l->cycles = w->r->critical_cycles;
    l->delays = (int64_t)w->r->critical_delays;
    l->exact = w->r->critical_matches;
    l->from_chain = true;
    l->single_core = limit_single_core(w, l);
    return PM_OK;
}

static int limit_copy_loop(pm_sweep_limit *l, const pm_loop *lp)
{
    sweep_limit_free(l);
    l->nodes = malloc(((size_t)lp->len + 1) * sizeof *l->nodes);
    l->edges = malloc(((size_t)lp->len + 1) * sizeof *l->edges);
    if (!l->nodes || !l->edges)
        return PM_ENOMEM;
    memcpy(l->nodes, lp->nodes, lp->len * sizeof *l->nodes);
    memcpy(l->edges, lp->edges, lp->len * sizeof *l->edges);
    l->nnodes = l->nedges = lp->len;
    l->cycles = lp->cycles;
    l->delays = lp->delays;
    l->exact = true;
    l->single_core = PM_NONE;
    return PM_OK;
}

/* The chain is exactly a loop of the graph: keep its nodes, edges and
 * the transfers the map put on it. */
static int limit_chain_loop(pm_sweep_limit *l, const uint32_t *data)
{
    l->edges = malloc(((size_t)data[0] + 1) * sizeof *l->edges);
    if (!l->edges)
        return PM_ENOMEM;
    memcpy(l->edges, data + 1, data[0] * sizeof *l->edges);
    l->nedges = data[0];
    free(l->orders), l->orders = NULL;
    return PM_OK;
}

static bool limit_pure_loop(const pm_sweep_limit *l, const uint32_t *data)
{
    return l->exact && l->norders == 0 && l->nbus_waits == 0 && data[0] == l->nnodes &&
           l->nnodes > 0;
}

static int limit_one(pm_sweep_limit *l, uint32_t v, int64_t cycles)
{
    l->nodes = malloc(sizeof *l->nodes);
    if (!l->nodes)
        return PM_ENOMEM;
    l->nodes[0] = v;
    l->nnodes = v == PM_NONE ? 0 : 1;
    l->cycles = cycles;
    l->delays = 1;
    l->exact = true;
    return PM_OK;
}

/* The busiest core's nodes in their order on it. */
static int limit_core(const pm_map *m, const pm_sweep_point *pt, pm_sweep_limit *l)
{
    uint32_t c = pt->busiest_core, n = m->off[c + 1] - m->off[c];
    l->nodes = malloc(((size_t)n + 1) * sizeof *l->nodes);
    if (!l->nodes)
        return PM_ENOMEM;
    memcpy(l->nodes, m->order + m->off[c], n * sizeof *l->nodes);
    l->nnodes = n;
    l->cycles = pt->busiest;
    l->delays = 1;
    l->exact = true;
    l->single_core = c;
    return PM_OK;
}

/* The evidence of the kind found: the chain for a mapping or a loop the
 * chain closes, the bound's loop, the node, the core, the bus. */
static int limit_evidence(const pm_map *m, const pm_bound *b, const pm_sweep_point *pt,
                          bool graph_loop, const uint32_t *data, pm_sweep_limit *l)
{
    pm_limit_kind k = l->kind;
    if (k == PM_LIMIT_MAPPING)
        return PM_OK;
    if (k == PM_LIMIT_LOOP && graph_loop)
        return limit_chain_loop(l, data);
    sweep_limit_free(l);
    l->kind = k;
    l->single_core = PM_NONE;
    switch (k) {
    case PM_LIMIT_LOOP:
        return b->ncritical > 0 ? limit_copy_loop(l, &b->critical[0]) : PM_OK;
    case PM_LIMIT_NODE:
        return limit_one(l, pt->largest, pt->largest_cycles);
    case PM_LIMIT_CORES:
        return limit_core(m, pt, l);
    case PM_LIMIT_BUS:
        return limit_one(l, PM_NONE, pt->bus_busy);
    case PM_LIMIT_MAPPING:
        break;
    }
    return PM_OK;
}

int sweep_limit_classify(const pm_graph *g, const pm_map *m, const pm_bound *b,
                         const pm_sim_result *r, pm_sweep_point *pt)
{
    pm_sweep_limit *l = &pt->limit;
    memset(l, 0, sizeof *l);
    l->single_core = PM_NONE;
    limit_walk w = {g, m, r, r->ncritical};
    if (r->critical_delays > 0 && w.n > 0)
        w.n--; /* the last element repeats the first, one loop earlier */
    uint32_t *data = calloc((size_t)w.n + 2, sizeof *data);
    int rc = data ? limit_from_chain(&w, l, data) : PM_ENOMEM;
    bool graph_loop = rc == PM_OK && limit_pure_loop(l, data);
    l->kind = limit_kind(pt, graph_loop);
    if (rc == PM_OK)
        rc = limit_evidence(m, b, pt, graph_loop, data, l);
    free(data);
    return rc;
}
