/*
 * loopfloor.c - the loop-time floor of a map: the largest ratio, over the
 * graph's cycles, of (node times + cross-core transfer costs on the cycle)
 * to the delays on it.  Found by cycle improvement: from a cycle of ratio
 * num/den, Bellman-Ford looks for a positive cycle under the weights
 * den * w - num * delay; such a cycle has a larger ratio; repeat until none.
 * Restricted to the edges inside strongly connected parts with a cycle.
 * It neither schedules nor simulates.
 */
#include "sched_internal.h"
#include "pacemap/rational.h"

#include <stdlib.h>

typedef struct lf_ctx {
    const pm_graph *g;
    int64_t *w;       /* per graph edge: source time + transfer cost */
    pm_i128 *dist;
    uint32_t *pred;   /* edge that last improved each node */
    uint64_t budget;  /* node relaxations left before giving up */
    uint32_t *walk;   /* pred-graph walk stamps */
    uint32_t *q;      /* FIFO of nodes to relax (each queued at most once) */
    bool *queued, *onloop, *inloop;
} lf_ctx;

/* A cycle among the predecessor links: an edge on it, or PM_NONE.  Such a
 * cycle is positive (strict improvements only), so Bellman-Ford may stop
 * long before its V passes (Cormen et al., Introduction to Algorithms,
 * the predecessor subgraph lemma of Bellman-Ford). */
static uint32_t lf_pred_cycle(lf_ctx *x)
{
    const pm_graph *g = x->g;
    uint32_t n = g->nnodes;
    for (uint32_t v = 0; v < n; v++)
        x->walk[v] = 0;
    for (uint32_t v = 0; v < n; v++) {
        uint32_t u = v;
        while (x->walk[u] == 0 && x->pred[u] != PM_NONE) {
            x->walk[u] = v + 1;
            u = g->edges[x->pred[u]].src;
        }
        if (x->walk[u] == v + 1)
            return x->pred[u];
    }
    return PM_NONE;
}

/* Work allowed in relaxed nodes: seconds, not hours, on any input. */
#define LF_BUDGET (UINT64_C(1) << 30)

/* Relax the loop edges out of u; queue the nodes that improve. */
static void lf_relax(lf_ctx *x, pm_rat r, uint32_t u, uint32_t *q, uint32_t *tail, uint32_t n)
{
    const pm_graph *g = x->g;
    for (uint32_t i = g->out_off[u]; i < g->out_off[u + 1]; i++) {
        uint32_t ei = g->out_edge[i];
        if (!x->inloop[ei])
            continue;
        const pm_edge *e = &g->edges[ei];
        pm_i128 c = (pm_i128)r.den * x->w[ei] - (pm_i128)r.num * e->delay;
        if (x->dist[u] + c <= x->dist[e->dst])
            continue;
        x->dist[e->dst] = x->dist[u] + c;
        x->pred[e->dst] = ei;
        if (!x->queued[e->dst]) {
            x->queued[e->dst] = true;
            q[*tail % n] = e->dst;
            (*tail)++;
        }
    }
}

/* Positive cycle under den*w - num*delay (Bellman-Ford with a FIFO queue,
 * checking the predecessor links for a cycle every V relaxed nodes):
 * returns an edge on one, PM_NONE when there is none, or sets *over when
 * the budget runs out. */
static uint32_t lf_find(lf_ctx *x, pm_rat r, bool *over)
{
    uint32_t n = x->g->nnodes, head = 0, tail = 0, since = 0;
    for (uint32_t v = 0; v < n; v++) {
        x->dist[v] = 0;
        x->pred[v] = PM_NONE;
        x->queued[v] = x->onloop[v];
        if (x->onloop[v])
            x->q[tail++ % n] = v;
    }
    while (head != tail) {
        uint32_t u = x->q[head++ % n];
        x->queued[u] = false;
        lf_relax(x, r, u, x->q, &tail, n);
        if (x->budget-- == 0) {
            *over = true;
            return PM_NONE;
        }
        if (++since >= n) {
            since = 0;
            uint32_t e = lf_pred_cycle(x);
            if (e != PM_NONE)
                return e;
        }
    }
    return lf_pred_cycle(x); /* converged: a cycle can only remain if positive */
}

