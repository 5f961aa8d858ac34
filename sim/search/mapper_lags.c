/*
 * mapper_lags.c - from an assignment of nodes to cores to a full map: the
 * cores' orders (one topological order of the zero-delay edges), the lags
 * of a periodic schedule whose period is the busiest occupancy, and the
 * exact evaluation of the result (pm_ipc_compute).
 *
 * Why these lags (mapper.h has the contract): with T the busiest
 * occupancy, v beginning at o(v) in its core's round and lag[v] rounds
 * late, firing k of v begins at (k + lag[v]) T + o(v).  An edge u -> v of
 * d delays is then met when (d + lag[v] - lag[u]) T >= o(u) + R(u) + t(u)
 * (+ transfer across cores) - o(v).  The smallest such lags are longest
 * paths; inside a loop the nodes share one lag, so the loop keeps its own
 * delays and the IPC ratio judges it.
 */
#include "mapper_internal.h"

#include "pacemap/ipc.h"

#include <stdlib.h>
#include <string.h>

int mp_key_cmp(const mp_key *a, const mp_key *b)
{
    int r = pm_rat_cmp(a->period, b->period);
    if (r)
        return r;
    if (a->latency != b->latency)
        return a->latency < b->latency ? -1 : 1;
    return (a->tokens > b->tokens) - (a->tokens < b->tokens);
}

int64_t mp_cost(const pm_graph *g, uint32_t e)
{
    const pm_comm *c = &g->platform.comm;
    pm_i128 x = (pm_i128)c->latency + (pm_i128)c->per_word * g->edges[e].words;
    return x > PM_MAX_VALUE ? PM_MAX_VALUE : (int64_t)x;
}

void mp_occupancy(const mp_ctx *c, const uint32_t *assign, int64_t *occ)
{
    memset(occ, 0, c->P * sizeof *occ);
    for (uint32_t v = 0; v < c->n; v++)
        occ[assign[v]] += c->t[(size_t)v * c->P + assign[v]];
    for (uint32_t e = 0; e < c->g->nedges; e++) {
        uint32_t a = assign[c->g->edges[e].src], b = assign[c->g->edges[e].dst];
        if (a != b) {
            occ[a] += c->send;
            occ[b] += c->recv;
        }
    }
}

/* Per node: o(v), the begin within its core's round, and w(v) = R + t, its
 * begin-to-end time; the cores' lists in zero-delay order into lists. */
static void mpl_offsets(const mp_ctx *c, const uint32_t *assign, int64_t *o, int64_t *w,
                        int64_t *fill)
{
    const pm_graph *g = c->g;
    memset(fill, 0, c->P * sizeof *fill);
    for (uint32_t i = 0; i < c->n; i++) {
        uint32_t v = c->topo[i], core = assign[v];
        int64_t in = 0, out = 0;
        for (uint32_t k = g->in_off[v]; k < g->in_off[v + 1]; k++)
            in += assign[g->edges[g->in_edge[k]].src] != core;
        for (uint32_t k = g->out_off[v]; k < g->out_off[v + 1]; k++)
            out += assign[g->edges[g->out_edge[k]].dst] != core;
        o[v] = fill[core];
        w[v] = in * c->recv + c->t[(size_t)v * c->P + core];
        fill[core] += w[v] + out * c->send;
    }
}

/* Rounds edge e between two parts must advance: ceil(slack / T), at least
 * 1 when the producer does not begin first (or always across cores when
 * strict). */
static int64_t mpl_need(const mp_ctx *c, const uint32_t *assign, const int64_t *o,
                        const int64_t *w, int64_t T, uint32_t e, bool strict)
{
    const pm_edge *ed = &c->g->edges[e];
    bool cross = assign[ed->src] != assign[ed->dst];
    int64_t x = o[ed->src] + w[ed->src] + (cross ? mp_cost(c->g, e) : 0) - o[ed->dst];
    int64_t need = x > 0 ? (x + T - 1) / T : 0;
    if (need == 0 && (o[ed->src] >= o[ed->dst] || (cross && strict)))
        need = 1;
    if (!cross && c->topo_pos[ed->src] < c->topo_pos[ed->dst] && x <= 0)
        need = 0;
    return need;
}

/* Lags: per part, the longest path over the condensation (parts are
 * numbered so that edges go from higher to lower numbers). */
static void mpl_lags(const mp_ctx *c, const uint32_t *assign, const int64_t *o,
                     const int64_t *w, int64_t T, bool strict, int64_t *plag, uint32_t *lag)
{
    const pm_graph *g = c->g;
    const pm_scc *s = &c->scc;
    for (uint32_t k = s->ncomp; k-- > 0;) {
        int64_t best = 0;
        for (uint32_t i = s->start[k]; i < s->start[k + 1]; i++) {
            uint32_t v = s->order[i];
            for (uint32_t j = g->in_off[v]; j < g->in_off[v + 1]; j++) {
                uint32_t e = g->in_edge[j], u = g->edges[e].src;
                if (s->comp[u] == k)
                    continue;
                int64_t l = plag[s->comp[u]] - g->edges[e].delay
                            + mpl_need(c, assign, o, w, T, e, strict);
                best = l > best ? l : best;
            }
        }
        plag[k] = best;
    }
    for (uint32_t v = 0; v < c->n; v++) {
        int64_t l = plag[s->comp[v]];
        lag[v] = l > (int64_t)PM_MAP_MAX_LAG ? PM_MAP_MAX_LAG : (uint32_t)l;
    }
}

