/*
 * cmd_simulate_paced.c - the paced part of `pacemap simulate`: the input
 * delivers a sample every clock/rate cycles (--paced, with --jitter and
 * --seed for margin studies); latency from a release to the last sink end,
 * overruns, whether the map keeps up and, when not, by how much, the rate
 * it can sustain and what binds; buffers per scenario edge and per core;
 * with --fit-buffers the smallest capacities that keep up (written as
 * capacity lines with --emit-map).  The runs and the fit are the library's
 * (pm_sim_run, pacemap/fitbuf.h); this file calls and prints.
 */
#include "cmd_simulate_paced.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "pacemap/fitbuf.h"

#define SP_NAME_W 16
#define SP_RECORD_MAX (UINT64_C(1) << 26) /* firings a multirate paced run may record */

/* ---- running ------------------------------------------------------------ */

static int sp_opts(const pm_plan *scn, const sp_args *a, sp_state *st, pm_diag *d)
{
    int rc = pm_fitbuf_interval(scn->source, &st->interval, d);
    if (!rc)
        rc = pm_fitbuf_pace_init(scn, st->interval, a->jitter, a->seed, &st->pace);
    if (rc || !scn->multirate)
        return rc;
    uint64_t per = (uint64_t)scn->graph->nnodes + scn->graph->nedges;
    if (st->iterations * per > SP_RECORD_MAX) {
        pm_diag_set(d, scn->source->file, 0, 0, "a paced run of this multirate scenario keeps "
                    "every firing: at most %llu iterations (-n)",
                    (unsigned long long)(SP_RECORD_MAX / per));
        return PM_ELIMIT;
    }
    return PM_OK;
}

static int sp_tokens(const pm_plan *scn, const pm_map *m, sp_state *st)
{
    st->tokens = malloc(((size_t)scn->source->nedges + 1) * sizeof *st->tokens);
    if (!st->tokens)
        return PM_ENOMEM;
    return pm_fitbuf_tokens(scn, m, &st->r, st->tokens);
}

static int sp_fit(const pm_plan *scn, const pm_map *m, const pm_sim_opts *o, sp_state *st,
                  pm_diag *d)
{
    if (scn->multirate) {
        pm_diag_set(d, scn->source->file, 0, 0,
                    "--fit-buffers needs a single-rate scenario (capacities of multirate "
                    "edges are not modelled yet)");
        return PM_EUNSUPPORTED;
    }
    st->fit = calloc((size_t)scn->graph->nedges + 1, sizeof *st->fit);
    if (!st->fit)
        return PM_ENOMEM;
    return pm_fitbuf_fit(scn->graph, m, o, st->fit, d);
}

int sp_run(const pm_plan *scn, const pm_map *m, const pm_sim_opts *opts,
           const pm_sim_result *u, const sp_args *a, sp_state *st)
{
    pm_diag d;
    pm_diag_clear(&d);
    st->on = true;
    st->period = u->period;
    st->iterations = opts->iterations;
    int rc = sp_opts(scn, a, st, &d);
    pm_sim_opts o = *opts;
    o.pace = &st->pace;
    o.record = scn->multirate ? (uint32_t)opts->iterations : opts->record;
    if (!rc)
        rc = pm_sim_run(scn->graph, m, &o, &st->r, &d);
    if (!rc)
        rc = sp_tokens(scn, m, st);
    st->keeps_up = !rc && st->r.pace.overruns == 0 && pm_rat_cmp(u->period, st->interval) <= 0;
    if (!rc && a->fit)
        rc = sp_fit(scn, m, &o, st, &d);
    if (rc) {
        if (!d.msg[0])
            pm_diag_set(&d, scn->source->file, 0, 0, "%s", pm_error_name(rc));
        cli_error(&d);
    }
    return rc;
}

static int sp_write_map(const void *ctx, FILE *f)
{
    const void *const *p = ctx;
    return pm_plan_map_write(p[0], p[1], f);
}

