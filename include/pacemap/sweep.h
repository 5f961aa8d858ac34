/*
 * sweep.h - how far more cores help: for each core count P of a range (or
 * each count of one core class, the others kept), map the plan
 * (pm_plan_map, whichever mapper its options choose), simulate the map
 * self-timed (pm_sim_run), compare the achieved period with the floors
 * (pm_bound_floors) and name what limits it, with evidence and what-if
 * numbers.
 *
 * The period never grows with P: a map for fewer cores is a map for more
 * (the extra cores idle, the period is the same), so when a smaller count's
 * map had a lower period than the map found for P, that map runs at P
 * (pm_sweep_point.map_count says whose map it is).
 *
 * The limit of one point (docs/sweep.md states the rule): each kind is a
 * quantity the map's period T can never be below, named when T equals it
 * exactly, in this order (ties go to the first):
 *   loop     the iteration bound, or a loop of the graph counting the
 *            transfers the map put on it (the simulator's critical chain,
 *            a cycle of the inter-processor communication graph: Sriram &
 *            Bhattacharyya, "Embedded Multiprocessors: Scheduling and
 *            Synchronization", 2000, made of that loop's data edges only);
 *   node     the largest node at its time on its core's class;
 *   cores    the busiest core's occupancy: recv + run + send per iteration;
 *   bus      the bus's occupancy: the transfers of one iteration;
 *   mapping  none of these: a cycle of core orders and transfers the map
 *            made; its gap to map_floor says how far a better map might go.
 *
 * What-ifs explain the saturation point (the smallest P from which the
 * period no longer improves): for a loop, the iteration bound recomputed
 * exactly (pm_bound_compute on a modified copy of the graph) with each node
 * of the loop made faster, and with one more delay on the loop; for a
 * mapping or a loop through transfers, the same map re-simulated with each
 * node of the loop made faster; for the largest node, the floors with it
 * faster.  Plus the next bottleneck behind the limit, with its value.
 *
 * Ownership: a pm_sweep owns every array and map in it; free with
 * pm_sweep_free() (safe on a zeroed or already freed result).  Node and
 * edge ids index the plan's graph (for a multirate scenario its
 * expansion).  Not thread-safe on the plan: the sweep changes its cores
 * while it runs (and restores them).  With opts->jobs > 1 the points are
 * computed on that many threads, each on its own copy of the scenario,
 * and the rule above applied afterwards in core-count order, so the
 * result is the one a single thread gets.
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
    PM_LIMIT_LOOP = 0, /* a loop of the graph, with the transfers the map put on it */
    PM_LIMIT_MAPPING,  /* the map itself: a cycle of core orders and transfers,
                          above every other kind (gap to map_floor) */
    PM_LIMIT_CORES,    /* the busiest core's occupancy: work + send/recv */
    PM_LIMIT_NODE,     /* the largest node, at its time on its core's class */
    PM_LIMIT_BUS       /* the bus's occupancy: every transfer of one iteration */
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
    uint32_t procs;         /* all cores of the point */
    uint32_t count;         /* the count swept: procs, or the varied class's cores */
    pm_rat period;          /* achieved (exact when steady) */
    bool steady;            /* the simulation reached its periodic regime */
    pm_floors floors;       /* loop, node, cores, lower_bound and map_floor here */
    bool floor_searched;    /* map_floor raised to the proven smallest busiest-core
                               occupancy of any map (exhaustive search) */
    double speedup;         /* period of the first point / this period (NAN if 0) */
    double efficiency;      /* speedup * first procs / procs */
    int64_t latency;        /* steady latency of one iteration, cycles */
    uint32_t cross_edges;   /* edges of the map between cores */
    /* The map simulated: this count's own, or an earlier (smaller) count's
     * when that one had a lower period (the extra cores then idle). */
    pm_map *map;            /* owned */
    uint32_t map_count;     /* the count whose map it is (== count when its own) */
    pm_rat own_period;      /* the period of this count's own map */
    uint32_t idle_cores;    /* cores the map leaves without a node */
    /* What the map puts on its cores, per iteration (the simulator's counts). */
    int64_t busiest;        /* occupancy of the busiest core: recv + run + send */
    uint32_t busiest_core;
    int64_t busiest_run;    /* of which node cycles */
    uint32_t largest;       /* the node with the largest time on its core's class */
    int64_t largest_cycles;
    int64_t bus_busy;       /* bus cycles per iteration (0 without a bus) */
    pm_sweep_limit limit;
} pm_sweep_point;

