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
    for (uint32_t i = 0; s->points && i < s->npoints; i++)
        sweep_limit_free(&s->points[i].limit);
    free(s->points);
    pm_bound_free(&s->bound);
    sweep_whatif_free(&s->whatif);
    memset(s, 0, sizeof *s);
}

/* Both graphs of the plan share one core count; a platform with core
 * classes is left alone at its own (sweep_check allows only that). */
static int sweep_set_procs(pm_plan *p, uint32_t procs, pm_diag *diag)
{
    if (p->graph->platform.ncores == procs)
        return PM_OK;
    return pm_plan_set_procs(p, procs, diag);
}

int sweep_sched_sim(pm_plan *p, const pm_sweep_opts *o, uint32_t procs,
                    const int64_t *node_cycles, pm_map **own, const pm_map **use,
                    pm_sim_result *r, pm_diag *diag)
{
    *own = NULL;
    *use = o->map;
    pm_plan_opts po = {.sched = o->sched, .refine = o->refine};
    int rc = sweep_set_procs(p, procs, diag);
    if (rc == PM_OK && o->map)
        rc = pm_map_check(o->map, p->graph, diag);
    else if (rc == PM_OK)
        rc = pm_plan_map(p, &po, NULL, own, diag);
    if (rc != PM_OK)
        return rc;
    if (!o->map)
        *use = *own;
    pm_sim_opts so = {.iterations = o->iterations, .node_cycles = node_cycles};
    return pm_sim_run(p->graph, *use, &so, r, diag);
}

static uint32_t sweep_cross_edges(const pm_graph *g, const pm_map *m)
{
    uint32_t n = 0;
    for (uint32_t e = 0; e < g->nedges; e++)
        n += m->core_of[g->edges[e].src] != m->core_of[g->edges[e].dst];
    return n;
}

/* Prefix a diagnostic from a lower layer with the core count it concerns. */
static void sweep_diag_procs(pm_diag *diag, uint32_t procs)
{
    if (!diag)
        return;
    char msg[sizeof diag->msg];
    int n = snprintf(msg, sizeof msg, "with %u cores: ", procs);
    snprintf(msg + n, sizeof msg - (size_t)n, "%.*s", (int)(sizeof msg) - n - 1,
             diag->msg[0] ? diag->msg : "failed");
    memcpy(diag->msg, msg, sizeof msg);
}

static int sweep_point(pm_plan *p, const pm_sweep_opts *o, pm_sweep *s, uint32_t i,
                       pm_diag *diag)
{
    const pm_graph *g = p->graph;
    pm_sweep_point *pt = &s->points[i];
    pt->procs = o->procs_from + i;
    pm_map *own = NULL;
    const pm_map *m = NULL;
    pm_sim_result r;
    memset(&r, 0, sizeof r);
    int rc = sweep_sched_sim(p, o, pt->procs, NULL, &own, &m, &r, diag);
    if (rc == PM_OK)
        rc = pm_bound_floors(g, &s->bound, pt->procs, &pt->floors);
    if (rc == PM_OK) {
        pt->period = r.period;
        pt->steady = r.steady;
        pt->latency = r.latency_steady;
        pt->cross_edges = sweep_cross_edges(g, m);
        rc = sweep_limit_classify(g, m, &s->bound, &r, pt);
    } else {
        sweep_diag_procs(diag, pt->procs);
    }
    pm_sim_result_free(&r);
    pm_map_destroy(own);
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

static int sweep_check(const pm_graph *g, const pm_sweep_opts *o, pm_diag *diag)
{
    if (!g || !o || !g->finalized || o->procs_from == 0 || o->procs_from > o->procs_to ||
        o->faster < 0)
        return PM_EINVAL;
    if (g->nnodes == 0) {
        pm_diag_set(diag, g->file, 0, 0, "nothing to sweep: the graph has no nodes");
        return PM_EINVAL;
    }
    if (o->map && (o->procs_from != o->procs_to || o->map->ncores != o->procs_from))
        return PM_EINVAL;
    if (o->procs_to - o->procs_from >= PM_SWEEP_MAX_POINTS) {
        pm_diag_set(diag, g->file, 0, 0, "at most %d core counts per sweep",
                    PM_SWEEP_MAX_POINTS);
        return PM_ELIMIT;
    }
    if (g->platform.classes_named &&
        (o->procs_from != g->platform.ncores || o->procs_to != g->platform.ncores)) {
        pm_diag_set(diag, g->file, 0, 0,
                    "the platform declares core classes: only its own %u cores can be swept",
                    g->platform.ncores);
        return PM_EPLATFORM;
    }
    return PM_OK;
}

static int sweep_points(pm_plan *p, const pm_sweep_opts *o, pm_sweep *s, pm_diag *diag)
{
    s->npoints = o->procs_to - o->procs_from + 1;
    s->points = calloc(s->npoints, sizeof *s->points);
    if (!s->points)
        return PM_ENOMEM;
    for (uint32_t i = 0; i < s->npoints; i++) {
        int rc = sweep_point(p, o, s, i, diag);
        if (rc != PM_OK)
            return rc;
        if (o->progress)
            o->progress(o->progress_ctx, s->points[i].procs, i + 1, s->npoints);
    }
    return PM_OK;
}

int pm_sweep_run(pm_plan *plan, const pm_sweep_opts *opts, pm_sweep *out, pm_diag *diag)
{
    if (!out)
        return PM_EINVAL;
    memset(out, 0, sizeof *out);
    pm_graph *g = plan ? plan->graph : NULL;
    int rc = sweep_check(g, opts, diag);
    if (rc != PM_OK)
        return rc;
    uint32_t orig = g->platform.ncores;
    rc = pm_bound_compute(g, NULL, &out->bound, diag);
    if (rc == PM_OK)
        rc = sweep_points(plan, opts, out, diag);
    if (rc == PM_OK) {
        sweep_speedups(out);
        sweep_saturation(out);
        rc = sweep_whatif_run(plan, opts, out, diag);
    }
    int rc2 = sweep_set_procs(plan, orig, NULL);
    return rc != PM_OK ? rc : rc2;
}
