/*
 * runner.c - the real-core runner (runner.h): threads executing a map over
 * rings, the measurements around it (busy-loop calibration, node times,
 * handoff latency) and the prediction (the simulator run with them).
 *
 * Threads share only: the rings (SPSC, ring.h), one stop flag and one
 * progress counter per thread (C11 atomics).  Everything else a thread
 * writes (its timestamps, the tokens it consumed, its sinks' outputs) is
 * its own until pthread_join hands it to the caller.  No printing.
 */
#include "pacemap/runner.h"

#include <math.h>
#include <pthread.h>
#include <sched.h>
#include <stdatomic.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "pacemap/kernels.h"
#include "pacemap/order.h"
#include "pacemap/ring.h"
#include "pacemap/sim.h"

/* ---- small helpers --------------------------------------------------------- */

static int64_t run_now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (int64_t)ts.tv_sec * 1000000000 + ts.tv_nsec;
}

static int run_cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return x < y ? -1 : x > y;
}

/* Nearest-rank quantile q in [0,1] of v[0..n) (sorts v). */
static double run_quantile(double *v, size_t n, double q)
{
    if (n == 0)
        return 0.0;
    qsort(v, n, sizeof *v, run_cmp_double);
    size_t r = (size_t)ceil(q * (double)n);
    return v[r > 0 ? r - 1 : 0];
}

static uint64_t run_fnv(uint64_t h, const void *p, size_t n)
{
    const unsigned char *b = p;
    for (size_t i = 0; i < n; i++)
        h = (h ^ b[i]) * UINT64_C(0x100000001b3);
    return h;
}

void pm_run_config_default(pm_run_config *c)
{
    memset(c, 0, sizeof *c);
    c->iterations = 1000;
    c->warmup = 100;
    c->block = PM_RUN_BLOCK;
    c->ns_per_cycle = 1.0;
    c->turns_per_ns = 1.0;
}

/* Spin turns for node v on map core `core`. */
static uint64_t run_turns(const pm_graph *g, const pm_run_config *cfg, uint32_t v,
                          uint32_t core)
{
    uint32_t cls = core < g->platform.ncores ? g->platform.core_class[core] : 0;
    int64_t cyc = pm_graph_cycles_on(g, v, cls);
    if (cyc < 0)
        cyc = pm_graph_min_cycles(g, v);
    double t = (double)(cyc < 0 ? 0 : cyc) * cfg->ns_per_cycle * cfg->turns_per_ns;
    return t >= 1.8e19 ? UINT64_C(18000000000000000000) : (uint64_t)llround(t);
}

static int run_kernel_for(const pm_graph *g, const pm_run_config *cfg, uint32_t v,
                          uint32_t core, pm_kernel **k)
{
    const pm_node *n = &g->nodes[v];
    return pm_kernel_create(n->work, n->work_param, cfg->block,
                            n->work == PM_WORK_SPIN ? run_turns(g, cfg, v, core) : 0, k);
}

/* ---- orders and trivial maps ----------------------------------------------- */

/* Kahn's algorithm over the zero-delay edges, smallest index first among
 * the ready nodes: the serial map and the dealt maps list nodes in it. */
static int run_topo_order(const pm_graph *g, uint32_t *order)
{
    uint32_t done = 0;
    int rc = pm_order_zero_delay(g, PM_ORDER_SMALLEST, order, &done);
    return rc != PM_OK ? rc : done == g->nnodes ? PM_OK : PM_EZERODELAY;
}

int pm_run_serial_map(const pm_graph *g, pm_map **out)
{
    *out = NULL;
    uint32_t *order = malloc((g->nnodes ? g->nnodes : 1) * sizeof *order);
    if (!order)
        return PM_ENOMEM;
    int rc = run_topo_order(g, order);
    if (rc == PM_OK) {
        const uint32_t *lists[1] = {order};
        rc = pm_map_create(1, g->nnodes, lists, &g->nnodes, out);
    }
    free(order);
    return rc;
}

static int run_deal(const pm_graph *g, uint32_t ncores, const uint32_t *order,
                    uint32_t **lists, uint32_t *counts)
{
    uint32_t next = 0;
    for (uint32_t i = 0; i < g->nnodes; i++) {
        uint32_t v = order[i], c = next, tried = 0;
        while (tried < ncores && !pm_graph_can_run(g, v, c)) {
            c = (c + 1u) % ncores;
            tried++;
        }
        if (tried == ncores)
            return PM_EPLATFORM;
        lists[c][counts[c]++] = v;
        next = (c + 1u) % ncores;
    }
    return PM_OK;
}

