/*
 * mapper_multi.c - the period-first mapper for a multirate scenario: it
 * assigns the scenario's own nodes (every firing of a node on its node's
 * core, the rule of plan.h) and judges each assignment by the period of
 * its expansion.
 *
 * Why on the nodes: a map file names the scenario's nodes, one core and
 * one lag each (map.h), so a search over firings would find maps no file
 * can hold.  An assignment becomes a map of the expansion through
 * pm_map_expand (orders from one round of the retimed graph), which is
 * timed as pm_judge_period says: the IPC cycle ratio with point-to-point
 * links, the simulator with a bus.
 *
 * Lags tried for each assignment: none, and "one round per crossing":
 * along every edge between strongly connected parts of the scenario the
 * lag grows by one when the edge crosses cores (longest paths over the
 * condensation, a part's nodes sharing one lag).  Such lags never make a
 * retimed delay negative, and a transfer then has a whole round to arrive,
 * which is what lets a pipeline run at its busiest core's pace.
 */
#include "mapper_internal.h"

#include "pacemap/ipc.h"
#include "pacemap/order.h"
#include "pacemap/sim.h"

#include <stdlib.h>
#include <string.h>

#define MPM_SIM_ITERATIONS 128u /* a bus candidate's simulated run */

int mp_judge_period(const pm_graph *g, const pm_map *m, pm_rat *period, pm_diag *diag)
{
    if (g->platform.interconnect != PM_BUS) {
        pm_ipc ipc;
        int rc = pm_ipc_compute(g, m, &ipc, diag);
        if (rc == PM_OK)
            *period = ipc.period;
        pm_ipc_free(&ipc);
        return rc;
    }
    pm_sim_opts so = { .iterations = MPM_SIM_ITERATIONS };
    pm_sim_result r;
    int rc = pm_sim_run(g, m, &so, &r, diag);
    if (rc == PM_OK)
        *period = r.period;
    pm_sim_result_free(&r);
    return rc;
}

typedef struct mpm {
    const pm_graph *src, *xg;
    const uint64_t *rep;
    const uint32_t *origin; /* firing -> scenario node */
    uint32_t n, P;
    int64_t *t;           /* n * P: cycles of node v on core k, -1: cannot run */
    int64_t *occ;         /* P: occupancy of the expansion's cores */
    pm_scc scc;
    uint32_t *byrank;     /* nodes sorted by rank */
    int64_t *plag;        /* per part */
    uint32_t evals, max_evals;
    struct timespec deadline;
    bool timed_out;
} mpm;

typedef struct mpm_best {
    pm_map *xm;      /* map of the expansion */
    pm_rat period;
    int64_t lags;    /* sum of the nodes' lags: fewer rounds in flight */
    uint32_t *assign;
} mpm_best;

static bool mpm_out(mpm *c)
{
    if (c->timed_out || c->evals >= c->max_evals)
        return true;
    struct timespec now;
    clock_gettime(CLOCK_MONOTONIC, &now);
    c->timed_out = now.tv_sec > c->deadline.tv_sec
                   || (now.tv_sec == c->deadline.tv_sec && now.tv_nsec >= c->deadline.tv_nsec);
    return c->timed_out;
}

/* One round per crossing, longest paths over the condensation (parts are
 * numbered so that edges between parts go to lower numbers). */
static void mpm_cross_lags(mpm *c, const uint32_t *assign, uint32_t *lag)
{
    const pm_graph *g = c->src;
    for (uint32_t k = c->scc.ncomp; k-- > 0;) {
        int64_t best = 0;
        for (uint32_t i = c->scc.start[k]; i < c->scc.start[k + 1]; i++) {
            uint32_t v = c->scc.order[i];
            for (uint32_t j = g->in_off[v]; j < g->in_off[v + 1]; j++) {
                uint32_t u = g->edges[g->in_edge[j]].src;
                if (c->scc.comp[u] == k)
                    continue;
                int64_t l = c->plag[c->scc.comp[u]] + (assign[u] != assign[v]);
                best = l > best ? l : best;
            }
        }
        c->plag[k] = best;
    }
    for (uint32_t v = 0; v < c->n; v++) { /* past the cap the map is refused: no candidate */
        int64_t l = c->plag[c->scc.comp[v]];
        lag[v] = l > (int64_t)PM_MAP_MAX_LAG ? PM_MAP_MAX_LAG + 1u : (uint32_t)l;
    }
}

