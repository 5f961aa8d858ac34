/*
 * bench_runner.c - benchmark of the real-core runner (run by
 * tests/bench/bench_run.sh): handoff latency between two pinned threads,
 * and measured against predicted period on invented graphs whose nodes
 * take at least 10 µs.  run/alone is the mean over nodes of (median firing
 * time in the run) / (median time alone): above 1 the nodes themselves
 * ran slower with all cores busy, rather than waiting longer.  meas/post
 * divides the measured median by the prediction made again from the
 * in-run firing times: the model's own error once node slow-down is out.
 * Graphs are built with the pm_graph API so the bench needs no scenario
 * files.  Prints one aligned table; never fails on
 * timing (exit 1 only when something cannot run or outputs differ).
 *
 * usage: bench_runner [ITERATIONS]
 */
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

static int bench_one(bench b, pm_runner_config *cfg, double handoff)
{
    double *ns = calloc(b.g->nnodes, sizeof *ns), pred = 0, lo = 1e300;
    pm_runner_result rs = {0}, os = {0}, *r = &rs, *one = &os;
    pm_map *serial = NULL;
    int rc = pm_runner_node_times(b.g, b.m, cfg, 15, ns);
    if (rc == PM_OK)
        rc = pm_runner_predict(b.g, b.m, ns, handoff, 0, &pred, NULL, NULL);
    if (rc == PM_OK)
        rc = pm_runner_execute(b.g, b.m, cfg, r);
    if (rc == PM_OK && (rc = pm_runner_serial_map(b.g, &serial)) == PM_OK)
        rc = pm_runner_execute(b.g, serial, cfg, one);
    double slow = 0, post = 0;
    if (rc == PM_OK &&
        pm_runner_predict(b.g, b.m, r->node_ns, handoff, 0, &post, NULL, NULL) != PM_OK)
        post = 0;
    for (uint32_t v = 0; v < b.g->nnodes; v++) {
        lo = ns[v] < lo ? ns[v] : lo;
        slow += rc == PM_OK ? r->node_ns[v] / ns[v] / b.g->nnodes : 0;
    }
    if (rc == PM_OK)
        printf("%-24s %8.1f %9.1f %9.1f %9.1f %9.4f %9.4f %9.4f  %s\n", b.name, lo / 1000,
               pred / 1000, r->period_ns_median / 1000, r->period_ns_p99 / 1000,
               r->period_ns_median / pred, slow, r->period_ns_median / post,
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
    double med, p99;
    bool pinned;
    if (pm_runner_calibrate(&cfg.turns_per_ns) != PM_OK ||
        pm_runner_handoff(&cfg, ch.pu[0], ch.pu[1], 20000, &med, &p99, &pinned) != PM_OK)
        return 1;
    printf("PUs: %s\nspin: %.3f turns/ns; handoff PU %u -> PU %u (block %u floats): "
           "median %.0f ns, p99 %.0f ns, %s\n", ch.summary, cfg.turns_per_ns, ch.pu[0],
           ch.pu[1], cfg.block, med, p99, pinned ? "pinned" : "NOT pinned");
    printf("iterations %u after %u warm-up; times in us\n", cfg.iterations, cfg.warmup);
    printf("%-24s %8s %9s %9s %9s %9s %9s %9s  %s\n", "graph", "min node", "predicted",
           "median", "p99", "meas/pred", "run/alone", "meas/post", "outputs");
    int bad = bench_one(pipeline(), &cfg, med) | bench_one(loop(), &cfg, med) |
              bench_one(kernels(), &cfg, med);
    pm_topo_choice_free(&ch);
    pm_topo_destroy(t);
    return bad;
}
