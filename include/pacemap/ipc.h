/*
 * ipc.h - the exact self-timed period of a map, lags included, from its
 * inter-processor communication (IPC) graph.
 *
 * With point-to-point links the steady period of self-timed execution of
 * a map equals the maximum cycle ratio of its IPC graph (Sriram &
 * Bhattacharyya, "Embedded Multiprocessors: Scheduling and
 * Synchronization", 2000; the graph is tabled in docs/simulation.md).  A
 * map's lags (map.h) are a retiming: in round terms an edge u -> v with d
 * delays carries d + lag[v] - lag[u] of them, and that is the delay its
 * data edge gets in the IPC graph.  The ratio is computed by the project's
 * exact iteration-bound code (pm_bound_compute, Howard's policy iteration)
 * on a graph built here, so it is a reduced fraction, never a double.
 *
 * With a bus the ratio is only a floor: transfers may also wait for one
 * another, which only delays firings.  The bus's own work per iteration is
 * a second floor (bus_busy below).
 *
 * Ownership: a pm_ipc owns its array; pm_ipc_free releases it (safe on a
 * zeroed or freed struct).  The graph and the map are only read.
 * Thread-safe: no global state.
 */
#ifndef PACEMAP_IPC_H
#define PACEMAP_IPC_H

#include <stdint.h>

#include "pacemap/error.h"
#include "pacemap/graph.h"
#include "pacemap/map.h"
#include "pacemap/rational.h"

typedef struct pm_ipc {
    pm_rat period;      /* maximum cycle ratio of the IPC graph; 0/1 for an
                           empty graph.  Exact with point-to-point links; a
                           floor with a bus */
    uint32_t ncores;
    int64_t *core_busy; /* ncores entries: recv + run + send cycles per iteration */
    int64_t busiest;    /* the largest of core_busy (a floor of the period) */
    int64_t bus_busy;   /* cycles per iteration the cross-core transfers hold a
                           bus; 0 with point-to-point links */
} pm_ipc;

/*
 * Check the lags of map m on finalized single-rate graph g: every edge's
 * retimed delay d + lag[dst] - lag[src] is >= 0, and where it is 0 and
 * both ends share a core, the producer comes first in the core's order.
 * PM_OK, or PM_EMAP with diag naming the first edge that breaks it.
 * O(V + E).
 */
int pm_ipc_check_lags(const pm_graph *g, const pm_map *m, pm_diag *diag);

/*
 * The period of map m (checked with pm_map_check; every retimed delay must
 * be >= 0, a same-core edge of 0 retimed delays against the core's order
 * is reported as the deadlock it causes) on
 * finalized single-rate graph g, and each core's occupancy: *out is filled
 * on PM_OK and zeroed on error.
 * Errors: PM_EINVAL (an argument NULL or g not finalized); PM_EMAP (the map
 * or its lags do not fit); PM_EUNSUPPORTED (multirate); PM_EDEADLOCK (a
 * cycle of the IPC graph carries no delay: self-timed execution of m
 * stops; diag says so); PM_ERANGE (times overflow 62 bits); PM_ENOMEM.
 * Complexity: O(V + E) to build a graph of at most 2V + E nodes, then
 * pm_bound_compute on it (policy iteration, a few dozen passes in practice).
 */
int pm_ipc_compute(const pm_graph *g, const pm_map *m, pm_ipc *out, pm_diag *diag);

/* Release what r owns and zero it; NULL is fine. */
void pm_ipc_free(pm_ipc *r);

#endif