int pm_run_round_robin_map(const pm_graph *g, uint32_t ncores, pm_map **out)
{
    *out = NULL;
    if (ncores < 1 || ncores > g->platform.ncores)
        return PM_EINVAL;
    size_t n = g->nnodes ? g->nnodes : 1;
    uint32_t *order = malloc(n * sizeof *order);
    uint32_t *counts = calloc(ncores, sizeof *counts);
    uint32_t **lists = calloc(ncores, sizeof *lists);
    int rc = order && counts && lists ? PM_OK : PM_ENOMEM;
    for (uint32_t c = 0; rc == PM_OK && c < ncores; c++)
        if (!(lists[c] = malloc(n * sizeof **lists)))
            rc = PM_ENOMEM;
    if (rc == PM_OK)
        rc = run_topo_order(g, order);
    if (rc == PM_OK)
        rc = run_deal(g, ncores, order, lists, counts);
    if (rc == PM_OK)
        rc = pm_map_create(ncores, g->nnodes, (const uint32_t *const *)lists, counts, out);
    for (uint32_t c = 0; lists && c < ncores; c++)
        free(lists[c]);
    free(lists);
    free(counts);
    free(order);
    return rc;
}

enum { RUN_PREDICT_ITERS = 1000 };

/* ---- prediction -------------------------------------------------------------- */

/* Model time units per host nanosecond: the simulator counts in integers,
 * so sixteenths of a nanosecond keep rounding far below timer noise. */
#define RUN_UNITS_PER_NS 16.0

static int64_t run_units(double ns)
{
    double u = ns * RUN_UNITS_PER_NS;
    return u <= 0 ? 0 : u >= (double)PM_MAX_VALUE ? PM_MAX_VALUE : (int64_t)llround(u);
}

int pm_run_predict(const pm_graph *g, const pm_map *m, const double *node_ns,
                   double handoff_ns, uint32_t fifo_cap, double *period_ns,
                   uint32_t *depth, pm_diag *diag)
{
    int64_t *t = malloc((g->nnodes ? g->nnodes : 1) * sizeof *t);
    if (!t)
        return PM_ENOMEM;
    for (uint32_t v = 0; v < g->nnodes; v++)
        t[v] = run_units(node_ns[v]);
    /* the host's platform: every cross-core token arrives one handoff after
     * its producer ends, links overlap freely (a borrowed, read-only view) */
    pm_graph host = *g;
    host.platform.comm = (pm_comm){run_units(handoff_ns), 0, 0, 0};
    host.platform.interconnect = PM_P2P;
    pm_sim_opts o = {.iterations = RUN_PREDICT_ITERS, .fifo_cap = fifo_cap, .node_cycles = t};
    pm_sim_result r;
    memset(&r, 0, sizeof r);
    int rc = pm_sim_run(&host, m, &o, &r, diag);
    if (rc == PM_OK) {
        *period_ns = pm_rat_to_double(r.period) / RUN_UNITS_PER_NS;
        for (uint32_t e = 0; depth && e < g->nedges; e++)
            depth[e] = r.max_tokens[e] < 0 ? 0
                     : r.max_tokens[e] > UINT32_MAX ? UINT32_MAX : (uint32_t)r.max_tokens[e];
    }
    pm_sim_result_free(&r);
    free(t);
    return rc;
}

/* ---- measurements -------------------------------------------------------------- */

int pm_run_calibrate(double *turns_per_ns)
{
    enum { SAMPLES = 9 };
    double v[SAMPLES];
    volatile uint32_t sink = 0;
    uint64_t turns = 1u << 16;
    for (int s = 0; s < SAMPLES; s++) {
        int64_t t0 = run_now();
        sink = pm_spin(turns);
        int64_t dt = run_now() - t0;
        if (dt < 100000 && turns < (UINT64_C(1) << 40)) {
            turns *= 4; /* aim for samples of >= 0.1 ms so clock error is small */
            s--;
            continue;
        }
        v[s] = (double)turns / (double)dt;
    }
    (void)sink;
    *turns_per_ns = run_quantile(v, SAMPLES, 0.5);
    return *turns_per_ns > 0 ? PM_OK : PM_EPLATFORM;
}

/* Calls of k per timed sample so that a sample lasts >= 5 µs. */
static uint32_t run_inner(pm_kernel *k, const float *in, float *out)
{
    pm_kernel_process(k, in, out); /* warm caches and branch predictors */
    int64_t t0 = run_now();
    pm_kernel_process(k, in, out);
    int64_t one = run_now() - t0;
    return one >= 5000 ? 1u : (uint32_t)(5000 / (one > 0 ? one : 1)) + 1u;
}

static double run_sample(pm_kernel *k, uint32_t inner, const float *in, float *out)
{
    int64_t t0 = run_now();
    for (uint32_t i = 0; i < inner; i++)
        pm_kernel_process(k, in, out);
    return (double)(run_now() - t0) / inner;
}

typedef struct run_timing {
    pm_kernel **k;
    uint32_t *inner;
    double *samples; /* [node][repeat] */
    float *in, *out;
} run_timing;

