/*
 * bound.h - the iteration bound, critical loops and floors for P cores.
 *
 * The iteration bound of a single-rate graph is the largest, over directed
 * cycles C, of (sum of node cycles on C) / (sum of delays on C) (Ito & Parhi,
 * J. VLSI Signal Processing 1995).  It is computed exactly as a reduced
 * fraction by Howard's policy iteration in integer arithmetic on each
 * strongly connected part (Cochet-Terrasson et al. 1998; Dasdan, ACM TODAES
 * 2004) and certified: integer potentials, scaled by the denominator, show
 * that no cycle exceeds it.  A second, independent method (Karp's minimum
 * cycle mean theorem, Discrete Math. 1978, as the oracle of an exact
 * Stern-Brocot search) serves the tests as a cross-check.  Method notes:
 * docs/methods.md.
 *
 * Node times are the smallest over the core classes that can run the node:
 * a floor must hold on every mapping.  Multirate graphs must be expanded to
 * single rate first (PM_EUNSUPPORTED otherwise).
 *
 * Ownership: a pm_bound owns its loops and parts; free with pm_bound_free().
 * Thread-safe: no global state; the graph is only read.
 */
#ifndef PACEMAP_BOUND_H
#define PACEMAP_BOUND_H

#include <stdbool.h>
#include <stdint.h>

#include "pacemap/error.h"
#include "pacemap/graph.h"
#include "pacemap/rational.h"

/* A directed cycle of the graph. */
typedef struct pm_loop {
    uint32_t *nodes;  /* node ids in loop order, starting at the smallest id */
    uint32_t *edges;  /* edges[i] goes from nodes[i] to nodes[(i+1) % len] */
    uint32_t len;
    int64_t cycles;   /* sum of node times on the loop */
    int64_t delays;   /* sum of delays on the loop (> 0) */
} pm_loop;

/* A strongly connected part that contains at least one loop. */
typedef struct pm_part {
    uint32_t nnodes;
    uint32_t first_node; /* smallest node id in the part (a stable name) */
    pm_rat bound;        /* the part's own iteration bound */
    pm_loop worst;       /* one loop of the part that attains it */
} pm_part;

typedef struct pm_bound {
    bool has_loop;            /* false: feed-forward graph, no loop bound */
    pm_rat iteration_bound;   /* valid when has_loop */
    pm_loop *critical;        /* loops attaining the bound, at most max_critical */
    uint32_t ncritical;
    bool critical_truncated;  /* more critical loops exist than listed */
    pm_part *parts;           /* parts with loops, worst bound first (at most
                               * max_parts of them) */
    uint32_t nparts;
    uint32_t nparts_total;    /* all parts with loops (>= nparts) */
    int64_t total_cycles;     /* sum of node times */
    uint32_t largest_node;    /* PM_NONE for an empty graph */
    int64_t largest_cycles;
    uint32_t *loop_pool_;     /* internal: storage of the parts' loops */
} pm_bound;

typedef struct pm_bound_opts {
    uint32_t max_critical;    /* 0 means PM_BOUND_DEFAULT_MAX_CRITICAL */
    uint32_t max_parts;       /* 0 means every part */
} pm_bound_opts;

#define PM_BOUND_DEFAULT_MAX_CRITICAL 16

/*
 * Compute the bound of finalized graph g.  opts may be NULL.
 * The answer is certified on every call: integer potentials from the final
 * policy prove, edge by edge, that no cycle of any part exceeds its bound.
 * Critical loops are the simple cycles of the edges that are tight under
 * those potentials (each attains the bound, and every loop that attains it
 * is among them), listed by Johnson's algorithm (SIAM J. Computing 1975),
 * each starting at its smallest node id.
 * Errors: PM_EZERODELAY when a loop carries no delay (diag names its nodes
 * in order, "loop without delay: a -> b -> a (...)", and points at the last
 * written edge of that loop); PM_ERANGE when the sum of node times or of
 * delays exceeds 62 bits; PM_EUNSUPPORTED for multirate graphs;
 * PM_EPLATFORM when a node can run on no core class; PM_ENOMEM.  On error
 * *out is left empty (pm_bound_free() is still safe).
 * Complexity: O(iterations * E) time (policy iteration; in practice a few
 * dozen passes), O(V + E) memory: about 60 bytes per node and 5 per edge
 * beyond the graph (docs/performance.md).
 */
int pm_bound_compute(const pm_graph *g, const pm_bound_opts *opts, pm_bound *out,
                     pm_diag *diag);
void pm_bound_free(pm_bound *b);

/* Independent cross-check for tests: a Stern-Brocot search over fractions
 * whose oracle is Karp's theorem (Discrete Math. 1978) applied to the
 * weights q*t(u) - p*d(e): the sign of their maximum cycle mean is the
 * sign of (bound - p/q).  The same value as pm_bound_compute, or
 * *has_loop = false.  Same errors, plus PM_ERANGE when the search's
 * fractions outgrow 128-bit arithmetic (only for huge values).
 * O(V * E) per oracle call, O(log^2) calls: small graphs only. */
