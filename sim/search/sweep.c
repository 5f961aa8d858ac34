/*
 * sweep.c - the speedup sweep: for each core count of a range, map the
 * plan (pm_plan_map: the list schedule, every firing of a multirate node
 * on that node's core, the refinement when asked) or take the caller's
 * map, simulate, take the floors and classify the limit (sweep_limit.c);
 * then speedups, the saturation point and, through sweep_whatif.c, what
 * would move it.  Multirate scenarios are swept on their expansion, the
 * plan's graph; the plan's core count is restored before returning.
 *
 * What it does not do: print (the sweep command does) or choose a core
 * count's map itself (the plan module does).
 */
#include "sweep_internal.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

const char *pm_sweep_limit_name(pm_limit_kind k)
{
    switch (k) {
    case PM_LIMIT_LOOP: return "loop";
    case PM_LIMIT_MAPPING: return "mapping";
    case PM_LIMIT_CORES: return "cores";
    case PM_LIMIT_NODE: return "node";
    case PM_LIMIT_BUS: return "bus";
    }
    return "?";
}

uint32_t pm_sweep_min_procs(const pm_graph *g)
{
    uint32_t need = 1;
    for (uint32_t v = 0; g && v < g->nnodes; v++)
        if (g->nodes[v].pin_core != PM_NONE && g->nodes[v].pin_core >= need)
            need = g->nodes[v].pin_core + 1;
    return need;
}

void pm_sweep_free(pm_sweep *s)
{
    if (!s)
        return;
    for (uint32_t i = 0; s->points && i < s->npoints; i++) {
        sweep_limit_free(&s->points[i].limit);
        pm_map_destroy(s->points[i].map);
    }
    free(s->points);
    pm_bound_free(&s->bound);
    sweep_whatif_free(&s->whatif);
    memset(s, 0, sizeof *s);
}

/* The map of a point: a copy of the caller's, or the plan's for these
 * cores.  The plan options are built here, in one place. */
static int sweep_own_map(pm_plan *p, const pm_sweep_opts *o, pm_map **out, pm_diag *diag)
{
    if (o->map) {
        int rc = pm_map_check(o->map, p->graph, diag);
        uint32_t now = sweep_count_of(p->graph, o);
        return rc == PM_OK ? sweep_map_onto(o->map, p->graph, o, now, out) : rc;
    }
    pm_plan_opts po = {.sched = o->sched, .refine = o->refine,
                       .mapper = o->refine ? PM_PLAN_MAPPER_PERIOD : PM_PLAN_MAPPER_LIST};
    return pm_plan_map(p, o->plan ? o->plan : &po, NULL, out, diag);
}

static int sweep_simulate(const pm_graph *g, const pm_sweep_opts *o, const pm_map *m,
                          pm_sim_result *r, pm_diag *diag)
{
    pm_sim_opts so = {.iterations = o->iterations};
    memset(r, 0, sizeof *r);
    return pm_sim_run(g, m, &so, r, diag);
}

static uint32_t sweep_cross_edges(const pm_graph *g, const pm_map *m)
{
    uint32_t n = 0;
    for (uint32_t e = 0; e < g->nedges; e++)
        n += m->core_of[g->edges[e].src] != m->core_of[g->edges[e].dst];
    return n;
}

/* Prefix a diagnostic from a lower layer with the core count it concerns. */
static void sweep_diag_procs(pm_diag *diag, const pm_graph *g, const pm_sweep_opts *o,
                             uint32_t count)
{
    if (!diag)
        return;
    char msg[sizeof diag->msg];
    int n = o->by_class ? snprintf(msg, sizeof msg, "with %u '%s' cores: ", count,
                                   g->platform.class_names[o->vary_class])
                        : snprintf(msg, sizeof msg, "with %u cores: ", count);
    snprintf(msg + n, sizeof msg - (size_t)n, "%.*s", (int)(sizeof msg) - n - 1,
             diag->msg[0] ? diag->msg : "failed");
    memcpy(diag->msg, msg, sizeof msg);
}

/* One sweep in progress: the point with the lowest period so far. */
typedef struct sweep_ctx {
    pm_plan *p;
    const pm_sweep_opts *o;
    pm_sweep *s;
    uint32_t best; /* index, or PM_NONE before the first point */
} sweep_ctx;

/* An earlier count's map had a lower period: run it on these cores, the
 * extra ones idle, and keep it when it does better here than our own. */
