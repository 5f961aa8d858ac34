/*
 * mapper_exact.c - the smallest busiest-core occupancy of a graph on
 * identical cores, by branch and bound: the best period of a graph without
 * loops once lags are allowed (mapper.h says why).
 *
 * Nodes are placed one at a time, heaviest first then those most tied to
 * the nodes already placed, so that cut edges are charged early.  On
 * identical cores without pins a node goes to a core already used or to
 * the first unused one (the others would repeat the same assignments
 * relabelled); with core classes or pins every core that may run it is
 * tried, at its class's cycles.
 * A branch is cut when the busiest partial occupancy, or the occupancy
 * summed over all cores plus the cycles of the nodes left, spread over the
 * P cores, reaches the best occupancy found (the nodes left counted at
 * their smallest cycles).  Both are floors: charges only grow as nodes
 * are added.
 */
#include "mapper_internal.h"

#include <stdlib.h>
#include <string.h>

typedef struct mpx {
    const pm_graph *g;
    uint32_t n, P;
    uint32_t *seq;      /* placement order */
    uint32_t *assign;   /* PM_NONE while unplaced */
    int64_t *occ;
    int64_t *rest;      /* rest[i]: cycles of seq[i..n) */
    int64_t sum, best, send, recv;
    uint32_t *best_assign;
    uint64_t visited, max_nodes;
    bool found;
    int64_t *t;         /* n * P: cycles of v on core c, -1 where it cannot run */
    bool symmetric;     /* identical cores and no pins: cores are interchangeable */
} mpx;

/* Placement order: heaviest first, then repeatedly the unplaced node with
 * the most send/recv cycles to placed ones, then the heavier, then the
 * lower id. */
static void mpx_order(mpx *x)
{
    const pm_graph *g = x->g;
    int64_t *tie = calloc(x->n, sizeof *tie);
    bool *done = calloc(x->n, sizeof *done);
    for (uint32_t i = 0; i < x->n && tie && done; i++) {
        uint32_t pick = PM_NONE;
        for (uint32_t v = 0; v < x->n; v++) {
            if (done[v])
                continue;
            int64_t kv = tie[v] + g->nodes[v].cycles;
            if (pick == PM_NONE || kv > tie[pick] + g->nodes[pick].cycles)
                pick = v;
        }
        done[pick] = true;
        x->seq[i] = pick;
        for (uint32_t k = g->out_off[pick]; k < g->out_off[pick + 1]; k++)
            tie[g->edges[g->out_edge[k]].dst] += x->send + x->recv;
        for (uint32_t k = g->in_off[pick]; k < g->in_off[pick + 1]; k++)
            tie[g->edges[g->in_edge[k]].src] += x->send + x->recv;
    }
    if (!tie || !done)
        for (uint32_t i = 0; i < x->n; i++)
            x->seq[i] = i;
    free(tie);
    free(done);
}

/* Charge (sign +1) or refund (-1) node v on core c with its edges to
 * placed nodes on other cores. */
static void mpx_charge(mpx *x, uint32_t v, uint32_t c, int64_t sign)
{
    const pm_graph *g = x->g;
    int64_t add = x->t[(size_t)v * x->P + c];
    for (uint32_t k = g->out_off[v]; k < g->out_off[v + 1]; k++) {
        uint32_t w = g->edges[g->out_edge[k]].dst, cw = x->assign[w];
        if (w != v && cw != PM_NONE && cw != c) {
            add += x->send;
            x->occ[cw] += sign * x->recv;
            x->sum += sign * x->recv;
        }
    }
    for (uint32_t k = g->in_off[v]; k < g->in_off[v + 1]; k++) {
        uint32_t w = g->edges[g->in_edge[k]].src, cw = x->assign[w];
        if (w != v && cw != PM_NONE && cw != c) {
            add += x->recv;
            x->occ[cw] += sign * x->send;
            x->sum += sign * x->send;
        }
    }
    x->occ[c] += sign * add;
    x->sum += sign * add;
}

static bool mpx_prune(const mpx *x, uint32_t i)
{
    int64_t top = 0;
    for (uint32_t c = 0; c < x->P; c++)
        top = x->occ[c] > top ? x->occ[c] : top;
    int64_t spread = (x->sum + x->rest[i] + x->P - 1) / x->P;
    return top >= x->best || spread >= x->best;
}