int pm_bound_karp(const pm_graph *g, bool *has_loop, pm_rat *bound, pm_diag *diag);

/* Exact check, independent of the policy iteration, that no cycle of g has
 * ratio above `lambda`: longest paths (Bellman-Ford) for the integer
 * weights den*t(u) - num*d(e) settle iff no cycle has positive weight.
 * *ok is false when some cycle exceeds lambda.  PM_ERANGE when num or den
 * exceed 2^40.  O(V * E); for tests. */
int pm_bound_certify(const pm_graph *g, pm_rat lambda, bool *ok);

/* What sets the lower bound (or the map floor) for P cores. */
typedef enum pm_floor_kind {
    PM_FLOOR_LOOP = 0, /* the iteration bound */
    PM_FLOOR_CORES,    /* the work on the cores (fractional for classes) */
    PM_FLOOR_NODE,     /* the largest node */
    PM_FLOOR_PACKING,  /* whole nodes on P cores (pigeonhole), map floor only */
    PM_FLOOR_PINNED,   /* the nodes pinned to one core, map floor only */
    PM_FLOOR_BUS,      /* transfers pins force onto the bus, map floor only */
    PM_FLOOR_SEARCH    /* the smallest busiest-core occupancy of any map, proven
                          by an exhaustive search (map floor only; set by the
                          callers that run the search, e.g. the sweep) */
} pm_floor_kind;

typedef struct pm_floors {
    uint32_t procs;
    pm_rat cores;          /* work floor: total / P for one class; for classes
                            * the fractional-assignment bound (docs/methods.md) */
    pm_rat node;           /* largest node at its fastest allowed class */
    bool has_loop;
    pm_rat loop;           /* iteration bound (valid when has_loop) */
    pm_rat lower_bound;    /* max of the above */
    pm_floor_kind binding; /* which one is the max (loop, then node, then cores on ties) */
    bool has_budget;       /* clock and rate given */
    pm_rat budget;         /* clock / rate, cycles per iteration */
    bool loop_fits;        /* iteration bound <= budget (true without loops) */
    bool lower_fits;       /* lower bound <= budget */
    pm_rat margin;         /* budget - lower bound, cycles (may be negative) */
    double margin_us;      /* the margin in microseconds at the clock */
    /* Floors that hold because a map puts whole nodes on cores (0 when
     * they do not apply); map_floor is the largest floor proven for P. */
    pm_rat packing;        /* pigeonhole over the largest nodes of a class */
    pm_rat pinned;         /* busiest core by its pinned nodes (+ send/recv
                            * of the transfers the pins force) */
    uint32_t pinned_core;  /* that core, or PM_NONE */
    pm_rat bus;            /* bus occupancy of transfers pins force across */
    pm_rat map_floor;      /* max(lower_bound, packing, pinned, bus) */
    pm_floor_kind map_binding; /* which sets it (lower_bound's kind on ties) */
} pm_floors;

/* Floors for `procs` cores from a computed bound (b from the same graph).
 * With core classes and procs == the platform's core count, the class
 * counts are used (fractional work floor, packing per class); with
 * another procs, the cores are taken as identical.  Every floor is an
 * exact fraction that no map and schedule on those cores can beat
 * (proofs: docs/methods.md); when an exact value outgrows 64 bits it is
 * rounded down, so it stays a floor.
 * Errors: PM_EINVAL (NULL, procs == 0), PM_ERANGE, PM_ENOMEM.
 * O(V log V + E + V * classes) time, O(V) memory. */
int pm_bound_floors(const pm_graph *g, const pm_bound *b, uint32_t procs,
                      pm_floors *out);

/* Name of a floor kind: "loop", "cores", "node", "packing", "pinned", "bus",
 * "search". */
const char *pm_bound_floor_name(pm_floor_kind k);

/* The fractional-assignment work floor alone (what pm_floors.cores holds
 * for a class platform): by LP duality, for any y >= 0 with
 * sum_k n_k y_k = 1, sum_v min_k y_k t_vk (k over the classes v may use,
 * pins respected) is a floor; this finds the maximising y numerically
 * (Kelley's cutting planes), fixes it exactly at the vertex of f where it
 * lies and evaluates f there exactly: the LP optimum as an exact fraction,
 * for any number of classes.  Should rounding mislead the search or the
 * vertex's weights outgrow 62 bits, the value is f at the y found (still
 * a proven floor, below the optimum).  `counts` gives n_k
 * (nclasses entries).  PM_EPLATFORM when a node may use no class with
 * cores; PM_ERANGE, PM_ENOMEM. */
int pm_bound_work_floor(const pm_graph *g, const uint32_t *counts, pm_rat *out);

/* How far an achieved period is above a floor: *optimal when they are
 * equal (the floor is then reached, so the period is proven optimal for
 * the floor's cores), *pct = 100 * (period - floor) / floor exactly (0 when
 * floor is 0).  PM_ERANGE when the fraction outgrows 64 bits. */
int pm_bound_gap(pm_rat period, pm_rat floor, bool *optimal, pm_rat *pct);

#endif
