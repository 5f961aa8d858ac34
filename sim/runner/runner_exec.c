/*
 * runner_exec.c - a run of the real-core runner: setting it up (channels
 * with their initial tokens, kernels, sinks, the result record), the
 * threads executing the map, the watchdog, and tearing it down.
 *
 * Threads share only: the rings (SPSC, ring.h), one stop flag and one
 * progress counter per thread (C11 atomics).  Everything else a thread
 * writes (its timestamps, the tokens it consumed, its sinks' outputs) is
 * its own until pthread_join hands it to the caller.  Not here: checking
 * the map and turning the timestamps into a result (runner.c), the
 * measurements before a run (runner_time.c).  No printing.
 */
#include <stdlib.h>
#include <string.h>

#include "runner_internal.h"

/* ---- execution ------------------------------------------------------------------ */

static void *runner_chan_claim(runner_chan *c, size_t bytes)
{
    if (c->ring)
        return pm_ring_claim(c->ring);
    if (c->count == c->cap)
        return NULL;
    return c->fifo + (size_t)((c->head + c->count) % c->cap) * bytes;
}

static void runner_chan_push(runner_chan *c)
{
    if (c->ring)
        pm_ring_push(c->ring);
    else
        c->count++;
}

static const void *runner_chan_peek(runner_chan *c, size_t bytes)
{
    if (c->ring)
        return pm_ring_peek(c->ring);
    return c->count ? c->fifo + (size_t)c->head * bytes : NULL;
}

static void runner_chan_pop(runner_chan *c)
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
static void *runner_wait(runner_thread *th, uint32_t v, uint32_t e, uint64_t k, bool for_space)
{
    runner_ctx *x = th->x;
    runner_chan *c = &x->chan[e];
    int64_t since = 0;
    for (uint64_t s = 0;; s++) {
        void *p = for_space ? runner_chan_claim(c, x->bytes)
                            : (void *)(uintptr_t)runner_chan_peek(c, x->bytes);
        if (p) {
            /* the clock is read only when the ring was not ready at once */
            if (s > 0 && k >= x->cfg->warmup)
                th->wait_ns += runner_clock(x->cfg) - since;
            return p;
        }
        if (s == 0)
            since = runner_clock(x->cfg);
        if (!c->ring)
            atomic_store(&x->stop, true);
        if (atomic_load_explicit(&x->stop, memory_order_relaxed)) {
            th->wait = (pm_runner_wait){th->core, v, e, for_space, k};
            return NULL;
        }
        runner_wait_turn(x->cfg, s);
    }
}

/* Mean of v's input tokens into th->in; a source (only self-loops in)
 * takes the test signal as one more input. */
static bool runner_gather(runner_thread *th, uint32_t v, uint64_t k)
{
    runner_ctx *x = th->x;
    const pm_graph *g = x->g;
    uint32_t nin = g->in_off[v + 1] - g->in_off[v], b = x->cfg->block;
    bool src = x->is_source[v];
    if (src)
        pm_kernel_signal_fill(th->in, b, v, k * b);
    for (uint32_t i = 0; i < nin; i++) {
        uint32_t e = g->in_edge[g->in_off[v] + i];
        const runner_token *t = runner_wait(th, v, e, k, false);
        if (!t)
            return false;
        th->order_errors += t->seq != (int64_t)k - g->edges[e].delay;
        for (uint32_t j = 0; j < b; j++)
            th->in[j] = i == 0 && !src ? t->data[j] : th->in[j] + t->data[j];
        runner_chan_pop(&x->chan[e]);
        x->chan[e].taken++;
    }
    if (nin + src > 1) {
        float scale = 1.0f / (float)(nin + src);
        for (uint32_t j = 0; j < b; j++)
            th->in[j] *= scale;
    }
    return true;
}

/* Publish the filled ring slots of v's out-edges [from, to). */
static void runner_publish(runner_ctx *x, uint32_t from, uint32_t to)
{
    for (uint32_t i = from; i < to; i++)
        if (x->chan[x->g->out_edge[i]].ring)
            pm_ring_push(x->chan[x->g->out_edge[i]].ring);
}

/* Fill a slot on every out-edge, then publish the ring slots together, so
 * each ring's head line moves once, after the copies (batched pushes).
 * Before waiting for room, what is filled is published: a consumer may
 * need it to make that room. */
