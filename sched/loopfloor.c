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

#include <stdlib.h>

typedef __int128 lf_wide; /* den * w - num * d cannot overflow 128 bits */

typedef struct lf_ctx {
    const pm_graph *g;
    uint32_t *edges;  /* edges inside cyclic parts */
    uint32_t nedges;
    int64_t *w;       /* per graph edge: source time + transfer cost */
    lf_wide *dist;
    uint32_t *pred;   /* edge that last improved each node */
} lf_ctx;

/* Positive cycle under den*w - num*delay: returns its first edge or PM_NONE. */
static uint32_t lf_find(lf_ctx *x, pm_rat r)
{
    const pm_graph *g = x->g;
    uint32_t n = g->nnodes, last = PM_NONE;
    for (uint32_t v = 0; v < n; v++) {
        x->dist[v] = 0;
        x->pred[v] = PM_NONE;
    }
    for (uint32_t pass = 0; pass <= n; pass++) {
        last = PM_NONE;
        for (uint32_t i = 0; i < x->nedges; i++) {
            const pm_edge *e = &g->edges[x->edges[i]];
            lf_wide c = (lf_wide)r.den * x->w[x->edges[i]] - (lf_wide)r.num * e->delay;
            if (x->dist[e->src] + c > x->dist[e->dst]) {
                x->dist[e->dst] = x->dist[e->src] + c;
                x->pred[e->dst] = x->edges[i];
                last = e->dst;
            }
        }
        if (last == PM_NONE)
            return PM_NONE;
    }
    for (uint32_t k = 0; k < n && x->pred[last] != PM_NONE; k++) /* into the cycle */
        last = g->edges[x->pred[last]].src;
    return x->pred[last];
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
    if (rc != PM_OK || !loop)
        return rc;
    free(*loop);
    *loop = malloc((size_t)len * sizeof **loop);
    if (!*loop)
        return PM_ENOMEM;
    *nloop = len;
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
    x->edges = malloc(((size_t)g->nedges + 1) * sizeof *x->edges);
    x->w = malloc(((size_t)g->nedges + 1) * sizeof *x->w);
    if (rc == PM_OK && (!x->edges || !x->w))
        rc = PM_ENOMEM;
    for (uint32_t e = 0; rc == PM_OK && e < g->nedges; e++) {
        const pm_edge *ed = &g->edges[e];
        uint32_t cu = m->core_of[ed->src], cv = m->core_of[ed->dst];
        x->w[e] = pm_graph_cycles_on(g, ed->src, g->platform.core_class[cu]);
        if (cu != cv)
            x->w[e] = sched_add(sched_add(x->w[e], cm->send + cm->recv, &ovf),
                                sched_edge_cost(g, e, &ovf), &ovf);
        if (comp[ed->src] == comp[ed->dst] && cyclic[comp[ed->src]])
            x->edges[x->nedges++] = e;
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
        uint32_t e = lf_find(x, r);
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
    int rc = sched_check_graph(g, diag);
    if (rc == PM_OK)
        rc = pm_map_check(m, g, diag);
    if (rc != PM_OK)
        return rc;
    lf_ctx x = {.g = g};
    size_t n = (size_t)g->nnodes + 1;
    x.dist = malloc(n * sizeof *x.dist);
    x.pred = malloc(n * sizeof *x.pred);
    rc = x.dist && x.pred ? lf_setup(&x, m) : PM_ENOMEM;
    if (rc == PM_OK)
        rc = lf_improve(&x, floor, loop, nloop);
    if (rc == PM_ERANGE)
        pm_diag_set(diag, g->file, 0, 0, "loop time exceeds 62 bits");
    if (rc != PM_OK && loop) {
        free(*loop);
        *loop = NULL;
        *nloop = 0;
    }
    free(x.edges);
    free(x.w);
    free(x.dist);
    free(x.pred);
    return rc;
}
