/*
 * runner_time.c - the real-core runner's measurements before a run
 * (runner.h): the busy loop's speed (turns per nanosecond), each node's
 * time alone on the host, and the handoff latency of a ring between two
 * threads (ping-pong).
 *
 * Each is a median over repeated samples, long enough that the clock's
 * error is small; node times take the least of several round medians, so
 * that other programs on a shared host do not inflate them.  Not here: the run itself (runner_exec.c), the
 * prediction from these times (runner.c).  No printing.
 */
#include <pthread.h>
#include <stdlib.h>
#include <string.h>

#include "runner_internal.h"

/* ---- measurements -------------------------------------------------------------- */

int pm_runner_calibrate(double *turns_per_ns)
{
    enum { SAMPLES = 9 };
    double v[SAMPLES];
    volatile uint32_t sink = 0;
    uint64_t turns = 1u << 16;
    for (int s = 0; s < SAMPLES; s++) {
        int64_t t0 = runner_now();
        sink = pm_kernel_spin(turns);
        int64_t dt = runner_now() - t0;
        if (dt < 100000 && turns < (UINT64_C(1) << 40)) {
            turns *= 4; /* aim for samples of >= 0.1 ms so clock error is small */
            s--;
            continue;
        }
        v[s] = (double)turns / (double)dt;
    }
    (void)sink;
    *turns_per_ns = runner_quantile(v, SAMPLES, 0.5);
    return *turns_per_ns > 0 ? PM_OK : PM_EPLATFORM;
}

/* Calls of k per timed sample so that a sample lasts >= 5 µs. */
static uint32_t runner_inner(pm_kernel *k, const float *in, float *out)
{
    pm_kernel_process(k, in, out); /* warm caches and branch predictors */
    int64_t t0 = runner_now();
    pm_kernel_process(k, in, out);
    int64_t one = runner_now() - t0;
    return one >= 5000 ? 1u : (uint32_t)(5000 / (one > 0 ? one : 1)) + 1u;
}

static double runner_sample(pm_kernel *k, uint32_t inner, const float *in, float *out)
{
    int64_t t0 = runner_now();
    for (uint32_t i = 0; i < inner; i++)
        pm_kernel_process(k, in, out);
    return (double)(runner_now() - t0) / inner;
}

typedef struct runner_timing {
    pm_kernel **k;
    uint32_t *inner;
    double *samples; /* [node][repeat] */
    float *in, *out;
} runner_timing;

static void runner_timing_free(runner_timing *t, uint32_t n)
{
    for (uint32_t v = 0; t->k && v < n; v++)
        pm_kernel_destroy(t->k[v]);
    free(t->k);
    free(t->inner);
    free(t->samples);
    free(t->in);
    free(t->out);
}

/* Node v's time: the least of the PM_RUNNER_TIME_ROUNDS round medians.  Other
 * programs on a shared host only ever add time to a sample, so a low
 * quantile is closer to the node's own time than the median of all samples;
 * the median within a round keeps one lucky sample from setting it. */
static double runner_least_median(double *samples, uint32_t repeats)
{
    double best = 0;
    for (uint32_t r = 0; r < PM_RUNNER_TIME_ROUNDS; r++) {
        double med = runner_quantile(samples + (size_t)r * repeats, repeats, 0.5);
        best = r == 0 || med < best ? med : best;
    }
    return best;
}

/* Samples of every node, one node after the other, `per` times over:
 * a passing load on the host then touches every node alike instead of a
 * few.  Samples of node v are at [v][round][i]. */
static void runner_sample_rounds(runner_timing *t, uint32_t n, uint32_t per)
{
    size_t all = (size_t)PM_RUNNER_TIME_ROUNDS * per;
    for (uint32_t r = 0; r < PM_RUNNER_TIME_ROUNDS; r++)
        for (uint32_t i = 0; i < per; i++)
            for (uint32_t v = 0; v < n; v++)
                t->samples[(size_t)v * all + (size_t)r * per + i] =
                    runner_sample(t->k[v], t->inner[v], t->in, t->out);
}

int pm_runner_node_times(const pm_graph *g, const pm_map *m, const pm_runner_config *cfg,
                      uint32_t repeats, double *node_ns)
{
    uint32_t n = g->nnodes;
    size_t nn = n ? n : 1;
    repeats = repeats ? repeats : 1;
    size_t all = (size_t)PM_RUNNER_TIME_ROUNDS * repeats;
    runner_timing t = {calloc(nn, sizeof *t.k), calloc(nn, sizeof *t.inner),
                    calloc(nn * all, sizeof *t.samples),
                    malloc(cfg->block * sizeof *t.in), malloc(cfg->block * sizeof *t.out)};
    int rc = t.k && t.inner && t.samples && t.in && t.out ? PM_OK : PM_ENOMEM;
    for (uint32_t v = 0; rc == PM_OK && v < n; v++)
        rc = runner_kernel_for(g, cfg, v, m->core_of[v], &t.k[v]);
    if (rc == PM_OK) {
        pm_kernel_signal_fill(t.in, cfg->block, 0, 0);
        for (uint32_t v = 0; v < n; v++)
            t.inner[v] = runner_inner(t.k[v], t.in, t.out);
        runner_sample_rounds(&t, n, repeats);
        for (uint32_t v = 0; v < n; v++)
            node_ns[v] = runner_least_median(t.samples + (size_t)v * all, repeats);
    }
    runner_timing_free(&t, n);
    return rc;
}

