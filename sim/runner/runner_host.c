/*
 * runner_host.c - what the runner itself costs on this host (runner.h):
 * dispatch per firing, send and receive time per token by size, handoff
 * latency idle and busy; and the model that adds those costs to the node
 * times (prediction, where a core's period goes).
 *
 * Every measurement runs the runner's own code paths (pm_runner_execute,
 * the SPSC rings) and reads time through the run's clock, so a test can
 * inject a synthetic host clock and check the arithmetic exactly.  Not
 * here: the busy-loop calibration and node times (runner_time.c).  No
 * printing.
 */
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "runner_internal.h"

enum {
    HOST_BATCH = 8,          /* tokens per timed batch of sends or receives */
    HOST_SHORT = 4,          /* nodes of the short chain (dispatch) */
    HOST_LONG = 20,          /* nodes of the long chain */
    HOST_BUSY_NS = 2000      /* work between tokens in the busy handoff */
};

/* ---- dispatch: serial chains of zero-work nodes -------------------------------- */

static int host_chain_graph(uint32_t n, pm_graph **out)
{
    pm_graph *g = pm_graph_create("host-chain");
    uint32_t one = 1, prev = PM_NONE;
    int rc = g ? pm_graph_set_cores(g, 1, NULL, &one) : PM_ENOMEM;
    for (uint32_t i = 0; rc == PM_OK && i < n; i++) {
        char name[16];
        int len = snprintf(name, sizeof name, "n%u", i);
        uint32_t id;
        rc = pm_graph_add_node(g, name, (size_t)len, 0, &id);
        if (rc == PM_OK && prev != PM_NONE) {
            pm_edge e = pm_graph_edge_default(prev, id);
            rc = pm_graph_add_edge(g, &e, NULL);
        }
        prev = id;
    }
    if (rc == PM_OK)
        rc = pm_graph_finalize(g);
    if (rc != PM_OK) {
        pm_graph_destroy(g);
        g = NULL;
    }
    *out = g;
    return rc;
}

/* Period (median, p99) of a serial chain of n zero-work nodes on PU pu. */
static int host_chain_period(const pm_runner_config *cfg, uint32_t pu, uint32_t n,
                             uint32_t rounds, pm_host_stat *st)
{
    pm_graph *g = NULL;
    pm_map *m = NULL;
    int rc = host_chain_graph(n, &g);
    if (rc == PM_OK)
        rc = pm_runner_serial_map(g, &m);
    pm_runner_config c = *cfg;
    c.iterations = rounds;
    c.warmup = rounds / 10 > 0 ? rounds / 10 : 1;
    c.pu = &pu;
    c.record_outputs = false;
    c.cpu_time = false;
    c.edge_capacity = NULL;
    c.ring_capacity = 0;
    pm_runner_result r = {0};
    if (rc == PM_OK)
        rc = pm_runner_execute(g, m, &c, &r);
    if (rc == PM_OK)
        *st = (pm_host_stat){r.period_ns_median, r.period_ns_p99};
    pm_runner_result_free(&r);
    pm_map_destroy(m);
    pm_graph_destroy(g);
    return rc;
}

/* The runner's own crossing: A on pu_a, B on pu_b, A -> B -> A with one
 * delay, zero work.  A period holds two firings (each its dispatch and,
 * with no sink in the graph, its output hash) and two crossings. */
static int host_crossing(const pm_runner_config *cfg, uint32_t pu_a, uint32_t pu_b,
                         uint32_t rounds, pm_host_costs *h)
{
    pm_graph *g = pm_graph_create("host-loop");
    uint32_t two = 2, a = 0, b = 0;
    int rc = g ? pm_graph_set_cores(g, 1, NULL, &two) : PM_ENOMEM;
    if (rc == PM_OK)
        rc = pm_graph_add_node(g, "a", 1, 0, &a);
    if (rc == PM_OK)
        rc = pm_graph_add_node(g, "b", 1, 0, &b);
    pm_edge ab = pm_graph_edge_default(a, b), ba = pm_graph_edge_default(b, a);
    ba.delay = 1;
    if (rc == PM_OK)
        rc = pm_graph_add_edge(g, &ab, NULL);
    if (rc == PM_OK)
        rc = pm_graph_add_edge(g, &ba, NULL);
    if (rc == PM_OK)
        rc = pm_graph_finalize(g);
    pm_map *m = NULL;
    const uint32_t c0[] = {0}, c1[] = {1}, counts[] = {1, 1}, pus[] = {pu_a, pu_b};
    const uint32_t *lists[] = {c0, c1};
    if (rc == PM_OK)
        rc = pm_map_create(2, 2, lists, counts, &m);
    pm_runner_config c = *cfg;
    c.iterations = rounds;
    c.warmup = rounds / 10 > 0 ? rounds / 10 : 1;
    c.pu = pus;
    c.record_outputs = false;
    c.cpu_time = false;
    c.edge_capacity = NULL;
    c.ring_capacity = 0;
    pm_runner_result r = {0};
    if (rc == PM_OK)
        rc = pm_runner_execute(g, m, &c, &r);
    double own = h->dispatch.median + h->ends_ns / 2;
    if (rc == PM_OK) {
        double med = r.period_ns_median / 2 - own, p99 = r.period_ns_p99 / 2 - own;
        h->crossing = (pm_host_stat){med > 0 ? med : 0, p99 > med ? p99 : med > 0 ? med : 0};
    }
    pm_runner_result_free(&r);
    pm_map_destroy(m);
    pm_graph_destroy(g);
    return rc;
}

