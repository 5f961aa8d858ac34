/*
 * runner_internal.h - what the real-core runner's files share: runner.c
 * (entry points, prediction, the result's statistics), runner_exec.c (a
 * run's set-up, threads and tear-down) and runner_time.c (measurements
 * before a run).  Not part of the API.
 */
#ifndef PACEMAP_RUNNER_INTERNAL_H
#define PACEMAP_RUNNER_INTERNAL_H

#include <pthread.h>
#include <sched.h>
#include <stdalign.h>
#include <stdatomic.h>
#include <stdbool.h>
#include <stdint.h>
#include <time.h>

#include "pacemap/kernels.h"
#include "pacemap/ring.h"
#include "pacemap/runner.h"
#include "pacemap/sim.h"

/* ---- helpers (runner.c) ---------------------------------------------------- */

/* The monotonic clock in nanoseconds; inline: threads read it around
 * every firing. */
static inline int64_t runner_now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (int64_t)ts.tv_sec * 1000000000 + ts.tv_nsec;
}

/* The run's clock: the injected one, else the monotonic clock. */
static inline int64_t runner_clock(const pm_runner_config *cfg)
{
    return cfg->clock ? cfg->clock(cfg->clock_ctx) : runner_now();
}

/* This thread's CPU time in nanoseconds (time it really ran). */
static inline int64_t runner_cpu_now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_THREAD_CPUTIME_ID, &ts);
    return (int64_t)ts.tv_sec * 1000000000 + ts.tv_nsec;
}

/* Nearest-rank quantile q in [0,1] of v[0..n) (sorts v). */
double runner_quantile(double *v, size_t n, double q);

/* FNV-1a over n bytes at p, continuing from h. */
uint64_t runner_fnv(uint64_t h, const void *p, size_t n);

/* The sink outputs' hash over n samples, continuing from h. */
uint64_t runner_hash_block(uint64_t h, const float *p, uint32_t n);

/* The kernel of node v on map core `core` (spin turns from its cycles). */
int runner_kernel_for(const pm_graph *g, const pm_runner_config *cfg, uint32_t v, uint32_t core,
                   pm_kernel **k);

/* One turn of a wait for a ring: spin, or yield when asked to or after
 * long spinning (inline: it sits in every spin loop). */
static inline void runner_wait_turn(const pm_runner_config *cfg, uint64_t spins)
{
    if (cfg->yield || spins > 4096)
        sched_yield();
}

/* Node v's lag in m (0 when the map carries none): round r of its core
 * runs v's iteration r - lag (map.h). */
static inline uint32_t runner_lag(const pm_map *m, uint32_t v)
{
    return m->lag ? m->lag[v] : 0u;
}

/* Slots edge e needs so that no lagged map waits on room forever: its
 * delays, the tokens that pile up while the producer runs lag[dst] -
 * lag[src] rounds ahead of the consumer, and one in flight (docs/runner.md). */
static inline uint64_t runner_min_slots(const pm_graph *g, const pm_map *m, uint32_t e)
{
    const pm_edge *ed = &g->edges[e];
    uint32_t ls = runner_lag(m, ed->src), ld = runner_lag(m, ed->dst);
    return (uint64_t)ed->delay + (ld > ls ? ld - ls : 0u) + 1u;
}

/* Host nanoseconds in the model's integer units (1/16 ns), saturating. */
int64_t runner_units(double ns);

/* The simulator's steady period (ns) of m when node v takes node_ns[v]
 * and a cross-core token costs comm_ns = {latency, send, recv}: the body
 * of pm_runner_predict. */
int runner_predict_ns(const pm_graph *g, const pm_map *m, const double *node_ns,
                      const double *comm_ns, uint32_t fifo_cap, double *period_ns,
                      uint32_t *depth, pm_diag *diag);

/* ---- measurements (runner_time.c) ---------------------------------------------- */

/* Ping-pong of `bytes` tokens between pu_a (the caller) and pu_b; with
 * busy_turns the initiator runs that busy loop before each token and the
 * echo half of it after answering.  Half round trips, as pm_runner_handoff. */
