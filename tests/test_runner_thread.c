/*
 * test_runner_thread.c - the real-core runner on small graphs with real
 * kernels, two threads at most (holds on a 2-core CI machine):
 *   - sink outputs of a two-core run are bit-identical to a single-thread
 *     run of the same graph, every token is delivered once and in order;
 *   - an FIR stage fed by the test signal gives the direct convolution
 *     y[n] = sum_k h[k] x[n-k] (Oppenheim & Schafer, Discrete-Time Signal
 *     Processing, 3rd ed. 2010, eq. 2.49), computed here in double;
 *   - the same holds on every shipped scenario with real kernels
 *     (the .pace files in scenarios/ naming work=fir/biquad/fft), two cores;
 *   - the watchdog stops a deadlocked map and names who waits on what;
 *   - the prediction matches periods derived by hand from docs/simulation.md
 *     (self-timed execution; Sriram & Bhattacharyya, Embedded
 *     Multiprocessors, 2000: period = maximum cycle ratio of the IPC graph).
 * Timings are printed, never asserted.  `make tsan` runs this file.
 */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <cmocka.h>

#include <math.h>
#include <stdio.h>
#include <string.h>

#include <dirent.h>
#include <stdlib.h>

#include "pacemap/kernels.h"
#include "pacemap/reader.h"
#include "pacemap/runner.h"
#include "pacemap/sched.h"
#include "pacemap/topo.h"

static uint32_t node(pm_graph *g, const char *name, int64_t cycles, pm_work_kind w,
                     uint32_t param)
{
    uint32_t id;
    assert_int_equal(pm_graph_add_node(g, name, strlen(name), cycles, &id), PM_OK);
    g->nodes[id].work = w;
    g->nodes[id].work_param = param;
    return id;
}

static void edge(pm_graph *g, uint32_t a, uint32_t b, int64_t delay)
{
    pm_edge e = pm_graph_edge_default(a, b);
    e.delay = delay;
    assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
}

static void set_procs(pm_graph *g, uint32_t p)
{
    assert_int_equal(pm_graph_set_cores(g, 1, NULL, &p), PM_OK);
}

static pm_map *map2(const uint32_t *c0, uint32_t n0, const uint32_t *c1, uint32_t n1,
                    uint32_t nnodes)
{
    const uint32_t *lists[2] = {c0, c1};
    const uint32_t counts[2] = {n0, n1};
    pm_map *m = NULL;
    assert_int_equal(pm_map_create(2, nnodes, lists, counts, &m), PM_OK);
    return m;
}

static void config(pm_runner_config *c, uint32_t iters)
{
    pm_runner_config_default(c);
    c->iterations = iters;
    c->warmup = 5;
    c->block = 32;
    c->yield = true; /* the CI machine is shared: do not starve other work */
    c->record_outputs = true;
    c->watchdog_ms = 20000;
}

/* src(self-loop) -> fir -> biquad -> fft -> out, with feedback fft -> biquad
 * over two delays, split over two cores so tokens cross both ways. */
static pm_graph *kernel_graph(void)
{
    pm_graph *g = pm_graph_create("kernels");
    assert_non_null(g);
    set_procs(g, 2);
    uint32_t s = node(g, "src", 50, PM_WORK_SPIN, 0);
    uint32_t f = node(g, "fir", 0, PM_WORK_FIR, 24);
    uint32_t b = node(g, "bq", 0, PM_WORK_BIQUAD, 3);
    uint32_t t = node(g, "fft", 0, PM_WORK_FFT, 64);
    uint32_t o = node(g, "out", 200, PM_WORK_SPIN, 0);
    edge(g, s, s, 1);
    edge(g, s, f, 0);
    edge(g, f, b, 0);
    edge(g, b, t, 0);
    edge(g, t, b, 2);
    edge(g, t, o, 0);
    edge(g, f, o, 1);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    return g;
}

/* The library fills a caller-owned result; these tests keep theirs on the
 * heap so that helpers can hand them back. */
static void result_drop(pm_runner_result *r)
{
    pm_runner_result_free(r);
    free(r);
}

static void check_delivery(const pm_graph *g, const pm_runner_result *r)
{
    uint64_t total = (uint64_t)r->warmup + r->iterations;
    assert_int_equal(r->order_errors, 0);
    for (uint32_t e = 0; e < g->nedges; e++) {
        assert_int_equal(r->tokens[e], total);                 /* each once */
        assert_int_equal(r->remaining[e], g->edges[e].delay);  /* none lost */
    }
}

