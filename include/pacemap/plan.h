/*
 * plan.h - the map every command uses: from a scenario as read to the map
 * of its nodes on the cores and the schedule that map gives.
 *
 * The pipeline: a multirate scenario is expanded to single rate
 * (pm_sdf_repetition, pm_sdf_check_iteration, pm_sdf_expand); the graph
 * analysed is mapped by the period-first mapper (mapper.h, the default),
 * or list-scheduled (pm_sched_list), with a multirate scenario's map then
 * made to keep every firing of a node on one core (the rule below), and
 * optionally a local search that moves nodes between cores while that
 * lowers the simulated period (pm_refine_map).
 *
 * Where a multirate node's firings go (the one rule, docs/multirate.md):
 * all on one core, in firing order, with the node's lag.  The
 * period-first mapper chooses that core (mapper.h), starting from the list
 * scheduler's choice, which is: node v goes to the core that ran the most
 * cycles of v's firings in the list schedule of the expansion, each firing
 * counting its cycles + 1 (so that zero-cycle firings count too); on a
 * tie, the lower core.  The nodes
 * of a core run in the order of their earliest firing's start in that
 * schedule (ties: the lower node id), and every firing of a node runs on
 * its node's core in firing order (pm_map_expand).
 *
 * Maps of a plan are maps of p->graph (the expansion for a multirate
 * scenario); map files name the scenario's own nodes (p->source).
 *
 * Ownership: a pm_plan is the caller's struct; pm_plan_init fills it and
 * pm_plan_free releases what it holds (safe on a zeroed or freed plan).
 * Maps and schedules returned are the caller's to destroy.  Not
 * thread-safe on one plan while pm_plan_set_procs runs.
 */
#ifndef PACEMAP_PLAN_H
#define PACEMAP_PLAN_H

#include <stdbool.h>
#include <stdint.h>
#include <stdio.h>

#include "pacemap/error.h"
#include "pacemap/graph.h"
#include "pacemap/map.h"
#include "pacemap/rational.h"
#include "pacemap/sched.h"

/* A scenario ready to be mapped. */
typedef struct pm_plan {
    pm_graph *graph;   /* analysed, scheduled and simulated: the scenario, or for
                          a multirate one its single-rate expansion (firings
                          named v#i); owned */
    pm_graph *source;  /* the scenario as written; owned; the same pointer as
                          graph for a single-rate scenario */
    uint64_t *rep;     /* repetition vector of source; NULL for single rate */
    uint32_t *origin;  /* graph node -> source node; NULL for single rate */
    bool multirate;
} pm_plan;

/* Which mapper pm_plan_map runs. */
typedef enum pm_plan_mapper {
    PM_PLAN_MAPPER_PERIOD = 0, /* the period-first mapper (mapper.h), the
                                  default: its maps carry lags, so one
                                  iteration's schedule does not time them
                                  (pm_plan_period does) */
    PM_PLAN_MAPPER_LIST        /* the list scheduler, then the refinement
                                  when asked: one iteration made short */
} pm_plan_mapper;

/* How pm_plan_map makes a map. */
typedef struct pm_plan_opts {
    const pm_sched_opts *sched; /* list scheduler options; NULL = defaults */
    bool refine;                /* then search for a map with a lower period
                                   (list scheduler only) */
    pm_plan_mapper mapper;      /* PM_PLAN_MAPPER_PERIOD unless chosen */
    uint32_t mapper_ms;         /* period-first time budget; 0 = its default */
} pm_plan_opts;

/*
 * Make a plan of finalized scenario `source`: a single-rate scenario is
 * used as it is; a multirate one gets its repetition vector, the check that
 * one iteration can run, and its expansion.
 * Ownership: *p takes source, also on failure (then it is destroyed and *p
 * zeroed).  Errors: PM_EINVAL (p or source NULL), those of
 * pm_sdf_repetition, pm_sdf_check_iteration and pm_sdf_expand
 * (PM_EINCONSISTENT, PM_ERANGE, PM_EDEADLOCK, PM_ELIMIT, PM_ENOMEM), diag
 * filled.
 */
int pm_plan_init(pm_plan *p, pm_graph *source, pm_diag *diag);