/* The node map of assign (cores' nodes in rank order) with lags or none. */
static int mpm_node_map(mpm *c, const uint32_t *assign, bool lags, pm_map **out)
{
    uint32_t *counts = calloc((size_t)c->P + 1, sizeof *counts);
    uint32_t *flat = malloc(((size_t)c->n + 1) * sizeof *flat);
    uint32_t *at = calloc((size_t)c->P + 1, sizeof *at);
    const uint32_t **lists = calloc((size_t)c->P + 1, sizeof *lists);
    int rc = counts && flat && at && lists ? PM_OK : PM_ENOMEM;
    if (rc == PM_OK) {
        for (uint32_t v = 0; v < c->n; v++)
            counts[assign[v]]++;
        for (uint32_t k = 1; k < c->P; k++)
            at[k] = at[k - 1] + counts[k - 1];
        for (uint32_t k = 0; k < c->P; k++)
            lists[k] = flat + at[k];
        for (uint32_t i = 0; i < c->n; i++)
            flat[at[assign[c->byrank[i]]]++] = c->byrank[i];
        rc = pm_map_create(c->P, c->n, lists, counts, out);
    }
    if (rc == PM_OK && lags)
        mpm_cross_lags(c, assign, (*out)->lag);
    free(counts);
    free(flat);
    free(at);
    free(lists);
    return rc;
}

/* Judge assign with and without lags; keep the better when it beats best.
 * An assignment whose orders cannot run (PM_EDEADLOCK, PM_EMAP) is no
 * candidate.  *better says whether best changed. */
static int mpm_consider(mpm *c, const uint32_t *assign, mpm_best *best, bool *better,
                        pm_diag *diag)
{
    *better = false;
    for (int lags = 0; lags < 2; lags++) {
        pm_map *nm = NULL, *xm = NULL;
        pm_rat period = pm_rat_int(0);
        c->evals++;
        int rc = mpm_node_map(c, assign, lags, &nm);
        if (rc == PM_OK)
            rc = pm_map_expand(c->src, c->rep, nm, &xm, diag);
        if (rc == PM_OK)
            rc = mp_judge_period(c->xg, xm, &period, diag);
        int64_t sum = 0;
        for (uint32_t v = 0; rc == PM_OK && v < c->n; v++)
            sum += nm->lag[v];
        pm_map_destroy(nm);
        if (rc == PM_EDEADLOCK || rc == PM_EMAP || rc == PM_ELIMIT) {
            pm_map_destroy(xm);
            continue;
        }
        if (rc != PM_OK) {
            pm_map_destroy(xm);
            return rc;
        }
        int cmp = best->xm ? pm_rat_cmp(period, best->period) : -1;
        if (cmp < 0 || (cmp == 0 && sum < best->lags)) {
            pm_map_destroy(best->xm);
            best->xm = xm;
            best->period = period;
            best->lags = sum;
            memcpy(best->assign, assign, c->n * sizeof *assign);
            *better = true;
        } else {
            pm_map_destroy(xm);
        }
    }
    return PM_OK;
}

/* The busiest core's occupancy in the expansion under assign (its work,
 * sends and receives per iteration): a floor of the period, since each
 * core's order closes a loop of one round through all of it. */
static int64_t mpm_busiest(mpm *c, const uint32_t *assign)
{
    const pm_graph *x = c->xg;
    memset(c->occ, 0, c->P * sizeof *c->occ);
    for (uint32_t f = 0; f < x->nnodes; f++) {
        uint32_t v = c->origin[f];
        c->occ[assign[v]] += c->t[(size_t)v * c->P + assign[v]];
    }
    for (uint32_t e = 0; e < x->nedges; e++) {
        uint32_t a = assign[c->origin[x->edges[e].src]], b = assign[c->origin[x->edges[e].dst]];
        if (a != b) {
            c->occ[a] += x->platform.comm.send;
            c->occ[b] += x->platform.comm.recv;
        }
    }
    int64_t top = 0;
    for (uint32_t k = 0; k < c->P; k++)
        top = c->occ[k] > top ? c->occ[k] : top;
    return top;
}

/* One improving move of a node to another core (first improvement, nodes
 * in rank order, cores in index order), skipping moves whose busiest
 * occupancy already reaches the best period.  *moved when one was kept. */
static int mpm_move(mpm *c, uint32_t *assign, mpm_best *best, bool *moved, pm_diag *diag)
{
    *moved = false;
    for (uint32_t i = 0; i < c->n; i++) {
        uint32_t v = c->byrank[i], from = assign[v];
        for (uint32_t k = 0; k < c->P; k++) {
            if (mpm_out(c))
                return PM_OK;
            if (k == from || c->t[(size_t)v * c->P + k] < 0)
                continue;
            assign[v] = k;
            int rc = PM_OK;
            if (pm_rat_cmp(pm_rat_int(mpm_busiest(c, assign)), best->period) < 0)
                rc = mpm_consider(c, assign, best, moved, diag);
            if (rc != PM_OK || *moved)
                return rc;
            assign[v] = from;
        }
    }
    return PM_OK;
}

/* The starting map as it is, then its assignment re-ordered and lagged,
 * then moves while they help. */
