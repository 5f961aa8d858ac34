/*
 * sweep_internal.h - what the pieces of the sweep share privately:
 * scheduling and simulating one core count, classifying a point's limit
 * (sweep_limit.c) and the what-ifs (sweep_whatif.c).  Not a public API.
 */
#ifndef PACEMAP_SWEEP_INTERNAL_H
#define PACEMAP_SWEEP_INTERNAL_H

#include "pacemap/map.h"
#include "pacemap/sim.h"
#include "pacemap/sweep.h"

/* Set the plan to `procs` cores (unless it already has them), map it with
 * pm_plan_map (or take o->map) and simulate the map on p->graph.  *use is
 * the map simulated; *own is the caller's to destroy (NULL with o->map),
 * like *r, also on error. */
int sweep_sched_sim(pm_plan *p, const pm_sweep_opts *o, uint32_t procs,
                    const int64_t *node_cycles, pm_map **own, const pm_map **use,
                    pm_sim_result *r, pm_diag *diag);

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

#endif