/* Dispatch is the slope between the two chain lengths; what is left at
 * length 0 is the source's signal and the sink's hash. */
static int host_dispatch(const pm_runner_config *cfg, uint32_t pu, uint32_t rounds,
                         pm_host_costs *h)
{
    pm_host_stat s, l;
    int rc = host_chain_period(cfg, pu, HOST_SHORT, rounds, &s);
    if (rc == PM_OK)
        rc = host_chain_period(cfg, pu, HOST_LONG, rounds, &l);
    if (rc != PM_OK)
        return rc;
    double span = HOST_LONG - HOST_SHORT;
    double med = (l.median - s.median) / span, p99 = (l.p99 - s.p99) / span;
    h->dispatch = (pm_host_stat){med > 0 ? med : 0, p99 > med ? p99 : med > 0 ? med : 0};
    double ends = s.median - HOST_SHORT * h->dispatch.median;
    h->ends_ns = ends > 0 ? ends : 0;
    return PM_OK;
}

/* ---- send and receive per token ------------------------------------------------ */

typedef struct host_stream {
    pm_ring *data, *go, *ack;
    size_t bytes;
    uint32_t rounds, pu;
    const pm_runner_config *cfg;
    bool pinned;
    double *send, *recv; /* per round: ns per token */
} host_stream;

static void host_put(pm_ring *r, const pm_runner_config *cfg)
{
    for (uint64_t s = 0; !pm_ring_claim(r); s++)
        runner_wait_turn(cfg, s);
    pm_ring_push(r);
}

static void host_take(pm_ring *r, const pm_runner_config *cfg)
{
    for (uint64_t s = 0; !pm_ring_peek(r); s++)
        runner_wait_turn(cfg, s);
    pm_ring_pop(r);
}

/* Consumer: after each "go", read a batch the producer wrote (the lines
 * come from the other core, as in a run), then acknowledge. */
static void *host_reader(void *arg)
{
    host_stream *p = arg;
    const pm_runner_config *cfg = p->cfg;
    p->pinned = cfg->topo && pm_topo_bind_thread(cfg->topo, p->pu) == PM_OK;
    volatile float keep = 0;
    size_t nf = (p->bytes - sizeof(int64_t)) / sizeof(float);
    for (uint32_t r = 0; r < p->rounds; r++) {
        host_take(p->go, cfg);
        int64_t t0 = runner_clock(cfg);
        float acc = 0;
        for (int i = 0; i < HOST_BATCH; i++) {
            const unsigned char *slot = pm_ring_peek(p->data);
            const float *f = (const float *)(slot + sizeof(int64_t));
            for (size_t j = 0; j < nf; j++)
                acc += f[j];
            pm_ring_pop(p->data);
        }
        p->recv[r] = (double)(runner_clock(cfg) - t0) / HOST_BATCH;
        keep = acc;
        host_put(p->ack, cfg);
    }
    (void)keep;
    return NULL;
}

/* Producer (calling thread): write a batch into the drained ring, time it. */
static void host_writer(host_stream *p, const float *src)
{
    const pm_runner_config *cfg = p->cfg;
    for (uint32_t r = 0; r < p->rounds; r++) {
        int64_t t0 = runner_clock(cfg);
        for (int i = 0; i < HOST_BATCH; i++) {
            unsigned char *slot = pm_ring_claim(p->data);
            memcpy(slot, src, p->bytes);
            pm_ring_push(p->data);
        }
        p->send[r] = (double)(runner_clock(cfg) - t0) / HOST_BATCH;
        host_put(p->go, cfg);
        host_take(p->ack, cfg);
    }
}