int sp_emit_map(const pm_plan *scn, pm_map *m, const sp_args *a, const sp_state *st)
{
    uint32_t *keep = m->cap;
    if (st->fit)
        m->cap = st->fit;
    const void *ctx[2] = { scn, m };
    int rc = cli_write_file(a->emit_map, sp_write_map, ctx);
    m->cap = keep;
    return rc;
}

void sp_free(sp_state *st)
{
    pm_fitbuf_pace_free(&st->pace);
    pm_sim_result_free(&st->r);
    free(st->tokens);
    free(st->fit);
    memset(st, 0, sizeof *st);
}

/* ---- what binds --------------------------------------------------------- */

typedef enum sp_bind { SP_LOOP, SP_CORE, SP_TRANSFER, SP_BUS, SP_MAP } sp_bind;

/* From the unpaced run's chain (the cycle that sets its period): a loop of
 * the graph when the period is the iteration bound, else the bus, a
 * cross-core transfer, one core's work, or a loop the map made. */
static sp_bind sp_binds(const pm_map *m, const pm_graph *g, const pm_bound *b, bool has_bound,
                        const pm_sim_result *u, uint32_t *what)
{
    *what = PM_NONE;
    if (has_bound && b->has_loop && pm_rat_cmp(u->period, b->iteration_bound) == 0)
        return SP_LOOP;
    bool one_core = u->ncritical > 0;
    for (uint32_t i = 0; i < u->ncritical; i++) {
        const pm_sim_step *st = &u->critical[i];
        if (st->via == PM_CAUSE_BUS || st->via == PM_CAUSE_BUS_BUSY || st->node == PM_NONE)
            return SP_BUS;
        if (st->via == PM_CAUSE_EDGE && st->via_edge != PM_NONE &&
            m->core_of[g->edges[st->via_edge].src] != m->core_of[g->edges[st->via_edge].dst]) {
            *what = st->via_edge;
            return SP_TRANSFER;
        }
        one_core &= st->core == u->critical[0].core;
    }
    if (one_core)
        *what = u->critical[0].core;
    return one_core ? SP_CORE : SP_MAP;
}

static void sp_text_binds(const pm_plan *scn, const pm_map *m, const pm_bound *b,
                          bool has_bound, const pm_sim_result *u)
{
    const pm_graph *g = scn->graph;
    uint32_t w;
    switch (sp_binds(m, g, b, has_bound, u, &w)) {
    case SP_LOOP:
        printf("               binds: a loop of the graph (the iteration bound");
        if (b->ncritical)
            printf(", through '%s'", pm_graph_node_name(g, b->critical[0].nodes[0]));
        printf("); more cores do not help\n");
        break;
    case SP_BUS:
        printf("               binds: the bus (transfers one at a time)\n");
        break;
    case SP_TRANSFER:
        printf("               binds: the transfer '%s' -> '%s' on a loop of the map\n",
               pm_graph_node_name(g, g->edges[w].src), pm_graph_node_name(g, g->edges[w].dst));
        break;
    case SP_CORE:
        printf("               binds: core %u (its work per iteration)\n", w);
        break;
    case SP_MAP:
        printf("               binds: a loop the map made through its core orders\n");
        break;
    }
    if (u->ncritical > 1)
        printf("               (the chain that sets the period is listed below)\n");
}

/* ---- text --------------------------------------------------------------- */

static void sp_text_verdict(const pm_plan *scn, const pm_map *m, const pm_bound *b,
                            bool has_bound, const pm_sim_result *u, const sp_state *st)
{
    const pm_platform *p = &scn->source->platform;
    if (st->keeps_up) {
        printf("keeps up       yes: no overrun, the map's own period %.6g <= %.6g\n",
               pm_rat_to_double(u->period), pm_rat_to_double(st->interval));
        return;
    }
    double per = pm_rat_to_double(u->period), iv = pm_rat_to_double(st->interval);
    printf("keeps up       NO: ");
    if (per > iv)
        printf("the map needs %.6g cycles per iteration, %.4g x the interval (%.6g more)\n",
               per, per / iv, per - iv);
    else
        printf("%llu overrun%s (first at iteration %llu): back-pressure or jitter\n",
               (unsigned long long)st->r.pace.overruns, st->r.pace.overruns == 1 ? "" : "s",
               (unsigned long long)st->r.pace.first_overrun);
    if (per > 0) /* an unsteady run's period is an average: say so */
        printf("               sustains %s%.6g Hz (clock / period), %.6g Hz asked\n",
               u->steady ? "at most " : "about ", (double)p->clock_hz / per,
               (double)p->rate_hz);
    if (per > iv)
        sp_text_binds(scn, m, b, has_bound, u);
}