static void run_timing_free(run_timing *t, uint32_t n)
{
    for (uint32_t v = 0; t->k && v < n; v++)
        pm_kernel_destroy(t->k[v]);
    free(t->k);
    free(t->inner);
    free(t->samples);
    free(t->in);
    free(t->out);
}

int pm_run_node_times(const pm_graph *g, const pm_map *m, const pm_run_config *cfg,
                      uint32_t repeats, double *node_ns)
{
    uint32_t n = g->nnodes;
    size_t nn = n ? n : 1;
    repeats = repeats ? repeats : 1;
    run_timing t = {calloc(nn, sizeof *t.k), calloc(nn, sizeof *t.inner),
                    calloc(nn * repeats, sizeof *t.samples),
                    malloc(cfg->block * sizeof *t.in), malloc(cfg->block * sizeof *t.out)};
    int rc = t.k && t.inner && t.samples && t.in && t.out ? PM_OK : PM_ENOMEM;
    for (uint32_t v = 0; rc == PM_OK && v < n; v++)
        rc = run_kernel_for(g, cfg, v, m->core_of[v], &t.k[v]);
    if (rc == PM_OK) {
        pm_signal_fill(t.in, cfg->block, 0, 0);
        for (uint32_t v = 0; v < n; v++)
            t.inner[v] = run_inner(t.k[v], t.in, t.out);
        /* rounds over all nodes, so a passing load on the host touches
         * every node alike instead of a few */
        for (uint32_t r = 0; r < repeats; r++)
            for (uint32_t v = 0; v < n; v++)
                t.samples[(size_t)v * repeats + r] = run_sample(t.k[v], t.inner[v], t.in, t.out);
        for (uint32_t v = 0; v < n; v++)
            node_ns[v] = run_quantile(t.samples + (size_t)v * repeats, repeats, 0.5);
    }
    run_timing_free(&t, n);
    return rc;
}

/* ---- handoff ping-pong -------------------------------------------------------- */

typedef struct run_pingpong {
    pm_ring *there, *back;
    size_t bytes;
    uint32_t rounds, pu;
    const pm_run_config *cfg;
    bool pinned;
    double *rt; /* round trips, filled by the initiator */
} run_pingpong;

static void run_wait_turn(const pm_run_config *cfg, uint64_t spins)
{
    if (cfg->yield || spins > 4096)
        sched_yield();
}

static void run_echo(run_pingpong *p)
{
    float copy[PM_KERNEL_MAX_BLOCK / 64];
    for (uint32_t r = 0; r < p->rounds; r++) {
        const unsigned char *in;
        for (uint64_t s = 0; !(in = pm_ring_peek(p->there)); s++)
            run_wait_turn(p->cfg, s);
        size_t n = p->bytes < sizeof copy ? p->bytes : sizeof copy;
        memcpy(copy, in, n);
        pm_ring_pop(p->there);
        unsigned char *o;
        for (uint64_t s = 0; !(o = pm_ring_claim(p->back)); s++)
            run_wait_turn(p->cfg, s);
        memcpy(o, copy, n);
        pm_ring_push(p->back);
    }
}

static void *run_echo_thread(void *arg)
{
    run_pingpong *p = arg;
    p->pinned = p->cfg->topo && pm_topo_bind_thread(p->cfg->topo, p->pu) == PM_OK;
    run_echo(p);
    return NULL;
}

static void run_ping(run_pingpong *p)
{
    float data[PM_KERNEL_MAX_BLOCK / 64] = {0};
    size_t n = p->bytes < sizeof data ? p->bytes : sizeof data;
    for (uint32_t r = 0; r < p->rounds; r++) {
        int64_t t0 = run_now();
        unsigned char *o;
        for (uint64_t s = 0; !(o = pm_ring_claim(p->there)); s++)
            run_wait_turn(p->cfg, s);
        memcpy(o, data, n);
        pm_ring_push(p->there);
        const unsigned char *in;
        for (uint64_t s = 0; !(in = pm_ring_peek(p->back)); s++)
            run_wait_turn(p->cfg, s);
        memcpy(data, in, n);
        pm_ring_pop(p->back);
        p->rt[r] = (double)(run_now() - t0);
    }
}