static pm_host_stat host_stat(double *v, uint32_t n)
{
    uint32_t skip = n / 10;
    return (pm_host_stat){runner_quantile(v + skip, n - skip, 0.5),
                          runner_quantile(v + skip, n - skip, 0.99)};
}

static int host_stream_run(const pm_runner_config *cfg, uint32_t pu_a, uint32_t pu_b,
                           uint32_t rounds, uint32_t words, pm_host_stat *send,
                           pm_host_stat *recv, bool *pinned)
{
    host_stream p = {.bytes = (size_t)words * 4u, .rounds = rounds, .pu = pu_b, .cfg = cfg};
    p.send = malloc(rounds * sizeof *p.send);
    p.recv = malloc(rounds * sizeof *p.recv);
    float *src = calloc(words, 4u);
    int rc = p.send && p.recv && src ? PM_OK : PM_ENOMEM;
    if (rc == PM_OK)
        rc = pm_ring_create(p.bytes, HOST_BATCH, &p.data);
    if (rc == PM_OK)
        rc = pm_ring_create(1, 1, &p.go);
    if (rc == PM_OK)
        rc = pm_ring_create(1, 1, &p.ack);
    pthread_t t;
    if (rc == PM_OK && pthread_create(&t, NULL, host_reader, &p) != 0)
        rc = PM_EPLATFORM;
    if (rc == PM_OK) {
        bool mine = cfg->topo && pm_topo_bind_thread(cfg->topo, pu_a) == PM_OK;
        host_writer(&p, src);
        pthread_join(t, NULL);
        *send = host_stat(p.send, rounds);
        *recv = host_stat(p.recv, rounds);
        *pinned = *pinned && mine && p.pinned;
    }
    pm_ring_destroy(p.data);
    pm_ring_destroy(p.go);
    pm_ring_destroy(p.ack);
    free(src);
    free(p.send);
    free(p.recv);
    return rc;
}

/* Blocks measured: 1, 16, 64, 256 samples and the run's, ascending. */
static void host_sizes(uint32_t block, pm_host_costs *h)
{
    const uint32_t fixed[4] = {1, 16, 64, 256};
    uint32_t n = 0;
    bool added = false;
    for (int i = 0; i < 4; i++) {
        if (!added && block < fixed[i]) {
            h->words[n++] = block + 2u;
            added = true;
        }
        if (block == fixed[i])
            added = true;
        h->words[n++] = fixed[i] + 2u;
    }
    if (!added)
        h->words[n++] = block + 2u;
    h->nsizes = n;
    for (uint32_t i = 0; i < n; i++)
        if (h->words[i] == block + 2u)
            h->run_size = i;
}

/* Least squares y = base + slope * x over the medians; slope >= 0. */
static void host_fit(const pm_host_costs *h, const pm_host_stat *y, double *base, double *slope)
{
    double mx = 0, my = 0, sxx = 0, sxy = 0;
    for (uint32_t i = 0; i < h->nsizes; i++) {
        mx += h->words[i];
        my += y[i].median;
    }
    mx /= h->nsizes;
    my /= h->nsizes;
    for (uint32_t i = 0; i < h->nsizes; i++) {
        sxx += (h->words[i] - mx) * (h->words[i] - mx);
        sxy += (h->words[i] - mx) * (y[i].median - my);
    }
    *slope = sxx > 0 && sxy > 0 ? sxy / sxx : 0;
    *base = my - *slope * mx;
    *base = *base > 0 ? *base : 0;
}

static int host_transfers(const pm_runner_config *cfg, uint32_t pu_a, uint32_t pu_b,
                          uint32_t rounds, pm_host_costs *h)
{
    host_sizes(cfg->block, h);
    int rc = PM_OK;
    for (uint32_t i = 0; rc == PM_OK && i < h->nsizes; i++)
        rc = host_stream_run(cfg, pu_a, pu_b, rounds, h->words[i], &h->send[i], &h->recv[i],
                             &h->pinned);
    if (rc != PM_OK)
        return rc;
    host_fit(h, h->send, &h->send_base, &h->send_per_word);
    host_fit(h, h->recv, &h->recv_base, &h->recv_per_word);
    size_t bytes = (size_t)h->words[h->run_size] * 4u;
    bool pin = true;
    rc = runner_handoff_run(cfg, pu_a, pu_b, rounds, bytes, 0, &h->latency_idle.median,
                            &h->latency_idle.p99, &pin);
    h->pinned = h->pinned && pin;
    uint64_t busy = (uint64_t)(HOST_BUSY_NS * (cfg->turns_per_ns > 0 ? cfg->turns_per_ns : 1));
    if (rc == PM_OK)
        rc = runner_handoff_run(cfg, pu_a, pu_b, rounds, bytes, busy, &h->latency_busy.median,
                                &h->latency_busy.p99, &pin);
    h->pinned = h->pinned && pin;
    return rc == PM_OK ? host_crossing(cfg, pu_a, pu_b, rounds, h) : rc;
}