/* ---- handoff ping-pong -------------------------------------------------------- */

typedef struct runner_pingpong {
    pm_ring *there, *back;
    size_t bytes;
    uint32_t rounds, pu;
    uint64_t busy_turns; /* busy loop between tokens (0 = only wait) */
    const pm_runner_config *cfg;
    bool pinned;
    double *rt; /* round trips, filled by the initiator */
} runner_pingpong;

static void runner_echo(runner_pingpong *p)
{
    float copy[PM_KERNEL_MAX_BLOCK / 64];
    volatile uint32_t sink = 0;
    for (uint32_t r = 0; r < p->rounds; r++) {
        const unsigned char *in;
        for (uint64_t s = 0; !(in = pm_ring_peek(p->there)); s++)
            runner_wait_turn(p->cfg, s);
        size_t n = p->bytes < sizeof copy ? p->bytes : sizeof copy;
        memcpy(copy, in, n);
        pm_ring_pop(p->there);
        unsigned char *o;
        for (uint64_t s = 0; !(o = pm_ring_claim(p->back)); s++)
            runner_wait_turn(p->cfg, s);
        memcpy(o, copy, n);
        pm_ring_push(p->back);
        /* half the initiator's work: this side is waiting again before the
         * next token leaves, so the round trip holds no leftover work */
        if (p->busy_turns)
            sink = pm_kernel_spin(p->busy_turns / 2);
    }
    (void)sink;
}

static void *runner_echo_thread(void *arg)
{
    runner_pingpong *p = arg;
    p->pinned = p->cfg->topo && pm_topo_bind_thread(p->cfg->topo, p->pu) == PM_OK;
    runner_echo(p);
    return NULL;
}

static void runner_ping(runner_pingpong *p)
{
    float data[PM_KERNEL_MAX_BLOCK / 64] = {0};
    size_t n = p->bytes < sizeof data ? p->bytes : sizeof data;
    volatile uint32_t sink = 0;
    for (uint32_t r = 0; r < p->rounds; r++) {
        if (p->busy_turns)
            sink = pm_kernel_spin(p->busy_turns);
        int64_t t0 = runner_clock(p->cfg);
        unsigned char *o;
        for (uint64_t s = 0; !(o = pm_ring_claim(p->there)); s++)
            runner_wait_turn(p->cfg, s);
        memcpy(o, data, n);
        pm_ring_push(p->there);
        const unsigned char *in;
        for (uint64_t s = 0; !(in = pm_ring_peek(p->back)); s++)
            runner_wait_turn(p->cfg, s);
        memcpy(data, in, n);
        pm_ring_pop(p->back);
        p->rt[r] = (double)(runner_clock(p->cfg) - t0);
    }
    (void)sink;
}

int runner_handoff_run(const pm_runner_config *cfg, uint32_t pu_a, uint32_t pu_b,
                       uint32_t rounds, size_t bytes, uint64_t busy_turns, double *median_ns,
                       double *p99_ns, bool *pinned)
{
    if (rounds < 10)
        return PM_EINVAL;
    runner_pingpong a = {0}, b = {0};
    a.rt = malloc(rounds * sizeof *a.rt);
    int rc = a.rt ? pm_ring_create(bytes, 1, &a.there) : PM_ENOMEM;
    if (rc == PM_OK)
        rc = pm_ring_create(bytes, 1, &a.back);
    a.bytes = bytes;
    a.rounds = rounds;
    a.cfg = cfg;
    a.pu = pu_a;
    a.busy_turns = busy_turns;
    b = a;
    b.pu = pu_b;
    pthread_t t;
    if (rc == PM_OK && pthread_create(&t, NULL, runner_echo_thread, &b) != 0)
        rc = PM_EPLATFORM;
    if (rc == PM_OK) {
        a.pinned = cfg->topo && pm_topo_bind_thread(cfg->topo, pu_a) == PM_OK;
        runner_ping(&a);
        pthread_join(t, NULL);
        /* the first tenth warms caches and the branch predictor */
        size_t skip = rounds / 10;
        *median_ns = runner_quantile(a.rt + skip, rounds - skip, 0.5) / 2.0;
        *p99_ns = runner_quantile(a.rt + skip, rounds - skip, 0.99) / 2.0;
        *pinned = a.pinned && b.pinned;
    }
    pm_ring_destroy(a.there);
    pm_ring_destroy(a.back);
    free(a.rt);
    return rc;
}

int pm_runner_handoff(const pm_runner_config *cfg, uint32_t pu_a, uint32_t pu_b,
                   uint32_t rounds, double *median_ns, double *p99_ns, bool *pinned)
{
    size_t bytes = sizeof(int64_t) + cfg->block * sizeof(float);
    return runner_handoff_run(cfg, pu_a, pu_b, rounds, bytes, 0, median_ns, p99_ns, pinned);
}