int pm_run_handoff(const pm_run_config *cfg, uint32_t pu_a, uint32_t pu_b,
                   uint32_t rounds, double *median_ns, double *p99_ns, bool *pinned)
{
    if (rounds < 10)
        return PM_EINVAL;
    size_t bytes = sizeof(int64_t) + cfg->block * sizeof(float);
    run_pingpong a = {0}, b = {0};
    a.rt = malloc(rounds * sizeof *a.rt);
    int rc = a.rt ? pm_ring_create(bytes, 1, &a.there) : PM_ENOMEM;
    if (rc == PM_OK)
        rc = pm_ring_create(bytes, 1, &a.back);
    a.bytes = bytes;
    a.rounds = rounds;
    a.cfg = cfg;
    a.pu = pu_a;
    b = a;
    b.pu = pu_b;
    pthread_t t;
    if (rc == PM_OK && pthread_create(&t, NULL, run_echo_thread, &b) != 0)
        rc = PM_EPLATFORM;
    if (rc == PM_OK) {
        a.pinned = cfg->topo && pm_topo_bind_thread(cfg->topo, pu_a) == PM_OK;
        run_ping(&a);
        pthread_join(t, NULL);
        /* the first tenth warms caches and the branch predictor */
        size_t skip = rounds / 10;
        *median_ns = run_quantile(a.rt + skip, rounds - skip, 0.5) / 2.0;
        *p99_ns = run_quantile(a.rt + skip, rounds - skip, 0.99) / 2.0;
        *pinned = a.pinned && b.pinned;
    }
    pm_ring_destroy(a.there);
    pm_ring_destroy(a.back);
    free(a.rt);
    return rc;
}

/* ---- execution ------------------------------------------------------------------ */

/* A token: the producing iteration (negative for initial tokens), then
 * block samples. */
typedef struct run_token {
    int64_t seq;
    float data[];
} run_token;

/* An edge's channel: an SPSC ring across cores, a plain FIFO on one core. */
typedef struct run_chan {
    pm_ring *ring;
    unsigned char *fifo; /* same-core: cap slots of `bytes` */
    uint32_t cap, head, count;
} run_chan;

typedef struct run_ctx run_ctx;

typedef struct run_thread {
    run_ctx *x;
    uint32_t core;
    pthread_t tid;
    bool started, pinned;
    _Atomic uint64_t fired;  /* progress, read by the watchdog */
    _Atomic bool finished;
    float *in, *out;         /* block buffers */
    uint64_t order_errors;
    pm_run_wait wait;
} run_thread;

struct run_ctx {
    const pm_graph *g;
    const pm_map *m;
    const pm_run_config *cfg;
    size_t bytes;            /* token size */
    uint32_t total;          /* warm-up + measured iterations */
    run_chan *chan;          /* nedges */
    pm_kernel **kern;        /* nnodes */
    int64_t *start, *end;    /* [iteration][node], ns since t0 */
    int64_t t0;
    uint32_t *sink_slot;     /* node -> index in result sinks, PM_NONE */
    bool *is_source;         /* node has no in-edge from another node */
    uint64_t *sink_hash;     /* per sink */
    run_thread *th;          /* ncores */
    _Atomic int go;          /* 0 wait, 1 start, -1 give up (a thread failed to start) */
    _Atomic bool stop;
    pm_run_result *r;
};

static void *run_chan_claim(run_chan *c, size_t bytes)
{
    if (c->ring)
        return pm_ring_claim(c->ring);
    if (c->count == c->cap)
        return NULL;
    return c->fifo + (size_t)((c->head + c->count) % c->cap) * bytes;
}

static void run_chan_push(run_chan *c)
{
    if (c->ring)
        pm_ring_push(c->ring);
    else
        c->count++;
}

static const void *run_chan_peek(run_chan *c, size_t bytes)
{
    if (c->ring)
        return pm_ring_peek(c->ring);
    return c->count ? c->fifo + (size_t)c->head * bytes : NULL;
}

static void run_chan_pop(run_chan *c)
{
    if (c->ring) {
        pm_ring_pop(c->ring);
        return;
    }
    c->head = (c->head + 1u) % c->cap;
    c->count--;
}

/* Wait until edge e has a token (or room, for_space).  NULL when the run
 * is stopped, or at once on a same-core channel: no other thread can
 * change it, so waiting would never end. */
static void *run_wait(run_thread *th, uint32_t v, uint32_t e, uint64_t k, bool for_space)
{
    run_ctx *x = th->x;
    run_chan *c = &x->chan[e];
    for (uint64_t s = 0;; s++) {
        void *p = for_space ? run_chan_claim(c, x->bytes)
                            : (void *)(uintptr_t)run_chan_peek(c, x->bytes);
        if (p)
            return p;
        if (!c->ring)
            atomic_store(&x->stop, true);
        if (atomic_load_explicit(&x->stop, memory_order_relaxed)) {
            th->wait = (pm_run_wait){th->core, v, e, for_space, k};
            return NULL;
        }
        run_wait_turn(x->cfg, s);
    }
}

/* Mean of v's input tokens into th->in; a source (only self-loops in)
 * takes the test signal as one more input. */
