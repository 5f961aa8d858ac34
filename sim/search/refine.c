/*
 * refine.c - local search for a map with a lower simulated period (see
 * pacemap/refine.h).
 *
 * The search works on "units": the nodes of a single-rate graph, or the
 * scenario's nodes of a multirate one (all firings of a unit move
 * together).  A unit's place in its core's order is fixed by its start in
 * the original schedule, so every candidate map is one of the per-core
 * projections of a single valid order of the iteration.
 */
#include "pacemap/refine.h"

#include "pacemap/bound.h"
#include "pacemap/order.h"
#include "pacemap/sdf.h"
#include "pacemap/sim.h"

#include <stdlib.h>
#include <string.h>

typedef struct refine {
    const pm_graph *g;      /* graph simulated */
    const pm_graph *units;  /* graph whose nodes move: g or the scenario */
    const pm_refine_opts *o;
    uint32_t n, ncores;
    uint32_t *core;         /* per unit */
    int64_t *key;           /* per unit: start in the original schedule */
    uint32_t *rank;         /* per unit: tie-break, a topological rank */
    uint32_t *sorted;       /* scratch: units by (core, key, rank) */
    struct refine_item *items;
    uint32_t *counts;
    const uint32_t **lists;
    uint32_t evals, max_evals;
    pm_rat good_enough;     /* lower bound + 1 cycle: no move can gain more */
} refine;

/* Kahn's order on zero-delay edges (FIFO): a unit's rank comes after its
 * producers', so ties in start time keep data order. */
static int refine_ranks(refine *r)
{
    uint32_t *order = malloc(((size_t)r->n + 1) * sizeof *order), count = 0;
    int rc = order ? pm_order_zero_delay(r->units, PM_ORDER_FIFO, order, &count) : PM_ENOMEM;
    for (uint32_t v = 0; rc == PM_OK && v < r->n; v++)
        r->rank[v] = r->n; /* units on a zero-delay cycle (multirate) keep id order */
    for (uint32_t i = 0; rc == PM_OK && i < count; i++)
        r->rank[order[i]] = i;
    free(order);
    return rc;
}

/* Start cores and keys of the units from map m and schedule sc. */
static void refine_start(refine *r, const pm_map *m, const pm_schedule *sc)
{
    for (uint32_t v = 0; v < r->n; v++)
        r->key[v] = INT64_MAX;
    for (uint32_t x = 0; x < r->g->nnodes; x++) {
        uint32_t v = r->o->origin ? r->o->origin[x] : x;
        if (sc->slots[x].start < r->key[v]) {
            r->key[v] = sc->slots[x].start;
            r->core[v] = m->core_of[x];
        }
    }
}

typedef struct refine_item {
    uint32_t core, rank, unit;
    int64_t key;
} refine_item;

static int refine_cmp(const void *a, const void *b)
{
    const refine_item *x = a, *y = b;
    if (x->core != y->core)
        return x->core < y->core ? -1 : 1;
    if (x->key != y->key)
        return x->key < y->key ? -1 : 1;
    if (x->rank != y->rank)
        return x->rank < y->rank ? -1 : 1;
    return (x->unit > y->unit) - (x->unit < y->unit);
}

/* The map of g the units' cores give; PM_EDEADLOCK (and others) when a
 * multirate order cannot complete an iteration. */
static int refine_realize(refine *r, pm_map **out)
{
    memset(r->counts, 0, (size_t)r->ncores * sizeof *r->counts);
    for (uint32_t v = 0; v < r->n; v++)
        r->items[v] = (refine_item){ r->core[v], r->rank[v], v, r->key[v] };
    qsort(r->items, r->n, sizeof *r->items, refine_cmp);
    for (uint32_t i = 0; i < r->n; i++) {
        r->sorted[i] = r->items[i].unit;
        if (r->counts[r->items[i].core]++ == 0)
            r->lists[r->items[i].core] = &r->sorted[i];
    }
    pm_map *um = NULL;
    int rc = pm_map_create(r->ncores, r->n, r->lists, r->counts, &um);
    if (rc != PM_OK || !r->o->source) {
        *out = um;
        return rc;
    }
    rc = pm_map_expand(r->o->source, r->o->rep, um, out, NULL);
    pm_map_destroy(um);
    return rc;
}

