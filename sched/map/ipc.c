/*
 * ipc.c - the exact period of a map, lags included: the inter-processor
 * communication graph of the map turned into a node-weighted graph whose
 * iteration bound (pm_bound_compute) is the IPC graph's maximum cycle
 * ratio, and the occupancy of each core.
 *
 * The IPC graph (docs/simulation.md) weighs edges; the bound weighs nodes.
 * So every node v becomes two vertices, A_v of R(v) + t(v) cycles (begin to
 * end) and B_v of S(v) cycles (end to free), joined by A_v -> B_v; a
 * cross-core edge gets a vertex X_e of its transfer time between the
 * producer's A and the consumer's A; core order runs from B_p to A_q.  A
 * cycle then weighs, vertex by vertex, what the IPC cycle weighs edge by
 * edge, with the same delays.
 *
 * What it does not do: simulate, handle a bus's contention (a floor only),
 * or print.
 */
#include "pacemap/ipc.h"

#include "pacemap/bound.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

void pm_ipc_free(pm_ipc *r)
{
    if (!r)
        return;
    free(r->core_busy);
    memset(r, 0, sizeof *r);
}

/* The lag check; with `order` false only negative retimed delays count
 * (a same-core edge against the order is a deadlock, which the ratio
 * finds). */
static int ipc_check(const pm_graph *g, const pm_map *m, bool order, pm_diag *diag)
{
    if (!g || !m || m->nnodes != g->nnodes)
        return PM_EINVAL;
    uint32_t *pos = malloc(((size_t)g->nnodes + 1) * sizeof *pos);
    if (!pos)
        return PM_ENOMEM;
    for (uint32_t i = 0; i < m->nnodes; i++)
        pos[m->order[i]] = i;
    int rc = PM_OK;
    for (uint32_t e = 0; e < g->nedges && rc == PM_OK; e++) {
        const pm_edge *ed = &g->edges[e];
        int64_t r = ed->delay + (int64_t)m->lag[ed->dst] - (int64_t)m->lag[ed->src];
        bool same = m->core_of[ed->src] == m->core_of[ed->dst];
        if (r < 0 || (order && r == 0 && same && pos[ed->src] > pos[ed->dst])) {
            pm_diag_set(diag, g->file, ed->line, ed->col,
                        "edge %s -> %s: %s", pm_graph_node_name(g, ed->src),
                        pm_graph_node_name(g, ed->dst),
                        r < 0 ? "the lags leave it fewer than 0 delays"
                              : "no delay after the lags, but its consumer runs first on their core");
            rc = PM_EMAP;
        }
    }
    free(pos);
    return rc;
}

int pm_ipc_check_lags(const pm_graph *g, const pm_map *m, pm_diag *diag)
{
    return ipc_check(g, m, true, diag);
}

/* Transfer time of edge e: latency + per_word * words, or -1 past 62 bits. */
static int64_t ipc_cost(const pm_graph *g, const pm_edge *ed)
{
    const pm_comm *c = &g->platform.comm;
    pm_i128 x = (pm_i128)c->latency + (pm_i128)c->per_word * ed->words;
    return x > PM_MAX_VALUE ? -1 : (int64_t)x;
}

/* R(v) + t(v) and S(v) of every node under map m, into a[] and b[]; the
 * core occupancies into out.  PM_ERANGE past 62 bits. */
static int ipc_weights(const pm_graph *g, const pm_map *m, int64_t *a, int64_t *b,
                       pm_ipc *out)
{
    const pm_comm *c = &g->platform.comm;
    for (uint32_t v = 0; v < g->nnodes; v++) {
        uint32_t core = m->core_of[v];
        pm_i128 in = 0, outs = 0;
        for (uint32_t k = g->in_off[v]; k < g->in_off[v + 1]; k++)
            in += m->core_of[g->edges[g->in_edge[k]].src] != core;
        for (uint32_t k = g->out_off[v]; k < g->out_off[v + 1]; k++)
            outs += m->core_of[g->edges[g->out_edge[k]].dst] != core;
        pm_i128 ra = in * c->recv + pm_graph_cycles_on(g, v, g->platform.core_class[core]);
        pm_i128 sb = outs * c->send;
        pm_i128 busy = out->core_busy[core] + ra + sb;
        if (ra > PM_MAX_VALUE || sb > PM_MAX_VALUE || busy > PM_MAX_VALUE)
            return PM_ERANGE;
        a[v] = (int64_t)ra;
        b[v] = (int64_t)sb;
        out->core_busy[core] = (int64_t)busy;
    }
    for (uint32_t k = 0; k < out->ncores; k++)
        if (out->core_busy[k] > out->busiest)
            out->busiest = out->core_busy[k];
    return PM_OK;
}

/* Add a node of `cycles` named <tag><i> to h; its id in *id. */
static int ipc_vertex(pm_graph *h, char tag, uint32_t i, int64_t cycles, uint32_t *id)
{
    char name[24];
    int len = snprintf(name, sizeof name, "%c%u", tag, i);
    return pm_graph_add_node(h, name, (size_t)len, cycles, id);
}