static bool runner_scatter(runner_thread *th, uint32_t v, uint64_t k)
{
    runner_ctx *x = th->x;
    const pm_graph *g = x->g;
    uint32_t pending = g->out_off[v];
    for (uint32_t i = g->out_off[v]; i < g->out_off[v + 1]; i++) {
        uint32_t e = g->out_edge[i];
        runner_token *t = runner_chan_claim(&x->chan[e], x->bytes);
        if (!t) {
            runner_publish(x, pending, i);
            pending = i;
            if (!(t = runner_wait(th, v, e, k, true)))
                return false;
        }
        t->seq = (int64_t)k;
        memcpy(t->data, th->out, x->cfg->block * sizeof *t->data);
        if (!x->chan[e].ring)
            runner_chan_push(&x->chan[e]);
    }
    runner_publish(x, pending, g->out_off[v + 1]);
    return true;
}

static void runner_keep_output(runner_thread *th, uint32_t v, uint64_t k)
{
    runner_ctx *x = th->x;
    uint32_t s = x->sink_slot[v], b = x->cfg->block;
    if (s == PM_NONE)
        return;
    uint64_t *h = &x->sink_hash[s * RUNNER_HASH_STRIDE];
    *h = runner_hash_block(*h, th->out, b);
    if (x->r->outputs)
        memcpy(x->r->outputs + ((size_t)s * x->total + k) * b, th->out, b * sizeof *th->out);
}

static bool runner_fire(runner_thread *th, uint32_t v, uint64_t k)
{
    runner_ctx *x = th->x;
    if (x->cfg->pace)
        runner_pace_wait(th, v, k);
    if (!runner_gather(th, v, k))
        return false;
    const pm_runner_config *cfg = x->cfg;
    if (cfg->cpu_time && k == cfg->warmup && th->cpu_from < 0)
        th->cpu_from = runner_cpu_now();
    /* two clock reads a firing, both around the kernel: the ring work and
     * the loop fall between firings and show as the cores' other time */
    int64_t t1 = runner_clock(cfg);
    pm_kernel_process(x->kern[v], th->in, th->out);
    size_t at = runner_rec(x, k, v);
    x->start[at] = t1 - x->t0;
    x->end[at] = runner_clock(cfg) - x->t0;
    if (!runner_scatter(th, v, k))
        return false;
    runner_keep_output(th, v, k);
    atomic_store_explicit(&th->fired, atomic_load_explicit(&th->fired, memory_order_relaxed) + 1u,
                          memory_order_relaxed);
    return true;
}

/* The most rounds a core needs: every iteration of its most lagged node. */
static uint64_t runner_rounds(const runner_ctx *x, uint32_t core)
{
    uint32_t most = 0;
    for (uint32_t i = x->m->off[core]; i < x->m->off[core + 1]; i++)
        if (runner_lag(x->m, x->m->order[i]) > most)
            most = runner_lag(x->m, x->m->order[i]);
    return (uint64_t)x->total + most;
}

/* Round r fires each node of the core, in map order, for its iteration
 * r - lag; a node outside 0 .. total-1 in that round is passed over, so a
 * lagged node starts late and its core goes on to finish it. */
static void runner_core_loop(runner_thread *th)
{
    runner_ctx *x = th->x;
    const pm_map *m = x->m;
    uint64_t rounds = runner_rounds(x, th->core);
    for (uint64_t r = 0; r < rounds; r++)
        for (uint32_t i = m->off[th->core]; i < m->off[th->core + 1]; i++) {
            uint32_t v = m->order[i];
            uint64_t lag = runner_lag(m, v);
            if (r < lag || r - lag >= x->total)
                continue;
            if (!runner_fire(th, v, r - lag))
                return;
        }
}

static void *runner_worker(void *arg)
{
    runner_thread *th = arg;
    runner_ctx *x = th->x;
    if (x->cfg->topo && x->cfg->pu)
        th->pinned = pm_topo_bind_thread(x->cfg->topo, x->cfg->pu[th->core]) == PM_OK;
    int go;
    while ((go = atomic_load(&x->go)) == 0)
        sched_yield();
    if (go < 0)
        return NULL;
    th->wait = (pm_runner_wait){th->core, PM_NONE, PM_NONE, false, x->total};
    th->cpu_from = -1;
    runner_core_loop(th);
    if (x->cfg->cpu_time && th->cpu_from >= 0)
        th->cpu_ns = runner_cpu_now() - th->cpu_from;
    atomic_store(&th->finished, true);
    return NULL;
}

/* ---- setting up and tearing down a run ------------------------------------------ */

/* A same-core FIFO holds exactly the slots the edge needs (its producer
 * never waits for the consumer); a ring gets what the caller asks, raised
 * to that least count (runner_min_slots). */
