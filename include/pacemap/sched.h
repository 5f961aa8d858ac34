/*
 * sched.h - static scheduling of one iteration of a graph onto its cores:
 * the list scheduler, the timing of a given map, and the loop-time floor.
 *
 * Model (one iteration; the method is in docs/methods.md).  Only
 * zero-delay edges order nodes within an iteration; they must form a DAG.
 * Edges with delays link iterations: they do not constrain one iteration's
 * timetable, but they close feedback loops, which the loop-aware scheduler
 * keeps on one core where it can (see pm_sched_opts.loop_blind) and
 * pm_sched_loop_floor() measures.  Node v takes
 * pm_graph_cycles_on(g, v, class of its core).
 *
 * Transfer of a zero-delay edge u -> v when u and v sit on different cores
 * (cost = latency + per_word * words):
 *   1. send: the producer's core is busy `send` cycles.  A producer's sends
 *      run right after it ends (in the earliest free time at or after its
 *      end), one per cross-core out-edge, in edge-index order;
 *   2. wire: p2p starts at the send's end; on a `bus` the transfer takes the
 *      earliest interval of `cost` cycles at or after the send's end in
 *      which the bus carries nothing else (the bus carries one transfer at a
 *      time, for its whole cost; transfers claim the bus in the order their
 *      producers are timed, i.e. roughly oldest request first);
 *      arrival = wire start + cost;
 *   3. recv: the consumer's core is busy `recv` cycles in its earliest free
 *      time at or after arrival (in in-edge order, before the consumer);
 *   the data is ready at the recv's end.  Zero send/recv cycles occupy
 *   nothing.  Same core: ready at the producer's end, no cost.
 * A node starts at the earliest time at or after max(end of the node before
 * it on its core, readiness of all its inputs) at which its core is free for
 * its whole execution (sends and receives may fill idle gaps).  A node of 0
 * cycles occupies an instant: nothing is placed across it, and it never
 * falls strictly inside another node's execution.
 *
 * Every schedule returned here - automatic or from a hand map - is timed by
 * that one rule from its map (pm_sched_from_map), so a map written with
 * pm_map_write and read back gives the same slots.  The list scheduler only
 * decides the map; its internal estimates are discarded.
 *
 * Determinism: all ties are broken by fixed rules (documented on each
 * function); results are bit-for-bit repeatable.
 *
 * Ownership: a pm_schedule owns its arrays; pm_sched_destroy(NULL) is a
 * no-op.  The graph is only read; functions are thread-safe on distinct
 * outputs.  Multirate graphs are refused (PM_EUNSUPPORTED): expand first.
 */
#ifndef PACEMAP_SCHED_H
#define PACEMAP_SCHED_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "pacemap/error.h"
#include "pacemap/graph.h"
#include "pacemap/map.h"
#include "pacemap/rational.h"

/* Where and when one node runs in the iteration. */
typedef struct pm_slot {
    uint32_t core;
    int64_t start, end; /* cycles from the iteration's start; end - start = cycles */
} pm_slot;

/* One cross-core transfer of a zero-delay edge. */
typedef struct pm_transfer {
    uint32_t edge;                 /* edge index in the graph */
    uint32_t src, dst;             /* producer and consumer nodes */
    uint32_t from_core, to_core;
    int64_t send_start, send_end;  /* occupancy of from_core (empty when send = 0) */
    int64_t wire_start, arrival;   /* on the link or bus; arrival = wire_start + cost */
    int64_t recv_start, recv_end;  /* occupancy of to_core; data ready at recv_end */
    int64_t cost;                  /* latency + per_word * words */
} pm_transfer;

typedef struct pm_schedule {
    uint32_t nnodes, ncores;
    pm_slot *slots;            /* nnodes entries, indexed by node id */
    int64_t makespan;          /* largest end over nodes and transfers (0 if empty) */
    int64_t *busy;             /* ncores entries: execution + send + recv cycles */
    pm_transfer *transfers;    /* ntransfers, ordered by (edge index) */
    size_t ntransfers;
} pm_schedule;

/* How the list scheduler runs.  Zero-initialise for the defaults. */
typedef struct pm_sched_opts {
    /* false (default): the loop rule (listsched_loops.c explains why).  With
     * T = the target period below: a strongly connected part with a loop
     * whose work is <= T stays on one core; else the loop that sets the
     * part's own bound stays on one core when its work is <= T; else the
     * part is spread freely.  While any core can take a node within T,
     * cores whose work per iteration would exceed T are avoided, and so is
     * a core that data left and would come back to (a loop of one delay
     * through the core's order) once its span there exceeds T.
     * true: ignore loops (plain HEFT). */
    bool loop_blind;
    /* Period the loop rule aims at; 0 = max(ceil(total work / P), largest
     * node, ceil(iteration bound)) with the smallest cycles of each node. */
    int64_t target_period;
    /* false (default): HEFT-style - priority = upward rank, earliest-finish
     * core with insertion into idle gaps.  true: Graham's plain list
     * scheduling (1969) - whenever a core falls idle it takes the first
     * ready node of the priority list (lowest core index first, no
     * insertion, no look-ahead); a node is ready when its producers have
     * ended (transfer times are not waited for while choosing, but the
     * returned times follow the map rule); meant for graphs without
     * transfer costs. */
    bool greedy;
    /* For greedy: the priority list (all node ids, each once); NULL = by
     * decreasing upward rank.  Ignored otherwise. */
    const uint32_t *priority;
} pm_sched_opts;