/* One "node faster" what-if. */
typedef struct pm_sweep_faster {
    uint32_t node;
    int64_t cycles, new_cycles; /* smallest cycles before and after (>= 0) */
    pm_rat loop_alone;          /* the binding loop's own ratio after (loop/mapping) */
    pm_rat after;               /* same_map: new period of the same map; loop: new
                                   iteration bound; node: new lower bound */
    pm_rat floor_after;         /* the lower bound at that P after the change */
} pm_sweep_faster;

typedef struct pm_sweep_whatif {
    bool present;
    uint32_t point;             /* index of the point explained (the saturation) */
    pm_limit_kind kind;         /* that point's limit */
    int64_t faster;             /* cycles taken off one node at a time */
    bool same_map;              /* rows' `after` is the period of the point's map
                                   re-simulated (a mapping, or a loop through
                                   transfers); else a floor recomputed */
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
    uint32_t vary_class;        /* the class whose count is swept, or PM_NONE */
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
    bool by_class;                 /* false: from..to count identical cores (a platform
                                      with core classes: only its own cores) */
    uint32_t vary_class;           /* by_class: from..to count the cores of this class
                                      (a class index), the others keep theirs */
    const pm_plan_opts *plan;      /* NULL: {sched, refine} below; else the mapper
                                      options as given (sched and refine unused) */
    uint64_t iterations;           /* simulated per point; 0 = simulator default */
    int64_t faster;                /* what-if cycles; 0 = PM_SWEEP_DEFAULT_FASTER */
    const pm_sched_opts *sched;    /* NULL = scheduler defaults */
    bool refine;                   /* refine each point's map (pm_plan_opts.refine) */
    const pm_map *map;             /* NULL = pm_plan_map at each point; else this map
                                      of the plan's graph (a hand map) for the one
                                      point procs_from == procs_to == map->ncores
                                      (borrowed) */
    pm_sweep_progress progress;    /* may be NULL; with jobs > 1 called from the
                                      sweep's threads, one call at a time, as
                                      points end (done counts them) */
    void *progress_ctx;
    uint32_t jobs;                 /* threads computing points side by side; 0 or 1:
                                      the calling thread only.  The result does not
                                      depend on it (each thread maps on its own copy
                                      of the scenario), except through the
                                      period-first mapper's time budget, which is
                                      wall-clock time */
} pm_sweep_opts;

/*
 * Sweep the plan (pm_plan_init: a single-rate scenario or the expansion of
 * a multirate one) over opts->procs_from .. opts->procs_to identical cores,
 * or with opts->by_class over those counts of class opts->vary_class, the
 * other classes as declared (cores stay numbered in the order the classes
 * are written).  Each point's map is pm_plan_map's with opts->plan (or
 * {opts->sched, opts->refine}), so a multirate node keeps all its firings
 * on one core; or an earlier point's map on these cores when that one's
 * period was lower.  A platform with named core classes and no by_class
 * sweeps only its own cores (from == to == its ncores, else PM_EPLATFORM).
 * The cores of both graphs of the plan are set for each point and restored
 * before returning.  With opts->map, the one point uses that map instead of
 * pm_plan_map (PM_EINVAL unless from == to == map->ncores and not
 * by_class; PM_EMAP if it does not fit).  On small graphs of identical
 * cores without pins, an exhaustive search may raise each point's
 * map_floor (PM_FLOOR_SEARCH, docs/methods.md).
 * Errors: PM_EINVAL (NULL plan, bad options, empty graph), PM_ELIMIT (too
 * many points), PM_EPLATFORM (a pin beyond some count, or one a class
 * count would move; classes without by_class; by_class without classes;
 * diag says which), and any error of pm_bound_compute, pm_plan_map and
 * pm_sim_run (PM_EZERODELAY, PM_EDEADLOCK, ...), diag naming the core
 * count.  *out is filled on PM_OK; free it in every case.  The plan stays
 * the caller's.
 * Complexity: per point one mapping (with refinement, many simulations),
 * one simulation (two when an earlier map is tried) and on small graphs a
 * bounded search; the what-ifs add up to 2 * PM_SWEEP_MAX_WHATIF bound
 * computations or simulations.
 */
int pm_sweep_run(pm_plan *plan, const pm_sweep_opts *opts, pm_sweep *out, pm_diag *diag);

void pm_sweep_free(pm_sweep *s);

/* "loop", "mapping", "cores", "node", "bus". */
const char *pm_sweep_limit_name(pm_limit_kind k);

/* Smallest core count the graph's pins allow (1 without pins). */
uint32_t pm_sweep_min_procs(const pm_graph *g);

#endif