static bool run_gather(run_thread *th, uint32_t v, uint64_t k)
{
    run_ctx *x = th->x;
    const pm_graph *g = x->g;
    uint32_t nin = g->in_off[v + 1] - g->in_off[v], b = x->cfg->block;
    bool src = x->is_source[v];
    if (src)
        pm_signal_fill(th->in, b, v, k * b);
    for (uint32_t i = 0; i < nin; i++) {
        uint32_t e = g->in_edge[g->in_off[v] + i];
        const run_token *t = run_wait(th, v, e, k, false);
        if (!t)
            return false;
        th->order_errors += t->seq != (int64_t)k - g->edges[e].delay;
        for (uint32_t j = 0; j < b; j++)
            th->in[j] = i == 0 && !src ? t->data[j] : th->in[j] + t->data[j];
        run_chan_pop(&x->chan[e]);
        x->r->tokens[e]++;
    }
    if (nin + src > 1) {
        float scale = 1.0f / (float)(nin + src);
        for (uint32_t j = 0; j < b; j++)
            th->in[j] *= scale;
    }
    return true;
}

static bool run_scatter(run_thread *th, uint32_t v, uint64_t k)
{
    run_ctx *x = th->x;
    const pm_graph *g = x->g;
    for (uint32_t i = g->out_off[v]; i < g->out_off[v + 1]; i++) {
        uint32_t e = g->out_edge[i];
        run_token *t = run_wait(th, v, e, k, true);
        if (!t)
            return false;
        t->seq = (int64_t)k;
        memcpy(t->data, th->out, x->cfg->block * sizeof *t->data);
        run_chan_push(&x->chan[e]);
    }
    return true;
}

static void run_keep_output(run_thread *th, uint32_t v, uint64_t k)
{
    run_ctx *x = th->x;
    uint32_t s = x->sink_slot[v], b = x->cfg->block;
    if (s == PM_NONE)
        return;
    x->sink_hash[s] = run_fnv(x->sink_hash[s], th->out, b * sizeof *th->out);
    if (x->r->outputs)
        memcpy(x->r->outputs + ((size_t)s * x->total + k) * b, th->out, b * sizeof *th->out);
}

static bool run_fire(run_thread *th, uint32_t v, uint64_t k)
{
    run_ctx *x = th->x;
    if (!run_gather(th, v, k))
        return false;
    int64_t t1 = run_now();
    pm_kernel_process(x->kern[v], th->in, th->out);
    if (!run_scatter(th, v, k))
        return false;
    size_t at = (size_t)k * x->g->nnodes + v;
    x->start[at] = t1 - x->t0;
    x->end[at] = run_now() - x->t0;
    run_keep_output(th, v, k);
    atomic_store_explicit(&th->fired, atomic_load_explicit(&th->fired, memory_order_relaxed) + 1u,
                          memory_order_relaxed);
    return true;
}

static void *run_worker(void *arg)
{
    run_thread *th = arg;
    run_ctx *x = th->x;
    if (x->cfg->topo && x->cfg->pu)
        th->pinned = pm_topo_bind_thread(x->cfg->topo, x->cfg->pu[th->core]) == PM_OK;
    int go;
    while ((go = atomic_load(&x->go)) == 0)
        sched_yield();
    if (go < 0)
        return NULL;
    const pm_map *m = x->m;
    th->wait = (pm_run_wait){th->core, PM_NONE, PM_NONE, false, x->total};
    for (uint64_t k = 0; k < x->total; k++)
        for (uint32_t i = m->off[th->core]; i < m->off[th->core + 1]; i++)
            if (!run_fire(th, m->order[i], k))
                goto out;
out:
    atomic_store(&th->finished, true);
    return NULL;
}

/* ---- setting up and tearing down a run ------------------------------------------ */

static int run_make_chan(run_ctx *x, uint32_t e)
{
    const pm_edge *ed = &x->g->edges[e];
    run_chan *c = &x->chan[e];
    bool cross = x->m->core_of[ed->src] != x->m->core_of[ed->dst];
    uint64_t want = x->cfg->ring_capacity ? x->cfg->ring_capacity
                  : x->cfg->edge_capacity ? x->cfg->edge_capacity[e]
                                          : (uint64_t)ed->delay + PM_RUN_RING_SLACK;
    uint64_t cap = cross ? want : (uint64_t)ed->delay + 1u;
    if (cap < (uint64_t)ed->delay + 1u)
        cap = (uint64_t)ed->delay + 1u;
    if (cap > PM_RING_MAX_CAPACITY)
        return PM_ELIMIT;
    c->cap = (uint32_t)cap;
    if (cross)
        return pm_ring_create(x->bytes, c->cap, &c->ring);
    c->fifo = calloc(c->cap, x->bytes);
    return c->fifo ? PM_OK : PM_ENOMEM;
}

/* Initial tokens: zero samples, sequence numbers -delay .. -1. */
static void run_prefill(run_ctx *x, uint32_t e)
{
    int64_t d = x->g->edges[e].delay;
    for (int64_t i = 0; i < d; i++) {
        run_token *t = run_chan_claim(&x->chan[e], x->bytes);
        memset(t, 0, x->bytes);
        t->seq = i - d;
        run_chan_push(&x->chan[e]);
    }
}