static pm_runner_result *run_ok(const pm_graph *g, const pm_map *m, const pm_runner_config *c)
{
    pm_runner_result *r = calloc(1, sizeof *r);
    assert_int_equal(pm_runner_execute(g, m, c, r), PM_OK);
    assert_non_null(r);
    assert_false(r->stalled);
    check_delivery(g, r);
    return r;
}

static void test_two_cores_match_one(void **state)
{
    (void)state;
    pm_graph *g = kernel_graph();
    const uint32_t c0[] = {0, 2, 4}, c1[] = {1, 3};
    pm_map *m = map2(c0, 3, c1, 2, g->nnodes), *serial = NULL;
    assert_int_equal(pm_runner_serial_map(g, &serial), PM_OK);
    pm_topo *t = NULL;
    pm_topo_choice ch = {0};
    pm_runner_config c;
    config(&c, 150);
    if (pm_topo_create(NULL, &t) == PM_OK &&
        pm_topo_choose(t, 2, NULL, 0, true, &ch, NULL) == PM_OK) {
        c.topo = t;
        c.pu = ch.pu;
    }
    pm_runner_result *par = run_ok(g, m, &c);
    c.topo = NULL;
    pm_runner_result *one = run_ok(g, serial, &c);
    assert_int_equal(par->nsinks, 1);
    assert_int_equal(one->nsinks, 1);
    assert_int_equal(par->sinks[0], 4);
    size_t n = (size_t)par->nsinks * (c.warmup + c.iterations) * c.block;
    assert_memory_equal(par->outputs, one->outputs, n * sizeof(float));
    assert_true(par->output_hash == one->output_hash);
    double energy = 0;
    for (size_t i = 0; i < n; i++)
        energy += fabs(par->outputs[i]);
    printf("# energy %g\n", energy);
    assert_true(energy > 1.0); /* real samples went through, not zeros */
    printf("# 2 cores: period median %.0f ns p99 %.0f ns, busy %.2f %.2f, pinned %d %d\n",
           par->period_ns_median, par->period_ns_p99, par->busy[0], par->busy[1],
           par->pinned[0], par->pinned[1]);
    result_drop(par);
    result_drop(one);
    pm_topo_choice_free(&ch);
    pm_topo_destroy(t);
    pm_map_destroy(m);
    pm_map_destroy(serial);
    pm_graph_destroy(g);
}

/* src -> fir:8 on another core; the sink output is the direct convolution
 * of test stream 0 (the source's node index) with the taps. */
