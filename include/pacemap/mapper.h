/*
 * mapper.h - the period-first mapper: a map of a graph onto its cores
 * chosen for the smallest self-timed period, then the shortest latency,
 * then the fewest buffered tokens, over the core of each node, the order on
 * each core and the nodes' lags (map.h).
 *
 * Why lags: with a lag a consumer runs a later round than its producer, so
 * a transfer no longer has to fit inside one round.  For a graph without
 * loops the best period is then the smallest possible busiest-core
 * occupancy (cycles + send and receive of its cross-core edges): a map
 * whose lags come from a static periodic schedule of that period reaches
 * it (see pm_mapper_map), and no map beats the occupancy of its busiest
 * core.  With loops the transfers and orders inside a loop count as well;
 * every candidate is then judged by its exact period (pm_ipc_compute,
 * Sriram & Bhattacharyya 2000).
 *
 * Ownership: the map returned is the caller's (pm_map_destroy).  The graph
 * is only read.  Thread-safe: no global state.
 */
#ifndef PACEMAP_MAPPER_H
#define PACEMAP_MAPPER_H

#include <stdbool.h>
#include <stdint.h>

#include "pacemap/error.h"
#include "pacemap/graph.h"
#include "pacemap/map.h"
#include "pacemap/rational.h"

#define PM_MAPPER_DEFAULT_MS 1000u         /* time budget of one search */
#define PM_MAPPER_DEFAULT_EVALS 4000u      /* exact period evaluations */
#define PM_MAPPER_DEFAULT_EXACT 2000000u   /* branch-and-bound nodes */
#define PM_MAPPER_EXACT_MAX_NODES 25u      /* larger graphs: no exact search */
#define PM_MAPPER_MAX_MOVES 200000000u     /* occupancy moves looked at, all
                                              constructions together */

typedef struct pm_mapper_opts {
    uint32_t time_ms;     /* wall-clock budget; 0 = PM_MAPPER_DEFAULT_MS */
    uint32_t max_evals;   /* exact period evaluations; 0 = PM_MAPPER_DEFAULT_EVALS */
    uint64_t exact_nodes; /* branch-and-bound nodes; 0 = PM_MAPPER_DEFAULT_EXACT */
    bool no_exact;        /* skip the branch and bound (heuristic only) */
} pm_mapper_opts;

typedef struct pm_mapper_info {
    pm_rat period;     /* period of the map: exact (pm_ipc_compute) with
                          point-to-point links; with a bus the simulated
                          period of a 128-iteration run */
    int64_t busiest;   /* occupancy of the busiest core, cycles per iteration */
    bool proven;       /* the period is proven the smallest any map can have:
                          the branch and bound completed (graph without
                          loops, point-to-point links), or the period
                          reached the work floor (the larger of the
                          heaviest node and the total work over P, each
                          node at its smallest cycles) */
    bool exact_run;    /* the branch and bound ran (completed or not) */
    uint32_t evals;    /* exact period evaluations made */
    bool timed_out;    /* the time budget ended the search: the result then
                          depends on the machine's speed */
} pm_mapper_info;

/*
 * Map finalized single-rate graph g onto its platform's cores
 * (g->platform.ncores), honouring pins and core classes
 * (pm_graph_can_run, pm_graph_cycles_on).
 *
 * Search: several starting assignments - the list schedule's
 * (pm_sched_list, loop rule on), loop clusters (every strongly connected
 * part with a loop kept on one core when it fits) placed
 * longest-processing-time first, single nodes placed the same way, and
 * stages (cores filled in zero-delay order); placement picks the core
 * whose occupancy, counting the send and receive cycles of the edges to
 * nodes already placed, stays lowest (ties: lower core).  Each is improved
 * by moving nodes (and whole loops) off the busiest core and exchanging
 * pairs of nodes, judged by the busiest occupancy (ties: cores at that
 * occupancy, then total occupancy), then judged by the exact period.
 * With loops or a bus a first-improvement search continues on that
 * period, with the occupancy as a cheap floor that skips moves which
 * cannot help.  Then, until 64 tries in a row find nothing better, the
 * period reaches the work floor (below) or a budget ends: the best map is
 * kicked (a few nodes, or whole loops, moved to cores drawn from a fixed
 * pseudo-random sequence), improved on occupancy and judged exactly again.

 * Orders and lags of an assignment: every core runs its nodes in one
 * topological order of the zero-delay edges (pm_order_zero_delay, smallest
 * id first), so the map is also a valid map without lags.  With T the
 * busiest occupancy and o(v) the time v begins within its core's round,
 * the lags are the smallest ones (longest paths over the strongly
 * connected parts, a part's nodes sharing one lag) with, for each edge
 * u -> v between parts, d + lag[v] - lag[u] >= ceil((o(u) + R(u) + t(u)
 * + transfer - o(v)) / T) (at least 1 when u does not begin before v);
 * edges inside a part keep their delays.  Then a periodic schedule of
 * period T exists, so a graph without loops reaches period T.  When that
 * leaves a cycle without delay the cross-core edges between parts all
 * get at least one delay instead.
 *
 * The exact optimum (no loops, at most PM_MAPPER_EXACT_MAX_NODES nodes,
 * point-to-point links; core classes and pins included): a branch and
 * bound over assignments (on identical cores without pins, cores
 * relabelled to break symmetry), bounded by the busiest partial occupancy
 * and by the total work left over the cores; within opts->exact_nodes
 * nodes it proves the optimum, and the mapper returns a map of that
 * period.
 *
 * With a bus the ratio of the IPC graph is only a floor: every candidate
 * is then judged by the period of a short simulated run (pm_sim_run, 128
 * iterations, lags included), and info->period is that period.

 * Determinism: every choice follows a fixed rule or the fixed
 * pseudo-random sequence; the same input and budgets give the same map
 * unless the time budget ends the search (info->timed_out): then the
 * result depends on the machine's speed and load.  With opts->max_evals
 * small enough to end the search first, the map depends on the input
 * alone.  The time budget bounds the search; the map in hand when it ends
 * is still judged once, which on 10,000 nodes adds about a tenth of a
 * second (docs/performance.md).

 * Results: *out the map (lags set); *info (may be NULL) what was found.
 * Errors: PM_EINVAL (g or out NULL, g not finalized); PM_EUNSUPPORTED
 * (multirate); PM_EZERODELAY, PM_EPLATFORM (a node no core may run) and
 * the other errors of pm_sched_list and pm_ipc_compute; PM_ENOMEM.
 * Complexity: bounded by the budgets above; each exact evaluation is one
 * pm_ipc_compute, O(V + E) plus policy iteration.
 */
