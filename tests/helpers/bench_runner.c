/*
 * bench_runner.c - benchmark of the real-core runner (run by
 * tests/bench/bench_run.sh): the runner's host costs (dispatch, send and
 * receive per token, handoff idle and busy), and measured against
 * predicted period on invented graphs: three with nodes of at least 10 µs
 * and random ones whose node times are drawn log-uniformly from 100 ns to
 * 100 µs.  "predicted" adds the host costs to the node times (what `run`
 * prints); "bare" is the older model, node times alone and the handoff as
 * latency.  run/alone is the mean over nodes of (median kernel time in the
 * run) / (median time alone): above 1 the kernels themselves ran slower
 * with all cores busy.  meas/post divides the measured median by the
 * prediction made again from the in-run kernel times.
 * Graphs are built with the pm_graph API so the bench needs no scenario
 * files.  Prints one aligned table; never fails on
 * timing (exit 1 only when something cannot run or outputs differ).
 *
 * usage: bench_runner [ITERATIONS]
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "pacemap/runner.h"
#include "pacemap/topo.h"

typedef struct bench {
    pm_graph *g;
    pm_map *m;
    const char *name;
} bench;

static uint32_t add(pm_graph *g, const char *name, int64_t cycles, pm_work_kind w,
                    uint32_t param)
{
    uint32_t id = 0;
    if (pm_graph_add_node(g, name, strlen(name), cycles, &id) != PM_OK)
        exit(1);
    g->nodes[id].work = w;
    g->nodes[id].work_param = param;
    return id;
}

static void connect(pm_graph *g, uint32_t a, uint32_t b, int64_t delay)
{
    pm_edge e = pm_graph_edge_default(a, b);
    e.delay = delay;
    if (pm_graph_add_edge(g, &e, NULL) != PM_OK)
        exit(1);
}

static pm_graph *two_core_graph(void)
{
    pm_graph *g = pm_graph_create("bench");
    uint32_t two = 2;
    if (!g || pm_graph_set_cores(g, 1, NULL, &two) != PM_OK)
        exit(1);
    return g;
}

static pm_map *split(const pm_graph *g, const uint32_t *c0, uint32_t n0, const uint32_t *c1,
                     uint32_t n1)
{
    const uint32_t *lists[2] = {c0, c1};
    const uint32_t counts[2] = {n0, n1};
    pm_map *m = NULL;
    if (pm_map_create(2, g->nnodes, lists, counts, &m) != PM_OK)
        exit(1);
    return m;
}

/* Four 20 µs stages, two per core: period 40 µs. */
static bench pipeline(void)
{
    pm_graph *g = two_core_graph();
    uint32_t a = add(g, "a", 20000, PM_WORK_SPIN, 0), b = add(g, "b", 20000, PM_WORK_SPIN, 0);
    uint32_t c = add(g, "c", 20000, PM_WORK_SPIN, 0), d = add(g, "d", 20000, PM_WORK_SPIN, 0);
    connect(g, a, b, 0);
    connect(g, b, c, 0);
    connect(g, c, d, 0);
    pm_graph_finalize(g);
    return (bench){g, split(g, (uint32_t[]){a, b}, 2, (uint32_t[]){c, d}, 2), "pipeline 4x20us"};
}

/* A loop across the cores, 20 + 30 µs over two delays, with a 30 µs
 * stage: the loop (25 µs + handoff) and core 1 (30 + 15 µs) compete. */
static bench loop(void)
{
    pm_graph *g = two_core_graph();
    uint32_t a = add(g, "a", 20000, PM_WORK_SPIN, 0), b = add(g, "b", 30000, PM_WORK_SPIN, 0);
    uint32_t c = add(g, "c", 15000, PM_WORK_SPIN, 0);
    connect(g, a, b, 0);
    connect(g, b, a, 2);
    connect(g, b, c, 0);
    pm_graph_finalize(g);
    return (bench){g, split(g, (uint32_t[]){a}, 1, (uint32_t[]){b, c}, 2), "loop 2 delays"};
}

/* Real kernels: source, FIR, FFT, biquad cascade with feedback, sink. */
static bench kernels(void)
{
    pm_graph *g = two_core_graph();
    uint32_t s = add(g, "src", 10000, PM_WORK_SPIN, 0);
    uint32_t f = add(g, "fir", 0, PM_WORK_FIR, 384);
    uint32_t t = add(g, "fft", 0, PM_WORK_FFT, 2048);
    uint32_t q = add(g, "bq", 0, PM_WORK_BIQUAD, 96);
    uint32_t o = add(g, "out", 10000, PM_WORK_SPIN, 0);
    connect(g, s, f, 0);
    connect(g, f, t, 0);
    connect(g, t, q, 0);
    connect(g, q, q, 1);
    connect(g, q, o, 0);
    connect(g, o, f, 3);
    pm_graph_finalize(g);
    return (bench){g, split(g, (uint32_t[]){s, f, o}, 3, (uint32_t[]){t, q}, 2),
                   "kernels fir/fft/biquad"};
}

/* A random graph of n nodes, node v taking 100 ns * 1000^u (u uniform in
 * [0,1)): a chain with forward skips and one loop back over two delays,
 * dealt round robin to two cores.  A 64-bit LCG (Knuth's MMIX constants)
 * so every run of the bench gets the same graphs. */
