/*
 * sim.c - the self-timed simulator (sim.h): the entry point, and what both
 * engines share.
 *
 * Two ways to run the same semantics (docs/simulation.md):
 *  - the compiled pass (sim_p2p.c): point-to-point links and no zero-delay
 *    cycle in the IPC graph; the max-plus recursion evaluated iteration by
 *    iteration in one topological order (fastest, cannot deadlock);
 *  - the causal engine (sim_causal.c): a bus, or a map that may deadlock;
 *    cores fire whatever is ready, sleep on wake-up lists, and the bus
 *    grants the oldest request once nothing can fire any more.
 * pm_sim_run checks its input, has sim_prep.c build the arrays and rings,
 * runs one engine (sim_loop) and gathers the result.  Shared here: the
 * growth of the token queues, the trace records, and the bookkeeping at
 * the end of each iteration (fingerprints for the steady state, latency).
 * Not here: preparation (sim_prep.c), the engines' loops, token counts
 * (sim_tokens.c), the end-of-run analysis (period, chain, deadlock cycle:
 * sim_report.c).  Nothing here prints.
 */
#include "pacemap/sim.h"

#include <stdlib.h>
#include <string.h>

#include "sim_internal.h"

/* ---- token counts ----------------------------------------------------- */

#define SIM_OCC_LIMIT (UINT32_C(1) << 24) /* waiting times kept per edge */

int sim_occ_grow(sim_occ *o)
{
    uint32_t nc = o->cap ? o->cap * 2 : 4;
    /* one edge's queue is capped, and so are all queues together: many
     * edges piling up at once must not take the machine's memory */
    if (o->cap >= SIM_OCC_LIMIT || (uint64_t)nc * sizeof *o->q > *o->budget)
        return PM_ELIMIT; /* tokens pile up without bound (pm_sim_run names the edge) */
    *o->budget -= (uint64_t)(nc - o->cap) * sizeof *o->q;
    int64_t *nq = malloc(nc * sizeof *nq);
    if (!nq)
        return PM_ENOMEM;
    for (uint32_t i = 0; i < o->len; i++)
        nq[i] = o->q[(o->head + i) & (o->cap - 1)];
    free(o->q);
    o->q = nq;
    o->cap = nc;
    o->head = 0;
    return PM_OK;
}

/* ---- iteration bookkeeping -------------------------------------------- */

void sim_slot_reset(sim *s, uint64_t k)
{
    uint64_t i = k & s->mask;
    s->f1[i] = 0;
    s->lmin[i] = INT64_MAX;
    s->lmax[i] = INT64_MIN;
}

/* Iteration k has fully begun: compare its fingerprint with the c before. */
void sim_iteration_done(sim *s, uint64_t k)
{
    uint64_t i = k & s->mask;
    int64_t lat = s->lmax[i] - s->lmin[i];
    if (lat > s->lat_max)
        s->lat_max = lat;
    if (k == 0)
        return;
    for (uint32_t c = 1; c <= s->cmax && c < k; c++) {
        uint64_t j = (k - c) & s->mask;
        if (s->f1[i] != s->f1[j])
            s->last_break[c] = k;
    }
    if (s->bus) /* the end of a bus run is disturbed: keep the past breaks */
        memcpy(&s->lbr[i * SIM_LBR], s->last_break, sizeof s->last_break);
}

/* ---- trace records ----------------------------------------------------- */

/* a (len of *cap items of `size` used) with room for one more; NULL when
 * out of memory (a is then untouched). */
static void *sim_record_room(void *a, size_t len, size_t *cap, size_t size)
{
    if (len < *cap)
        return a;
    size_t nc = *cap ? *cap * 2 : 64;
    void *na = realloc(a, nc * size);
    if (na)
        *cap = nc;
    return na;
}

int sim_record_firing(sim *s, uint32_t c, uint32_t v, uint64_t k, int64_t x)
{
    pm_sim_firing *nt = sim_record_room(s->trace, s->ntrace, &s->trace_cap, sizeof *nt);
    if (!nt)
        return PM_ENOMEM;
    s->trace = nt;
    int64_t st = x + s->recv[v];
    s->trace[s->ntrace++] = (pm_sim_firing){ v, c, k, x, st, st + s->t[v],
                                             st + s->t[v] + s->send[v] };
    return PM_OK;
}

int sim_record_transfer(sim *s, uint32_t xs, uint64_t k, int64_t req, int64_t gr)
{
    pm_sim_transfer *nt = sim_record_room(s->tr, s->ntr, &s->tr_cap, sizeof *nt);
    if (!nt)
        return PM_ENOMEM;
    s->tr = nt;
    pm_sim_transfer *t = &s->tr[s->ntr++];
    memset(t, 0, sizeof *t); /* no stray padding bytes in results */
    t->edge = s->x[xs].edge;
    t->iteration = k;
    t->request = req;
    t->grant = gr;
    t->arrival = gr + s->x[xs].cost;
    return PM_OK;
}

