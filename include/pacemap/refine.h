/*
 * refine.h - improve a map for throughput: local search on the simulated
 * period.
 *
 * The list scheduler minimises the length of one iteration; a pipeline that
 * runs forever cares about the period, which feedback loops closed through
 * transfers and core order set (Sriram & Bhattacharyya, "Embedded
 * Multiprocessors: Scheduling and Synchronization", 2000).  This pass moves
 * one node at a time to another core, keeps a move when the self-timed
 * simulation (pm_sim_run) gives a strictly smaller period; when no single
 * move helps it tries exchanging the cores of two nodes.  It stops when
 * neither helps or the evaluation budget is spent (first improvement, nodes
 * in id order, cores in index order: deterministic).
 *
 * Each core runs its nodes in the order of their start in the original
 * schedule, so zero-delay precedence keeps the per-core orders consistent.
 * For a multirate scenario the moves are made on the scenario's nodes and
 * every firing of a node goes with it (pm_map_expand).
 *
 * Ownership: the result map belongs to the caller.  Thread-safe.
 */
#ifndef PACEMAP_REFINE_H
#define PACEMAP_REFINE_H

#include <stdint.h>

#include "pacemap/error.h"
#include "pacemap/graph.h"
#include "pacemap/map.h"
#include "pacemap/sched.h"

#define PM_REFINE_MAX_NODES 2000u     /* larger graphs are left as they are */
#define PM_REFINE_DEFAULT_EVALS 400u  /* simulations one refinement may run */
#define PM_REFINE_FIRINGS 5000000u    /* and firings all its simulations may take */

typedef struct pm_refine_opts {
    uint32_t max_evals;     /* 0 = PM_REFINE_DEFAULT_EVALS, fewer on large graphs
                               so that all runs stay within PM_REFINE_FIRINGS */
    uint64_t iterations;    /* per simulation; 0 = 64 */
    /* multirate: the scenario as written and its repetition vector; the map
     * and schedule given are of its single-rate expansion g (NULL: single rate) */
    const pm_graph *source;
    const uint64_t *rep;
    const uint32_t *origin; /* expanded node -> scenario node */
} pm_refine_opts;

/*
 * A map of g at least as good as `m` (timed by schedule `sc`, from
 * pm_sched_list or pm_sched_from_map) in simulated period.  *out is a new
 * map (a copy of m when nothing helped or g is too large).  *improved (may
 * be NULL) says whether a better map was found.
 * Errors: PM_ENOMEM; errors of the simulator on the starting map.
 * Complexity: at most max_evals simulations of `iterations` iterations.
 */
int pm_refine_map(const pm_graph *g, const pm_map *m, const pm_schedule *sc,
                  const pm_refine_opts *opts, pm_map **out, int *improved, pm_diag *diag);

#endif
