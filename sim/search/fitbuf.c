/*
 * fitbuf.c - paced runs of a plan's map and their buffers (fitbuf.h): the
 * interval, the pace of each simulated node, the most tokens per scenario
 * edge, and the search for the smallest capacities that keep a paced run
 * up.  The runs themselves are the simulator's (sim/engine/, pm_sim_run).
 * Nothing here prints.
 */
#include "pacemap/fitbuf.h"

#include <stdlib.h>
#include <string.h>

int pm_fitbuf_interval(const pm_graph *g, pm_rat *out, pm_diag *diag)
{
    const pm_platform *p = &g->platform;
    if (!p->clock_hz || !p->rate_hz || p->clock_hz > INT64_MAX || p->rate_hz > INT64_MAX) {
        pm_diag_set(diag, g->file, 0, 0, "a paced run needs 'clock' and 'rate' in the scenario "
                                         "(the input delivers a sample every clock/rate cycles)");
        return PM_EPLATFORM;
    }
    return pm_rat_make((int64_t)p->clock_hz, (int64_t)p->rate_hz, out);
}

int64_t pm_fitbuf_word_bytes(const pm_graph *g)
{
    int64_t b = g->platform.word_bytes;
    return b > 0 ? b : PM_FITBUF_WORD_BYTES;
}

/* Source node u has an input edge (in) / an output edge (out) from or to
 * another node. */
static void fitbuf_roles(const pm_graph *src, bool *in, bool *out)
{
    for (uint32_t e = 0; e < src->nedges; e++)
        if (src->edges[e].src != src->edges[e].dst)
            in[src->edges[e].dst] = true, out[src->edges[e].src] = true;
}

static int fitbuf_pace_arrays(const pm_plan *p, pm_sim_pace *o, bool *in, bool *out)
{
    const pm_graph *g = p->graph;
    uint32_t *count = calloc(g->nnodes + 1, sizeof *count);
    uint32_t *phase = calloc(g->nnodes + 1, sizeof *phase);
    bool *input = calloc(g->nnodes + 1, sizeof *input);
    bool *sink = calloc(g->nnodes + 1, sizeof *sink);
    o->count = count, o->phase = phase, o->input = input, o->sink = sink;
    if (!count || !phase || !input || !sink)
        return PM_ENOMEM;
    bool any_sink = false;
    for (uint32_t u = 0; u < p->source->nnodes; u++)
        any_sink |= !out[u];
    for (uint32_t v = 0; v < g->nnodes; v++) {
        uint32_t u = p->origin ? p->origin[v] : v;
        count[v] = p->rep ? (uint32_t)p->rep[u] : 1;
        phase[v] = v > 0 && p->origin && p->origin[v - 1] == u ? phase[v - 1] + 1 : 0;
        input[v] = !in[u];
        sink[v] = !out[u] || !any_sink;
    }
    return PM_OK;
}

int pm_fitbuf_pace_init(const pm_plan *p, pm_rat interval, int64_t jitter, uint64_t seed,
                        pm_sim_pace *out)
{
    memset(out, 0, sizeof *out);
    out->interval = interval, out->jitter = jitter, out->seed = seed;
    uint32_t n = p->source->nnodes;
    bool *in = calloc(n + 1, sizeof *in), *outs = calloc(n + 1, sizeof *outs);
    int rc = in && outs ? PM_OK : PM_ENOMEM;
    if (!rc) {
        fitbuf_roles(p->source, in, outs);
        rc = fitbuf_pace_arrays(p, out, in, outs);
    }
    free(in), free(outs);
    if (rc)
        pm_fitbuf_pace_free(out);
    return rc;
}

void pm_fitbuf_pace_free(pm_sim_pace *pc)
{
    if (!pc)
        return;
    free((void *)pc->count), free((void *)pc->phase);
    free((void *)pc->input), free((void *)pc->sink);
    memset(pc, 0, sizeof *pc);
}

/* ---- tokens of multirate edges ------------------------------------------ */

/* One change of a buffer's count: `d` tokens at time t. */
typedef struct fitbuf_ev {
    int64_t t, d;
} fitbuf_ev;

static int fitbuf_ev_cmp(const void *a, const void *b)
{
    const fitbuf_ev *x = a, *y = b;
    if (x->t != y->t)
        return (x->t > y->t) - (x->t < y->t);
    return (x->d > y->d) - (x->d < y->d); /* pops (negative) first */
}

static int64_t fitbuf_floordiv(int64_t a, int64_t b)
{
    int64_t q = a / b;
    return (a % b != 0 && (a < 0) != (b < 0)) ? q - 1 : q;
}

