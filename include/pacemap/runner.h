/*
 * runner.h - execute a map with real threads on real cores and measure it
 * against the model (docs/runner.md).
 *
 * One thread per core of the map, optionally pinned to a processing unit
 * chosen by topo.h.  Each thread runs its nodes in map order, round after
 * round (self-timed, docs/simulation.md): round r fires node v for
 * iteration r - lag[v] (map.h) when that is one of the run's iterations,
 * so a lagged node starts late and its core runs on until it is done.  A token is a block
 * of float samples; a node's input is the mean of its input tokens, where
 * a source (a node whose only in-edges are self-loops) counts the
 * deterministic test signal (stream = node index) as one more input; its
 * work is the kernel of kernels.h, and its output token goes to every out-edge.
 * Cross-core edges are SPSC rings (ring.h), same-core edges plain FIFOs,
 * both pre-filled with the edge's delays as zero-sample tokens.  Each token
 * carries the producing iteration as a sequence number, checked on receipt.
 *
 * The procedure of a `pacemap run` is: pm_runner_calibrate (busy loop),
 * pm_runner_node_times (each node alone), pm_runner_host_costs (what the
 * runner itself costs: dispatch, send/recv per token, handoffs, its own
 * crossing between two pinned threads), pm_runner_predict_host (the period
 * the simulator gives with those host times and costs), pm_runner_execute
 * (the measured run), and a second pm_runner_execute of
 * pm_runner_serial_map to check the outputs bit for bit.
 *
 * Single-rate graphs only (PM_EUNSUPPORTED otherwise).  The library never
 * prints; pinning failures and stalls come back in the result.
 * Ownership: a pm_runner_result is the caller's struct; pm_runner_execute
 * fills it and it owns its arrays: release them with pm_runner_result_free
 * (NULL or a zeroed result is a no-op).
 */
#ifndef PACEMAP_RUNNER_H
#define PACEMAP_RUNNER_H

#include <stdbool.h>
#include <stdint.h>

#include "pacemap/error.h"
#include "pacemap/graph.h"
#include "pacemap/map.h"
#include "pacemap/sim.h"
#include "pacemap/topo.h"

#define PM_RUNNER_BLOCK 64u             /* default samples per token */
#define PM_RUNNER_RING_SLACK 16u        /* default ring slots beyond an edge's delay */
#define PM_RUNNER_MAX_RECORDS (1u << 26)/* nodes x (warm-up + iterations) timestamps */
#define PM_RUNNER_WATCHDOG_MS 2000u     /* default: stop after this long without progress */

typedef struct pm_runner_config {
    uint32_t iterations;    /* measured iterations, >= 1 */
    uint32_t warmup;        /* iterations run before measuring */
    uint32_t block;         /* samples per token, 1..PM_KERNEL_MAX_BLOCK */
    uint32_t ring_capacity; /* slots per cross-core ring; 0 = edge_capacity, else
                               delay + pile + PM_RUNNER_RING_SLACK; always raised to
                               delay + pile + 1, where pile = max(0, lag[dst] - lag[src]) */
    const uint32_t *edge_capacity; /* NULL, or slots per edge (cross-core edges) */
    double ns_per_cycle;    /* spin nodes: host nanoseconds per node cycle */
    double turns_per_ns;    /* spin calibration from pm_runner_calibrate */
    uint32_t watchdog_ms;   /* stall limit; 0 = PM_RUNNER_WATCHDOG_MS */
    const pm_topo *topo;    /* pin threads with it; NULL = do not pin */
    const uint32_t *pu;     /* map core c runs on PU pu[c] (OS index); with topo */
    bool yield;             /* sched_yield while waiting (PUs shared or busy host) */
    bool record_outputs;    /* keep every sink block in the result */
    const pm_sim_pace *pace;/* NULL: sources run free; else every firing of iteration k
                               waits until ceil(k * I) cycles x ns_per_cycle after the
                               start (runner_paced.c; interval only, no jitter) */
    bool cpu_time;          /* also read each thread's CPU clock
                               (CLOCK_THREAD_CPUTIME_ID) over the measured
                               iterations: busy then counts only the time the
                               thread ran (PUs shared) */
    int64_t (*clock)(void *ctx); /* NULL = CLOCK_MONOTONIC in ns; else the
                               nanosecond clock of timestamps and calibration
                               (tests inject a synthetic host); thread-safe */
    void *clock_ctx;
} pm_runner_config;