/* ---- entry point -------------------------------------------------------- */

static int sim_loop(sim *s, pm_diag *diag)
{
    if (!s->bus && !s->pace && !s->caps) { /* the compiled pass knows neither */
        int rc = sim_loop_p2p(s, diag);
        if (rc != 1)
            return rc;
    }
    return sim_loop_causal(s, diag);
}

static int sim_validate(const pm_graph *g, const pm_map *m, const pm_sim_opts *o,
                        pm_diag *diag)
{
    if (!g || !m || !o || !g->finalized) {
        pm_diag_set(diag, "", 0, 0, "simulate: missing or unfinished graph or map");
        return PM_EINVAL;
    }
    if (!pm_graph_is_single_rate(g)) {
        pm_diag_set(diag, g->file, 0, 0,
                    "the simulator runs single-rate graphs; expand multirate edges first");
        return PM_EUNSUPPORTED;
    }
    if (o->record > 0 && (uint64_t)o->record * (g->nnodes + g->nedges) > (UINT64_C(1) << 26)) {
        pm_diag_set(diag, g->file, 0, 0, "too many iterations to record (%u)", o->record);
        return PM_EINVAL;
    }
    return pm_map_check(m, g, diag);
}

uint32_t sim_prev_on_core(const sim *s, uint32_t c, uint32_t pos, uint32_t *back)
{
    *back = pos == 0;
    pos = pos ? pos - 1 : s->cnt[c] - 1;
    return s->m->order[s->first[c] + pos];
}

static int sim_collect(sim *s, pm_sim_result *r, pm_diag *diag)
{
    r->firings = s->firings;
    r->makespan = s->makespan;
    r->latency_max = s->lat_max;
    for (uint32_t c = 0; c < s->P; c++)
        if (s->iter[c] < s->R)
            return sim_report_deadlock(s, r, diag);
    r->iterations = s->N;
    int rc = sim_tokens_tail(s);
    for (uint32_t i = 0; i < s->nx; i++)
        sim_occ_flush(&s->occ[i]);
    if (!rc)
        rc = sim_report_steady(s, r);
    if (!rc)
        rc = sim_report_resources(s, r);
    if (!rc)
        rc = sim_report_chain(s, r);
    if (!rc && s->pace)
        rc = sim_pace_report(s, r);
    return rc;
}

/* Name the edge whose token counts outgrew SIM_OCC_LIMIT. */
static void sim_pile_up_message(const sim *s, pm_diag *diag)
{
    uint32_t best = 0;
    for (uint32_t i = 1; i < s->nx; i++)
        if (s->occ[i].len > s->occ[best].len)
            best = i;
    const pm_graph *g = s->g;
    const pm_edge *e = &g->edges[s->x[best].edge];
    pm_diag_set(diag, g->file, e->line, e->col,
                "tokens pile up without bound on edge '%s' -> '%s'; give a FIFO capacity "
                "(--fifo N) or fewer iterations (-n)", pm_graph_node_name(g, e->src), pm_graph_node_name(g, e->dst));
}

int pm_sim_run(const pm_graph *g, const pm_map *m, const pm_sim_opts *opts,
               pm_sim_result *out, pm_diag *diag)
{
    static const pm_sim_opts defaults = { 0 };
    memset(out, 0, sizeof *out);
    pm_diag_clear(diag);
    const pm_sim_opts *o = opts ? opts : &defaults;
    int rc = sim_validate(g, m, o, diag);
    if (rc)
        return rc;
    sim s;
    memset(&s, 0, sizeof s);
    rc = sim_init(&s, g, m, o, diag);
    if (!rc)
        rc = sim_loop(&s, diag);
    if (rc == PM_ELIMIT && diag && !diag->msg[0] && s.nx)
        sim_pile_up_message(&s, diag);
    if (!rc)
        rc = sim_collect(&s, out, diag);
    sim_free(&s);
    if (rc && rc != PM_EDEADLOCK)
        pm_sim_result_free(out);
    return rc;
}

void pm_sim_result_free(pm_sim_result *r)
{
    if (!r)
        return;
    free(r->waits);
    free(r->core_busy);
    free(r->utilisation);
    free(r->max_tokens);
    free(r->critical);
    free(r->trace);
    free(r->transfers);
    free(r->pace.releases);
    memset(r, 0, sizeof *r);
}

const char *pm_sim_cause_name(pm_sim_cause c)
{
    static const char *const names[] = { "start", "order", "edge", "bus", "fifo", "bus-busy",
                                         "release" };
    return (unsigned)c < sizeof names / sizeof names[0] ? names[c] : "?";
}
