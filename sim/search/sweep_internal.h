/*
 * sweep_internal.h - what the pieces of the sweep share privately: the
 * cores of a point, carrying maps onto more cores and the search floor
 * (sweep_cores.c), classifying a point's limit (sweep_limit.c) and the
 * what-ifs (sweep_whatif.c).  Not a public API.
 */
#ifndef PACEMAP_SWEEP_INTERNAL_H
#define PACEMAP_SWEEP_INTERNAL_H

#include "pacemap/map.h"
#include "pacemap/sim.h"
#include "pacemap/sweep.h"

/* Set the plan to `count` cores (identical cores, or the varied class's
 * cores) unless it already has them; PM_EPLATFORM (diag) for a pin the
 * change would move or drop. */
int sweep_set_count(pm_plan *p, const pm_sweep_opts *o, uint32_t count, pm_diag *diag);

/* The count the sweep varies, as g has it now. */
uint32_t sweep_count_of(const pm_graph *g, const pm_sweep_opts *o);

/* Map m, made when the varied count was `from`, onto g's cores now (same
 * class, same place within it; lags kept).  *out is the caller's. */
int sweep_map_onto(const pm_map *m, const pm_graph *g, const pm_sweep_opts *o,
                   uint32_t from, pm_map **out);

/* pt's busiest core, largest node, idle cores and bus time from map m and
 * its simulation r. */
void sweep_core_facts(const pm_graph *g, const pm_map *m, const pm_sim_result *r,
                      pm_sweep_point *pt);

/* Raise pt->floors.map_floor to the smallest busiest-core occupancy of any
 * map when an exhaustive search proves it (small graphs, identical cores,
 * no pins; else nothing changes). */
int sweep_search_floor(const pm_graph *g, pm_sweep_point *pt);

/* Fill pt->limit from the floors, the bound and the simulator's chain. */
int sweep_limit_classify(const pm_graph *g, const pm_map *m, const pm_bound *b,
                         const pm_sim_result *r, pm_sweep_point *pt);

void sweep_limit_free(pm_sweep_limit *l);

/* The what-ifs and next bottleneck for point s->saturation. */
int sweep_whatif_run(pm_plan *p, const pm_sweep_opts *o, pm_sweep *s, pm_diag *diag);

void sweep_whatif_free(pm_sweep_whatif *w);

/* The largest node of the copy's floors etc.: a pm_floors for `procs` from
 * a freshly computed bound of graph c. */
int sweep_floors_of(const pm_graph *c, uint32_t procs, pm_bound *b, pm_floors *f,
                    pm_diag *diag);

/* A deep copy of g (finalized or not); *out is the caller's, NULL on error. */
int sweep_graph_clone(const pm_graph *g, pm_graph **out);

/* What one point computes alone, whatever the others find: its own map
 * and simulation (pt->map, pt->own_period, r), its floors (pt->procs,
 * pt->floors, pt->floor_searched).  rc and diag tell how it went. */
typedef struct sweep_own {
    pm_sweep_point *pt;   /* pt->count set by the caller */
    int rc;
    pm_diag diag;
    pm_sim_result r;      /* the simulation of pt->map */
} sweep_own;

/* One point's own part (sweep.c), on plan p set to its cores. */
void sweep_own_point(pm_plan *p, const pm_sweep_opts *o, const pm_bound *b, sweep_own *w);

/* Every point's own part, on o->jobs threads (each on a copy of the
 * plan's scenario) or, with o->jobs <= 1, on p in the calling thread.
 * PM_ENOMEM when the threads' memory is not to be had; a point's own
 * failure is in its rc. */
int sweep_own_points(pm_plan *p, const pm_sweep_opts *o, const pm_bound *b, sweep_own *own,
                     uint32_t n);

/* fn(ctx, i, diag) for i in 0..n-1, on up to `jobs` threads (the calling
 * thread alone when jobs <= 1); each item must touch only its own part of
 * ctx.  Returns the error of the smallest failing i, with its diag. */
typedef int (*sweep_item_fn)(void *ctx, uint32_t i, pm_diag *diag);
int sweep_for_each(uint32_t jobs, uint32_t n, sweep_item_fn fn, void *ctx, pm_diag *diag);

#endif