/* Defaults: 1000 iterations, 100 warm-up, PM_RUNNER_BLOCK, auto rings,
 * 1 ns per cycle, no calibration (turns_per_ns 1), no pinning. */
void pm_runner_config_default(pm_runner_config *c);

/* Where a stalled thread stood when the watchdog stopped the run. */
typedef struct pm_runner_wait {
    uint32_t core;
    uint32_t node;       /* node it was firing, PM_NONE when it had finished */
    uint32_t edge;       /* edge it waited on, PM_NONE when not waiting */
    bool for_space;      /* waited for room in the ring (else for a token) */
    uint64_t iteration;
} pm_runner_wait;

typedef struct pm_runner_result {
    uint32_t ncores, nnodes, nedges;
    uint32_t iterations, warmup;
    double period_ns_median, period_ns_p99, period_ns_mean;
    double latency_ns_median, latency_ns_p99; /* first source start to last sink end */
    double *busy;           /* ncores: share of the measured window spent in node
                               kernels; with cpu_time at most the share the
                               thread ran (its CPU clock); always <= 1 */
    double *wait;           /* ncores: share of the window waiting on rings */
    double *node_ns;        /* nnodes: median kernel time of a firing in the run */
    bool *pinned;           /* ncores: the thread was bound to its PU */
    uint64_t *tokens;       /* nedges: tokens consumed */
    uint32_t *remaining;    /* nedges: tokens left in the channel at the end */
    uint64_t order_errors;  /* tokens received with the wrong sequence number */
    uint64_t output_hash;   /* FNV-1a over every sink block, sinks in node order */
    uint32_t nsinks;
    uint32_t *sinks;        /* nodes whose only out-edges are self-loops (all if none) */
    float *outputs;         /* record_outputs: [nsinks][warmup+iterations][block] */
    bool stalled;           /* the watchdog (or a same-core wait) stopped the run */
    pm_runner_wait *waits;     /* ncores, meaningful when stalled */
    /* a paced run (cfg->pace): release of iteration k to its last sink end,
     * over the measured iterations; sources that started at or after their
     * next release */
    bool paced;
    double paced_latency_ns_min, paced_latency_ns_median, paced_latency_ns_p99,
        paced_latency_ns_max;
    uint64_t overruns;
} pm_runner_result;

/* The simulator's paced prediction for a run (pm_runner_predict_paced). */
typedef struct pm_runner_paced_model {
    double latency_ns_min, latency_ns_p99, latency_ns_max;
    uint64_t overruns;
} pm_runner_paced_model;

void pm_runner_result_free(pm_runner_result *r);

/* Busy-loop turns per nanosecond on the calling thread: median of 9 timed
 * runs of pm_kernel_spin.  PM_EPLATFORM when the clock is unusable. ~20 ms. */
int pm_runner_calibrate(double *turns_per_ns);

/* Rounds of pm_runner_node_times: its result is the least round median. */
#define PM_RUNNER_TIME_ROUNDS 5u

/* Host time of one firing of each node alone on the calling thread (its
 * kernel on a test block; spin turns for the cycles of the class of its
 * core in m): the least of PM_RUNNER_TIME_ROUNDS medians, each over
 * `repeats` samples; a sample averages enough firings to last >= 5 µs, and
 * samples go round all nodes in turn (a passing load on the host then
 * touches every node alike; other programs only add time, hence the least
 * round).  node_ns has g->nnodes entries.  PM_ERANGE for a bad work
 * parameter, PM_ENOMEM. */
int pm_runner_node_times(const pm_graph *g, const pm_map *m, const pm_runner_config *cfg,
                      uint32_t repeats, double *node_ns);

/* One-way handoff latency of a token between a thread on PU pu_a and one
 * on pu_b through a ring (ping-pong, half the round trip): median and p99
 * of `rounds` (>= 10, the first tenth dropped as warm-up).  The calling
 * thread plays the pu_a side and, when cfg->topo is set, stays bound to
 * pu_a afterwards; the other side is a new thread on pu_b.  *pinned says
 * whether both bindings held.  PM_EINVAL, PM_ENOMEM, PM_EPLATFORM (no
 * thread). */