/* The map of assign: lists in zero-delay order. */
static int mpl_map(const mp_ctx *c, const uint32_t *assign, pm_map **out)
{
    uint32_t *counts = calloc(c->P, sizeof *counts);
    uint32_t *flat = malloc(((size_t)c->n + 1) * sizeof *flat);
    const uint32_t **lists = calloc(c->P, sizeof *lists);
    uint32_t *at = calloc(c->P + 1, sizeof *at);
    int rc = counts && flat && lists && at ? PM_OK : PM_ENOMEM;
    if (rc == PM_OK) {
        for (uint32_t v = 0; v < c->n; v++)
            counts[assign[v]]++;
        for (uint32_t k = 0; k < c->P; k++)
            at[k + 1] = at[k] + counts[k];
        for (uint32_t k = 0; k < c->P; k++)
            lists[k] = flat + at[k];
        for (uint32_t i = 0; i < c->n; i++)
            flat[at[assign[c->topo[i]]]++] = c->topo[i];
        rc = pm_map_create(c->P, c->n, lists, counts, out);
    }
    free(counts);
    free(flat);
    free(lists);
    free(at);
    return rc;
}

/* Latency of the periodic schedule and tokens on cross-core edges. */
static void mpl_secondary(const mp_ctx *c, const pm_map *m, const int64_t *o,
                          const int64_t *w, int64_t T, mp_key *key)
{
    key->latency = 0;
    key->tokens = 0;
    for (uint32_t v = 0; v < c->n; v++) {
        pm_i128 end = (pm_i128)m->lag[v] * T + o[v] + w[v];
        if (end > key->latency)
            key->latency = end > PM_MAX_VALUE ? PM_MAX_VALUE : (int64_t)end;
    }
    for (uint32_t e = 0; e < c->g->nedges; e++) {
        const pm_edge *ed = &c->g->edges[e];
        if (m->core_of[ed->src] != m->core_of[ed->dst])
            key->tokens += ed->delay + (int64_t)m->lag[ed->dst] - (int64_t)m->lag[ed->src];
    }
}

/* The period key: the IPC ratio with point-to-point links; with a bus,
 * where the ratio is only a floor, the simulated period (mp_judge_period). */
static int mpl_period(const pm_graph *g, const pm_map *m, const pm_ipc *ipc, pm_rat *period,
                      pm_diag *diag)
{
    *period = ipc->period;
    if (g->platform.interconnect != PM_BUS)
        return PM_OK;
    return mp_judge_period(g, m, period, diag);
}

/* Build the map with lags (strict or not) and time it exactly. */
static int mpl_try(mp_ctx *c, const uint32_t *assign, int64_t *buf, bool strict,
                   pm_map **out, mp_key *key, pm_diag *diag)
{
    int64_t *o = buf, *w = buf + c->n, *plag = buf + 2 * (size_t)c->n, *fill = plag + c->scc.ncomp;
    mpl_offsets(c, assign, o, w, fill);
    int64_t T = 1;
    for (uint32_t k = 0; k < c->P; k++)
        T = fill[k] > T ? fill[k] : T;
    pm_map *m = NULL;
    int rc = mpl_map(c, assign, &m);
    if (rc == PM_OK)
        mpl_lags(c, assign, o, w, T, strict, plag, m->lag);
    pm_ipc ipc;
    if (rc == PM_OK)
        rc = pm_ipc_compute(c->g, m, &ipc, diag);
    if (rc == PM_OK) {
        rc = mpl_period(c->g, m, &ipc, &key->period, diag);
        mpl_secondary(c, m, o, w, T, key);
        pm_ipc_free(&ipc);
    }
    if (rc == PM_OK) {
        *out = m;
        return PM_OK;
    }
    pm_map_destroy(m);
    return rc;
}

int mp_evaluate(mp_ctx *c, const uint32_t *assign, pm_map **out, mp_key *key, pm_diag *diag)
{
    *out = NULL;
    size_t words = 2 * (size_t)c->n + c->scc.ncomp + c->P + 1;
    int64_t *buf = malloc(words * sizeof *buf);
    if (!buf)
        return PM_ENOMEM;
    c->evals++;
    int rc = mpl_try(c, assign, buf, false, out, key, diag);
    if (rc == PM_EDEADLOCK)
        rc = mpl_try(c, assign, buf, true, out, key, diag);
    free(buf);
    return rc;
}

bool mp_out_of_time(mp_ctx *c)
{
    if (c->timed_out)
        return true;
    struct timespec now;
    clock_gettime(CLOCK_MONOTONIC, &now);
    if (now.tv_sec > c->deadline.tv_sec
        || (now.tv_sec == c->deadline.tv_sec && now.tv_nsec >= c->deadline.tv_nsec))
        c->timed_out = true;
    return c->timed_out;
}