int pm_mapper_map(const pm_graph *g, const pm_mapper_opts *opts, pm_map **out,
                  pm_mapper_info *info, pm_diag *diag);

/*
 * The smallest busiest-core occupancy over all assignments of g's nodes to
 * its cores that pins and core classes allow (cycles on the core's class
 * + send per cross-core out-edge + recv per cross-core in-edge, delays
 * ignored): by the argument above, the best period of a graph without
 * loops on point-to-point links.  A branch and
 * bound that looks at most max_nodes search nodes (0 =
 * PM_MAPPER_DEFAULT_EXACT).  *best gets the best occupancy found, assign
 * (nnodes entries) its assignment, *proven whether the search completed.
 * upper (> 0) is an occupancy already known to be reachable; only
 * strictly better ones are looked for, and when none exists *best = upper
 * and assign is left as it was.
 * Errors: PM_EINVAL (NULL argument, not finalized); PM_EUNSUPPORTED (more
 * than PM_MAPPER_EXACT_MAX_NODES nodes); PM_EPLATFORM (a node no core may
 * run); PM_ENOMEM.
 * Complexity: O(max_nodes * (P + degree)); without the symmetry of
 * identical cores (classes or pins) the same number of search nodes
 * covers less, so a proof is likelier to need more.
 */
int pm_mapper_exact(const pm_graph *g, uint64_t max_nodes, int64_t upper, uint32_t *assign,
                    int64_t *best, bool *proven);

/*
 * The period-first mapper for a multirate scenario: a map of its
 * single-rate expansion (pm_sdf_expand: expansion, origin = firing ->
 * node) in which every firing of a node runs on the node's core with the
 * node's lag, as a map file of the scenario's nodes holds it
 * (pm_map_expand; the rule of plan.h).  source and rep as given to
 * pm_sdf_expand; start a map of source's nodes (the list scheduler's,
 * placed by the rule of plan.h) that the result never does worse than.
 *
 * Search: start as it is; then assignments of the scenario's nodes (pins
 * and classes honoured), each with no lags and with one round of lag per
 * cross-core edge between strongly connected parts, cores' nodes in the
 * scenario's zero-delay order; first-improvement moves of one node,
 * skipped when the busiest core's occupancy in the expansion already
 * reaches the best period.  Every candidate is judged on the expansion:
 * the IPC cycle ratio (pm_ipc_compute, exact) with point-to-point links,
 * a simulated run (pm_sim_run) with a bus; ties go to the smaller sum of
 * lags.  Candidates whose orders cannot run are skipped.  Budgets: opts
 * as for pm_mapper_map (each candidate counts one evaluation per lag
 * choice); deterministic unless info->timed_out.  info->proven is never
 * set.
 * Results: *out the map of the expansion (the caller's).  Errors:
 * PM_EINVAL (an argument NULL or not matching); those of pm_map_expand,
 * pm_ipc_compute and pm_sim_run on start; PM_ENOMEM.
 */
int pm_mapper_map_multirate(const pm_graph *source, const uint64_t *rep,
                            const pm_graph *expansion, const uint32_t *origin,
                            const pm_map *start, const pm_mapper_opts *opts, pm_map **out,
                            pm_mapper_info *info, pm_diag *diag);

#endif