int pm_runner_handoff(const pm_runner_config *cfg, uint32_t pu_a, uint32_t pu_b,
                   uint32_t rounds, double *median_ns, double *p99_ns, bool *pinned);

/* Predicted steady period (ns) of map m when node v takes node_ns[v] and a
 * cross-core token arrives handoff_ns after its producer ends: the
 * simulator (sim.h, pm_sim_run, 1000 iterations; exact steady period when
 * reached, else the average of the last half) on a view of g whose
 * platform is point-to-point links with that latency and no send/recv
 * cost, in units of 1/16 ns.  fifo_cap: tokens per cross-core edge, 0 =
 * unbounded.  m's lags go to the simulator with the map.  depth (nedges
 * entries, may be NULL) receives the most tokens
 * each cross-core edge held in the model (0 for same-core edges): the
 * buffer depth the rings need.  Errors of pm_sim_run, with its message in
 * diag (may be NULL): PM_EDEADLOCK when the map admits no firing order
 * (diag names the waiting cycle), PM_EMAP, PM_ELIMIT, PM_ENOMEM,
 * PM_EUNSUPPORTED when the simulator does not take m's lags.
 * Complexity: that of pm_sim_run for 1000 iterations. */
int pm_runner_predict(const pm_graph *g, const pm_map *m, const double *node_ns,
                   double handoff_ns, uint32_t fifo_cap, double *period_ns,
                   uint32_t *depth, pm_diag *diag);

/* ---- the host's own costs (runner_host.c) ---------------------------------- */

#define PM_HOST_MAX_SIZES 5 /* token sizes measured */

/* Median and 99th percentile of a measured cost, in host nanoseconds. */
typedef struct pm_host_stat {
    double median, p99;
} pm_host_stat;

/* What the runner itself costs on this host, measured by
 * pm_runner_host_costs.  A token of a run with block B is B + 2 words of
 * 4 bytes (the samples and the sequence number). */
typedef struct pm_host_costs {
    pm_host_stat dispatch;  /* per firing: the core loop, timestamps, same-core
                               channels, a zero-turn kernel (serial chains) */
    double ends_ns;         /* per iteration: a source's test signal and a
                               sink's output hash, on top of dispatch */
    uint32_t nsizes;        /* token sizes measured; 0 = no cross-core part */
    uint32_t words[PM_HOST_MAX_SIZES];                  /* ascending */
    pm_host_stat send[PM_HOST_MAX_SIZES];  /* producer's time per token */
    pm_host_stat recv[PM_HOST_MAX_SIZES];  /* consumer's time per token */
    uint32_t run_size;      /* index of the run's token size (cfg->block) */
    pm_host_stat latency_idle; /* one-way handoff, both sides only waiting */
    pm_host_stat latency_busy; /* one-way handoff, both sides working between */
    pm_host_stat crossing;  /* one crossing of the runner itself: a loop of two
                               zero-work nodes on the two PUs, half its period
                               less each node's dispatch and output hash:
                               the kernel end to the next kernel start, less
                               the consumer's dispatch */
    double send_base, send_per_word, recv_base, recv_per_word; /* least squares
                               over the medians by size (per word >= 0) */
    bool pinned;            /* every measuring thread held its PU */
} pm_host_costs;

/*
 * Measure the runner's costs on PUs pu_a (the calling thread, left bound
 * to it) and pu_b: dispatch per firing from serial chains of zero-work
 * nodes of two lengths (slope; the intercept is ends_ns); send and receive
 * time per token in batches of 8 tokens through a ring between the two
 * threads, for blocks 1, 16, 64, 256 and cfg->block; the one-way handoff
 * by ping-pong (half the round trip) with both sides idle, then with both
 * running a busy loop of about 2 us between tokens; the crossing of the
 * runner's own loop of two zero-work nodes over pu_a and pu_b.  `rounds` samples
 * each (>= 10, the first tenth dropped).  pu_b == PM_NONE measures only
 * the dispatch (nsizes 0).  Timing uses cfg->clock when set.
 * PM_EINVAL, PM_ENOMEM, PM_EPLATFORM (no thread).  ~rounds x 30 us.
 */
int pm_runner_host_costs(const pm_runner_config *cfg, uint32_t pu_a, uint32_t pu_b,
                         uint32_t rounds, pm_host_costs *out);