int runner_handoff_run(const pm_runner_config *cfg, uint32_t pu_a, uint32_t pu_b,
                       uint32_t rounds, size_t bytes, uint64_t busy_turns, double *median_ns,
                       double *p99_ns, bool *pinned);

/* ---- a run (runner_exec.c) --------------------------------------------------- */

/* A token: the producing iteration (negative for initial tokens), then
 * block samples. */
typedef struct runner_token {
    int64_t seq;
    float data[];
} runner_token;

/* An edge's channel: an SPSC ring across cores, a plain FIFO on one core.
 * Its consumer writes head, count and taken at every firing: each channel
 * has cache lines of its own, so two cores never write one line. */
typedef struct runner_chan {
    alignas(PM_RING_LINE) pm_ring *ring;
    unsigned char *fifo; /* same-core: cap slots of `bytes` */
    uint32_t cap, head, count;
    uint64_t taken;      /* tokens consumed */
} runner_chan;

typedef struct runner_ctx runner_ctx;

/* Each on its own cache lines: a thread writes its own at every firing. */
typedef struct runner_thread {
    alignas(PM_RING_LINE) runner_ctx *x;
    uint32_t core;
    pthread_t tid;
    bool started, pinned;
    _Atomic uint64_t fired;  /* progress, read by the watchdog */
    _Atomic bool finished;
    float *in, *out;         /* block buffers */
    uint64_t order_errors;
    int64_t wait_ns;         /* time spent waiting on rings, measured iterations */
    int64_t cpu_from, cpu_ns;/* cpu_time: CPU clock at the first measured firing,
                                CPU time from there to the thread's end */
    pm_runner_wait wait;
} runner_thread;

struct runner_ctx {
    const pm_graph *g;
    const pm_map *m;
    const pm_runner_config *cfg;
    size_t bytes;            /* token size */
    uint32_t total;          /* warm-up + measured iterations */
    runner_chan *chan;          /* nedges */
    pm_kernel **kern;        /* nnodes */
    int64_t *start, *end;    /* at runner_rec(k, v), ns since t0: the kernel's start
                                (inputs in hand) and end (outputs not yet sent) */
    size_t *rec_base, *rec_stride; /* nnodes: where v's records lie */
    int64_t t0;
    uint32_t *sink_slot;     /* node -> index in result sinks, PM_NONE */
    bool *is_source;         /* node has no in-edge from another node */
    uint64_t *sink_hash;     /* per sink, RUNNER_HASH_STRIDE apart */
    runner_thread *th;          /* ncores */
    _Atomic int go;          /* 0 wait, 1 start, -1 give up (a thread failed to start) */
    _Atomic bool stop;
    pm_runner_result *r;
};

#define RUNNER_HASH_STRIDE (PM_RING_LINE / sizeof(uint64_t)) /* one line per sink */

/* Index of node v's iteration-k records: each core's records are one
 * block of its own, [iteration][place in the core's order], the blocks a
 * cache line apart, so the threads never write one line. */
static inline size_t runner_rec(const runner_ctx *x, uint64_t k, uint32_t v)
{
    return x->rec_base[v] + (size_t)k * x->rec_stride[v];
}

/* Whether v has no edges out (out) or in (!out) but self-loops. */
bool runner_is_end(const pm_graph *g, uint32_t v, bool out);

/* Everything a run needs, result record included (x->r); PM_ELIMIT past
 * PM_RUNNER_MAX_RECORDS timestamps.  runner_teardown frees all but x->r, also
 * after a failed runner_setup. */
int runner_setup(runner_ctx *x);
void runner_teardown(runner_ctx *x);

/* Paced runs (runner_paced.c): the host time of iteration k's release
 * after t0, the wait for it, the paced statistics of a finished run. */
int64_t runner_release_ns(const runner_ctx *x, uint32_t v, uint64_t k);
void runner_pace_wait(runner_thread *th, uint32_t v, uint64_t k);
int runner_paced_collect(runner_ctx *x);
/* Start the threads, watch them, join them; x->r->stalled says whether
 * they had to be stopped.  PM_EPLATFORM when a thread cannot start. */
int runner_threads(runner_ctx *x);

#endif
