/*
 * sweep_cores.c - the cores of one sweep point: setting the count swept
 * (identical cores, or one class's cores with the other classes kept),
 * carrying an earlier point's map onto more cores, what a map puts on its
 * cores, and the exhaustive search that raises map_floor on small graphs.
 *
 * Why an earlier map may run on more cores: a map for fewer cores is also
 * a map for more, the extra cores idle, with the same transfers and the
 * same core orders, hence the same period.  So the period a sweep reports
 * never grows with the core count.
 * What it does not do: map (the plan module does) or simulate.
 */
#include "sweep_internal.h"

#include <stdlib.h>
#include <string.h>

#include "pacemap/mapper.h"

/* Search nodes of the exhaustive occupancy search per point: enough for
 * the small graphs it is meant for, small enough to keep a sweep fast. */
#define SC_SEARCH_NODES 300000u

static uint32_t sc_first_core(const pm_platform *pl, uint32_t k)
{
    uint32_t first = 0;
    for (uint32_t c = 0; c < k; c++)
        first += pl->class_count[c];
    return first;
}

/* A pin that changing class k's count from `old` to `n` would move or
 * drop: cores are numbered in the order the classes are written. */
static int sc_check_pins(const pm_graph *g, uint32_t k, uint32_t n, pm_diag *diag)
{
    const pm_platform *pl = &g->platform;
    uint32_t first = sc_first_core(pl, k), old = pl->class_count[k];
    for (uint32_t v = 0; v < g->nnodes; v++) {
        const pm_node *nd = &g->nodes[v];
        uint32_t pin = nd->pin_core;
        if (pin == PM_NONE || pin < first || n == old)
            continue;
        if (pin >= first + old) {
            pm_diag_set(diag, g->file, nd->line, nd->col,
                        "node '%s' is pinned to core %u, numbered after the '%s' cores: "
                        "their count moves it (pin it to its class instead)",
                        pm_graph_node_name(g, v), pin, pl->class_names[k]);
            return PM_EPLATFORM;
        }
        if (pin - first >= n) {
            pm_diag_set(diag, g->file, nd->line, nd->col,
                        "node '%s' is pinned to core %u, '%s' core %u, but there are only %u",
                        pm_graph_node_name(g, v), pin, pl->class_names[k], pin - first, n);
            return PM_EPLATFORM;
        }
    }
    return PM_OK;
}

/* Give class k of g `n` cores, the other classes keeping theirs. */
static int sc_class_count(pm_graph *g, uint32_t k, uint32_t n, pm_diag *diag)
{
    pm_platform *pl = &g->platform;
    if (k >= pl->nclasses || n == 0)
        return PM_EINVAL;
    int rc = sc_check_pins(g, k, n, diag);
    if (rc != PM_OK || pl->class_count[k] == n)
        return rc;
    uint32_t total = pl->ncores - pl->class_count[k] + n;
    uint32_t *cc = calloc(total, sizeof *cc);
    if (!cc)
        return PM_ENOMEM;
    pl->class_count[k] = n;
    for (uint32_t c = 0, core = 0; c < pl->nclasses; c++)
        for (uint32_t i = 0; i < pl->class_count[c]; i++)
            cc[core++] = c;
    free(pl->core_class);
    pl->core_class = cc;
    pl->ncores = total;
    return PM_OK;
}

int sweep_set_count(pm_plan *p, const pm_sweep_opts *o, uint32_t count, pm_diag *diag)
{
    if (!o->by_class) {
        if (p->graph->platform.ncores == count)
            return PM_OK;
        return pm_plan_set_procs(p, count, diag);
    }
    int rc = sc_class_count(p->source, o->vary_class, count, diag);
    if (rc == PM_OK && p->graph != p->source)
        rc = sc_class_count(p->graph, o->vary_class, count, diag);
    return rc;
}

uint32_t sweep_count_of(const pm_graph *g, const pm_sweep_opts *o)
{
    return o->by_class ? g->platform.class_count[o->vary_class] : g->platform.ncores;
}

/* The core of g that core c of a map made with `from` cores of the varied
 * class becomes: same class, same place within it. */
static uint32_t sc_core_onto(const pm_graph *g, const pm_sweep_opts *o, uint32_t from,
                             uint32_t c)
{
    if (!o->by_class)
        return c;
    uint32_t first = sc_first_core(&g->platform, o->vary_class);
    return c < first + from ? c : c - from + g->platform.class_count[o->vary_class];
}

