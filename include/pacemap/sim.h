/*
 * sim.h - cycle-accurate discrete-event simulation of a map running
 * self-timed (docs/simulation.md) over many overlapping iterations.
 *
 * Each core runs its map order again and again, non-preemptively; a firing
 * begins when its core is free and every input token has arrived (and, with
 * a FIFO capacity, when its output buffers have room).  Cross-core tokens
 * travel over point-to-point links or a shared bus (one transfer at a time,
 * oldest request first).  All times are integer cycles and every tie is
 * broken by a fixed rule (docs/simulation.md), so runs are bit-for-bit
 * repeatable.  Self-timed execution and its inter-processor communication
 * graph: Sriram & Bhattacharyya, "Embedded Multiprocessors: Scheduling and
 * Synchronization", 2000.
 *
 * Times of one firing (v,k) on core c:
 *   begin  the core starts receiving its cross-core inputs (recv occupancy)
 *   start  = begin + recv * (cross-core in-edges of v): the node runs
 *   end    = start + t(v): tokens leave; same-core consumers may use them
 *   free   = end + send * (cross-core out-edges of v): the core moves on
 * A cross-core token of edge e arrives at end + latency + per_word*words on
 * point-to-point links; on a bus it is requested at `end`, granted when the
 * bus is free, and arrives at grant + latency + per_word*words.
 *
 * Memory does not grow with the number of iterations: the simulator keeps
 * a window of the last W iterations (W small: the deepest delay or FIFO
 * plus the longest cyclicity looked for, plus a few iterations of slack
 * between cores).  Only tokens that truly pile up on an unbounded edge (a
 * consumer slower than its producer) take memory that grows with them;
 * past a limit the run stops with PM_ELIMIT naming the edge.
 *
 * Ownership: a pm_sim_result owns its arrays; free with pm_sim_result_free()
 * (safe on a zeroed or already freed result).  The graph and the map are
 * only read.  Thread-safe: no global state.
 */
#ifndef PACEMAP_SIM_H
#define PACEMAP_SIM_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "pacemap/error.h"
#include "pacemap/graph.h"
#include "pacemap/map.h"
#include "pacemap/rational.h"

#define PM_SIM_DEFAULT_ITERATIONS 1000
#define PM_SIM_MAX_CYCLICITY 64

/* A paced run (docs/simulation.md): the input delivers a sample every
 * `interval` cycles (I = clock / rate, exact).  Firing j of a node that
 * fires q times per iteration may not begin before its release
 * ceil(j * I / q) (single rate: iteration k at ceil(k * I)), plus, with
 * jitter J > 0, a lateness in 0..J drawn from the release time and the seed
 * (pm_sim_release).  The arrays are indexed by node of the simulated graph;
 * each may be NULL (then: q = 1, phase 0, inputs = nodes without an input
 * edge from another node, sinks = nodes without an output edge to another
 * node, or all nodes when none has). */
typedef struct pm_sim_pace {
    pm_rat interval;         /* I > 0 */
    const uint32_t *count;   /* q: firings per iteration of the node's scenario node */
    const uint32_t *phase;   /* which of those firings the node is: 0 .. q - 1 */
    const bool *input;       /* overruns are counted on these */
    const bool *sink;        /* their ends set the latency */
    int64_t jitter;          /* J >= 0 cycles */
    uint64_t seed;
} pm_sim_pace;

/* What a paced run measured (pm_sim_result.pace; all 0 when not paced).
 * Latency of iteration k: last end of a sink firing of k minus the release
 * of k (firing 0 of its inputs, jitter included).  p99: nearest rank. */
typedef struct pm_sim_paced {
    bool on;
    int64_t latency_min, latency_max, latency_p99;
    double latency_mean;
    uint64_t overruns;       /* input firings that began at or after their next release */
    uint64_t first_overrun;  /* iteration of the first one (when overruns > 0) */
    int64_t *releases;       /* release of each recorded iteration (charts); owned */
    uint32_t nreleases;
} pm_sim_paced;