static bool run_is_end(const pm_graph *g, uint32_t v, bool out)
{
    const uint32_t *off = out ? g->out_off : g->in_off, *lst = out ? g->out_edge : g->in_edge;
    for (uint32_t i = off[v]; i < off[v + 1]; i++) {
        const pm_edge *e = &g->edges[lst[i]];
        if (e->src != e->dst)
            return false;
    }
    return true;
}

static int run_pick_sinks(run_ctx *x)
{
    const pm_graph *g = x->g;
    pm_run_result *r = x->r;
    uint32_t n = 0;
    for (uint32_t v = 0; v < g->nnodes; v++)
        n += run_is_end(g, v, true);
    bool all = n == 0;
    r->nsinks = all ? g->nnodes : n;
    r->sinks = malloc((r->nsinks ? r->nsinks : 1) * sizeof *r->sinks);
    x->sink_slot = malloc((g->nnodes ? g->nnodes : 1) * sizeof *x->sink_slot);
    x->is_source = malloc((g->nnodes ? g->nnodes : 1) * sizeof *x->is_source);
    x->sink_hash = malloc((r->nsinks ? r->nsinks : 1) * sizeof *x->sink_hash);
    if (!r->sinks || !x->sink_slot || !x->sink_hash || !x->is_source)
        return PM_ENOMEM;
    n = 0;
    for (uint32_t v = 0; v < g->nnodes; v++) {
        x->is_source[v] = run_is_end(g, v, false);
        bool s = all || run_is_end(g, v, true);
        x->sink_slot[v] = s ? n : PM_NONE;
        if (s) {
            x->sink_hash[n] = UINT64_C(0xcbf29ce484222325);
            r->sinks[n++] = v;
        }
    }
    if (x->cfg->record_outputs) {
        size_t cnt = (size_t)r->nsinks * x->total * x->cfg->block;
        r->outputs = calloc(cnt ? cnt : 1, sizeof *r->outputs);
        if (!r->outputs)
            return PM_ENOMEM;
    }
    return PM_OK;
}

static int run_alloc_result(run_ctx *x)
{
    const pm_graph *g = x->g;
    pm_run_result *r = calloc(1, sizeof *r);
    if (!r)
        return PM_ENOMEM;
    x->r = r;
    r->ncores = x->m->ncores;
    r->nnodes = g->nnodes;
    r->nedges = g->nedges;
    r->iterations = x->cfg->iterations;
    r->warmup = x->cfg->warmup;
    r->busy = calloc(r->ncores, sizeof *r->busy);
    r->node_ns = calloc(g->nnodes ? g->nnodes : 1, sizeof *r->node_ns);
    r->pinned = calloc(r->ncores, sizeof *r->pinned);
    r->waits = calloc(r->ncores, sizeof *r->waits);
    r->tokens = calloc(g->nedges ? g->nedges : 1, sizeof *r->tokens);
    r->remaining = calloc(g->nedges ? g->nedges : 1, sizeof *r->remaining);
    if (!r->busy || !r->node_ns || !r->pinned || !r->waits || !r->tokens || !r->remaining)
        return PM_ENOMEM;
    return run_pick_sinks(x);
}

static int run_alloc_threads(run_ctx *x)
{
    uint32_t nc = x->m->ncores, b = x->cfg->block;
    x->th = calloc(nc, sizeof *x->th);
    if (!x->th)
        return PM_ENOMEM;
    for (uint32_t c = 0; c < nc; c++) {
        run_thread *th = &x->th[c];
        th->x = x;
        th->core = c;
        atomic_init(&th->fired, 0);
        atomic_init(&th->finished, false);
        th->in = calloc(b, sizeof *th->in);
        th->out = calloc(b, sizeof *th->out);
        if (!th->in || !th->out)
            return PM_ENOMEM;
    }
    return PM_OK;
}

static int run_setup(run_ctx *x)
{
    const pm_graph *g = x->g;
    size_t n = g->nnodes ? g->nnodes : 1, recs = (size_t)x->total * n;
    if (recs > PM_RUN_MAX_RECORDS)
        return PM_ELIMIT;
    x->bytes = sizeof(run_token) + x->cfg->block * sizeof(float);
    x->chan = calloc(g->nedges ? g->nedges : 1, sizeof *x->chan);
    x->kern = calloc(n, sizeof *x->kern);
    x->start = calloc(recs, sizeof *x->start);
    x->end = calloc(recs, sizeof *x->end);
    if (!x->chan || !x->kern || !x->start || !x->end)
        return PM_ENOMEM;
    int rc = run_alloc_result(x);
    for (uint32_t e = 0; rc == PM_OK && e < g->nedges; e++)
        if ((rc = run_make_chan(x, e)) == PM_OK)
            run_prefill(x, e);
    for (uint32_t v = 0; rc == PM_OK && v < g->nnodes; v++)
        rc = run_kernel_for(g, x->cfg, v, x->m->core_of[v], &x->kern[v]);
    return rc == PM_OK ? run_alloc_threads(x) : rc;
}