static int ipc_arc(pm_graph *h, uint32_t from, uint32_t to, int64_t delay)
{
    pm_edge e = pm_graph_edge_default(from, to);
    e.delay = delay;
    return pm_graph_add_edge(h, &e, NULL);
}

/* The data edges: same core A_u -> A_v; other cores A_u -> X_e -> A_v; the
 * delay is the retimed one.  Vertex A_v is v, B_v is n + v. */
static int ipc_data_edges(const pm_graph *g, const pm_map *m, pm_graph *h, pm_ipc *out)
{
    int rc = PM_OK;
    for (uint32_t e = 0; e < g->nedges && rc == PM_OK; e++) {
        const pm_edge *ed = &g->edges[e];
        int64_t d = ed->delay + (int64_t)m->lag[ed->dst] - (int64_t)m->lag[ed->src];
        if (m->core_of[ed->src] == m->core_of[ed->dst]) {
            rc = ipc_arc(h, ed->src, ed->dst, d);
            continue;
        }
        int64_t cost = ipc_cost(g, ed);
        uint32_t x = PM_NONE;
        if (cost < 0 || out->bus_busy > PM_MAX_VALUE - cost)
            return PM_ERANGE;
        out->bus_busy += cost;
        rc = ipc_vertex(h, 'x', e, cost, &x);
        if (rc == PM_OK)
            rc = ipc_arc(h, ed->src, x, d);
        if (rc == PM_OK)
            rc = ipc_arc(h, x, ed->dst, 0);
    }
    return rc;
}

/* The node-weighted IPC graph of m into h (empty, from pm_graph_create). */
static int ipc_build(const pm_graph *g, const pm_map *m, const int64_t *a, const int64_t *b,
                     pm_graph *h, pm_ipc *out)
{
    uint32_t n = g->nnodes;
    int rc = PM_OK;
    for (uint32_t v = 0; v < n && rc == PM_OK; v++)
        rc = ipc_vertex(h, 'a', v, a[v], NULL);
    for (uint32_t v = 0; v < n && rc == PM_OK; v++)
        rc = ipc_vertex(h, 'b', v, b[v], NULL);
    for (uint32_t v = 0; v < n && rc == PM_OK; v++)
        rc = ipc_arc(h, v, n + v, 0);
    for (uint32_t c = 0; c < m->ncores && rc == PM_OK; c++)
        for (uint32_t i = m->off[c]; i < m->off[c + 1] && rc == PM_OK; i++) {
            bool last = i + 1 == m->off[c + 1];
            uint32_t next = m->order[last ? m->off[c] : i + 1];
            rc = ipc_arc(h, n + m->order[i], next, last ? 1 : 0);
        }
    if (rc == PM_OK)
        rc = ipc_data_edges(g, m, h, out);
    if (g->platform.interconnect != PM_BUS)
        out->bus_busy = 0;
    return rc == PM_OK ? pm_graph_finalize(h) : rc;
}

/* The maximum cycle ratio of h into out->period; a cycle without delay is
 * a deadlock of the map. */
static int ipc_ratio(const pm_graph *g, const pm_graph *h, pm_ipc *out, pm_diag *diag)
{
    pm_bound_opts bo = { .max_critical = 1, .max_parts = 1 };
    pm_bound b;
    int rc = pm_bound_compute(h, &bo, &b, NULL);
    if (rc == PM_EZERODELAY) {
        pm_diag_set(diag, g->file, 0, 0,
                    "the map deadlocks: a cycle of its cores' orders and data edges "
                    "carries no delay once the lags are applied");
        return PM_EDEADLOCK;
    }
    if (rc == PM_OK)
        out->period = b.has_loop ? b.iteration_bound : pm_rat_int(0);
    pm_bound_free(&b);
    return rc;
}

int pm_ipc_compute(const pm_graph *g, const pm_map *m, pm_ipc *out, pm_diag *diag)
{
    if (!out)
        return PM_EINVAL;
    memset(out, 0, sizeof *out);
    if (!g || !m || !g->finalized)
        return PM_EINVAL;
    if (!pm_graph_is_single_rate(g))
        return PM_EUNSUPPORTED;
    int rc = pm_map_check(m, g, diag);
    if (rc == PM_OK)
        rc = ipc_check(g, m, false, diag);
    if (rc)
        return rc;
    size_t n = g->nnodes;
    int64_t *a = malloc((n + 1) * sizeof *a), *b = malloc((n + 1) * sizeof *b);
    out->ncores = m->ncores;
    out->core_busy = calloc((size_t)m->ncores + 1, sizeof *out->core_busy);
    pm_graph *h = pm_graph_create("ipc");
    rc = a && b && h && out->core_busy ? PM_OK : PM_ENOMEM;
    if (rc == PM_OK)
        rc = ipc_weights(g, m, a, b, out);
    if (rc == PM_OK)
        rc = ipc_build(g, m, a, b, h, out);
    if (rc == PM_OK)
        rc = ipc_ratio(g, h, out, diag);
    free(a);
    free(b);
    pm_graph_destroy(h);
    if (rc)
        pm_ipc_free(out);
    return rc;
}