static int runner_make_chan(runner_ctx *x, uint32_t e)
{
    const pm_edge *ed = &x->g->edges[e];
    runner_chan *c = &x->chan[e];
    bool cross = x->m->core_of[ed->src] != x->m->core_of[ed->dst];
    uint64_t least = runner_min_slots(x->g, x->m, e);
    uint64_t want = x->cfg->ring_capacity ? x->cfg->ring_capacity
                  : x->cfg->edge_capacity ? x->cfg->edge_capacity[e]
                                          : least - 1u + PM_RUNNER_RING_SLACK;
    uint64_t cap = cross && want > least ? want : least;
    if (cap > PM_RING_MAX_CAPACITY)
        return PM_ELIMIT;
    c->cap = (uint32_t)cap;
    if (cross)
        return pm_ring_create(x->bytes, c->cap, &c->ring);
    c->fifo = calloc(c->cap, x->bytes);
    return c->fifo ? PM_OK : PM_ENOMEM;
}

/* Initial tokens: zero samples, sequence numbers -delay .. -1. */
static void runner_prefill(runner_ctx *x, uint32_t e)
{
    int64_t d = x->g->edges[e].delay;
    for (int64_t i = 0; i < d; i++) {
        runner_token *t = runner_chan_claim(&x->chan[e], x->bytes);
        memset(t, 0, x->bytes);
        t->seq = i - d;
        runner_chan_push(&x->chan[e]);
    }
}

bool runner_is_end(const pm_graph *g, uint32_t v, bool out)
{
    const uint32_t *off = out ? g->out_off : g->in_off, *lst = out ? g->out_edge : g->in_edge;
    for (uint32_t i = off[v]; i < off[v + 1]; i++) {
        const pm_edge *e = &g->edges[lst[i]];
        if (e->src != e->dst)
            return false;
    }
    return true;
}