typedef struct pm_sim_opts {
    uint64_t iterations;        /* N >= 1; 0 means PM_SIM_DEFAULT_ITERATIONS */
    uint32_t fifo_cap;          /* tokens per cross-core edge; 0 = unbounded.  An
                                   edge with more delays than this gets room for them */
    uint32_t record;            /* keep the firings/transfers of the first `record`
                                   iterations (charts, VCD); 0 = none */
    uint32_t max_cyclicity;     /* largest cyclicity looked for; 0 = automatic
                                   (64, less for very large graphs), at most
                                   PM_SIM_MAX_CYCLICITY */
    const int64_t *node_cycles; /* NULL, or nnodes execution times (>= 0) that replace
                                   pm_graph_cycles_on (the runner's measured times) */
    const pm_sim_pace *pace;    /* NULL: sources run as fast as they can */
    const uint32_t *edge_cap;   /* NULL, or nedges capacities (tokens, 0 = fifo_cap)
                                   for cross-core edges: a map's capacity lines */
} pm_sim_opts;

/* What held a firing's begin (or a transfer's grant) back. */
typedef enum pm_sim_cause {
    PM_CAUSE_START = 0, /* nothing: began at time 0 */
    PM_CAUSE_ORDER,     /* its core finished the previous firing in the core's order */
    PM_CAUSE_EDGE,      /* a token of `edge` (same core, or a p2p transfer) */
    PM_CAUSE_BUS,       /* a token of `edge` that came over the bus */
    PM_CAUSE_FIFO,      /* room on output `edge` (the consumer had to begin first) */
    PM_CAUSE_BUS_BUSY,  /* a transfer waited for the transfer before it on the bus */
    PM_CAUSE_RELEASE    /* a paced run: its sample was not there yet */
} pm_sim_cause;

/* One element of the critical chain: a firing (node, iteration), or with
 * kind PM_CAUSE_BUS_BUSY a bus transfer of `edge`'s token of `iteration`.
 * `via` says how this element held back the element listed before it. */
typedef struct pm_sim_step {
    uint32_t node;       /* PM_NONE for a transfer element */
    uint32_t edge;       /* transfer element: its edge; else PM_NONE */
    uint64_t iteration;
    uint32_t core;       /* core of the node (transfer: producer's core) */
    pm_sim_cause via;    /* ORDER, EDGE, BUS, FIFO or BUS_BUSY */
    uint32_t via_edge;   /* the edge for EDGE, BUS, FIFO; else PM_NONE */
} pm_sim_step;

/* One link of a deadlock's waiting cycle: `core` cannot begin `node` of
 * `iteration` because it waits for `edge` (data from `waits_for_node` on
 * `waits_for_core`, or with `fifo` room that the consumer
 * `waits_for_node` must make). */
typedef struct pm_sim_wait {
    uint32_t core;
    uint32_t node;
    uint64_t iteration;
    uint32_t edge;
    bool fifo;
    uint32_t waits_for_node;
    uint32_t waits_for_core;
} pm_sim_wait;

/* A recorded firing (see the time names at the top of this file). */
typedef struct pm_sim_firing {
    uint32_t node;
    uint32_t core;
    uint64_t iteration;
    int64_t begin, start, end, free;
} pm_sim_firing;

/* A recorded cross-core transfer of edge's token made by `iteration`.
 * p2p: grant == request == producer's end. */
typedef struct pm_sim_transfer {
    uint32_t edge;
    uint64_t iteration;
    int64_t request, grant, arrival;
} pm_sim_transfer;

