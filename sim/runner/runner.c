/*
 * runner.c - the real-core runner (runner.h): its entry points that need
 * no threads of its own, and what its files share.
 *
 * Here: the helpers every part uses (quantiles, the output hash, a node's
 * kernel), the trivial maps (serial, round robin), the prediction (the
 * simulator run with measured host times), and pm_runner_execute with the
 * statistics of its result (period, latency, busy share, node times).
 * Not here: the threads, channels and set-up of a run (runner_exec.c), the
 * measurements before a run: busy-loop calibration, node times, handoff
 * latency (runner_time.c).  No printing.
 */
#include "pacemap/runner.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "pacemap/order.h"

#include "runner_internal.h"

/* ---- small helpers --------------------------------------------------------- */

static int runner_cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return x < y ? -1 : x > y;
}

/* Nearest-rank quantile q in [0,1] of v[0..n) (sorts v). */
double runner_quantile(double *v, size_t n, double q)
{
    if (n == 0)
        return 0.0;
    qsort(v, n, sizeof *v, runner_cmp_double);
    size_t r = (size_t)ceil(q * (double)n);
    return v[r > 0 ? r - 1 : 0];
}

uint64_t runner_fnv(uint64_t h, const void *p, size_t n)
{
    const unsigned char *b = p;
    for (size_t i = 0; i < n; i++)
        h = (h ^ b[i]) * UINT64_C(0x100000001b3);
    return h;
}

/* FNV-1a taken a float's bits at a time instead of a byte: a quarter of
 * the multiplies in every sink firing, still a function of every bit. */
uint64_t runner_hash_block(uint64_t h, const float *p, uint32_t n)
{
    for (uint32_t i = 0; i < n; i++) {
        uint32_t w;
        memcpy(&w, &p[i], sizeof w);
        h = (h ^ w) * UINT64_C(0x100000001b3);
    }
    return h;
}

void pm_runner_config_default(pm_runner_config *c)
{
    memset(c, 0, sizeof *c);
    c->iterations = 1000;
    c->warmup = 100;
    c->block = PM_RUNNER_BLOCK;
    c->ns_per_cycle = 1.0;
    c->turns_per_ns = 1.0;
}

/* Spin turns for node v on map core `core`. */
static uint64_t runner_turns(const pm_graph *g, const pm_runner_config *cfg, uint32_t v,
                          uint32_t core)
{
    uint32_t cls = core < g->platform.ncores ? g->platform.core_class[core] : 0;
    int64_t cyc = pm_graph_cycles_on(g, v, cls);
    if (cyc < 0)
        cyc = pm_graph_min_cycles(g, v);
    double t = (double)(cyc < 0 ? 0 : cyc) * cfg->ns_per_cycle * cfg->turns_per_ns;
    return t >= 1.8e19 ? UINT64_C(18000000000000000000) : (uint64_t)llround(t);
}

int runner_kernel_for(const pm_graph *g, const pm_runner_config *cfg, uint32_t v,
                   uint32_t core, pm_kernel **k)
{
    const pm_node *n = &g->nodes[v];
    return pm_kernel_create(n->work, n->work_param, cfg->block,
                            n->work == PM_WORK_SPIN ? runner_turns(g, cfg, v, core) : 0, k);
}

/* ---- orders and trivial maps ----------------------------------------------- */

/* Kahn's algorithm over the zero-delay edges, smallest index first among
 * the ready nodes: the serial map and the dealt maps list nodes in it. */
static int runner_topo_order(const pm_graph *g, uint32_t *order)
{
    uint32_t done = 0;
    int rc = pm_order_zero_delay(g, PM_ORDER_SMALLEST, order, &done);
    return rc != PM_OK ? rc : done == g->nnodes ? PM_OK : PM_EZERODELAY;
}

int pm_runner_serial_map(const pm_graph *g, pm_map **out)
{
    *out = NULL;
    uint32_t *order = malloc((g->nnodes ? g->nnodes : 1) * sizeof *order);
    if (!order)
        return PM_ENOMEM;
    int rc = runner_topo_order(g, order);
    if (rc == PM_OK) {
        const uint32_t *lists[1] = {order};
        rc = pm_map_create(1, g->nnodes, lists, &g->nnodes, out);
    }
    free(order);
    return rc;
}