/* Free what the plan holds and zero it; NULL or a zeroed plan is a no-op. */
void pm_plan_free(pm_plan *p);

/*
 * Give the scenario and its expansion `procs` identical cores
 * (pm_graph_set_procs_override on source, then on graph when it is
 * another).  Errors: those of pm_graph_set_procs_override (PM_EPLATFORM for
 * core classes or a pin beyond procs, diag naming the node of source;
 * PM_ENOMEM); PM_EINVAL for a NULL plan.  On error the core counts may
 * differ: set them again before mapping.
 */
int pm_plan_set_procs(pm_plan *p, uint32_t procs, pm_diag *diag);

/*
 * The map of p->graph on its cores.  With o->mapper = PM_PLAN_MAPPER_PERIOD
 * (the default; o may be NULL) the period-first mapper's (mapper.h; for a
 * multirate scenario pm_mapper_map_multirate's, from the list scheduler's
 * map placed by the rule below); o->sched and o->refine are unused.  With PM_PLAN_MAPPER_LIST: the list schedule with o->sched, the
 * multirate rule, then pm_refine_map when o->refine (never a higher
 * simulated period than without).  *map is set on PM_OK.
 * When sched is not NULL, *sched is the timing of one iteration of that
 * map (pm_sched_from_map semantics) when the map has no lags, and NULL
 * when it has: one iteration's schedule ignores lags, so a lagged map is
 * timed by its period only (pm_plan_period).  Both are the caller's to
 * destroy, and are NULL on error.
 * Errors: PM_EINVAL (p, p->graph or map NULL); those of pm_sched_list,
 * pm_mapper_map, pm_map_expand, pm_refine_map and pm_sched_from_map
 * (PM_EZERODELAY, PM_EPLATFORM, PM_ENOMEM, ...), diag filled.  The plan is
 * not changed.
 */
int pm_plan_map(const pm_plan *p, const pm_plan_opts *o, pm_schedule **sched,
                pm_map **map, pm_diag *diag);

/* The period of a map, lags included. */
typedef struct pm_plan_timing {
    pm_rat period;   /* cycles per iteration of p->graph */
    bool exact;      /* true: the exact self-timed period; false: only the
                        average the simulator saw (no periodic regime in
                        its run) */
    bool simulated;  /* from the simulator (a bus) rather than the IPC ratio */
} pm_plan_timing;

/*
 * The self-timed period of map m of p->graph, lags included: with
 * point-to-point links the maximum cycle ratio of its IPC graph
 * (pm_ipc_compute, exact); with a bus the simulator's period over
 * PM_PLAN_TIMING_ITERATIONS iterations (pm_sim_run; exact when it reached
 * a periodic regime).  *out zeroed on error.
 * Errors: PM_EINVAL (an argument NULL); those of pm_ipc_compute and
 * pm_sim_run (PM_EMAP, PM_EDEADLOCK, PM_ERANGE, PM_ENOMEM), diag filled.
 */
#define PM_PLAN_TIMING_ITERATIONS 200u
int pm_plan_period(const pm_plan *p, const pm_map *m, pm_plan_timing *out, pm_diag *diag);

/*
 * Read a map file naming the nodes of p->source (pm_map_read_file) and
 * turn it into a map of p->graph: for a multirate scenario every firing of
 * a node on its node's core in firing order (pm_map_expand).  *out is
 * the caller's on PM_OK, NULL on error.  Errors: PM_EINVAL (an argument
 * NULL); those of pm_map_read_file and pm_map_expand (PM_EIO,
 * PM_ESYNTAX, PM_ENAME, PM_EMAP, PM_EDEADLOCK, ...), diag filled.
 */
int pm_plan_map_read(const pm_plan *p, const char *path, pm_map **out, pm_diag *diag);

/*
 * Write map m of p->graph as a `.map` file naming the scenario's own nodes
 * (for a multirate scenario the map is first collapsed to its nodes with
 * pm_map_collapse: each node on the core of its firing 0).  Errors:
 * PM_EINVAL (an argument NULL); those of pm_map_write and
 * pm_map_collapse (PM_EIO, PM_EMAP, PM_ENOMEM).  Nothing is owned or
 * kept.
 */
int pm_plan_map_write(const pm_plan *p, const pm_map *m, FILE *out);

#endif