/* Simulated period of the units' current cores; false when the map cannot
 * run (deadlock) or the run fails. */
static bool refine_period(refine *r, pm_rat *period)
{
    pm_map *m = NULL;
    r->evals++;
    if (refine_realize(r, &m) != PM_OK) {
        pm_map_destroy(m);
        return false;
    }
    pm_sim_opts so = { .iterations = r->o->iterations ? r->o->iterations : 64 };
    pm_sim_result res;
    memset(&res, 0, sizeof res);
    int rc = pm_sim_run(r->g, m, &so, &res, NULL);
    if (rc == PM_OK)
        *period = res.period;
    pm_sim_result_free(&res);
    pm_map_destroy(m);
    return rc == PM_OK;
}

/* Whether unit v may run on core c (pins and classes). */
static bool refine_allowed(const refine *r, uint32_t v, uint32_t c)
{
    return pm_graph_can_run(r->units, v, c);
}

/* One sweep over the units: first improving move of each; true if any. */
static bool refine_done(const refine *r, pm_rat best)
{
    return r->evals >= r->max_evals || pm_rat_cmp(best, r->good_enough) < 0;
}

static bool refine_pass(refine *r, pm_rat *best)
{
    bool any = false;
    for (uint32_t v = 0; v < r->n && !refine_done(r, *best); v++) {
        uint32_t home = r->core[v];
        for (uint32_t c = 0; c < r->ncores && !refine_done(r, *best); c++) {
            if (c == home || !refine_allowed(r, v, c))
                continue;
            pm_rat p;
            r->core[v] = c;
            if (refine_period(r, &p) && pm_rat_cmp(p, *best) < 0) {
                *best = p;
                any = true;
                break;
            }
            r->core[v] = home;
        }
    }
    return any;
}

/* When no single move helps: exchange the cores of two units (a loop split
 * across two cores often needs one node in and another out at once). */
static bool refine_swap_pass(refine *r, pm_rat *best)
{
    for (uint32_t u = 0; u < r->n && !refine_done(r, *best); u++) {
        for (uint32_t v = u + 1; v < r->n && !refine_done(r, *best); v++) {
            uint32_t cu = r->core[u], cv = r->core[v];
            if (cu == cv || !refine_allowed(r, u, cv) || !refine_allowed(r, v, cu))
                continue;
            pm_rat p;
            r->core[u] = cv;
            r->core[v] = cu;
            if (refine_period(r, &p) && pm_rat_cmp(p, *best) < 0) {
                *best = p;
                return true;
            }
            r->core[u] = cu;
            r->core[v] = cv;
        }
    }
    return false;
}

/* The lower bound for the map's cores plus one cycle: a period below it
 * cannot be beaten by enough to be worth more simulations.  Without a bound
 * (an error there) the search is not cut short. */
static void refine_floor(refine *r, const pm_graph *g, uint32_t ncores)
{
    r->good_enough = pm_rat_int(0);
    pm_bound b;
    pm_floors f;
    if (pm_bound_compute(g, NULL, &b, NULL) != PM_OK)
        return;
    if (pm_bound_floors(g, &b, ncores, &f) == PM_OK &&
        pm_rat_add(f.lower_bound, pm_rat_int(1), &r->good_enough) != PM_OK)
        r->good_enough = pm_rat_int(0);
    pm_bound_free(&b);
}

/* Evaluations a refinement may spend by default: a sweep refines one map
 * per core count, so large graphs get fewer simulations. */