/* The model's comm costs of one cross-core token on this host, in ns:
 * send and recv occupancy at the run's size, and the latency from the
 * producer's kernel end to the token's arrival: the runner's crossing less
 * the receive (never below 0; the send overlaps it, as in the simulator). */
void pm_runner_host_comm(const pm_host_costs *h, double *latency_ns, double *send_ns,
                         double *recv_ns);

/* Host time of node v in the model: node_ns[v] plus dispatch, plus half of
 * ends_ns when v is a source and half when it is a sink (every node, when
 * the graph has no sink: the runner then keeps every output).  O(V + E). */
double pm_runner_host_node_ns(const pm_graph *g, const pm_host_costs *h, const double *node_ns,
                              uint32_t v);

/* pm_runner_predict with the host's costs: node v takes
 * pm_runner_host_node_ns, every cross-core token costs the producer's
 * core `send`, the consumer's `recv` and arrives `latency` later
 * (pm_runner_host_comm).  Same errors. */
int pm_runner_predict_host(const pm_graph *g, const pm_map *m, const double *node_ns,
                           const pm_host_costs *h, uint32_t fifo_cap, double *period_ns,
                           uint32_t *depth, pm_diag *diag);

/* Where core c's period goes in that model, ns per iteration. */
typedef struct pm_runner_share {
    double work;       /* node kernels */
    double dispatch;   /* the runner's per-firing cost (and sources/sinks) */
    double transfers;  /* send and recv of cross-core tokens */
    double waiting;    /* period minus the rest: waiting on other cores */
} pm_runner_share;

/* Fill share[0..m->ncores) for `period_ns`.  O(V + E). */
void pm_runner_breakdown(const pm_graph *g, const pm_map *m, const double *node_ns,
                         const pm_host_costs *h, double period_ns, pm_runner_share *share);

/* Run m with one thread per core: cfg->warmup + cfg->iterations
 * iterations, each node for every one of them whatever its lag; timings
 * are per iteration (the completion of iteration k is the latest end of
 * any node's iteration k, so lags lengthen latency, not the period).
 * *out is zeroed first.  PM_OK with *out filled; PM_EDEADLOCK
 * with *out filled and
 * stalled set when no thread progressed for cfg->watchdog_ms (or a thread
 * waited on its own core); PM_EUNSUPPORTED for a multirate graph;
 * PM_ELIMIT past PM_RUNNER_MAX_RECORDS; PM_ERANGE for a bad work parameter
 * or block, or a ring past ring.h's memory limit (a very large lag); PM_EINVAL when m does not fit g (also: a lag past
 * PM_MAP_MAX_LAG, or an edge whose delay + lag[dst] - lag[src] is
 * negative); PM_ELIMIT when a channel would pass PM_RING_MAX_CAPACITY
 * slots; PM_ENOMEM; PM_EPLATFORM when
 * a thread cannot be started.  Pinning failures do not fail the run. */
int pm_runner_execute(const pm_graph *g, const pm_map *m, const pm_runner_config *cfg,
                      pm_runner_result *out);

/* One core running every node in a topological order of the zero-delay
 * edges (ties by node index): the single-threaded reference.
 * PM_EZERODELAY when zero-delay edges form a cycle, PM_ENOMEM. O(V + E). */
int pm_runner_serial_map(const pm_graph *g, pm_map **out);

/* A trivial map for `ncores` cores: nodes in that topological order dealt
 * round-robin to the cores that may run them (pins and classes honoured).
 * For tests and programs that want a map without scheduling.  PM_EPLATFORM when a node
 * has no core, PM_EZERODELAY, PM_ENOMEM.  O(V * ncores + E). */
int pm_runner_round_robin_map(const pm_graph *g, uint32_t ncores, pm_map **out);

/* The paced run pm_runner_predict's model gives (same host view: node_ns
 * per node, handoff_ns per cross-core token, p2p links), with the pace's
 * interval in cycles turned into host time by ns_per_cycle (jitter
 * ignored): latency min, p99 and max and overruns over 1000 iterations.
 * Errors of pm_sim_run, PM_ERANGE for an interval out of range, PM_ENOMEM. */
int pm_runner_predict_paced(const pm_graph *g, const pm_map *m, const double *node_ns,
                            double handoff_ns, const pm_sim_pace *pace, double ns_per_cycle,
                            pm_runner_paced_model *out, pm_diag *diag);

#endif