static void sp_text_latency(const sp_state *st)
{
    const pm_sim_paced *pc = &st->r.pace;
    printf("paced          a sample every %.6g cycles (%lld/%lld)", pm_rat_to_double(st->interval),
           (long long)st->interval.num, (long long)st->interval.den);
    if (st->pace.jitter)
        printf(", releases up to %lld late (seed %llu)", (long long)st->pace.jitter,
               (unsigned long long)st->pace.seed);
    printf("\nlatency        min %lld, mean %.6g, p99 %lld, max %lld cycles (release to sink end)\n",
           (long long)pc->latency_min, pc->latency_mean, (long long)pc->latency_p99,
           (long long)pc->latency_max);
    printf("overruns       %llu input firing%s began at or after the next sample's arrival "
           "(%llu iterations)\n", (unsigned long long)pc->overruns, pc->overruns == 1 ? "" : "s",
           (unsigned long long)st->r.iterations);
}

/* Bytes of n tokens of edge e of the source. */
static int64_t sp_bytes(const pm_graph *src, uint32_t e, int64_t n)
{
    return n * src->edges[e].words * pm_fitbuf_word_bytes(src);
}

static uint32_t sp_core_of(const pm_plan *scn, const pm_map *m, uint32_t u)
{
    uint32_t v = 0;
    while (scn->origin && v < scn->graph->nnodes && scn->origin[v] != u)
        v++;
    return m->core_of[scn->origin ? v : u];
}

static void sp_text_buffer_row(const pm_plan *scn, const pm_map *m, const sp_state *st,
                               uint32_t e, int64_t *per_core)
{
    const pm_graph *src = scn->source;
    const pm_edge *ed = &src->edges[e];
    uint32_t cu = sp_core_of(scn, m, ed->src), cv = sp_core_of(scn, m, ed->dst);
    char cores[24];
    snprintf(cores, sizeof cores, "%u>%u", cu, cv);
    int64_t bytes = sp_bytes(src, e, st->tokens[e]);
    per_core[cv] += bytes;
    printf("%-*.*s %-*.*s %7s %8lld %10lld", SP_NAME_W, SP_NAME_W,
           pm_graph_node_name(src, ed->src), SP_NAME_W, SP_NAME_W,
           pm_graph_node_name(src, ed->dst), cores, (long long)st->tokens[e], (long long)bytes);
    if (st->fit)
        printf(" %9u %10lld", st->fit[e], (long long)sp_bytes(src, e, st->fit[e]));
    putchar('\n');
}

/* Bytes the fitted capacities save against the unbounded paced run. */
static int64_t sp_saved(const pm_graph *src, const sp_state *st)
{
    int64_t saved = 0;
    for (uint32_t e = 0; st->fit && e < src->nedges; e++)
        if (st->tokens[e] >= 0)
            saved += sp_bytes(src, e, st->tokens[e] - (int64_t)st->fit[e]);
    return saved;
}

