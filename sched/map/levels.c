/*
 * levels.c - graph facts the scheduler needs: input checks, the zero-delay
 * topological order and the strongly connected components (for loops),
 * both from sched/graph (order.c, scc.c), which cores may run a node, and
 * transfer costs.  No placement happens here.
 */
#include "sched_internal.h"
#include "pacemap/order.h"
#include "pacemap/scc.h"

#include <stdlib.h>
#include <string.h>

bool sched_allowed(const pm_graph *g, uint32_t v, uint32_t c)
{
    return pm_graph_can_run(g, v, c);
}

int64_t sched_edge_cost(const pm_graph *g, uint32_t e, bool *overflow)
{
    const pm_comm *c = &g->platform.comm;
    int64_t words = g->edges[e].words;
    int64_t pw;
    if (c->per_word != 0 && words > PM_MAX_VALUE / c->per_word) {
        *overflow = true;
        pw = PM_MAX_VALUE;
    } else {
        pw = c->per_word * words;
    }
    return sched_add(c->latency, pw, overflow);
}

/* Kahn's algorithm over zero-delay edges, first-in first-out: a fixed
 * order.  A loop is named as 'check' and 'bound' name it. */
int sched_topo(const pm_graph *g, uint32_t *order, pm_diag *diag)
{
    uint32_t count = 0;
    int rc = pm_order_zero_delay(g, PM_ORDER_FIFO, order, &count);
    if (rc == PM_OK && count < g->nnodes) {
        rc = pm_order_check_zero_delay(g, diag);
        if (rc == PM_OK) /* not reached: the sort found a loop */
            rc = PM_EZERODELAY;
    }
    return rc;
}

int sched_scc(const pm_graph *g, uint32_t *comp, uint32_t *ncomp, bool **cyclic)
{
    pm_scc s;
    int rc = pm_scc_compute(g, NULL, NULL, &s);
    *cyclic = rc == PM_OK ? calloc((size_t)s.ncomp + 1, sizeof **cyclic) : NULL;
    if (rc == PM_OK && !*cyclic)
        rc = PM_ENOMEM;
    if (rc == PM_OK) {
        memcpy(comp, s.comp, (size_t)g->nnodes * sizeof *comp);
        *ncomp = s.ncomp;
        for (uint32_t c = 0; c < s.ncomp; c++)
            (*cyclic)[c] = pm_scc_has_cycle(g, &s, c, NULL, NULL);
    }
    pm_scc_free(&s);
    return rc;
}

/* Every node must have a core that may run it. */
static int sched_check_runnable(const pm_graph *g, pm_diag *diag)
{
    const pm_platform *p = &g->platform;
    for (uint32_t v = 0; v < g->nnodes; v++) {
        const pm_node *n = &g->nodes[v];
        const char *name = pm_graph_node_name(g, v);
        if (n->pin_core != PM_NONE && n->pin_core >= p->ncores) {
            pm_diag_set(diag, g->file, n->line, n->col,
                        "node '%s' is pinned to core %u but there are %u cores", name,
                        n->pin_core, p->ncores);
            return PM_EPLATFORM;
        }
        bool any = false;
        for (uint32_t c = 0; c < p->nclasses && !any; c++)
            any = p->class_count[c] > 0 && pm_graph_cycles_on(g, v, c) >= 0 &&
                  (n->pin_class == PM_NONE || n->pin_class == c) &&
                  (n->pin_core == PM_NONE || p->core_class[n->pin_core] == c);
        if (!any) {
            pm_diag_set(diag, g->file, n->line, n->col,
                        "no core of the platform may run node '%s' (pins and classes)",
                        name);
            return PM_EPLATFORM;
        }
    }
    return PM_OK;
}

int sched_check_graph(const pm_graph *g, uint32_t *order, pm_diag *diag)
{
    if (!g || !g->finalized || g->platform.ncores == 0) {
        pm_diag_set(diag, g ? g->file : "", 0, 0, "the graph is not finalized or has no core");
        return PM_EINVAL;
    }
    if (!pm_graph_is_single_rate(g)) {
        pm_diag_set(diag, g->file, 0, 0,
                    "the scheduler handles single-rate graphs only; expand multirate first");
        return PM_EUNSUPPORTED;
    }
    int rc = sched_check_runnable(g, diag);
    if (rc != PM_OK)
        return rc;
    uint32_t *own = order ? NULL : malloc(((size_t)g->nnodes + 1) * sizeof *own);
    if (!order && !own)
        return PM_ENOMEM;
    rc = sched_topo(g, order ? order : own, diag);
    free(own);
    return rc;
}

/* One direction of the compact adjacency, by a counting sort over the
 * edges in index order (the graph's own adjacency order): one sequential
 * pass over the edge array instead of a gather through it. */
static int sched_adj_side(const pm_graph *g, bool in, uint32_t **off, uint32_t **other,
                    uint32_t **edge, int64_t **cost, bool *overflow)
{
    size_t m = 0;
    *off = calloc((size_t)g->nnodes + 2, sizeof **off);
    if (!*off)
        return PM_ENOMEM;
    for (uint32_t e = 0; e < g->nedges; e++) {
        const pm_edge *ed = &g->edges[e];
        if (ed->delay == 0) {
            (*off)[(in ? ed->dst : ed->src) + 2]++;
            m++;
        }
    }
    *other = malloc((m + 1) * sizeof **other);
    *edge = malloc((m + 1) * sizeof **edge);
    *cost = malloc((m + 1) * sizeof **cost);
    if (!*other || !*edge || !*cost)
        return PM_ENOMEM;
    for (uint32_t v = 0; v < g->nnodes; v++)
        (*off)[v + 2] += (*off)[v + 1];
    for (uint32_t e = 0; e < g->nedges; e++) { /* off[v + 1] is v's fill point */
        const pm_edge *ed = &g->edges[e];
        if (ed->delay != 0)
            continue;
        uint32_t k = (*off)[(in ? ed->dst : ed->src) + 1]++;
        (*other)[k] = in ? ed->src : ed->dst;
        (*edge)[k] = e;
        (*cost)[k] = sched_edge_cost(g, e, overflow);
    }
    return PM_OK;
}

int sched_adj_build(const pm_graph *g, sched_adj *a, bool *overflow)
{
    memset(a, 0, sizeof *a);
    int rc = sched_adj_side(g, true, &a->in_off, &a->in_src, &a->in_edge, &a->in_cost, overflow);
    if (rc == PM_OK)
        rc = sched_adj_side(g, false, &a->out_off, &a->out_dst, &a->out_edge, &a->out_cost, overflow);
    for (uint32_t v = 0; rc == PM_OK && v < g->nnodes; v++)
        if (a->in_off[v + 1] - a->in_off[v] > a->maxin)
            a->maxin = a->in_off[v + 1] - a->in_off[v];
    if (rc != PM_OK)
        sched_adj_free(a);
    return rc;
}

void sched_adj_free(sched_adj *a)
{
    free(a->in_off);
    free(a->in_src);
    free(a->in_edge);
    free(a->in_cost);
    free(a->out_off);
    free(a->out_dst);
    free(a->out_edge);
    free(a->out_cost);
    memset(a, 0, sizeof *a);
}