static uint32_t refine_default_evals(const pm_graph *g, const pm_refine_opts *o)
{
    uint64_t iters = o->iterations ? o->iterations : 64;
    uint64_t per = iters * (g->nnodes ? g->nnodes : 1);
    uint64_t evals = PM_REFINE_FIRINGS / per;
    return evals > PM_REFINE_DEFAULT_EVALS ? PM_REFINE_DEFAULT_EVALS
           : evals < 4 ? 4 : (uint32_t)evals;
}

static void refine_free(refine *r)
{
    free(r->core);
    free(r->key);
    free(r->rank);
    free(r->sorted);
    free(r->items);
    free(r->counts);
    free(r->lists);
}

static int refine_init(refine *r, const pm_graph *g, const pm_map *m, const pm_refine_opts *o)
{
    memset(r, 0, sizeof *r);
    r->g = g;
    r->o = o;
    r->units = o->source ? o->source : g;
    r->n = r->units->nnodes;
    r->ncores = m->ncores;
    r->max_evals = o->max_evals ? o->max_evals : refine_default_evals(g, o);
    r->core = calloc((size_t)r->n + 1, sizeof *r->core);
    r->key = calloc((size_t)r->n + 1, sizeof *r->key);
    r->rank = calloc((size_t)r->n + 1, sizeof *r->rank);
    r->sorted = calloc((size_t)r->n + 1, sizeof *r->sorted);
    r->items = calloc((size_t)r->n + 1, sizeof *r->items);
    r->counts = calloc((size_t)r->ncores + 1, sizeof *r->counts);
    r->lists = calloc((size_t)r->ncores + 1, sizeof *r->lists);
    if (!r->core || !r->key || !r->rank || !r->sorted || !r->items || !r->counts || !r->lists)
        return PM_ENOMEM;
    refine_floor(r, g, m->ncores);
    return refine_ranks(r);
}

static int refine_copy(const pm_map *m, pm_map **out)
{
    const uint32_t **lists = calloc((size_t)m->ncores + 1, sizeof *lists);
    uint32_t *counts = calloc((size_t)m->ncores + 1, sizeof *counts);
    int rc = lists && counts ? PM_OK : PM_ENOMEM;
    for (uint32_t c = 0; rc == PM_OK && c < m->ncores; c++) {
        lists[c] = m->order + m->off[c];
        counts[c] = m->off[c + 1] - m->off[c];
    }
    if (rc == PM_OK)
        rc = pm_map_create(m->ncores, m->nnodes, lists, counts, out);
    free(lists);
    free(counts);
    return rc;
}

int pm_refine_map(const pm_graph *g, const pm_map *m, const pm_schedule *sc,
                  const pm_refine_opts *opts, pm_map **out, int *improved, pm_diag *diag)
{
    static const pm_refine_opts defaults = { 0 };
    const pm_refine_opts *o = opts ? opts : &defaults;
    *out = NULL;
    if (improved)
        *improved = 0;
    if (g->nnodes > PM_REFINE_MAX_NODES || m->ncores < 2)
        return refine_copy(m, out);
    pm_sim_opts so = { .iterations = o->iterations ? o->iterations : 64 };
    pm_sim_result res;
    memset(&res, 0, sizeof res);
    int rc = pm_sim_run(g, m, &so, &res, diag);
    pm_rat start = res.period, best = res.period;
    pm_sim_result_free(&res);
    if (rc != PM_OK)
        return rc;
    refine r;
    rc = refine_init(&r, g, m, o);
    if (rc == PM_OK) {
        refine_start(&r, m, sc);
        while (!refine_done(&r, best) &&
               (refine_pass(&r, &best) || refine_swap_pass(&r, &best)))
            ;
        rc = pm_rat_cmp(best, start) < 0 ? refine_realize(&r, out) : refine_copy(m, out);
    }
    if (rc == PM_OK && improved)
        *improved = pm_rat_cmp(best, start) < 0;
    refine_free(&r);
    return rc;
}