int sweep_map_onto(const pm_map *m, const pm_graph *g, const pm_sweep_opts *o,
                   uint32_t from, pm_map **out)
{
    uint32_t n = g->platform.ncores;
    const uint32_t **lists = calloc((size_t)n + 1, sizeof *lists);
    uint32_t *counts = calloc((size_t)n + 1, sizeof *counts);
    int rc = lists && counts ? PM_OK : PM_ENOMEM;
    for (uint32_t c = 0; rc == PM_OK && c < m->ncores; c++) {
        uint32_t to = sc_core_onto(g, o, from, c);
        if (to >= n) {
            rc = PM_EINVAL;
            break;
        }
        lists[to] = m->order + m->off[c];
        counts[to] = m->off[c + 1] - m->off[c];
    }
    if (rc == PM_OK)
        rc = pm_map_create(n, m->nnodes, lists, counts, out);
    if (rc == PM_OK)
        memcpy((*out)->lag, m->lag, m->nnodes * sizeof *m->lag);
    free(lists);
    free(counts);
    return rc;
}

/* What the map puts on its cores per iteration: the simulator's busy
 * cycles (recv + run + send), node cycles on the busiest core, the largest
 * node at its time on its core's class, idle cores, the bus. */
void sweep_core_facts(const pm_graph *g, const pm_map *m, const pm_sim_result *r,
                      pm_sweep_point *pt)
{
    pt->busiest = 0;
    pt->busiest_core = 0;
    pt->idle_cores = 0;
    for (uint32_t c = 0; c < m->ncores; c++) {
        pt->idle_cores += m->off[c] == m->off[c + 1];
        if (c < r->ncores && r->core_busy[c] > pt->busiest) {
            pt->busiest = r->core_busy[c];
            pt->busiest_core = c;
        }
    }
    pt->busiest_run = 0;
    pt->largest = PM_NONE;
    pt->largest_cycles = 0;
    for (uint32_t v = 0; v < g->nnodes; v++) {
        uint32_t c = m->core_of[v];
        int64_t t = pm_graph_cycles_on(g, v, g->platform.core_class[c]);
        if (c == pt->busiest_core)
            pt->busiest_run += t;
        if (pt->largest == PM_NONE || t > pt->largest_cycles) {
            pt->largest = v;
            pt->largest_cycles = t;
        }
    }
    pt->bus_busy = r->bus ? r->bus_busy : 0;
}

/* Whether the exhaustive search applies: identical cores, no pins, few
 * nodes (pm_mapper_exact's own conditions). */
static bool sc_search_fits(const pm_graph *g)
{
    if (g->platform.nclasses != 1 || g->nnodes == 0 || g->nnodes > PM_MAPPER_EXACT_MAX_NODES)
        return false;
    for (uint32_t v = 0; v < g->nnodes; v++)
        if (g->nodes[v].pin_core != PM_NONE || g->nodes[v].pin_class != PM_NONE ||
            g->nodes[v].cycles < 0)
            return false;
    return true;
}

/* A core runs each of its nodes, and its sends and receives, once per
 * iteration, so every map's period is at least its busiest occupancy, and
 * so at least the smallest busiest occupancy over all maps.  When the
 * search completes, that smallest value is proven and raises map_floor. */
int sweep_search_floor(const pm_graph *g, pm_sweep_point *pt)
{
    pt->floor_searched = false;
    if (!sc_search_fits(g))
        return PM_OK;
    int64_t upper = 1;
    for (uint32_t v = 0; v < g->nnodes; v++)
        upper += g->nodes[v].cycles; /* all on one core, plus one: reachable */
    uint32_t *assign = malloc(((size_t)g->nnodes + 1) * sizeof *assign);
    if (!assign)
        return PM_ENOMEM;
    int64_t best = 0;
    bool proven = false;
    int rc = pm_mapper_exact(g, SC_SEARCH_NODES, upper, assign, &best, &proven);
    free(assign);
    if (rc == PM_EUNSUPPORTED)
        return PM_OK;
    if (rc == PM_OK && proven && pm_rat_cmp(pm_rat_int(best), pt->floors.map_floor) > 0) {
        pt->floors.map_floor = pm_rat_int(best);
        pt->floors.map_binding = PM_FLOOR_SEARCH;
        pt->floor_searched = true;
    }
    return rc;
}
