/*
 * test_runner_lags_thread.c - the real-core runner on maps with lags
 * (map.h: round r of a core runs node v's iteration r - lag[v]), two
 * threads at most:
 *   - a two-core chain whose second core lists the consumer before its
 *     producer (only a lag allows that) runs, every token is delivered
 *     once and in order, and the sink outputs are bit-identical to the
 *     single-threaded run; without the lags the same order stops at once;
 *   - a lag far beyond the asked ring size cannot deadlock on ring room,
 *     because the runner raises every ring to delay + lag difference + 1;
 *   - a loop across cores with delays and lags runs and matches;
 *   - lags that leave an edge with a negative retimed delay are refused;
 *   - the prediction with lags, when the simulator takes them, is the
 *     period derived by hand.
 * Timings are printed, never asserted.  `make tsan` runs this file.
 */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <cmocka.h>

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "pacemap/runner.h"

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

static pm_graph *graph2(const char *name)
{
    pm_graph *g = pm_graph_create(name);
    assert_non_null(g);
    uint32_t p = 2;
    assert_int_equal(pm_graph_set_cores(g, 1, NULL, &p), PM_OK);
    return g;
}

/* Two cores from two lists, then the lags (nnodes entries, NULL = none). */
static pm_map *map2(const uint32_t *c0, uint32_t n0, const uint32_t *c1, uint32_t n1,
                    uint32_t nnodes, const uint32_t *lag)
{
    const uint32_t *lists[2] = {c0, c1};
    const uint32_t counts[2] = {n0, n1};
    pm_map *m = NULL;
    assert_int_equal(pm_map_create(2, nnodes, lists, counts, &m), PM_OK);
    for (uint32_t v = 0; lag && v < nnodes; v++)
        m->lag[v] = lag[v];
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

/* Each token once and in order: every edge carried warm-up + iterations
 * tokens, none arrived with a wrong iteration number, and each channel
 * ends with exactly its delays (the producer made tokens 0 .. total-1,
 * the consumer took -d .. total-1-d). */
static void check_delivery(const pm_graph *g, const pm_runner_result *r)
{
    uint64_t total = (uint64_t)r->warmup + r->iterations;
    assert_int_equal(r->order_errors, 0);
    for (uint32_t e = 0; e < g->nedges; e++) {
        assert_int_equal(r->tokens[e], total);
        assert_int_equal(r->remaining[e], g->edges[e].delay);
    }
}

/* Run m and the serial map; the outputs must agree bit for bit. */
static void run_and_match(const pm_graph *g, const pm_map *m, const pm_runner_config *c)
{
    pm_runner_result r, s;
    assert_int_equal(pm_runner_execute(g, m, c, &r), PM_OK);
    assert_false(r.stalled);
    check_delivery(g, &r);
    pm_map *serial = NULL;
    assert_int_equal(pm_runner_serial_map(g, &serial), PM_OK);
    assert_int_equal(pm_runner_execute(g, serial, c, &s), PM_OK);
    assert_int_equal(r.nsinks, s.nsinks);
    size_t n = (size_t)r.nsinks * (c->warmup + c->iterations) * c->block;
    assert_memory_equal(r.outputs, s.outputs, n * sizeof *r.outputs);
    assert_true(r.output_hash == s.output_hash);
    printf("# %s: period median %.0f ns, latency median %.0f ns\n", g->file,
           r.period_ns_median, r.latency_ns_median);
    pm_runner_result_free(&r);
    pm_runner_result_free(&s);
    pm_map_destroy(serial);
}

/* src(spin) -> fir -> out, src on core 0, core 1 lists out before fir.
 * Lags src 0, fir 1, out 2: retimed delays src -> fir 0 + 1 - 0 = 1 and
 * fir -> out 0 + 2 - 1 = 1, so out (iteration r - 2) may run before fir
 * (iteration r - 1) in round r.  Without lags out waits for fir on its
 * own core, which the runner stops at once. */
static void test_chain_with_lags(void **state)
{
    (void)state;
    pm_graph *g = graph2("chain");
    uint32_t s = node(g, "src", 40, PM_WORK_SPIN, 0);
    uint32_t f = node(g, "fir", 0, PM_WORK_FIR, 16);
    uint32_t o = node(g, "out", 0, PM_WORK_BIQUAD, 2);
    edge(g, s, f, 0);
    edge(g, f, o, 0);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    const uint32_t c0[] = {s}, c1[] = {o, f};
    pm_map *m = map2(c0, 1, c1, 2, 3, (const uint32_t[]){0, 1, 2});
    pm_runner_config c;
    config(&c, 200);
    run_and_match(g, m, &c);
    pm_map_destroy(m);
    m = map2(c0, 1, c1, 2, 3, NULL);
    pm_runner_result r;
    assert_int_equal(pm_runner_execute(g, m, &c, &r), PM_EDEADLOCK);
    assert_int_equal(r.waits[1].node, o); /* out waits for fir's token */
    assert_int_equal(r.waits[1].iteration, 0);
    pm_runner_result_free(&r);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

/* A on core 0 feeds C (lag 0) and B (lag L) on core 1, listed C then B;
 * the rings are asked for 2 slots.  Round r of core 1 fires C for
 * iteration r, which needs A's iteration r; A's push of iteration r onto
 * A -> B needs B to have taken iteration r - cap, i.e. core 1 to be
 * through round r - cap + L.  With cap <= L that round is at or past r,
 * which waits on A: a deadlock.  The runner raises the ring to
 * 0 + L + 1 slots, so A needs round r - 1 of core 1, which only needed
 * A's iteration r - 1: the run completes. */
static void test_large_lag_sizes_rings(void **state)
{
    (void)state;
    enum { L = 100 };
    pm_graph *g = graph2("large-lag");
    uint32_t a = node(g, "A", 20, PM_WORK_SPIN, 0), b = node(g, "B", 0, PM_WORK_FIR, 8);
    uint32_t cc = node(g, "C", 20, PM_WORK_SPIN, 0);
    edge(g, a, b, 0);
    edge(g, a, cc, 0);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    const uint32_t c0[] = {a}, c1[] = {cc, b};
    pm_map *m = map2(c0, 1, c1, 2, 3, (const uint32_t[]){0, L, 0});
    pm_runner_config c;
    config(&c, 3 * L); /* more iterations than the lag, so the pile-up is reached */
    c.ring_capacity = 2;
    c.watchdog_ms = 5000;
    run_and_match(g, m, &c);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

/* A (fir, core 0) -> B (biquad, core 1) -> C (spin, core 1) -> A with 3
 * delays; lags A 0, B 1, C 1.  Retimed delays: A -> B 0 + 1 - 0 = 1,
 * B -> C 0 + 1 - 1 = 0 (B before C on core 1), C -> A 3 + 0 - 1 = 2: the
 * loop keeps its 3 delays, every edge at least 0.  A self-loop on B with
 * one delay keeps its state edge as it is (lag difference 0). */
static void test_loop_with_lags_and_delays(void **state)
{
    (void)state;
    pm_graph *g = graph2("loop");
    uint32_t a = node(g, "A", 0, PM_WORK_FIR, 12), b = node(g, "B", 0, PM_WORK_BIQUAD, 2);
    uint32_t cc = node(g, "C", 30, PM_WORK_SPIN, 0);
    edge(g, a, b, 0);
    edge(g, b, cc, 0);
    edge(g, cc, a, 3);
    edge(g, b, b, 1);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    const uint32_t c0[] = {a}, c1[] = {b, cc};
    pm_map *m = map2(c0, 1, c1, 2, 3, (const uint32_t[]){0, 1, 1});
    pm_runner_config c;
    config(&c, 150);
    run_and_match(g, m, &c);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

/* X -> Y with no delay and lag[X] = 1, lag[Y] = 0: the retimed delay is
 * 0 + 0 - 1 = -1, Y would need a token X makes a round later.  A lag past
 * PM_MAP_MAX_LAG is refused as well. */
static void test_bad_lags_refused(void **state)
{
    (void)state;
    pm_graph *g = graph2("bad");
    uint32_t x = node(g, "X", 1, PM_WORK_SPIN, 0), y = node(g, "Y", 1, PM_WORK_SPIN, 0);
    edge(g, x, y, 0);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    const uint32_t c0[] = {x}, c1[] = {y};
    pm_map *m = map2(c0, 1, c1, 1, 2, (const uint32_t[]){1, 0});
    pm_runner_config c;
    config(&c, 5);
    pm_runner_result r;
    assert_int_equal(pm_runner_execute(g, m, &c, &r), PM_EINVAL);
    assert_null(r.busy);
    m->lag[0] = 0;
    m->lag[1] = PM_MAP_MAX_LAG + 1u;
    assert_int_equal(pm_runner_execute(g, m, &c, &r), PM_EINVAL);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

/* Prediction (docs/simulation.md, self-timed rounds): A (100 ns) -> B
 * (300) -> C (50), core 0 runs A then C, core 1 runs B, handoff 20 ns.
 * Without lags C waits each round for B: the cycle A -> B -> C -> A
 * (next round) takes 100 + 20 + 300 + 20 + 50 = 490 ns per round.  With
 * lag[C] = 1, B -> C has one retimed delay and that cycle spans two
 * rounds (245 per round); the others are core 0's A + C = 150 and B's 300:
 * period 300 = the busiest core's load. */
static void test_predict_with_lags(void **state)
{
    (void)state;
    pm_graph *g = graph2("pred");
    uint32_t a = node(g, "A", 1, PM_WORK_SPIN, 0), b = node(g, "B", 1, PM_WORK_SPIN, 0);
    uint32_t cc = node(g, "C", 1, PM_WORK_SPIN, 0);
    edge(g, a, b, 0);
    edge(g, b, cc, 0);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    const uint32_t c0[] = {a, cc}, c1[] = {b};
    const double t[3] = {100, 300, 50};
    double plain = 0, lagged = 0;
    pm_map *m = map2(c0, 2, c1, 1, 3, NULL);
    assert_int_equal(pm_runner_predict(g, m, t, 20, 0, &plain, NULL, NULL), PM_OK);
    assert_true(fabs(plain - 490) < 1e-6);
    /* the hand derivation above: B's 300, with the lag taken, not 490 */
    m->lag[cc] = 1;
    int rc = pm_runner_predict(g, m, t, 20, 0, &lagged, NULL, NULL);
    pm_map_destroy(m);
    pm_graph_destroy(g);
    assert_int_equal(rc, PM_OK);
    assert_true(fabs(lagged - 300) < 1e-6);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_chain_with_lags),
        cmocka_unit_test(test_large_lag_sizes_rings),
        cmocka_unit_test(test_loop_with_lags_and_delays),
        cmocka_unit_test(test_bad_lags_refused),
        cmocka_unit_test(test_predict_with_lags),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