static int mpm_search(mpm *c, const pm_map *start, mpm_best *best, pm_diag *diag)
{
    pm_map *xm = NULL;
    int rc = pm_map_expand(c->src, c->rep, start, &xm, diag);
    if (rc == PM_OK)
        rc = mp_judge_period(c->xg, xm, &best->period, diag);
    if (rc != PM_OK) {
        pm_map_destroy(xm);
        return rc;
    }
    best->xm = xm;
    best->lags = 0;
    for (uint32_t v = 0; v < c->n; v++)
        best->lags += start->lag[v];
    memcpy(best->assign, start->core_of, c->n * sizeof *best->assign);
    uint32_t *assign = malloc(((size_t)c->n + 1) * sizeof *assign);
    if (!assign)
        return PM_ENOMEM;
    memcpy(assign, start->core_of, c->n * sizeof *assign);
    bool moved = true;
    rc = mpm_consider(c, assign, best, &moved, diag);
    while (rc == PM_OK && !mpm_out(c)) {
        memcpy(assign, best->assign, c->n * sizeof *assign);
        rc = mpm_move(c, assign, best, &moved, diag);
        if (!moved)
            break;
    }
    free(assign);
    return rc;
}

/* Node times, the rank order (zero-delay order of the scenario, else the
 * starting map's lists), the loops. */
static int mpm_init(mpm *c, const pm_map *start, pm_diag *diag)
{
    const pm_graph *g = c->src;
    c->t = malloc(((size_t)c->n * c->P + 1) * sizeof *c->t);
    c->occ = calloc((size_t)c->P + 1, sizeof *c->occ);
    c->byrank = malloc(((size_t)c->n + 1) * sizeof *c->byrank);
    c->plag = NULL;
    if (!c->t || !c->occ || !c->byrank)
        return PM_ENOMEM;
    for (uint32_t v = 0; v < c->n; v++)
        for (uint32_t k = 0; k < c->P; k++)
            c->t[(size_t)v * c->P + k] = pm_graph_can_run(g, v, k)
                ? pm_graph_cycles_on(g, v, g->platform.core_class[k]) : -1;
    uint32_t count = 0;
    int rc = pm_order_zero_delay(g, PM_ORDER_SMALLEST, c->byrank, &count);
    if (rc == PM_OK && count < c->n)
        memcpy(c->byrank, start->order, c->n * sizeof *c->byrank);
    if (rc == PM_OK)
        rc = pm_scc_compute(g, NULL, NULL, &c->scc);
    if (rc == PM_OK) {
        c->plag = calloc((size_t)c->scc.ncomp + 1, sizeof *c->plag);
        rc = c->plag ? PM_OK : PM_ENOMEM;
    }
    (void)diag;
    return rc;
}

static void mpm_free(mpm *c)
{
    free(c->t);
    free(c->occ);
    free(c->byrank);
    free(c->plag);
    pm_scc_free(&c->scc);
}

static void mpm_deadline(mpm *c, const pm_mapper_opts *o)
{
    uint32_t ms = o->time_ms ? o->time_ms : PM_MAPPER_DEFAULT_MS;
    c->max_evals = o->max_evals ? o->max_evals : PM_MAPPER_DEFAULT_EVALS;
    clock_gettime(CLOCK_MONOTONIC, &c->deadline);
    c->deadline.tv_sec += (time_t)(ms / 1000);
    c->deadline.tv_nsec += (long)(ms % 1000) * 1000000L;
    if (c->deadline.tv_nsec >= 1000000000L) {
        c->deadline.tv_sec++;
        c->deadline.tv_nsec -= 1000000000L;
    }
}

int pm_mapper_map_multirate(const pm_graph *source, const uint64_t *rep,
                            const pm_graph *expansion, const uint32_t *origin,
                            const pm_map *start, const pm_mapper_opts *opts, pm_map **out,
                            pm_mapper_info *info, pm_diag *diag)
{
    static const pm_mapper_opts defaults = { 0 };
    pm_mapper_info local;
    pm_mapper_info *inf = info ? info : &local;
    memset(inf, 0, sizeof *inf);
    if (!out)
        return PM_EINVAL;
    *out = NULL;
    if (!source || !rep || !expansion || !origin || !start || !source->finalized
        || start->nnodes != source->nnodes || start->ncores != expansion->platform.ncores)
        return PM_EINVAL;
    mpm c = { .src = source, .xg = expansion, .rep = rep, .origin = origin,
              .n = source->nnodes, .P = expansion->platform.ncores };
    mpm_deadline(&c, opts ? opts : &defaults);
    mpm_best best = { 0 };
    int rc = mpm_init(&c, start, diag);
    best.assign = rc == PM_OK ? malloc(((size_t)c.n + 1) * sizeof *best.assign) : NULL;
    if (rc == PM_OK)
        rc = best.assign ? mpm_search(&c, start, &best, diag) : PM_ENOMEM;
    if (rc == PM_OK) {
        inf->period = best.period;
        inf->busiest = mpm_busiest(&c, best.assign);
        *out = best.xm;
        best.xm = NULL;
    }
    inf->evals = c.evals;
    inf->timed_out = c.timed_out;
    pm_map_destroy(best.xm);
    free(best.assign);
    mpm_free(&c);
    return rc;
}