static int sweep_reuse(const sweep_ctx *x, pm_sweep_point *pt, pm_sim_result *r,
                       pm_diag *diag)
{
    const pm_sweep_point *b = &x->s->points[x->best];
    const pm_graph *g = x->p->graph;
    pm_map *m = NULL;
    pm_sim_result r2;
    memset(&r2, 0, sizeof r2);
    int rc = sweep_map_onto(b->map, g, x->o, b->count, &m);
    if (rc == PM_OK)
        rc = sweep_simulate(g, x->o, m, &r2, diag);
    if (rc == PM_OK && pm_rat_cmp(r2.period, r->period) < 0) {
        pm_map_destroy(pt->map);
        pt->map = m;
        m = NULL;
        pt->map_count = b->map_count;
        pm_sim_result_free(r);
        *r = r2;
        memset(&r2, 0, sizeof r2);
    }
    pm_map_destroy(m);
    pm_sim_result_free(&r2);
    return rc;
}

/* The floors at these cores: they depend on the count only. */
static int sweep_point_floors(const pm_graph *g, const pm_bound *b, pm_sweep_point *pt)
{
    pt->procs = g->platform.ncores;
    int rc = pm_bound_floors(g, b, pt->procs, &pt->floors);
    return rc == PM_OK ? sweep_search_floor(g, pt) : rc;
}

void sweep_own_point(pm_plan *p, const pm_sweep_opts *o, const pm_bound *b, sweep_own *w)
{
    pm_sweep_point *pt = w->pt;
    pm_diag_clear(&w->diag);
    memset(&w->r, 0, sizeof w->r);
    int rc = sweep_set_count(p, o, pt->count, &w->diag);
    if (rc == PM_OK)
        rc = sweep_own_map(p, o, &pt->map, &w->diag);
    if (rc == PM_OK)
        rc = sweep_simulate(p->graph, o, pt->map, &w->r, &w->diag);
    if (rc == PM_OK) {
        pt->own_period = w->r.period;
        pt->map_count = pt->count;
        rc = sweep_point_floors(p->graph, b, pt);
    }
    w->rc = rc;
}

/* Core facts and the limit of a simulated point. */
static int sweep_measure(const pm_graph *g, pm_sweep *s, pm_sweep_point *pt,
                         const pm_sim_result *r)
{
    pt->period = r->period;
    pt->steady = r->steady;
    pt->latency = r->latency_steady;
    pt->cross_edges = sweep_cross_edges(g, pt->map);
    sweep_core_facts(g, pt->map, r, pt);
    return sweep_limit_classify(g, pt->map, &s->bound, r, pt);
}

/* Point i after its own part: an earlier count's map when that did
 * better, then what limits it.  In core-count order, on the caller's plan. */
static int sweep_point(sweep_ctx *x, uint32_t i, sweep_own *w, pm_diag *diag)
{
    pm_sweep_point *pt = &x->s->points[i];
    int rc = w->rc;
    if (rc != PM_OK && diag)
        *diag = w->diag;
    if (rc == PM_OK)
        rc = sweep_set_count(x->p, x->o, pt->count, diag);
    const pm_graph *g = x->p->graph;
    if (rc == PM_OK && x->best != PM_NONE &&
        pm_rat_cmp(x->s->points[x->best].period, w->r.period) < 0)
        rc = sweep_reuse(x, pt, &w->r, diag);
    if (rc == PM_OK)
        rc = sweep_measure(g, x->s, pt, &w->r);
    if (rc != PM_OK)
        sweep_diag_procs(diag, g, x->o, pt->count);
    else if (x->best == PM_NONE || pm_rat_cmp(pt->period, x->s->points[x->best].period) < 0)
        x->best = i;
    return rc;
}

static void sweep_speedups(pm_sweep *s)
{
    double p0 = pm_rat_to_double(s->points[0].period);
    for (uint32_t i = 0; i < s->npoints; i++) {
        pm_sweep_point *pt = &s->points[i];
        double p = pm_rat_to_double(pt->period);
        pt->speedup = p > 0 && p0 > 0 ? p0 / p : NAN;
        pt->efficiency = pt->speedup * s->points[0].procs / pt->procs;
    }
}

/* Saturation: the smallest index whose period no later point beats (a
 * backward pass keeps the smallest later period). */
static void sweep_saturation(pm_sweep *s)
{
    uint32_t n = s->npoints, sat = n - 1, best = n - 1;
    pm_rat later = s->points[n - 1].period;
    for (uint32_t i = n - 1; i-- > 0;) {
        pm_rat p = s->points[i].period;
        if (pm_rat_cmp(p, later) <= 0)
            sat = i;
        if (pm_rat_cmp(p, s->points[best].period) <= 0)
            best = i;
        if (pm_rat_cmp(p, later) < 0)
            later = p;
    }
    const pm_sweep_point *p = &s->points[sat];
    pm_rat fixed = pm_rat_max(p->floors.node, p->floors.has_loop ? p->floors.loop : p->floors.node);
    s->saturation = sat;
    s->best = best;
    s->saturation_proven = p->steady && pm_rat_cmp(p->period, fixed) == 0;
    s->saturation_reached = s->saturation_proven || sat + 1 < n;
}