/* Times of every recorded firing: begin and end of (v, k) at k * n + v. */
typedef struct fitbuf_times {
    int64_t *begin, *end;
    uint32_t n;
    uint64_t N;
} fitbuf_times;

/* Events of scenario edge pe: its token runs as the expansion makes them
 * (producer firing i, consumer firing j, len tokens), each popped at every
 * begin of j and pushed at every end of i (sched/graph/expand.c walks the
 * same runs). */
static size_t fitbuf_edge_events(const pm_plan *p, const pm_edge *pe, const uint32_t *first,
                                 const fitbuf_times *tm, fitbuf_ev *ev)
{
    int64_t pr = pe->produce, c = pe->consume, d = pe->delay;
    int64_t qu = (int64_t)p->rep[pe->src], T = qu * pr;
    size_t n = 0;
    for (int64_t t = 0; t < T;) {
        int64_t j = t / c, I = fitbuf_floordiv(t - d, pr);
        int64_t next = (j + 1) * c;
        if (d + (I + 1) * pr < next)
            next = d + (I + 1) * pr;
        next = next < T ? next : T;
        int64_t i = I - fitbuf_floordiv(I, qu) * qu, len = next - t;
        uint32_t pv = first[pe->src] + (uint32_t)i, cv = first[pe->dst] + (uint32_t)j;
        for (uint64_t k = 0; k < tm->N; k++) {
            ev[n++] = (fitbuf_ev){ tm->begin[k * tm->n + cv], -len };
            ev[n++] = (fitbuf_ev){ tm->end[k * tm->n + pv], len };
        }
        t = next;
    }
    return n;
}

static int64_t fitbuf_sweep(fitbuf_ev *ev, size_t n, int64_t initial)
{
    qsort(ev, n, sizeof *ev, fitbuf_ev_cmp);
    int64_t occ = initial, most = initial;
    for (size_t i = 0; i < n; i++) {
        occ += ev[i].d;
        most = occ > most ? occ : most;
    }
    return most;
}

static int fitbuf_times_fill(const pm_plan *p, const pm_sim_result *r, fitbuf_times *tm)
{
    tm->n = p->graph->nnodes;
    tm->N = r->iterations;
    if (r->recorded < r->iterations)
        return PM_EINVAL;
    tm->begin = malloc((tm->N * tm->n + 1) * sizeof *tm->begin);
    tm->end = malloc((tm->N * tm->n + 1) * sizeof *tm->end);
    if (!tm->begin || !tm->end)
        return PM_ENOMEM;
    for (size_t i = 0; i < r->ntrace; i++) {
        const pm_sim_firing *f = &r->trace[i];
        if (f->iteration < tm->N) {
            tm->begin[f->iteration * tm->n + f->node] = f->begin;
            tm->end[f->iteration * tm->n + f->node] = f->end;
        }
    }
    return PM_OK;
}

static int fitbuf_multirate_tokens(const pm_plan *p, const pm_map *m, const fitbuf_times *tm,
                                   int64_t *tokens)
{
    const pm_graph *src = p->source;
    uint32_t *first = calloc(src->nnodes + 1, sizeof *first);
    if (!first)
        return PM_ENOMEM;
    for (uint32_t u = 0; u + 1 <= src->nnodes; u++)
        first[u + 1] = first[u] + (uint32_t)p->rep[u];
    int rc = PM_OK;
    for (uint32_t e = 0; e < src->nedges && !rc; e++) {
        const pm_edge *pe = &src->edges[e];
        tokens[e] = -1;
        if (m->core_of[first[pe->src]] == m->core_of[first[pe->dst]])
            continue;
        size_t runs = p->rep[pe->src] + p->rep[pe->dst];
        fitbuf_ev *ev = malloc((2 * runs * tm->N + 1) * sizeof *ev);
        if (!ev) {
            rc = PM_ENOMEM;
            break;
        }
        size_t n = fitbuf_edge_events(p, pe, first, tm, ev);
        tokens[e] = fitbuf_sweep(ev, n, pe->delay);
        free(ev);
    }
    free(first);
    return rc;
}

int pm_fitbuf_tokens(const pm_plan *p, const pm_map *m, const pm_sim_result *r,
                     int64_t *tokens)
{
    if (!p->multirate) {
        memcpy(tokens, r->max_tokens, r->nedges * sizeof *tokens);
        return PM_OK;
    }
    fitbuf_times tm = { 0 };
    int rc = fitbuf_times_fill(p, r, &tm);
    if (!rc)
        rc = fitbuf_multirate_tokens(p, m, &tm, tokens);
    free(tm.begin), free(tm.end);
    return rc;
}

