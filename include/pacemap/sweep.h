/*
 * sweep.h - how far more cores help: for each core count P of a range, map
 * the plan (pm_plan_map: the list schedule, every firing of a multirate
 * node on one core, and the refinement when asked), simulate the map
 * self-timed (pm_sim_run), compare the achieved period with the floors (pm_floors) and
 * name what limits it, with evidence and what-if numbers.
 *
 * The limit of one point, in the trade's words (docs/sweep.md states the
 * rule; T is the achieved period, L the iteration bound, N the largest
 * node, W/P the cores' work floor: the total work spread over P cores, or
 * with core classes the fractional-assignment floor of pm_floors.cores):
 *   loop     T == L: a loop of the graph sets the period; no core count or
 *            mapping does better.  Evidence: the loop (nodes, cycles,
 *            delays) - the simulator's critical chain when that chain is a
 *            loop of the graph on one core, else the bound's critical loop.
 *   node     T == N (and not L): the largest node; more cores cannot help.
 *   cores    T == W/P, or T == ceil(W/P) (a map puts whole nodes of whole
 *            cycles on each core, so some core carries at least that):
 *            every core is full, as far as whole nodes allow.
 *   mapping  T above every floor: the map made a loop of its own.  Evidence:
 *            the simulator's critical chain, a cycle of the inter-processor
 *            communication graph (Sriram & Bhattacharyya, "Embedded
 *            Multiprocessors: Scheduling and Synchronization", 2000): its
 *            nodes, cross-core transfers and core-order links.
 * Ties go to loop, then node, then cores (the floors that more cores cannot
 * move are named first), as pm_bound_floors picks its binding floor.  A
 * period below the floors (only a run that never became steady can show
 * one) is named after the floor that binds.
 *
 * What-ifs explain the saturation point (the smallest P whose period no
 * later P in the range beats); when the limit there is `cores` and the
 * range shows saturation, they explain the next P instead (the first core
 * count that did not help).  For a loop: the iteration bound recomputed
 * exactly (pm_bound_compute on a one-class copy of the graph, each node at
 * its smallest cycles) with each node of the loop made faster, at most
 * PM_SWEEP_MAX_WHATIF of them, and with one more delay on the loop; for a
 * mapping loop that spans at least one iteration, the same map
 * re-simulated with each node of the loop made faster; for the largest
 * node, the lower bound with it faster; for cores, no node rows.  Plus
 * the next bottleneck behind the limit, with its value.
 *
 * Ownership: a pm_sweep owns every array in it; free with pm_sweep_free()
 * (safe on a zeroed or already freed result).  Node and edge ids index the
 * plan's graph (for a multirate scenario its expansion).  Not thread-safe
 * on the plan: the sweep changes its core count while it runs (and
 * restores it).
 */
#ifndef PACEMAP_SWEEP_H
#define PACEMAP_SWEEP_H

#include <stdbool.h>
#include <stdint.h>

#include "pacemap/bound.h"
#include "pacemap/error.h"
#include "pacemap/graph.h"
#include "pacemap/map.h"
#include "pacemap/plan.h"
#include "pacemap/rational.h"
#include "pacemap/sched.h"

/* Points one sweep may hold (a range wider than this is refused). */
#define PM_SWEEP_MAX_POINTS 256
/* Nodes of a binding loop that get a "faster" what-if each. */
#define PM_SWEEP_MAX_WHATIF 8
/* Default cycles taken off a node in the what-ifs. */
#define PM_SWEEP_DEFAULT_FASTER 10

typedef enum pm_limit_kind {
    PM_LIMIT_LOOP = 0, /* a loop of the graph */
    PM_LIMIT_MAPPING,  /* a loop the map made (transfers, core order) */
    PM_LIMIT_CORES,    /* total work / P */
    PM_LIMIT_NODE      /* the largest node */
} pm_limit_kind;

/* A cross-core transfer on a limiting loop. */
typedef struct pm_sweep_hop {
    uint32_t edge;                /* graph edge */
    uint32_t from_core, to_core;
    int64_t cost;                 /* latency + per_word * words */
    bool bus;                     /* the token came over the shared bus */
} pm_sweep_hop;

/* A core-order link on a limiting loop: `to` waited for `from`, the node
 * before it on `core`; `wraps` when `from` belongs to the iteration before
 * (from is the last node of the core, to the first). */
typedef struct pm_sweep_order {
    uint32_t core;
    uint32_t from, to;
    bool wraps;
} pm_sweep_order;

typedef struct pm_sweep_limit {
    pm_limit_kind kind;
    uint32_t *nodes;        /* loop/mapping: the loop's nodes in time order;
                               node: the largest node; cores: none */
    uint32_t nnodes;
    uint32_t *edges;        /* loop: edges[i] goes from nodes[i] to nodes[i+1 mod n] */
    uint32_t nedges;        /* = nnodes for loop, else 0 */
    int64_t cycles;         /* loop/mapping: cycles around the loop */
    int64_t delays;         /* loop/mapping: iterations it spans (> 0 when known) */
    bool exact;             /* cycles / delays == period, proved by the bound or the
                               simulator's chain; false: chain incomplete */
    bool from_chain;        /* evidence taken from the simulator's critical chain */
    pm_sweep_hop *hops;     /* mapping: cross-core transfers, in time order */
    uint32_t nhops;
    pm_sweep_order *orders; /* mapping: core-order links, in time order */
    uint32_t norders;
    uint32_t nbus_waits;    /* mapping: transfers that waited for the bus */
    uint32_t single_core;   /* mapping made only of one core's order (uneven
                               load): that core; else PM_NONE */
} pm_sweep_limit;