static int sweep_check_classes(const pm_graph *g, const pm_sweep_opts *o, pm_diag *diag)
{
    const pm_platform *pl = &g->platform;
    if (o->by_class && (!pl->classes_named || o->vary_class >= pl->nclasses)) {
        pm_diag_set(diag, g->file, 0, 0, "no core class to vary: the platform has %s",
                    pl->classes_named ? "no such class" : "identical cores");
        return PM_EPLATFORM;
    }
    if (!o->by_class && pl->classes_named &&
        (o->procs_from != pl->ncores || o->procs_to != pl->ncores)) {
        pm_diag_set(diag, g->file, 0, 0,
                    "the platform declares core classes: sweep the count of one class, "
                    "or only its own %u cores", pl->ncores);
        return PM_EPLATFORM;
    }
    return PM_OK;
}

static int sweep_check(const pm_graph *g, const pm_sweep_opts *o, pm_diag *diag)
{
    if (!g || !o || !g->finalized || o->procs_from == 0 || o->procs_from > o->procs_to ||
        o->faster < 0)
        return PM_EINVAL;
    if (g->nnodes == 0) {
        pm_diag_set(diag, g->file, 0, 0, "nothing to sweep: the graph has no nodes");
        return PM_EINVAL;
    }
    if (o->map && (o->procs_from != o->procs_to || o->map->ncores != o->procs_from ||
                   o->by_class))
        return PM_EINVAL;
    if (o->procs_to - o->procs_from >= PM_SWEEP_MAX_POINTS) {
        pm_diag_set(diag, g->file, 0, 0, "at most %d core counts per sweep",
                    PM_SWEEP_MAX_POINTS);
        return PM_ELIMIT;
    }
    return sweep_check_classes(g, o, diag);
}

static int sweep_points_in_order(pm_plan *p, const pm_sweep_opts *o, pm_sweep *s,
                                 sweep_own *own, pm_diag *diag)
{
    sweep_ctx x = {p, o, s, PM_NONE};
    int rc = PM_OK;
    for (uint32_t i = 0; rc == PM_OK && i < s->npoints; i++)
        rc = sweep_point(&x, i, &own[i], diag);
    return rc;
}

static int sweep_points(pm_plan *p, const pm_sweep_opts *o, pm_sweep *s, pm_diag *diag)
{
    s->npoints = o->procs_to - o->procs_from + 1;
    s->points = calloc(s->npoints, sizeof *s->points);
    sweep_own *own = calloc(s->npoints, sizeof *own);
    int rc = s->points && own ? PM_OK : PM_ENOMEM;
    for (uint32_t i = 0; rc == PM_OK && i < s->npoints; i++) {
        own[i].pt = &s->points[i];
        own[i].pt->count = o->procs_from + i;
    }
    if (rc == PM_OK)
        rc = sweep_own_points(p, o, &s->bound, own, s->npoints);
    if (rc == PM_OK)
        rc = sweep_points_in_order(p, o, s, own, diag);
    for (uint32_t i = 0; own && i < s->npoints; i++)
        pm_sim_result_free(&own[i].r);
    free(own);
    return rc;
}

int pm_sweep_run(pm_plan *plan, const pm_sweep_opts *opts, pm_sweep *out, pm_diag *diag)
{
    if (!out)
        return PM_EINVAL;
    memset(out, 0, sizeof *out);
    out->vary_class = PM_NONE;
    pm_graph *g = plan ? plan->graph : NULL;
    int rc = sweep_check(g, opts, diag);
    if (rc != PM_OK)
        return rc;
    if (opts->by_class)
        out->vary_class = opts->vary_class;
    uint32_t orig = sweep_count_of(g, opts);
    rc = pm_bound_compute(g, NULL, &out->bound, diag);
    if (rc == PM_OK)
        rc = sweep_points(plan, opts, out, diag);
    if (rc == PM_OK) {
        sweep_speedups(out);
        sweep_saturation(out);
        rc = sweep_whatif_run(plan, opts, out, diag);
    }
    int rc2 = sweep_set_count(plan, opts, orig, NULL);
    return rc != PM_OK ? rc : rc2;
}