static int runner_pick_sinks(runner_ctx *x)
{
    const pm_graph *g = x->g;
    pm_runner_result *r = x->r;
    uint32_t n = 0;
    for (uint32_t v = 0; v < g->nnodes; v++)
        n += runner_is_end(g, v, true);
    bool all = n == 0;
    r->nsinks = all ? g->nnodes : n;
    r->sinks = malloc((r->nsinks ? r->nsinks : 1) * sizeof *r->sinks);
    x->sink_slot = malloc((g->nnodes ? g->nnodes : 1) * sizeof *x->sink_slot);
    x->is_source = malloc((g->nnodes ? g->nnodes : 1) * sizeof *x->is_source);
    x->sink_hash = aligned_alloc(PM_RING_LINE, (r->nsinks ? r->nsinks : 1) * PM_RING_LINE);
    if (!r->sinks || !x->sink_slot || !x->sink_hash || !x->is_source)
        return PM_ENOMEM;
    n = 0;
    for (uint32_t v = 0; v < g->nnodes; v++) {
        x->is_source[v] = runner_is_end(g, v, false);
        bool s = all || runner_is_end(g, v, true);
        x->sink_slot[v] = s ? n : PM_NONE;
        if (s) {
            x->sink_hash[n * RUNNER_HASH_STRIDE] = UINT64_C(0xcbf29ce484222325);
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

static int runner_alloc_result(runner_ctx *x)
{
    const pm_graph *g = x->g;
    pm_runner_result *r = x->r; /* the caller's, zeroed by pm_runner_execute */
    r->ncores = x->m->ncores;
    r->nnodes = g->nnodes;
    r->nedges = g->nedges;
    r->iterations = x->cfg->iterations;
    r->warmup = x->cfg->warmup;
    r->busy = calloc(r->ncores, sizeof *r->busy);
    r->wait = calloc(r->ncores, sizeof *r->wait);
    r->node_ns = calloc(g->nnodes ? g->nnodes : 1, sizeof *r->node_ns);
    r->pinned = calloc(r->ncores, sizeof *r->pinned);
    r->waits = calloc(r->ncores, sizeof *r->waits);
    r->tokens = calloc(g->nedges ? g->nedges : 1, sizeof *r->tokens);
    r->remaining = calloc(g->nedges ? g->nedges : 1, sizeof *r->remaining);
    if (!r->busy || !r->wait || !r->node_ns || !r->pinned ||
        !r->waits || !r->tokens || !r->remaining)
        return PM_ENOMEM;
    return runner_pick_sinks(x);
}

static int runner_alloc_threads(runner_ctx *x)
{
    uint32_t nc = x->m->ncores, b = x->cfg->block;
    x->th = aligned_alloc(PM_RING_LINE, nc * sizeof *x->th);
    if (!x->th)
        return PM_ENOMEM;
    memset(x->th, 0, nc * sizeof *x->th);
    for (uint32_t c = 0; c < nc; c++) {
        runner_thread *th = &x->th[c];
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

/* Lay out the records core by core (runner_rec); the total entries. */
static size_t runner_layout(runner_ctx *x)
{
    const pm_map *m = x->m;
    const size_t line = PM_RING_LINE / sizeof(int64_t);
    size_t at = 0;
    for (uint32_t c = 0; c < m->ncores; c++) {
        size_t cnt = m->off[c + 1] - m->off[c];
        for (uint32_t i = m->off[c]; i < m->off[c + 1]; i++) {
            x->rec_base[m->order[i]] = at + (i - m->off[c]);
            x->rec_stride[m->order[i]] = cnt;
        }
        at += (cnt * x->total + line - 1u) / line * line + line;
    }
    return at;
}

int runner_setup(runner_ctx *x)
{
    const pm_graph *g = x->g;
    size_t n = g->nnodes ? g->nnodes : 1, ne = g->nedges ? g->nedges : 1;
    if ((size_t)x->total * n > PM_RUNNER_MAX_RECORDS)
        return PM_ELIMIT;
    x->bytes = sizeof(runner_token) + x->cfg->block * sizeof(float);
    x->chan = aligned_alloc(PM_RING_LINE, ne * sizeof *x->chan);
    x->kern = calloc(n, sizeof *x->kern);
    x->rec_base = malloc(n * sizeof *x->rec_base);
    x->rec_stride = malloc(n * sizeof *x->rec_stride);
    if (!x->chan || !x->kern || !x->rec_base || !x->rec_stride)
        return PM_ENOMEM;
    memset(x->chan, 0, ne * sizeof *x->chan);
    size_t recs = runner_layout(x);
    x->start = aligned_alloc(PM_RING_LINE, recs * sizeof *x->start);
    x->end = aligned_alloc(PM_RING_LINE, recs * sizeof *x->end);
    if (!x->start || !x->end)
        return PM_ENOMEM;
    memset(x->start, 0, recs * sizeof *x->start);
    memset(x->end, 0, recs * sizeof *x->end);
    int rc = runner_alloc_result(x);
    for (uint32_t e = 0; rc == PM_OK && e < g->nedges; e++)
        if ((rc = runner_make_chan(x, e)) == PM_OK)
            runner_prefill(x, e);
    for (uint32_t v = 0; rc == PM_OK && v < g->nnodes; v++)
        rc = runner_kernel_for(g, x->cfg, v, x->m->core_of[v], &x->kern[v]);
    return rc == PM_OK ? runner_alloc_threads(x) : rc;
}

void runner_teardown(runner_ctx *x)
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
    free(x->rec_base);
    free(x->rec_stride);
    free(x->sink_slot);
    free(x->is_source);
    free(x->sink_hash);
}

void pm_runner_result_free(pm_runner_result *r)
{
    if (!r)
        return;
    free(r->busy);
    free(r->wait);
    free(r->node_ns);
    free(r->pinned);
    free(r->tokens);
    free(r->remaining);
    free(r->sinks);
    free(r->outputs);
    free(r->waits);
    memset(r, 0, sizeof *r);
}

/* ---- running the threads ---------------------------------------------------------- */

static void runner_sleep_ms(long ms)
{
    struct timespec ts = {0, ms * 1000000L};
    nanosleep(&ts, NULL);
}

/* Watch the threads until all finish; true when they had to be stopped. */
static bool runner_watch(runner_ctx *x)
{
    int64_t limit = (int64_t)(x->cfg->watchdog_ms ? x->cfg->watchdog_ms : PM_RUNNER_WATCHDOG_MS)
                    * 1000000;
    uint64_t last = UINT64_MAX;
    int64_t since = runner_now();
    for (;;) {
        runner_sleep_ms(2);
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
            since = runner_now();
        } else if (runner_now() - since > limit) {
            atomic_store(&x->stop, true);
            return true;
        }
    }
}

int runner_threads(runner_ctx *x)
{
    uint32_t nc = x->m->ncores;
    atomic_init(&x->go, 0);
    atomic_init(&x->stop, false);
    int rc = PM_OK;
    for (uint32_t c = 0; c < nc && rc == PM_OK; c++) {
        if (pthread_create(&x->th[c].tid, NULL, runner_worker, &x->th[c]) != 0)
            rc = PM_EPLATFORM;
        else
            x->th[c].started = true;
    }
    x->t0 = runner_clock(x->cfg);
    atomic_store(&x->go, rc == PM_OK ? 1 : -1);
    bool stalled = rc == PM_OK && runner_watch(x);
    for (uint32_t c = 0; c < nc; c++)
        if (x->th[c].started)
            pthread_join(x->th[c].tid, NULL);
    x->r->stalled = stalled;
    return rc;
}