typedef struct pm_sim_result {
    uint64_t iterations;     /* simulated (N), or those reached before a deadlock */
    uint64_t firings;        /* firings simulated */
    /* deadlock (pm_sim_run returned PM_EDEADLOCK) */
    bool deadlock;
    pm_sim_wait *waits;      /* the waiting cycle, in order */
    uint32_t nwaits;
    /* period */
    bool steady;             /* periodic regime reached within N iterations */
    pm_rat period;           /* steady: exact; else average over the last half */
    uint32_t cyclicity;      /* steady: c (iteration k+c begins c*period after k) */
    uint64_t transient;      /* steady: first iteration from which that holds */
    bool uniform;            /* all nodes at the same rate (false: tokens pile up
                                between parts that run at different rates) */
    /* latency: earliest start to latest end within one iteration */
    int64_t latency_steady;  /* steady: max over the last c iterations; else last */
    int64_t latency_max;     /* over all iterations */
    int64_t makespan;        /* last core free time */
    /* resources; utilisation = busy cycles per iteration / period */
    uint32_t ncores;
    int64_t *core_busy;      /* ncores: recv + run + send cycles per iteration */
    double *utilisation;     /* ncores, in [0, 1] */
    uint32_t nedges;         /* = graph's nedges */
    int64_t *max_tokens;     /* nedges: most tokens buffered on the edge at once
                                (cross-core edges); -1 for same-core edges */
    bool bus;                /* the platform has a bus */
    int64_t bus_busy;        /* bus cycles per iteration */
    double bus_utilisation;  /* bus_busy / period */
    /* the chain of firings and transfers that sets the period (critical
     * cycle of the run), latest first; spans critical_delays iterations and
     * critical_cycles cycles.  critical_matches: cycles/delays == period. */
    pm_sim_step *critical;
    uint32_t ncritical;
    int64_t critical_cycles;
    uint64_t critical_delays;
    bool critical_matches;
    /* recorded first iterations, firings sorted by (begin, core) */
    uint32_t recorded;
    pm_sim_firing *trace;
    size_t ntrace;
    pm_sim_transfer *transfers;
    size_t ntransfers;
    pm_sim_paced pace;       /* a paced run's latency and overruns */
} pm_sim_result;

/*
 * Simulate map m of finalized single-rate graph g.  opts may be NULL
 * (defaults).  The result is filled on PM_OK and on PM_EDEADLOCK (then
 * `deadlock`, `waits` and `iterations` describe where it stopped and diag
 * holds a one-line message naming the cycle); free it in both cases.
 * Errors: PM_EMAP (map does not fit; diag says why), PM_EUNSUPPORTED
 * (multirate graph), PM_EINVAL (bad options, a pace without clock-rate
 * interval), PM_ERANGE (times overflow
 * 62 bits), PM_ELIMIT (tokens pile up past the memory limit; diag names
 * the edge), PM_ENOMEM.
 * Complexity: O(N * (V + E)) time with point-to-point links (a compiled
 * sweep in topological order), plus O(log R) per transfer on a bus for R
 * waiting requests; memory O((V + E) * W) for the window of W iterations.
 */
int pm_sim_run(const pm_graph *g, const pm_map *m, const pm_sim_opts *opts,
               pm_sim_result *out, pm_diag *diag);

/* Free what a result owns and zero it; NULL, zeroed or freed results are
 * fine. */
void pm_sim_result_free(pm_sim_result *r);

/* Release of firing j of a node firing q times per iteration in paced run
 * p: ceil(j * I / q) plus, when p->jitter > 0, the lateness
 * splitmix64(seed + T * 0x9e3779b97f4a7c15) mod (J + 1) of that nominal
 * time T (splitmix64: Steele, Lea & Flood, OOPSLA 2014; its output
 * function).  Firings released at the same nominal time are late alike. */
int64_t pm_sim_release(const pm_sim_pace *p, uint64_t j, uint32_t q);

/* Stable lower-case name of a cause: "start", "order", "edge", "bus",
 * "fifo", "bus-busy", "release". */
const char *pm_sim_cause_name(pm_sim_cause c);

#endif