/* ---- the fit ------------------------------------------------------------ */

int pm_fitbuf_keeps_up(const pm_graph *g, const pm_map *m, const pm_sim_opts *paced,
                       bool *keeps, pm_diag *diag)
{
    pm_sim_result r;
    int rc = pm_sim_run(g, m, paced, &r, diag);
    bool ok = rc == PM_OK && r.pace.overruns == 0;
    pm_sim_result_free(&r);
    if (rc == PM_OK && ok) {
        pm_sim_opts o = *paced;
        o.pace = NULL, o.record = 0;
        rc = pm_sim_run(g, m, &o, &r, diag);
        ok = rc == PM_OK && pm_rat_cmp(r.period, paced->pace->interval) <= 0;
        pm_sim_result_free(&r);
    }
    *keeps = ok;
    if (rc == PM_EDEADLOCK)
        pm_diag_clear(diag);
    return rc == PM_EDEADLOCK ? PM_OK : rc;
}

/* Least capacity of edge e in [lo, cap[e]] that keeps up, the others held. */
static int fitbuf_bisect(const pm_graph *g, const pm_map *m, pm_sim_opts *o, uint32_t *cap,
                         uint32_t e, uint32_t lo, pm_diag *diag)
{
    uint32_t hi = cap[e]; /* keeps up */
    while (lo < hi) {
        uint32_t mid = lo + (hi - lo) / 2;
        cap[e] = mid;
        bool keeps = false;
        int rc = pm_fitbuf_keeps_up(g, m, o, &keeps, diag);
        if (rc)
            return rc;
        if (keeps)
            hi = mid;
        else
            lo = mid + 1;
    }
    cap[e] = hi;
    return PM_OK;
}

/* Start: the unbounded run's most tokens, doubled until the run keeps up
 * (a FIFO's room is checked at the producer's begin, tokens counted from
 * its end, so the count alone may fall one short). */
static int fitbuf_start(const pm_graph *g, const pm_map *m, pm_sim_opts *o, uint32_t *cap,
                        pm_diag *diag)
{
    pm_sim_opts u = *o;
    u.edge_cap = NULL;
    pm_sim_result r;
    int rc = pm_sim_run(g, m, &u, &r, diag);
    if (rc)
        return rc;
    for (uint32_t e = 0; e < g->nedges; e++)
        cap[e] = r.max_tokens[e] < 0 ? 0 : (uint32_t)(r.max_tokens[e] > 0 ? r.max_tokens[e] : 1);
    pm_sim_result_free(&r);
    for (int round = 0; round < 24; round++) {
        bool keeps = false;
        if ((rc = pm_fitbuf_keeps_up(g, m, o, &keeps, diag)) != 0 || keeps)
            return rc;
        if (round == 0 && (rc = pm_fitbuf_keeps_up(g, m, &u, &keeps, diag)) != 0)
            return rc;
        if (round == 0 && !keeps) {
            pm_diag_set(diag, g->file, 0, 0, "the map does not keep up with the input even "
                                             "with unbounded buffers: no capacities to fit");
            return PM_EUNSUPPORTED;
        }
        for (uint32_t e = 0; e < g->nedges; e++)
            cap[e] = cap[e] && cap[e] < (UINT32_C(1) << 30) ? cap[e] * 2 : cap[e];
    }
    pm_diag_set(diag, g->file, 0, 0, "no capacities found that keep up");
    return PM_EUNSUPPORTED;
}

int pm_fitbuf_fit(const pm_graph *g, const pm_map *m, const pm_sim_opts *paced, uint32_t *cap,
                  pm_diag *diag)
{
    if (!paced || !paced->pace || !pm_graph_is_single_rate(g)) {
        pm_diag_set(diag, g->file, 0, 0, "fitting buffers needs a paced run of a single-rate "
                                         "graph");
        return PM_EUNSUPPORTED;
    }
    pm_sim_opts o = *paced;
    o.fifo_cap = 0, o.edge_cap = cap, o.record = 0;
    int rc = fitbuf_start(g, m, &o, cap, diag);
    for (uint32_t e = 0; e < g->nedges && !rc; e++) {
        if (!cap[e])
            continue;
        int64_t d = g->edges[e].delay;
        uint32_t lo = d > 1 ? (uint32_t)d : 1;
        rc = fitbuf_bisect(g, m, &o, cap, e, lo, diag);
    }
    return rc;
}