/* Ratio of the cycle through edge e0 along pred links; the nodes if wanted. */
static int lf_cycle(lf_ctx *x, uint32_t e0, pm_rat *ratio, uint32_t **loop, uint32_t *nloop)
{
    const pm_graph *g = x->g;
    int64_t w = 0, d = 0;
    bool ovf = false;
    uint32_t len = 0, start = g->edges[e0].dst, v = start;
    do {
        uint32_t e = x->pred[v];
        w = sched_add(w, x->w[e], &ovf);
        d = sched_add(d, g->edges[e].delay, &ovf);
        v = g->edges[e].src;
        len++;
    } while (v != start);
    if (ovf)
        return PM_ERANGE;
    if (d == 0)
        return PM_EZERODELAY;
    int rc = pm_rat_make(w, d, ratio);
    *nloop = len;
    if (rc != PM_OK || !loop)
        return rc;
    free(*loop);
    *loop = malloc((size_t)len * sizeof **loop);
    if (!*loop)
        return PM_ENOMEM;
    for (uint32_t i = len; i-- > 0;) { /* pred links run backwards */
        (*loop)[i] = v;
        v = g->edges[x->pred[v]].src;
    }
    return PM_OK;
}

static int lf_setup(lf_ctx *x, const pm_map *m)
{
    const pm_graph *g = x->g;
    const pm_comm *cm = &g->platform.comm;
    uint32_t ncomp = 0, *comp = malloc(((size_t)g->nnodes + 1) * sizeof *comp);
    bool *cyclic = NULL, ovf = false;
    int rc = comp ? sched_scc(g, comp, &ncomp, &cyclic) : PM_ENOMEM;
    x->inloop = calloc((size_t)g->nedges + 1, sizeof *x->inloop);
    x->w = malloc(((size_t)g->nedges + 1) * sizeof *x->w);
    if (rc == PM_OK && (!x->inloop || !x->w))
        rc = PM_ENOMEM;
    for (uint32_t e = 0; rc == PM_OK && e < g->nedges; e++) {
        const pm_edge *ed = &g->edges[e];
        uint32_t cu = m->core_of[ed->src], cv = m->core_of[ed->dst];
        x->w[e] = pm_graph_cycles_on(g, ed->src, g->platform.core_class[cu]);
        if (cu != cv)
            x->w[e] = sched_add(sched_add(x->w[e], cm->send + cm->recv, &ovf),
                                sched_edge_cost(g, e, &ovf), &ovf);
        if (comp[ed->src] == comp[ed->dst] && cyclic[comp[ed->src]])
            x->inloop[e] = x->onloop[ed->src] = true;
    }
    if (rc == PM_OK && ovf)
        rc = PM_ERANGE;
    free(comp);
    free(cyclic);
    return rc;
}

static int lf_improve(lf_ctx *x, pm_rat *floor, uint32_t **loop, uint32_t *nloop)
{
    pm_rat r = pm_rat_int(-1); /* below every cycle's ratio: finds a first cycle */
    int rc = PM_OK;
    for (;;) {
        bool over = false;
        uint32_t e = lf_find(x, r, &over);
        if (over)
            return PM_ELIMIT;
        if (e == PM_NONE)
            break;
        pm_rat next;
        rc = lf_cycle(x, e, &next, loop, nloop);
        if (rc != PM_OK)
            break;
        r = next;
    }
    if (rc == PM_OK && pm_rat_cmp(r, pm_rat_int(0)) >= 0)
        *floor = r;
    return rc;
}

int pm_sched_loop_floor(const pm_graph *g, const pm_map *m, pm_rat *floor,
                        uint32_t **loop, uint32_t *nloop, pm_diag *diag)
{
    *floor = pm_rat_int(0);
    *nloop = 0;
    if (loop)
        *loop = NULL;
    int rc = sched_check_graph(g, NULL, diag);
    if (rc == PM_OK)
        rc = pm_map_check(m, g, diag);
    if (rc != PM_OK)
        return rc;
    lf_ctx x = {.g = g, .budget = LF_BUDGET};
    size_t n = (size_t)g->nnodes + 1;
    x.dist = malloc(n * sizeof *x.dist);
    x.pred = malloc(n * sizeof *x.pred);
    x.walk = malloc(n * sizeof *x.walk);
    x.q = malloc(n * sizeof *x.q);
    x.queued = calloc(n, sizeof *x.queued);
    x.onloop = calloc(n, sizeof *x.onloop);
    rc = x.dist && x.pred && x.walk && x.q && x.queued && x.onloop ? lf_setup(&x, m)
                                                                    : PM_ENOMEM;
    if (rc == PM_OK)
        rc = lf_improve(&x, floor, loop, nloop);
    if (rc == PM_ERANGE)
        pm_diag_set(diag, g->file, 0, 0, "loop time exceeds 62 bits");
    if (rc == PM_ELIMIT)
        pm_diag_set(diag, g->file, 0, 0, "the loops are too large for the loop-time floor");
    if (rc != PM_OK && loop) {
        free(*loop);
        *loop = NULL;
        *nloop = 0;
    }
    free(x.inloop);
    free(x.q);
    free(x.queued);
    free(x.onloop);
    free(x.w);
    free(x.dist);
    free(x.pred);
    free(x.walk);
    return rc;
}
