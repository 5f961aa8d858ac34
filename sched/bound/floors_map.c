/*
 * floors_map.c - floors that hold because a map puts whole nodes on cores:
 * packing (pigeonhole), the load pins put on one core, and the bus time of
 * the transfers pins force across cores.
 *
 * A core runs each of its nodes once per iteration, so in steady state the
 * period T is at least the cycles a core spends per iteration: the nodes on
 * it, plus send and recv for each cross-core edge (docs/simulation.md).  A
 * bus carries one transfer at a time, latency + per_word x words per token,
 * so T is also at least the bus time of the tokens of one iteration.  Each
 * function below bounds one of these from facts every map shares.  What it
 * does not do: the iteration bound and the work floor (bound.c,
 * floors_work.c), or choose between floors (floors.c).
 */
#include "bound_internal.h"

#include <stdlib.h>

static int fm_desc(const void *pa, const void *pb)
{
    int64_t a = *(const int64_t *)pa, b = *(const int64_t *)pb;
    return (a < b) - (a > b);
}

/*
 * Packing floor of m whole items t (sorted here, descending) on n cores.
 * Proof: for j >= 1 with j*n + 1 <= m, the j*n + 1 largest items lie on n
 * cores, so by pigeonhole one core holds j + 1 of them; any j + 1 of them
 * sum to at least the j + 1 smallest, t[j*n - j] .. t[j*n] (0-based), and
 * that core's load, hence T, is at least this sum.  (j = 1 is the classic
 * T >= t_P + t_{P+1}.)  Returns the largest of these sums, 0 if m <= n.
 */
static int64_t fm_packing(int64_t *t, size_t m, uint32_t n)
{
    if (n == 0 || m <= n)
        return 0;
    qsort(t, m, sizeof *t, fm_desc);
    /* prefix sums in place: t[i] = items 0..i; no overflow, as the items
     * are node times whose sum bound_node_times kept within 62 bits */
    for (size_t i = 1; i < m; i++)
        t[i] += t[i - 1];
    int64_t best = 0;
    for (size_t j = 1; j * n + 1 <= m; j++) {
        size_t lo = j * n - j, hi = j * n;
        int64_t s = t[hi] - (lo ? t[lo - 1] : 0);
        if (s > best)
            best = s;
    }
    return best;
}

/* Packing over the nodes that can use only class k (pins respected), on
 * its counts[k] cores; the largest over the classes.  `counts` NULL: all
 * nodes on `procs` identical cores. */
int bound_packing(const pm_graph *g, const uint32_t *counts, uint32_t procs, int64_t *out)
{
    *out = 0;
    int64_t *t = malloc(((size_t)g->nnodes + 1) * sizeof *t);
    if (!t)
        return PM_ENOMEM;
    uint32_t nk = counts ? g->platform.nclasses : 1;
    for (uint32_t k = 0; k < nk; k++) {
        size_t m = 0;
        for (uint32_t v = 0; v < g->nnodes; v++) {
            if (!counts) {
                t[m++] = pm_graph_min_cycles(g, v);
                continue;
            }
            uint32_t only = PM_NONE, ways = 0;
            for (uint32_t c = 0; c < g->platform.nclasses; c++)
                if (bound_class_time(g, counts, v, c) >= 0)
                    ways++, only = c;
            if (ways == 1 && only == k)
                t[m++] = bound_class_time(g, counts, v, k);
        }
        int64_t p = fm_packing(t, m, counts ? counts[k] : procs);
        if (p > *out)
            *out = p;
    }
    free(t);
    return PM_OK;
}

/* Whether some core may run both u and v (so their edge may stay local). */
static bool fm_may_share(const pm_graph *g, uint32_t u, uint32_t v)
{
    uint32_t pu = g->nodes[u].pin_core, pv = g->nodes[v].pin_core;
    if (pu != PM_NONE && pu < g->platform.ncores)
        return pm_graph_can_run(g, v, pu) && pm_graph_can_run(g, u, pu);
    if (pv != PM_NONE && pv < g->platform.ncores)
        return pm_graph_can_run(g, u, pv) && pm_graph_can_run(g, v, pv);
    for (uint32_t c = 0; c < g->platform.ncores; c++)
        if (pm_graph_can_run(g, u, c) && pm_graph_can_run(g, v, c))
            return true;
    return false;
}

/* Load of core c from node v pinned to it: its time there, plus send
 * (recv) for each out- (in-) edge whose other end can never share c. */
static pm_i128 fm_core_load(const pm_graph *g, uint32_t c, uint32_t v)
{
    const pm_comm *cm = &g->platform.comm;
    pm_i128 load = pm_graph_cycles_on(g, v, g->platform.core_class[c]);
    for (uint32_t i = g->out_off[v]; i < g->out_off[v + 1]; i++)
        if (!pm_graph_can_run(g, g->edges[g->out_edge[i]].dst, c))
            load += cm->send;
    for (uint32_t i = g->in_off[v]; i < g->in_off[v + 1]; i++)
        if (!pm_graph_can_run(g, g->edges[g->in_edge[i]].src, c))
            load += cm->recv;
    return load;
}

/* The busiest core by the nodes pinned to it.  A load beyond 62 bits is
 * reported as 2^62 - 1: smaller than the true load, so still a floor
 * (a scenario may give send/recv costs whose sums no map could run). */
int bound_pinned(const pm_graph *g, int64_t *out, uint32_t *core)
{
    *out = 0;
    *core = PM_NONE;
    uint32_t nc = g->platform.ncores;
    pm_i128 *load = calloc((size_t)nc + 1, sizeof *load);
    if (!load)
        return PM_ENOMEM;
    for (uint32_t v = 0; v < g->nnodes; v++) {
        uint32_t c = g->nodes[v].pin_core;
        if (c != PM_NONE && c < nc && load[c] <= PM_MAX_VALUE)
            load[c] += fm_core_load(g, c, v);
    }
    for (uint32_t c = 0; c < nc; c++) {
        int64_t l = load[c] > PM_MAX_VALUE ? PM_MAX_VALUE : (int64_t)load[c];
        if (l > *out) {
            *out = l;
            *core = c;
        }
    }
    free(load);
    return PM_OK;
}

/* Bus cycles per iteration of the edges no map can keep on one core. */
int bound_bus(const pm_graph *g, int64_t *out)
{
    *out = 0;
    const pm_comm *cm = &g->platform.comm;
    if (g->platform.interconnect != PM_BUS)
        return PM_OK;
    pm_i128 sum = 0;
    for (uint32_t e = 0; e < g->nedges; e++) {
        const pm_edge *ed = &g->edges[e];
        if (ed->src == ed->dst || fm_may_share(g, ed->src, ed->dst))
            continue;
        sum += (pm_i128)cm->latency + (pm_i128)cm->per_word * ed->words;
        if (sum > PM_MAX_VALUE)
            break; /* reported as 2^62 - 1: below the true time, still a floor */
    }
    *out = sum > PM_MAX_VALUE ? PM_MAX_VALUE : (int64_t)sum;
    return PM_OK;
}