typedef struct pm_sweep_point {
    uint32_t procs;
    pm_rat period;          /* achieved (exact when steady) */
    bool steady;            /* the simulation reached its periodic regime */
    pm_floors floors;       /* loop, node, cores and lower_bound for this P */
    double speedup;         /* period of the first point / this period (NAN if 0) */
    double efficiency;      /* speedup * first procs / procs */
    int64_t latency;        /* steady latency of one iteration, cycles */
    uint32_t cross_edges;   /* edges of the map between cores */
    pm_sweep_limit limit;
} pm_sweep_point;

/* One "node faster" what-if. */
typedef struct pm_sweep_faster {
    uint32_t node;
    int64_t cycles, new_cycles; /* smallest cycles before and after (>= 0) */
    pm_rat loop_alone;          /* the binding loop's own ratio after (loop/mapping) */
    pm_rat after;               /* loop: new iteration bound; mapping: new period of
                                   the same map; node: new lower bound */
    pm_rat floor_after;         /* the lower bound at that P after the change */
} pm_sweep_faster;

typedef struct pm_sweep_whatif {
    bool present;
    uint32_t point;             /* index of the point explained (the saturation) */
    pm_limit_kind kind;         /* that point's limit */
    int64_t faster;             /* cycles taken off one node at a time */
    pm_sweep_faster *rows;
    uint32_t nrows;
    /* loop: one more delay on the loop edge where it helps most */
    bool has_delay;
    uint32_t delay_edge;
    pm_rat delay_loop_alone;    /* cycles / (delays + 1) */
    pm_rat delay_bound;         /* the new iteration bound */
    pm_rat delay_floor;         /* the new lower bound at that P */
    uint32_t *delay_next;       /* a critical loop of the changed graph */
    uint32_t ndelay_next;
    /* the next bottleneck behind the limit */
    bool has_next;
    pm_limit_kind next_kind;    /* loop (another loop), node, cores, or mapping
                                   meaning "the floors": the lower bound */
    pm_rat next_value;
    uint32_t *next_nodes;       /* loop: its nodes; node: the node */
    uint32_t nnext_nodes;
} pm_sweep_whatif;

typedef struct pm_sweep {
    uint32_t npoints;
    pm_sweep_point *points;     /* procs from .. to, ascending */
    pm_bound bound;             /* iteration bound, critical loops, parts */
    uint32_t saturation;        /* index: smallest P with period <= every later one */
    bool saturation_proven;     /* its period equals a floor no P can move (loop, node) */
    bool saturation_reached;    /* proven, or later points in range do no better */
    uint32_t best;              /* index of the smallest period (first on ties) */
    pm_sweep_whatif whatif;
} pm_sweep;

/* Called after each point (done of total), e.g. to show progress. */
typedef void (*pm_sweep_progress)(void *ctx, uint32_t procs, uint32_t done, uint32_t total);

typedef struct pm_sweep_opts {
    uint32_t procs_from, procs_to; /* 1 <= from <= to; to - from < PM_SWEEP_MAX_POINTS */
    uint64_t iterations;           /* simulated per point; 0 = simulator default */
    int64_t faster;                /* what-if cycles; 0 = PM_SWEEP_DEFAULT_FASTER */
    const pm_sched_opts *sched;    /* NULL = scheduler defaults */
    bool refine;                   /* refine each point's map (pm_plan_opts.refine) */
    const pm_map *map;             /* NULL = pm_plan_map at each point; else this map
                                      of the plan's graph (a hand map) for the one
                                      point procs_from == procs_to == map->ncores
                                      (borrowed) */
    pm_sweep_progress progress;    /* may be NULL */
    void *progress_ctx;
} pm_sweep_opts;

/*
 * Sweep the plan (pm_plan_init: a single-rate scenario or the expansion of
 * a multirate one) over opts->procs_from .. opts->procs_to identical cores.
 * Each point's map is pm_plan_map's with opts->sched and opts->refine, so
 * a multirate node keeps all its firings on one core.  A platform with
 * named core classes sweeps only its own core count (from == to == its
 * ncores, else PM_EPLATFORM).  The core count of both graphs of the plan
 * is set for each point with pm_plan_set_procs and restored before
 * returning.  With opts->map, the one point uses that map instead of
 * pm_plan_map (PM_EINVAL unless from == to == map->ncores; PM_EMAP if it
 * does not fit).
 * Errors: PM_EINVAL (NULL plan, bad options, empty graph), PM_ELIMIT (too
 * many points), PM_EPLATFORM (a pin beyond some P, classes; diag says
 * which), and any error of pm_bound_compute, pm_plan_map and pm_sim_run
 * (PM_EZERODELAY, PM_EDEADLOCK, ...), diag naming the core count.  *out is
 * filled on PM_OK; free it in every case.  The plan stays the caller's.
 * Complexity: per point one mapping (with refinement, many simulations)
 * and one simulation; the what-ifs add up to 2 * PM_SWEEP_MAX_WHATIF bound
 * computations or simulations.
 */
int pm_sweep_run(pm_plan *plan, const pm_sweep_opts *opts, pm_sweep *out, pm_diag *diag);

void pm_sweep_free(pm_sweep *s);

/* "loop", "mapping", "cores", "node". */
const char *pm_sweep_limit_name(pm_limit_kind k);

/* Smallest core count the graph's pins allow (1 without pins). */
uint32_t pm_sweep_min_procs(const pm_graph *g);

#endif