int pm_runner_host_costs(const pm_runner_config *cfg, uint32_t pu_a, uint32_t pu_b,
                         uint32_t rounds, pm_host_costs *out)
{
    memset(out, 0, sizeof *out);
    if (rounds < 10 || cfg->block < 1 || cfg->block > PM_KERNEL_MAX_BLOCK)
        return PM_EINVAL;
    out->pinned = cfg->topo != NULL;
    pm_runner_config own = *cfg;
    own.pace = NULL; /* the calibration graphs are the runner's own: never paced */
    int rc = host_dispatch(&own, pu_a, rounds, out);
    if (rc == PM_OK && pu_b != PM_NONE)
        rc = host_transfers(&own, pu_a, pu_b, rounds, out);
    if (cfg->topo)
        (void)pm_topo_bind_thread(cfg->topo, pu_a); /* the caller goes on from pu_a */
    return rc;
}

/* ---- the model with the host's costs ------------------------------------------- */

void pm_runner_host_comm(const pm_host_costs *h, double *latency_ns, double *send_ns,
                         double *recv_ns)
{
    if (h->nsizes == 0) {
        *latency_ns = *send_ns = *recv_ns = 0;
        return;
    }
    *send_ns = h->send[h->run_size].median;
    *recv_ns = h->recv[h->run_size].median;
    /* the crossing is send + wire + receive as the runner does them; the
     * model counts a token's latency from its producer's kernel end, while
     * the producer's core is still sending it, so only the receive comes off */
    double rest = h->crossing.median - *recv_ns;
    *latency_ns = rest > 0 ? rest : 0;
}

/* Whether some node is a sink; when none is, the runner keeps every
 * node's output (runner.h), so every node pays the sink's hash. */
static bool host_has_sink(const pm_graph *g)
{
    for (uint32_t v = 0; v < g->nnodes; v++)
        if (runner_is_end(g, v, true))
            return true;
    return false;
}

double pm_runner_host_node_ns(const pm_graph *g, const pm_host_costs *h, const double *node_ns,
                              uint32_t v)
{
    double t = node_ns[v] + h->dispatch.median;
    t += runner_is_end(g, v, false) ? h->ends_ns / 2 : 0;
    t += runner_is_end(g, v, true) || !host_has_sink(g) ? h->ends_ns / 2 : 0;
    return t;
}

int pm_runner_predict_host(const pm_graph *g, const pm_map *m, const double *node_ns,
                           const pm_host_costs *h, uint32_t fifo_cap, double *period_ns,
                           uint32_t *depth, pm_diag *diag)
{
    double *t = malloc((g->nnodes ? g->nnodes : 1) * sizeof *t), comm[3];
    if (!t)
        return PM_ENOMEM;
    for (uint32_t v = 0; v < g->nnodes; v++)
        t[v] = pm_runner_host_node_ns(g, h, node_ns, v);
    pm_runner_host_comm(h, &comm[0], &comm[1], &comm[2]);
    int rc = runner_predict_ns(g, m, t, comm, fifo_cap, period_ns, depth, diag);
    free(t);
    return rc;
}

void pm_runner_breakdown(const pm_graph *g, const pm_map *m, const double *node_ns,
                         const pm_host_costs *h, double period_ns, pm_runner_share *share)
{
    double lat, snd, rcv;
    pm_runner_host_comm(h, &lat, &snd, &rcv);
    for (uint32_t c = 0; c < m->ncores; c++)
        share[c] = (pm_runner_share){0, 0, 0, 0};
    for (uint32_t v = 0; v < g->nnodes; v++) {
        pm_runner_share *s = &share[m->core_of[v]];
        s->work += node_ns[v];
        s->dispatch += pm_runner_host_node_ns(g, h, node_ns, v) - node_ns[v];
    }
    for (uint32_t e = 0; e < g->nedges; e++) {
        uint32_t a = m->core_of[g->edges[e].src], b = m->core_of[g->edges[e].dst];
        if (a != b) {
            share[a].transfers += snd;
            share[b].transfers += rcv;
        }
    }
    for (uint32_t c = 0; c < m->ncores; c++) {
        double rest = period_ns - share[c].work - share[c].dispatch - share[c].transfers;
        share[c].waiting = rest > 0 ? rest : 0;
    }
}