static void sp_text_buffers(const pm_plan *scn, const pm_map *m, const sp_state *st)
{
    const pm_graph *src = scn->source;
    int64_t *per_core = calloc((size_t)m->ncores + 1, sizeof *per_core);
    if (!per_core)
        return;
    printf("\nbuffers under pacing (%lld bytes per word; held on the receiving core)\n",
           (long long)pm_fitbuf_word_bytes(src));
    printf("%-*s %-*s %7s %8s %10s%s\n", SP_NAME_W, "from", SP_NAME_W, "to", "cores",
           "tokens", "bytes", st->fit ? "  capacity      bytes" : "");
    for (uint32_t e = 0; e < src->nedges; e++)
        if (st->tokens[e] >= 0)
            sp_text_buffer_row(scn, m, st, e, per_core);
    for (uint32_t c = 0; c < m->ncores; c++)
        if (per_core[c])
            printf("core %-4u total %lld bytes\n", c, (long long)per_core[c]);
    if (st->fit)
        printf("fitted capacities: %lld bytes less than the unbounded paced run holds\n",
               (long long)sp_saved(src, st));
    free(per_core);
}

void sp_text(const pm_plan *scn, const pm_map *m, const pm_bound *b, bool has_bound,
             const pm_sim_result *u, const sp_state *st)
{
    putchar('\n');
    sp_text_latency(st);
    sp_text_verdict(scn, m, b, has_bound, u, st);
    sp_text_buffers(scn, m, st);
}

/* ---- JSON --------------------------------------------------------------- */

static void sp_json_pace(pm_json *j, const sp_state *st)
{
    const pm_sim_paced *pc = &st->r.pace;
    pm_json_key(j, "paced");
    pm_json_object_begin(j);
    pm_json_key(j, "interval");
    pm_json_rat(j, st->interval);
    pm_json_key(j, "latency");
    pm_json_object_begin(j);
    pm_json_key(j, "min");
    pm_json_int(j, pc->latency_min);
    pm_json_key(j, "max");
    pm_json_int(j, pc->latency_max);
    pm_json_key(j, "mean");
    pm_json_double(j, pc->latency_mean);
    pm_json_key(j, "p99");
    pm_json_int(j, pc->latency_p99);
    pm_json_object_end(j);
    pm_json_key(j, "overruns");
    pm_json_uint(j, pc->overruns);
    pm_json_key(j, "keeps_up");
    pm_json_bool(j, st->keeps_up);
    pm_json_key(j, "jitter");
    pm_json_int(j, st->pace.jitter);
    pm_json_key(j, "seed");
    pm_json_uint(j, st->pace.seed);
    pm_json_object_end(j);
}

static void sp_json_edge(pm_json *j, const pm_graph *src, uint32_t e)
{
    pm_json_key(j, "from");
    pm_json_string(j, pm_graph_node_name(src, src->edges[e].src));
    pm_json_key(j, "to");
    pm_json_string(j, pm_graph_node_name(src, src->edges[e].dst));
    pm_json_key(j, "edge");
    pm_json_uint(j, e);
}

/* max_tokens (under pacing, one entry per scenario edge) and buffers. */
static void sp_json_buffers(pm_json *j, const pm_graph *src, const sp_state *st, bool fit)
{
    pm_json_key(j, fit ? "buffers" : "max_tokens");
    pm_json_array_begin(j);
    for (uint32_t e = 0; e < src->nedges; e++) {
        if (st->tokens[e] < 0)
            continue;
        pm_json_object_begin(j);
        sp_json_edge(j, src, e);
        int64_t n = fit ? (int64_t)st->fit[e] : st->tokens[e];
        pm_json_key(j, fit ? "capacity" : "tokens");
        pm_json_int(j, n);
        pm_json_key(j, "bytes");
        pm_json_int(j, sp_bytes(src, e, n));
        pm_json_object_end(j);
    }
    pm_json_array_end(j);
}

void sp_json(pm_json *j, const pm_plan *scn, const pm_map *m, const sp_state *st)
{
    (void)m;
    sp_json_pace(j, st);
    sp_json_buffers(j, scn->source, st, false);
    if (st->fit) {
        sp_json_buffers(j, scn->source, st, true);
        pm_json_key(j, "buffers_saved_bytes");
        pm_json_int(j, sp_saved(scn->source, st));
    }
    pm_json_key(j, "word_bytes");
    pm_json_int(j, pm_fitbuf_word_bytes(scn->source));
}