/* Depth-first search from position i with `used` cores in use. */
static void mpx_search(mpx *x, uint32_t i, uint32_t used)
{
    if (x->visited >= x->max_nodes || mpx_prune(x, i))
        return;
    x->visited++;
    if (i == x->n) {
        int64_t top = 0;
        for (uint32_t c = 0; c < x->P; c++)
            top = x->occ[c] > top ? x->occ[c] : top;
        x->best = top;
        memcpy(x->best_assign, x->assign, x->n * sizeof *x->assign);
        x->found = true;
        return;
    }
    uint32_t v = x->seq[i], limit = used < x->P && x->symmetric ? used + 1 : x->P;
    for (uint32_t c = 0; c < limit; c++) {
        if (x->t[(size_t)v * x->P + c] < 0)
            continue;
        x->assign[v] = c;
        mpx_charge(x, v, c, 1);
        mpx_search(x, i + 1, c == used ? used + 1 : used);
        mpx_charge(x, v, c, -1);
        x->assign[v] = PM_NONE;
    }
}

/* Identical cores and no pins: any relabelling of the cores gives the
 * same occupancies, so a node need only try the cores in use and one
 * more. */
static bool mpx_symmetric(const pm_graph *g)
{
    if (g->platform.nclasses != 1)
        return false;
    for (uint32_t v = 0; v < g->nnodes; v++)
        if (g->nodes[v].pin_core != PM_NONE || g->nodes[v].pin_class != PM_NONE)
            return false;
    return true;
}

/* Cycles per node and core (classes), -1 where pins or classes forbid;
 * rest[i] the smallest cycles of seq[i..n) summed (low: n entries of
 * scratch).  false when a node can run nowhere. */
static bool mpx_times(mpx *x, int64_t *low)
{
    const pm_graph *g = x->g;
    for (uint32_t v = 0; v < x->n; v++) {
        low[v] = -1;
        for (uint32_t c = 0; c < x->P; c++) {
            int64_t t = pm_graph_can_run(g, v, c)
                        ? pm_graph_cycles_on(g, v, g->platform.core_class[c]) : -1;
            x->t[(size_t)v * x->P + c] = t;
            low[v] = t >= 0 && (low[v] < 0 || t < low[v]) ? t : low[v];
        }
        if (low[v] < 0)
            return false;
    }
    x->rest[x->n] = 0;
    for (uint32_t i = x->n; i-- > 0;)
        x->rest[i] = x->rest[i + 1] + low[x->seq[i]];
    return true;
}

int pm_mapper_exact(const pm_graph *g, uint64_t max_nodes, int64_t upper, uint32_t *assign,
                    int64_t *best, bool *proven)
{
    if (!g || !g->finalized || !assign || !best || !proven || upper <= 0)
        return PM_EINVAL;
    if (g->nnodes > PM_MAPPER_EXACT_MAX_NODES)
        return PM_EUNSUPPORTED;
    uint32_t n = g->nnodes, P = g->platform.ncores;
    mpx x = { .g = g, .n = n, .P = P, .best = upper, .send = g->platform.comm.send,
              .recv = g->platform.comm.recv,
              .max_nodes = max_nodes ? max_nodes : PM_MAPPER_DEFAULT_EXACT };
    x.seq = malloc((n + 1) * sizeof *x.seq);
    x.assign = malloc((n + 1) * sizeof *x.assign);
    x.best_assign = malloc((n + 1) * sizeof *x.best_assign);
    x.occ = calloc(P + 1, sizeof *x.occ);
    x.rest = calloc(n + 1, sizeof *x.rest);
    x.t = malloc(((size_t)n * P + 1) * sizeof *x.t);
    int64_t *low = malloc((n + 1) * sizeof *low);
    x.symmetric = mpx_symmetric(g);
    int rc = x.seq && x.assign && x.best_assign && x.occ && x.rest && x.t && low ? PM_OK
                                                                                 : PM_ENOMEM;
    if (rc == PM_OK) {
        mpx_order(&x);
        if (!mpx_times(&x, low))
            rc = PM_EPLATFORM;
    }
    if (rc == PM_OK) {
        for (uint32_t v = 0; v < n; v++)
            x.assign[v] = PM_NONE;
        mpx_search(&x, 0, 0);
        *proven = x.visited < x.max_nodes;
        *best = x.best;
        if (x.found)
            memcpy(assign, x.best_assign, n * sizeof *assign);
    }
    free(x.seq);
    free(x.assign);
    free(x.best_assign);
    free(x.occ);
    free(x.rest);
    free(x.t);
    free(low);
    return rc;
}