static void run_teardown(run_ctx *x)
{
    for (uint32_t e = 0; x->chan && e < x->g->nedges; e++) {
        pm_ring_destroy(x->chan[e].ring);
        free(x->chan[e].fifo);
    }
    for (uint32_t v = 0; x->kern && v < x->g->nnodes; v++)
        pm_kernel_destroy(x->kern[v]);
    for (uint32_t c = 0; x->th && c < x->m->ncores; c++) {
        free(x->th[c].in);
        free(x->th[c].out);
    }
    free(x->th);
    free(x->chan);
    free(x->kern);
    free(x->start);
    free(x->end);
    free(x->sink_slot);
    free(x->is_source);
    free(x->sink_hash);
}

void pm_run_result_destroy(pm_run_result *r)
{
    if (!r)
        return;
    free(r->busy);
    free(r->node_ns);
    free(r->pinned);
    free(r->tokens);
    free(r->remaining);
    free(r->sinks);
    free(r->outputs);
    free(r->waits);
    free(r);
}

/* ---- running and measuring -------------------------------------------------------- */

static void run_sleep_ms(long ms)
{
    struct timespec ts = {0, ms * 1000000L};
    nanosleep(&ts, NULL);
}

/* Watch the threads until all finish; true when they had to be stopped. */
static bool run_watch(run_ctx *x)
{
    int64_t limit = (int64_t)(x->cfg->watchdog_ms ? x->cfg->watchdog_ms : PM_RUN_WATCHDOG_MS)
                    * 1000000;
    uint64_t last = UINT64_MAX;
    int64_t since = run_now();
    for (;;) {
        run_sleep_ms(2);
        uint64_t sum = 0;
        bool all = true;
        for (uint32_t c = 0; c < x->m->ncores; c++) {
            sum += atomic_load_explicit(&x->th[c].fired, memory_order_relaxed);
            all = all && atomic_load(&x->th[c].finished);
        }
        if (atomic_load(&x->stop))
            return true; /* a thread found itself waiting on its own core */
        if (all)
            return false;
        if (sum != last) {
            last = sum;
            since = run_now();
        } else if (run_now() - since > limit) {
            atomic_store(&x->stop, true);
            return true;
        }
    }
}

static int run_threads(run_ctx *x)
{
    uint32_t nc = x->m->ncores;
    atomic_init(&x->go, 0);
    atomic_init(&x->stop, false);
    int rc = PM_OK;
    for (uint32_t c = 0; c < nc && rc == PM_OK; c++) {
        if (pthread_create(&x->th[c].tid, NULL, run_worker, &x->th[c]) != 0)
            rc = PM_EPLATFORM;
        else
            x->th[c].started = true;
    }
    x->t0 = run_now();
    atomic_store(&x->go, rc == PM_OK ? 1 : -1);
    bool stalled = rc == PM_OK && run_watch(x);
    for (uint32_t c = 0; c < nc; c++)
        if (x->th[c].started)
            pthread_join(x->th[c].tid, NULL);
    x->r->stalled = stalled;
    return rc;
}

/* Completion time of iteration k over `set` nodes (all when set NULL). */
static int64_t run_span(const run_ctx *x, uint64_t k, const uint32_t *set, uint32_t nset,
                        bool first_start)
{
    uint32_t n = x->g->nnodes, cnt = set ? nset : n;
    int64_t best = first_start ? INT64_MAX : INT64_MIN;
    for (uint32_t i = 0; i < cnt; i++) {
        uint32_t v = set ? set[i] : i;
        int64_t t = first_start ? x->start[k * n + v] : x->end[k * n + v];
        best = first_start ? (t < best ? t : best) : (t > best ? t : best);
    }
    return cnt ? best : 0;
}

static void run_periods(run_ctx *x, double *tmp)
{
    pm_run_result *r = x->r;
    uint32_t first = r->warmup > 0 ? r->warmup : 1u, cnt = 0;
    for (uint32_t k = first; k < x->total; k++)
        tmp[cnt++] = (double)(run_span(x, k, NULL, 0, false) - run_span(x, k - 1u, NULL, 0, false));
    if (cnt == 0)
        return;
    r->period_ns_mean = (double)(run_span(x, x->total - 1u, NULL, 0, false) -
                                 run_span(x, first - 1u, NULL, 0, false)) / cnt;
    r->period_ns_median = run_quantile(tmp, cnt, 0.5);
    r->period_ns_p99 = run_quantile(tmp, cnt, 0.99);
}