static bench random_graph(uint64_t seed, uint32_t n, char *name, size_t len)
{
    pm_graph *g = two_core_graph();
    uint64_t x = seed;
    for (uint32_t v = 0; v < n; v++) {
        x = x * 6364136223846793005u + 1442695040888963407u;
        double u = (double)(x >> 11) / 9007199254740992.0;
        char nm[16];
        snprintf(nm, sizeof nm, "r%u", v);
        add(g, nm, (int64_t)(100.0 * pow(1000.0, u)), PM_WORK_SPIN, 0);
        if (v > 0)
            connect(g, v - 1, v, 0);
        if (v > 1 && (x >> 40) % 3 == 0)
            connect(g, v - 2, v, 0);
    }
    connect(g, n - 1, n / 2, 2);
    pm_graph_finalize(g);
    pm_map *m = NULL;
    if (pm_runner_round_robin_map(g, 2, &m) != PM_OK)
        exit(1);
    snprintf(name, len, "random %u nodes #%llu", n, (unsigned long long)seed);
    return (bench){g, m, name};
}

static int bench_one(bench b, pm_runner_config *cfg, const pm_host_costs *h)
{
    double handoff = h->latency_idle.median, bare = 0;
    double *ns = calloc(b.g->nnodes, sizeof *ns), pred = 0, lo = 1e300;
    pm_runner_result rs = {0}, os = {0}, *r = &rs, *one = &os;
    pm_map *serial = NULL;
    int rc = pm_runner_node_times(b.g, b.m, cfg, 15, ns);
    if (rc == PM_OK)
        rc = pm_runner_predict_host(b.g, b.m, ns, h, 0, &pred, NULL, NULL);
    if (rc == PM_OK)
        rc = pm_runner_predict(b.g, b.m, ns, handoff, 0, &bare, NULL, NULL);
    if (rc == PM_OK)
        rc = pm_runner_execute(b.g, b.m, cfg, r);
    if (rc == PM_OK && (rc = pm_runner_serial_map(b.g, &serial)) == PM_OK)
        rc = pm_runner_execute(b.g, serial, cfg, one);
    double slow = 0, post = 0;
    if (rc == PM_OK &&
        pm_runner_predict_host(b.g, b.m, r->node_ns, h, 0, &post, NULL, NULL) != PM_OK)
        post = 0;
    for (uint32_t v = 0; v < b.g->nnodes; v++) {
        lo = ns[v] < lo ? ns[v] : lo;
        slow += rc == PM_OK ? r->node_ns[v] / ns[v] / b.g->nnodes : 0;
    }
    if (rc == PM_OK)
        printf("%-24s %8.2f %9.2f %9.2f %9.2f %9.4f %9.4f %9.4f %9.4f  %s\n", b.name,
               lo / 1000, pred / 1000, r->period_ns_median / 1000, r->period_ns_p99 / 1000,
               r->period_ns_median / pred, r->period_ns_median / bare, slow,
               r->period_ns_median / post,
               one->output_hash == r->output_hash && !r->order_errors ? "same" : "DIFFER");
    else
        printf("%-24s failed: %s\n", b.name, pm_error_name(rc));
    if (rc == PM_OK && getenv("PM_BENCH_BUSY"))
        printf("  busy %.4f %.4f, mean period %.1f us\n", r->busy[0], r->busy[1],
               r->period_ns_mean / 1000);
    int bad = rc != PM_OK || one->output_hash != r->output_hash;
    pm_runner_result_free(r);
    pm_runner_result_free(one);
    pm_map_destroy(serial);
    pm_map_destroy(b.m);
    pm_graph_destroy(b.g);
    free(ns);
    return bad;
}

int main(int argc, char **argv)
{
    pm_runner_config cfg;
    pm_runner_config_default(&cfg);
    cfg.iterations = argc > 1 ? (uint32_t)atoi(argv[1]) : 2000u;
    cfg.warmup = cfg.iterations / 10;
    pm_topo *t = NULL;
    pm_topo_choice ch;
    if (pm_topo_create(NULL, &t) != PM_OK || pm_topo_choose(t, 2, NULL, 0, true, &ch, NULL))
        return 1;
    cfg.topo = t;
    cfg.pu = ch.pu;
    cfg.yield = ch.shared;
    pm_host_costs h;
    if (pm_runner_calibrate(&cfg.turns_per_ns) != PM_OK ||
        pm_runner_host_costs(&cfg, ch.pu[0], ch.pu[1], 5000, &h) != PM_OK)
        return 1;
    printf("PUs: %s\nspin: %.3f turns/ns; %s\n", ch.summary, cfg.turns_per_ns,
           h.pinned ? "pinned" : "NOT pinned");
    printf("host costs, ns (median / p99): dispatch %.1f / %.1f per firing, source+sink %.1f; "
           "handoff idle %.0f / %.0f, busy %.0f / %.0f\n", h.dispatch.median, h.dispatch.p99,
           h.ends_ns, h.latency_idle.median, h.latency_idle.p99, h.latency_busy.median,
           h.latency_busy.p99);
    for (uint32_t i = 0; i < h.nsizes; i++)
        printf("  token of %4u words: send %6.1f / %6.1f, recv %6.1f / %6.1f%s\n", h.words[i],
               h.send[i].median, h.send[i].p99, h.recv[i].median, h.recv[i].p99,
               i == h.run_size ? "  (the runs below)" : "");
    printf("iterations %u after %u warm-up; times in us\n", cfg.iterations, cfg.warmup);
    printf("%-24s %8s %9s %9s %9s %9s %9s %9s %9s  %s\n", "graph", "min node", "predicted",
           "median", "p99", "meas/pred", "meas/bare", "run/alone", "meas/post", "outputs");
    int bad = bench_one(pipeline(), &cfg, &h) | bench_one(loop(), &cfg, &h) |
              bench_one(kernels(), &cfg, &h);
    char names[4][48];
    for (uint32_t i = 0; i < 4; i++)
        bad |= bench_one(random_graph(i + 1, 6 + 2 * i, names[i], sizeof names[i]), &cfg, &h);
    pm_topo_choice_free(&ch);
    pm_topo_destroy(t);
    return bad;
}