static void test_fir_stage_is_convolution(void **state)
{
    (void)state;
    pm_graph *g = pm_graph_create("conv");
    set_procs(g, 2);
    uint32_t s = node(g, "src", 0, PM_WORK_SPIN, 0);
    uint32_t f = node(g, "fir", 0, PM_WORK_FIR, 8);
    edge(g, s, f, 0);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    const uint32_t c0[] = {s}, c1[] = {f};
    pm_map *m = map2(c0, 1, c1, 1, 2);
    pm_runner_config c;
    config(&c, 20);
    pm_runner_result *r = run_ok(g, m, &c);
    uint32_t total = c.warmup + c.iterations;
    for (uint32_t n = 0; n < total * c.block; n++) {
        double y = 0;
        for (uint32_t k = 0; k < 8 && k <= n; k++)
            y += (double)pm_kernel_fir_tap(8, k) * pm_kernel_signal_sample(s, n - k);
        assert_true(fabs(r->outputs[n] - y) < 1e-6);
    }
    result_drop(r);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

static bool has_kernels(const pm_graph *g)
{
    for (uint32_t v = 0; v < g->nnodes; v++)
        if (g->nodes[v].work != PM_WORK_SPIN)
            return true;
    return false;
}

/* One scenario: list-scheduled onto at most two cores, run, compared with
 * the single-thread run bit for bit. */
static void check_scenario(const char *path)
{
    pm_graph *g = NULL;
    pm_diag d;
    assert_int_equal(pm_reader_read_file(path, &g, &d), PM_OK);
    if (!has_kernels(g) || !pm_graph_is_single_rate(g) || g->platform.classes_named) {
        pm_graph_destroy(g);
        return;
    }
    if (g->platform.ncores > 2)
        assert_int_equal(pm_graph_set_procs_override(g, 2, &d), PM_OK);
    pm_map *m = NULL, *serial = NULL;
    assert_int_equal(pm_sched_list(g, NULL, NULL, &m, &d), PM_OK);
    assert_int_equal(pm_runner_serial_map(g, &serial), PM_OK);
    pm_runner_config c;
    config(&c, 12);
    c.ns_per_cycle = 0.05; /* keep spin nodes short: only outputs are checked */
    pm_runner_result *par = run_ok(g, m, &c), *one = run_ok(g, serial, &c);
    size_t n = (size_t)par->nsinks * (c.warmup + c.iterations) * c.block;
    assert_int_equal(par->nsinks, one->nsinks);
    assert_memory_equal(par->outputs, one->outputs, n * sizeof(float));
    printf("# %s: %u nodes on %u cores, sink outputs bit-identical\n", path, g->nnodes,
           m->ncores);
    result_drop(par);
    result_drop(one);
    pm_map_destroy(m);
    pm_map_destroy(serial);
    pm_graph_destroy(g);
}

static void test_scenarios_match_one_thread(void **state)
{
    (void)state;
    DIR *dir = opendir("scenarios");
    if (!dir) {
        printf("# no scenarios/ folder here: skipped\n");
        skip();
    }
    int seen = 0;
    for (struct dirent *e; (e = readdir(dir));) {
        size_t len = strlen(e->d_name);
        if (len < 6 || strcmp(e->d_name + len - 5, ".pace") != 0)
            continue;
        char path[512];
        snprintf(path, sizeof path, "scenarios/%s", e->d_name);
        check_scenario(path);
        seen++;
    }
    closedir(dir);
    assert_true(seen > 0);
}

/* core 0 runs A then B, core 1 runs C then D; B -> C and D -> A without
 * delay: A waits for D, which waits behind C, which waits for B. */
static void test_watchdog_names_waits(void **state)
{
    (void)state;
    pm_graph *g = pm_graph_create("stuck");
    set_procs(g, 2);
    uint32_t a = node(g, "A", 10, PM_WORK_SPIN, 0), b = node(g, "B", 10, PM_WORK_SPIN, 0);
    uint32_t cc = node(g, "C", 10, PM_WORK_SPIN, 0), d = node(g, "D", 10, PM_WORK_SPIN, 0);
    edge(g, b, cc, 0); /* edge 0 */
    edge(g, d, a, 0);  /* edge 1 */
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    const uint32_t c0[] = {a, b}, c1[] = {cc, d};
    pm_map *m = map2(c0, 2, c1, 2, 4);
    double t[4] = {1, 1, 1, 1}, p;
    assert_int_equal(pm_runner_predict(g, m, t, 0, 0, &p, NULL, NULL), PM_EDEADLOCK);
    pm_runner_config c;
    config(&c, 10);
    c.watchdog_ms = 100;
    pm_runner_result *r = calloc(1, sizeof *r);
    assert_int_equal(pm_runner_execute(g, m, &c, r), PM_EDEADLOCK);
    assert_non_null(r);
    assert_true(r->stalled);
    assert_int_equal(r->waits[0].node, a);
    assert_int_equal(r->waits[0].edge, 1);
    assert_false(r->waits[0].for_space);
    assert_int_equal(r->waits[1].node, cc);
    assert_int_equal(r->waits[1].edge, 0);
    assert_int_equal(r->waits[0].iteration, 0);
    result_drop(r);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

/* One core, consumer listed before its producer: stops at once. */
static void test_same_core_wait_stops(void **state)
{
    (void)state;
    pm_graph *g = pm_graph_create("order");
    uint32_t a = node(g, "A", 1, PM_WORK_SPIN, 0), b = node(g, "B", 1, PM_WORK_SPIN, 0);
    edge(g, a, b, 0);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    const uint32_t *lists[1] = {(const uint32_t[]){b, a}};
    uint32_t cnt = 2;
    pm_map *m = NULL;
    assert_int_equal(pm_map_create(1, 2, lists, &cnt, &m), PM_OK);
    pm_runner_config c;
    config(&c, 10);
    pm_runner_result *r = calloc(1, sizeof *r);
    assert_int_equal(pm_runner_execute(g, m, &c, r), PM_EDEADLOCK);
    assert_int_equal(r->waits[0].node, b);
    assert_int_equal(r->waits[0].edge, 0);
    result_drop(r);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

/* Hand-derived periods (docs/simulation.md): one core runs its nodes back to back;
 * a feed-forward split runs at the slower core (B + C = 350); a loop A -> B -> A with one
 * delay across cores takes tA + tB + 2 handoffs per iteration. */
static void test_predict_hand_cases(void **state)
{
    (void)state;
    pm_graph *g = pm_graph_create("pred");
    set_procs(g, 2);
    uint32_t a = node(g, "A", 1, PM_WORK_SPIN, 0), b = node(g, "B", 1, PM_WORK_SPIN, 0);
    uint32_t cc = node(g, "C", 1, PM_WORK_SPIN, 0);
    edge(g, a, b, 0);
    edge(g, b, cc, 0);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    double t[3] = {100, 300, 50}, p;
    pm_map *one = NULL;
    assert_int_equal(pm_runner_serial_map(g, &one), PM_OK);
    assert_int_equal(pm_runner_predict(g, one, t, 1000, 0, &p, NULL, NULL), PM_OK);
    assert_true(fabs(p - 450) < 1e-6);
    const uint32_t c0[] = {a}, c1[] = {b, cc};
    pm_map *two = map2(c0, 1, c1, 2, 3);
    assert_int_equal(pm_runner_predict(g, two, t, 20, 0, &p, NULL, NULL), PM_OK);
    assert_true(fabs(p - 350) < 1e-6);
    pm_map_destroy(one);
    pm_map_destroy(two);
    pm_graph_destroy(g);

    g = pm_graph_create("loop");
    set_procs(g, 2);
    a = node(g, "A", 1, PM_WORK_SPIN, 0);
    b = node(g, "B", 1, PM_WORK_SPIN, 0);
    edge(g, a, b, 0);
    edge(g, b, a, 1);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    const uint32_t d0[] = {a}, d1[] = {b};
    pm_map *m = map2(d0, 1, d1, 1, 2);
    double u[2] = {100, 200};
    assert_int_equal(pm_runner_predict(g, m, u, 30, 0, &p, NULL, NULL), PM_OK);
    assert_true(fabs(p - 360) < 1e-6);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

static void test_maps_and_refusals(void **state)
{
    (void)state;
    pm_graph *g = pm_graph_create("maps");
    set_procs(g, 2);
    uint32_t a = node(g, "A", 1, PM_WORK_SPIN, 0), b = node(g, "B", 1, PM_WORK_SPIN, 0);
    uint32_t cc = node(g, "C", 1, PM_WORK_SPIN, 0);
    g->nodes[a].pin_core = 1;
    edge(g, cc, b, 0);
    edge(g, b, a, 0);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    pm_map *m = NULL;
    assert_int_equal(pm_runner_round_robin_map(g, 2, &m), PM_OK);
    assert_int_equal(m->core_of[a], 1);                  /* pin honoured */
    assert_int_equal(pm_map_check(m, g, NULL), PM_OK);
    pm_map_destroy(m);
    assert_int_equal(pm_runner_serial_map(g, &m), PM_OK);
    assert_int_equal(m->order[0], cc);                   /* topological */
    assert_int_equal(m->order[2], a);
    pm_map_destroy(m);
    pm_graph_destroy(g);

    g = pm_graph_create("multirate");
    a = node(g, "A", 1, PM_WORK_SPIN, 0);
    b = node(g, "B", 1, PM_WORK_SPIN, 0);
    pm_edge e = pm_graph_edge_default(a, b);
    e.produce = 2;
    assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    assert_int_equal(pm_runner_serial_map(g, &m), PM_OK);
    pm_runner_config c;
    config(&c, 5);
    pm_runner_result *r = calloc(1, sizeof *r);
    assert_int_equal(pm_runner_execute(g, m, &c, r), PM_EUNSUPPORTED);
    assert_null(r->busy); /* nothing was allocated */
    result_drop(r);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

static void test_measurements_run(void **state)
{
    (void)state;
    double tpn = 0, med = 0, p99 = 0;
    bool pinned = false;
    assert_int_equal(pm_runner_calibrate(&tpn), PM_OK);
    assert_true(tpn > 0);
    pm_runner_config c;
    config(&c, 1);
    assert_int_equal(pm_runner_handoff(&c, 0, 0, 200, &med, &p99, &pinned), PM_OK);
    assert_true(med > 0 && p99 >= med);
    pm_graph *g = kernel_graph();
    pm_map *m = NULL;
    assert_int_equal(pm_runner_serial_map(g, &m), PM_OK);
    double ns[5];
    c.turns_per_ns = tpn;
    assert_int_equal(pm_runner_node_times(g, m, &c, 5, ns), PM_OK);
    for (int v = 0; v < 5; v++)
        assert_true(ns[v] > 0);
    printf("# %.3f spin turns/ns; handoff median %.0f ns p99 %.0f ns; "
           "fir:24 %.0f ns, fft:64 %.0f ns\n", tpn, med, p99, ns[1], ns[3]);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_two_cores_match_one),
        cmocka_unit_test(test_fir_stage_is_convolution),
        cmocka_unit_test(test_scenarios_match_one_thread),
        cmocka_unit_test(test_watchdog_names_waits),
        cmocka_unit_test(test_same_core_wait_stops),
        cmocka_unit_test(test_predict_hand_cases),
        cmocka_unit_test(test_maps_and_refusals),
        cmocka_unit_test(test_measurements_run),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