static void run_latency(run_ctx *x, double *tmp)
{
    const pm_graph *g = x->g;
    uint32_t *src = malloc((g->nnodes ? g->nnodes : 1) * sizeof *src), ns = 0;
    if (!src)
        return;
    for (uint32_t v = 0; v < g->nnodes; v++)
        if (run_is_end(g, v, false))
            src[ns++] = v;
    uint32_t cnt = 0;
    for (uint32_t k = x->r->warmup; k < x->total; k++)
        tmp[cnt++] = (double)(run_span(x, k, x->r->sinks, x->r->nsinks, false) -
                              run_span(x, k, ns ? src : NULL, ns, true));
    free(src);
    x->r->latency_ns_median = run_quantile(tmp, cnt, 0.5);
    x->r->latency_ns_p99 = run_quantile(tmp, cnt, 0.99);
}

static void run_busy(run_ctx *x)
{
    pm_run_result *r = x->r;
    uint32_t n = x->g->nnodes, w = r->warmup;
    int64_t from = w > 0 ? run_span(x, w - 1u, NULL, 0, false) : run_span(x, 0, NULL, 0, true);
    double window = (double)(run_span(x, x->total - 1u, NULL, 0, false) - from);
    for (uint32_t c = 0; c < r->ncores; c++) {
        int64_t sum = 0;
        for (uint64_t k = w; k < x->total; k++)
            for (uint32_t i = x->m->off[c]; i < x->m->off[c + 1]; i++)
                sum += x->end[k * n + x->m->order[i]] - x->start[k * n + x->m->order[i]];
        r->busy[c] = window > 0 ? (double)sum / window : 0.0;
    }
}

static void run_node_times(run_ctx *x, double *tmp)
{
    uint32_t n = x->g->nnodes;
    for (uint32_t v = 0; v < n; v++) {
        uint32_t cnt = 0;
        for (uint64_t k = x->r->warmup; k < x->total; k++)
            tmp[cnt++] = (double)(x->end[k * n + v] - x->start[k * n + v]);
        x->r->node_ns[v] = run_quantile(tmp, cnt, 0.5);
    }
}

static void run_collect(run_ctx *x)
{
    pm_run_result *r = x->r;
    for (uint32_t c = 0; c < r->ncores; c++) {
        r->pinned[c] = x->th[c].pinned;
        r->order_errors += x->th[c].order_errors;
        r->waits[c] = x->th[c].wait;
    }
    for (uint32_t e = 0; e < r->nedges; e++)
        r->remaining[e] = x->chan[e].ring ? pm_ring_count(x->chan[e].ring) : x->chan[e].count;
    r->output_hash = UINT64_C(0xcbf29ce484222325);
    for (uint32_t s = 0; s < r->nsinks; s++)
        r->output_hash = run_fnv(r->output_hash, &x->sink_hash[s], sizeof x->sink_hash[s]);
    if (r->stalled)
        return;
    double *tmp = malloc(x->total * sizeof *tmp);
    if (!tmp)
        return;
    run_periods(x, tmp);
    run_latency(x, tmp);
    run_node_times(x, tmp);
    run_busy(x);
    free(tmp);
}

/* Every node exactly once, each listed on the core core_of names. */
static bool run_map_fits(const pm_graph *g, const pm_map *m)
{
    if (m->nnodes != g->nnodes || m->ncores < 1 || m->off[m->ncores] != g->nnodes)
        return false;
    bool *seen = calloc(g->nnodes ? g->nnodes : 1, sizeof *seen);
    bool ok = seen != NULL;
    for (uint32_t c = 0; ok && c < m->ncores; c++)
        for (uint32_t i = m->off[c]; ok && i < m->off[c + 1]; i++) {
            uint32_t v = m->order[i];
            ok = v < g->nnodes && !seen[v] && m->core_of[v] == c;
            if (ok)
                seen[v] = true;
        }
    free(seen);
    return ok;
}

int pm_run_execute(const pm_graph *g, const pm_map *m, const pm_run_config *cfg,
                   pm_run_result **out)
{
    *out = NULL;
    if (!pm_graph_is_single_rate(g))
        return PM_EUNSUPPORTED;
    if (!g->finalized || cfg->iterations < 1 || cfg->warmup > UINT32_MAX - cfg->iterations ||
        !run_map_fits(g, m))
        return PM_EINVAL;
    run_ctx x = {.g = g, .m = m, .cfg = cfg, .total = cfg->warmup + cfg->iterations};
    int rc = run_setup(&x);
    if (rc == PM_OK)
        rc = run_threads(&x);
    if (rc == PM_OK) {
        run_collect(&x);
        if (x.r->stalled)
            rc = PM_EDEADLOCK;
        *out = x.r;
    } else {
        pm_run_result_destroy(x.r);
    }
    run_teardown(&x);
    return rc;
}