/*
 * List-schedule one iteration of finalized graph g onto its platform's
 * cores (g->platform.ncores).  opts may be NULL (defaults).
 *
 * Priorities: upward rank (Topcuoglu, Hariri & Wu, "Performance-effective
 * and low-complexity task scheduling for heterogeneous computing", IEEE
 * TPDS 2002): rank(v) = avg_t(v) + max over zero-delay out-edges (v,w) of
 * (avg_c(v,w) + rank(w)), where avg_t is the mean of v's cycles over the
 * cores that may run it and avg_c = (1 - 1/P) * (send + cost + recv), the
 * expected cost when the two ends fall on random distinct cores.  Ready
 * nodes are taken by decreasing rank; ties by smaller node id.  Each node
 * goes to the core giving the earliest finish (insertion into idle gaps;
 * per core the most recent PM_SCHED_GAPS gaps are remembered, older ones
 * are given up, which keeps placement O(P * in-degree) per node); ties by
 * smaller core index.  Pins (core or class) and per-class cycles are
 * honoured.  Survey: Kwok & Ahmad, ACM Computing Surveys 31(4), 1999.
 * Greedy mode: Graham, "Bounds on multiprocessing timing anomalies", SIAM
 * J. Appl. Math. 1969 - makespan <= (2 - 1/P) * optimum without transfers.
 *
 * Results: *out (schedule, may be NULL if not wanted) and *map (may be
 * NULL); the caller destroys them.  The schedule is pm_sched_from_map of the
 * map (see the file comment).
 * Errors: PM_EZERODELAY (diag names a zero-delay loop), PM_EPLATFORM (a
 * node no core may run, or pinned out of range), PM_EUNSUPPORTED
 * (multirate), PM_EINVAL (bad priority list), PM_ERANGE (time overflow),
 * PM_ENOMEM.  Complexity: O((V + E) log V + V * P * PM_SCHED_GAPS) time,
 * O(V + E + P * PM_SCHED_GAPS) memory; with delays and the loop rule on,
 * plus pm_bound_compute (bound.h) and O(P) per node for the guard.
 */
#define PM_SCHED_GAPS 8
int pm_sched_list(const pm_graph *g, const pm_sched_opts *opts, pm_schedule **out,
                  pm_map **map, pm_diag *diag);

/*
 * Time map m (checked with pm_map_check) on g by the rule of the file
 * comment.  Nodes are timed in the order of their earliest possible start
 * (max of the previous node's end on the core and the producers' ends),
 * ties by smaller core index, then node id; that order decides who gets a
 * contended bus interval or idle gap first.
 * Errors: those of pm_map_check (PM_EMAP); PM_EDEADLOCK when the per-core
 * orders contradict the zero-delay edges (diag names a node that can never
 * start); PM_EZERODELAY, PM_EUNSUPPORTED, PM_ERANGE, PM_ENOMEM.
 * Complexity: O((V + E) log V) plus gap searches.
 */
int pm_sched_from_map(const pm_graph *g, const pm_map *m, pm_schedule **out,
                      pm_diag *diag);

void pm_sched_destroy(pm_schedule *s);

/*
 * Loop-time floor of map m: the largest, over directed cycles C of g (all
 * edges, delays included), of sum over edges (u,w) of C of
 * [t(u) on its core + (core(u) != core(w) ? send + cost + recv : 0)]
 * divided by the delays on C.  No self-timed run of m beats it; with every
 * loop on one core it equals the iteration bound for those node times.
 * *floor is 0/1 and *nloop 0 when g has no cycle.  loop (may be NULL)
 * receives a malloc'd list of *nloop node ids of one cycle attaining it, in
 * cycle order (caller frees).  Method: cycle improvement - take a cycle's
 * ratio r, look for a cycle of larger ratio as a positive cycle under
 * weights den*w - num*delay (Bellman-Ford), repeat (Dasdan, ACM TODAES
 * 2004, surveys such methods).  Exact integers.
 * Errors: PM_EZERODELAY (a cycle without delay), PM_EMAP, PM_ERANGE,
 * PM_ELIMIT (the work would exceed about 2^30 edge relaxations: very large
 * loops), PM_ENOMEM.  Complexity: O(k * V * E) for k improvements, with V
 * and E counted inside strongly connected parts; meant for scenario-sized
 * graphs.
 */
int pm_sched_loop_floor(const pm_graph *g, const pm_map *m, pm_rat *floor,
                        uint32_t **loop, uint32_t *nloop, pm_diag *diag);

#endif