static int runner_deal(const pm_graph *g, uint32_t ncores, const uint32_t *order,
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

int pm_runner_round_robin_map(const pm_graph *g, uint32_t ncores, pm_map **out)
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
        rc = runner_topo_order(g, order);
    if (rc == PM_OK)
        rc = runner_deal(g, ncores, order, lists, counts);
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

int64_t runner_units(double ns)
{
    double u = ns * RUN_UNITS_PER_NS;
    return u <= 0 ? 0 : u >= (double)PM_MAX_VALUE ? PM_MAX_VALUE : (int64_t)llround(u);
}

int runner_predict_ns(const pm_graph *g, const pm_map *m, const double *node_ns,
                      const double *comm_ns, uint32_t fifo_cap, double *period_ns,
                      uint32_t *depth, pm_diag *diag)
{
    int64_t *t = malloc((g->nnodes ? g->nnodes : 1) * sizeof *t);
    if (!t)
        return PM_ENOMEM;
    for (uint32_t v = 0; v < g->nnodes; v++)
        t[v] = runner_units(node_ns[v]);
    /* the host's platform: point-to-point links that overlap freely, every
     * token the same size (a borrowed, read-only view) */
    pm_graph host = *g;
    host.platform.comm = (pm_comm){runner_units(comm_ns[0]), 0, runner_units(comm_ns[1]),
                                   runner_units(comm_ns[2])};
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

int pm_runner_predict(const pm_graph *g, const pm_map *m, const double *node_ns,
                   double handoff_ns, uint32_t fifo_cap, double *period_ns,
                   uint32_t *depth, pm_diag *diag)
{
    const double comm[3] = {handoff_ns, 0, 0};
    return runner_predict_ns(g, m, node_ns, comm, fifo_cap, period_ns, depth, diag);
}

/* ---- what a run gives -------------------------------------------------------- */

/* Completion time of iteration k over `set` nodes (all when set NULL). */
static int64_t runner_span(const runner_ctx *x, uint64_t k, const uint32_t *set, uint32_t nset,
                        bool first_start)
{
    uint32_t n = x->g->nnodes, cnt = set ? nset : n;
    int64_t best = first_start ? INT64_MAX : INT64_MIN;
    for (uint32_t i = 0; i < cnt; i++) {
        uint32_t v = set ? set[i] : i;
        int64_t t = first_start ? x->start[runner_rec(x, k, v)] : x->end[runner_rec(x, k, v)];
        best = first_start ? (t < best ? t : best) : (t > best ? t : best);
    }
    return cnt ? best : 0;
}

static void runner_periods(runner_ctx *x, double *tmp)
{
    pm_runner_result *r = x->r;
    uint32_t first = r->warmup > 0 ? r->warmup : 1u, cnt = 0;
    for (uint32_t k = first; k < x->total; k++)
        tmp[cnt++] = (double)(runner_span(x, k, NULL, 0, false) - runner_span(x, k - 1u, NULL, 0, false));
    if (cnt == 0)
        return;
    r->period_ns_mean = (double)(runner_span(x, x->total - 1u, NULL, 0, false) -
                                 runner_span(x, first - 1u, NULL, 0, false)) / cnt;
    r->period_ns_median = runner_quantile(tmp, cnt, 0.5);
    r->period_ns_p99 = runner_quantile(tmp, cnt, 0.99);
}

static void runner_latency(runner_ctx *x, double *tmp)
{
    const pm_graph *g = x->g;
    uint32_t *src = malloc((g->nnodes ? g->nnodes : 1) * sizeof *src), ns = 0;
    if (!src)
        return;
    for (uint32_t v = 0; v < g->nnodes; v++)
        if (runner_is_end(g, v, false))
            src[ns++] = v;
    uint32_t cnt = 0;
    for (uint32_t k = x->r->warmup; k < x->total; k++)
        tmp[cnt++] = (double)(runner_span(x, k, x->r->sinks, x->r->nsinks, false) -
                              runner_span(x, k, ns ? src : NULL, ns, true));
    free(src);
    x->r->latency_ns_median = runner_quantile(tmp, cnt, 0.5);
    x->r->latency_ns_p99 = runner_quantile(tmp, cnt, 0.99);
}

/* Length of [a, b) inside [from, to). */
static int64_t runner_clip(int64_t a, int64_t b, int64_t from, int64_t to)
{
    a = a > from ? a : from;
    b = b < to ? b : to;
    return b > a ? b - a : 0;
}

/* Busy and wait shares of the measured window per core.  A core's
 * kernels never overlap, so clipped to the window they sum to at most the
 * window; with cpu_time no more than the time the thread ran counts. */
static void runner_busy(runner_ctx *x)
{
    pm_runner_result *r = x->r;
    uint32_t w = r->warmup;
    int64_t from = w > 0 ? runner_span(x, w - 1u, NULL, 0, false) : runner_span(x, 0, NULL, 0, true);
    int64_t to = runner_span(x, x->total - 1u, NULL, 0, false);
    double window = (double)(to - from);
    for (uint32_t c = 0; c < r->ncores && window > 0; c++) {
        double busy = 0;
        for (uint64_t k = w; k < x->total; k++)
            for (uint32_t i = x->m->off[c]; i < x->m->off[c + 1]; i++) {
                size_t at = runner_rec(x, k, x->m->order[i]);
                busy += (double)runner_clip(x->start[at], x->end[at], from, to);
            }
        if (x->cfg->cpu_time && (double)x->th[c].cpu_ns < busy)
            busy = (double)x->th[c].cpu_ns;
        r->busy[c] = busy / window;
        /* waits of the measured iterations may begin before the window
         * opens: never more than the window left after the kernels */
        double wait = (double)x->th[c].wait_ns / window;
        r->wait[c] = wait < 1.0 - r->busy[c] ? wait : 1.0 - r->busy[c];
    }
}

static void runner_node_times(runner_ctx *x, double *tmp)
{
    uint32_t n = x->g->nnodes;
    for (uint32_t v = 0; v < n; v++) {
        uint32_t cnt = 0;
        for (uint64_t k = x->r->warmup; k < x->total; k++)
            tmp[cnt++] = (double)(x->end[runner_rec(x, k, v)] - x->start[runner_rec(x, k, v)]);
        x->r->node_ns[v] = runner_quantile(tmp, cnt, 0.5);
    }
}

static void runner_collect(runner_ctx *x)
{
    pm_runner_result *r = x->r;
    for (uint32_t c = 0; c < r->ncores; c++) {
        r->pinned[c] = x->th[c].pinned;
        r->order_errors += x->th[c].order_errors;
        r->waits[c] = x->th[c].wait;
    }
    for (uint32_t e = 0; e < r->nedges; e++)
        r->tokens[e] = x->chan[e].taken;
    for (uint32_t e = 0; e < r->nedges; e++)
        r->remaining[e] = x->chan[e].ring ? pm_ring_count(x->chan[e].ring) : x->chan[e].count;
    r->output_hash = UINT64_C(0xcbf29ce484222325);
    for (uint32_t s = 0; s < r->nsinks; s++)
        r->output_hash = runner_fnv(r->output_hash, &x->sink_hash[s * RUNNER_HASH_STRIDE],
                                    sizeof *x->sink_hash);
    if (r->stalled)
        return;
    double *tmp = malloc(x->total * sizeof *tmp);
    if (!tmp)
        return;
    runner_periods(x, tmp);
    runner_latency(x, tmp);
    runner_node_times(x, tmp);
    runner_busy(x);
    free(tmp);
}

/* ---- entry point -------------------------------------------------------------- */

/* Lags within PM_MAP_MAX_LAG, and no edge whose retimed delay (delay +
 * lag[dst] - lag[src], map.h) is negative: its consumer would need a token
 * its producer makes in a later round. */
static bool runner_lags_fit(const pm_graph *g, const pm_map *m)
{
    for (uint32_t v = 0; v < g->nnodes; v++)
        if (runner_lag(m, v) > PM_MAP_MAX_LAG)
            return false;
    for (uint32_t e = 0; e < g->nedges; e++) {
        const pm_edge *ed = &g->edges[e];
        if (ed->delay + (int64_t)runner_lag(m, ed->dst) - (int64_t)runner_lag(m, ed->src) < 0)
            return false;
    }
    return true;
}

/* Every node exactly once, each listed on the core core_of names. */
static bool runner_map_fits(const pm_graph *g, const pm_map *m)
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
    return ok && runner_lags_fit(g, m);
}

int pm_runner_execute(const pm_graph *g, const pm_map *m, const pm_runner_config *cfg,
                   pm_runner_result *out)
{
    memset(out, 0, sizeof *out);
    if (!pm_graph_is_single_rate(g))
        return PM_EUNSUPPORTED;
    if (!g->finalized || cfg->iterations < 1 || cfg->warmup > UINT32_MAX - cfg->iterations ||
        !runner_map_fits(g, m))
        return PM_EINVAL;
    runner_ctx x = {.g = g, .m = m, .cfg = cfg, .total = cfg->warmup + cfg->iterations,
                    .r = out};
    int rc = runner_setup(&x);
    if (rc == PM_OK)
        rc = runner_threads(&x);
    if (rc == PM_OK) {
        runner_collect(&x);
        if (out->stalled)
            rc = PM_EDEADLOCK;
        else if (cfg->pace)
            rc = runner_paced_collect(&x);
    } else {
        pm_runner_result_free(out);
    }
    runner_teardown(&x);
    return rc;
}
