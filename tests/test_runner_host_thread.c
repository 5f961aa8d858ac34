/*
 * test_runner_host_thread.c - the runner's own costs on the host and the
 * model that uses them (runner_host.c), plus the busy share on shared PUs:
 *   - calibration against a synthetic host: an injected clock in which
 *     every read advances the reading thread by STEP ns, so each measured
 *     cost is a known number of reads and the arithmetic is exact (worked
 *     out beside each check);
 *   - the prediction and the breakdown with given host costs against
 *     periods worked by hand from docs/simulation.md (self-timed
 *     execution, Sriram & Bhattacharyya, Embedded Multiprocessors, 2000:
 *     the period is the maximum cycle ratio of the IPC graph);
 *   - two threads on one processing unit never show a busy share above
 *     100 % (each counts only the time its thread ran);
 *   - a node fanning out to two rings of one slot each does not stall
 *     (its batched pushes publish before waiting for room).
 * Timings of this host are never asserted.  `make tsan` runs this file.
 */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <cmocka.h>

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "pacemap/runner.h"
#include "pacemap/topo.h"

#define STEP 800 /* synthetic host: ns a clock read takes */

static _Thread_local int64_t fake_now; /* each thread its own timeline */

static int64_t fake_clock(void *ctx)
{
    (void)ctx;
    fake_now += STEP;
    return fake_now;
}

static uint32_t node(pm_graph *g, const char *name, int64_t cycles)
{
    uint32_t id;
    assert_int_equal(pm_graph_add_node(g, name, strlen(name), cycles, &id), PM_OK);
    return id;
}

static void edge(pm_graph *g, uint32_t a, uint32_t b, int64_t delay)
{
    pm_edge e = pm_graph_edge_default(a, b);
    e.delay = delay;
    assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
}

static pm_graph *graph2(bool loop)
{
    pm_graph *g = pm_graph_create("host");
    uint32_t two = 2;
    assert_int_equal(pm_graph_set_cores(g, 1, NULL, &two), PM_OK);
    uint32_t a = node(g, "A", 1), b = node(g, "B", 1);
    edge(g, a, b, 0);
    if (loop)
        edge(g, b, a, 1);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    return g;
}

static pm_map *split2(void)
{
    const uint32_t c0[] = {0}, c1[] = {1}, counts[] = {1, 1};
    const uint32_t *lists[] = {c0, c1};
    pm_map *m = NULL;
    assert_int_equal(pm_map_create(2, 2, lists, counts, &m), PM_OK);
    return m;
}

static void test_calibration_synthetic_host(void **state)
{
    (void)state;
    pm_runner_config c;
    pm_runner_config_default(&c);
    c.clock = fake_clock;
    c.block = 64;
    c.watchdog_ms = 20000;
    pm_host_costs h;
    assert_int_equal(pm_runner_host_costs(&c, 0, 1, 50, &h), PM_OK);
    /* a firing reads the clock twice (kernel start and end), so a serial
     * chain of n nodes has a period of 2 n STEP: slope between 20 and 4
     * nodes (2*20 - 2*4) STEP / 16 = 2 STEP; nothing left at length 0 */
    assert_true(h.dispatch.median == 2.0 * STEP);
    assert_true(h.dispatch.p99 == 2.0 * STEP);
    assert_true(h.ends_ns == 0.0);
    /* sizes: blocks 1, 16, 64 (the run's), 256 plus 2 words each */
    assert_int_equal(h.nsizes, 4);
    assert_int_equal(h.words[0], 3);
    assert_int_equal(h.words[3], 258);
    assert_int_equal(h.run_size, 2);
    /* a batch of 8 tokens between two reads: STEP / 8 = 100 ns a token */
    for (uint32_t i = 0; i < h.nsizes; i++) {
        assert_true(h.send[i].median == STEP / 8.0 && h.send[i].p99 == STEP / 8.0);
        assert_true(h.recv[i].median == STEP / 8.0 && h.recv[i].p99 == STEP / 8.0);
    }
    /* flat in size: no slope, the base is the cost */
    assert_true(h.send_per_word == 0.0 && h.send_base == 100.0);
    assert_true(h.recv_per_word == 0.0 && h.recv_base == 100.0);
    /* a round trip between two reads: one-way STEP / 2 = 400 ns */
    assert_true(h.latency_idle.median == 400.0 && h.latency_busy.median == 400.0);
    /* the two-thread loop's crossing depends on how the threads' reads
     * interleave (each waits a varying number of turns): only its use is
     * exact; the model's latency is the crossing less the receive */
    assert_true(h.crossing.median >= 0 && h.crossing.p99 >= h.crossing.median);
    double lat, snd, rcv;
    pm_runner_host_comm(&h, &lat, &snd, &rcv);
    assert_true(snd == 100.0 && rcv == 100.0);
    assert_true(lat == (h.crossing.median > 100.0 ? h.crossing.median - 100.0 : 0.0));
}

static void test_calibration_block_between_sizes(void **state)
{
    (void)state;
    pm_runner_config c;
    pm_runner_config_default(&c);
    c.clock = fake_clock;
    c.block = 32;
    c.watchdog_ms = 20000;
    pm_host_costs h;
    assert_int_equal(pm_runner_host_costs(&c, 0, PM_NONE, 20, &h), PM_OK);
    assert_int_equal(h.nsizes, 0); /* one PU: only the dispatch */
    assert_true(h.dispatch.median == 2.0 * STEP);
    assert_int_equal(pm_runner_host_costs(&c, 0, 0, 9, &h), PM_EINVAL);
}

/* Regression: the calibration once ran its own graphs under the caller's
 * pace, so `run --paced` read the pace's per-node arrays past their end and
 * timed the pacing instead of the runner.  A pace of one node whose
 * interval (100000 ns) dwarfs the chain's 2 n STEP must change nothing. */
static void test_calibration_ignores_pace(void **state)
{
    (void)state;
    static const uint32_t one[1] = {1}, zero[1] = {0};
    static const bool yes[1] = {true};
    pm_sim_pace pace = {.interval = {100000, 1}, .count = one, .phase = zero,
                        .input = yes, .sink = yes};
    pm_runner_config c;
    pm_runner_config_default(&c);
    c.clock = fake_clock;
    c.block = 64;
    c.watchdog_ms = 20000;
    c.ns_per_cycle = 1.0;
    c.pace = &pace;
    pm_host_costs h;
    assert_int_equal(pm_runner_host_costs(&c, 0, PM_NONE, 20, &h), PM_OK);
    assert_true(h.dispatch.median == 2.0 * STEP);
    assert_true(h.ends_ns == 0.0);
}

static pm_host_costs given_costs(void)
{
    pm_host_costs h;
    memset(&h, 0, sizeof h);
    h.dispatch.median = 10;
    h.nsizes = 1;
    h.words[0] = 66;
    h.send[0].median = 20;
    h.recv[0].median = 30;
    h.crossing.median = 150; /* send 20 + wire 100 + recv 30 */
    return h;
}

static void test_predict_with_host_costs(void **state)
{
    (void)state;
    pm_host_costs h = given_costs();
    double t[2] = {100, 300}, p;
    pm_runner_share sh[2];
    /* A -> B on two cores, no loop: core 0 is busy A + dispatch + send =
     * 100 + 10 + 20 = 130 per iteration, core 1 recv + B + dispatch =
     * 30 + 300 + 10 = 340: the period is the busier core, 340 */
    pm_graph *g = graph2(false);
    pm_map *m = split2();
    assert_int_equal(pm_runner_predict_host(g, m, t, &h, 0, &p, NULL, NULL), PM_OK);
    assert_true(fabs(p - 340) < 1e-6);
    pm_runner_breakdown(g, m, t, &h, p, sh);
    assert_true(sh[0].work == 100 && sh[0].dispatch == 10 && sh[0].transfers == 20);
    assert_true(fabs(sh[0].waiting - 210) < 1e-6);
    assert_true(sh[1].work == 300 && sh[1].dispatch == 10 && sh[1].transfers == 30);
    assert_true(fabs(sh[1].waiting) < 1e-6);
    /* sources and sinks: 8 ns per iteration, half to A (source), half to
     * B (sink): core 1 then needs 344 */
    h.ends_ns = 8;
    assert_true(pm_runner_host_node_ns(g, &h, t, 0) == 114.0);
    assert_int_equal(pm_runner_predict_host(g, m, t, &h, 0, &p, NULL, NULL), PM_OK);
    assert_true(fabs(p - 344) < 1e-6);
    pm_map_destroy(m);
    pm_graph_destroy(g);

    /* the loop A -> B -> A (one delay) over both cores: one iteration is
     * A 110, send 20, wire 100, recv 30, B 310, send 20, wire 100, recv 30
     * = 720; the simulator counts latency from the kernel's end, so the
     * model's latency is 150 - 30 = 120 = send + wire */
    h.ends_ns = 0;
    g = graph2(true);
    m = split2();
    assert_int_equal(pm_runner_predict_host(g, m, t, &h, 0, &p, NULL, NULL), PM_OK);
    assert_true(fabs(p - 720) < 1e-6);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

/* Two threads on one PU, each node a 20 us busy loop. */
static void test_shared_pu_busy_at_most_whole(void **state)
{
    (void)state;
    pm_topo *t = NULL;
    if (pm_topo_create(NULL, &t) != PM_OK)
        skip();
    pm_topo_choice ch;
    assert_int_equal(pm_topo_choose(t, 2, NULL, 0, false, &ch, NULL) == PM_OK ||
                     pm_topo_choose(t, 2, NULL, 0, true, &ch, NULL) == PM_OK, true);
    uint32_t pu[2] = {ch.pu[0], ch.pu[0]};
    pm_graph *g = graph2(true);
    pm_map *m = split2();
    pm_runner_config c;
    pm_runner_config_default(&c);
    c.iterations = 60;
    c.warmup = 5;
    c.block = 16;
    c.ns_per_cycle = 20000; /* 1 cycle -> 20 us of busy loop */
    c.topo = t;
    c.pu = pu;
    c.yield = true;
    c.cpu_time = true;
    c.watchdog_ms = 20000;
    pm_runner_result r;
    assert_int_equal(pm_runner_execute(g, m, &c, &r), PM_OK);
    for (uint32_t k = 0; k < 2; k++) {
        assert_true(r.busy[k] >= 0 && r.busy[k] <= 1.0);
        assert_true(r.wait[k] >= 0 && r.busy[k] + r.wait[k] <= 1.0 + 1e-9);
    }
    if (r.pinned[0] && r.pinned[1]) /* both really on one PU: they share it */
        assert_true(r.busy[0] + r.busy[1] <= 1.05);
    pm_runner_result_free(&r);
    pm_map_destroy(m);
    pm_graph_destroy(g);
    pm_topo_choice_free(&ch);
    pm_topo_destroy(t);
}

/* v fans out to a and b on the other core through rings of one slot. */
static void test_fan_out_one_slot_rings(void **state)
{
    (void)state;
    pm_graph *g = pm_graph_create("fan");
    uint32_t two = 2;
    assert_int_equal(pm_graph_set_cores(g, 1, NULL, &two), PM_OK);
    uint32_t v = node(g, "v", 1), a = node(g, "a", 1), b = node(g, "b", 1);
    edge(g, v, a, 0);
    edge(g, v, b, 0);
    edge(g, a, b, 0);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    const uint32_t c0[] = {v}, c1[] = {a, b}, counts[] = {1, 2};
    const uint32_t *lists[] = {c0, c1};
    pm_map *m = NULL;
    assert_int_equal(pm_map_create(2, 3, lists, counts, &m), PM_OK);
    pm_runner_config c;
    pm_runner_config_default(&c);
    c.iterations = 300;
    c.warmup = 10;
    c.block = 8;
    c.ring_capacity = 1;
    c.yield = true;
    c.watchdog_ms = 20000;
    pm_runner_result r;
    assert_int_equal(pm_runner_execute(g, m, &c, &r), PM_OK);
    assert_false(r.stalled);
    assert_int_equal(r.order_errors, 0);
    for (uint32_t e = 0; e < g->nedges; e++)
        assert_int_equal(r.tokens[e], 310);
    pm_runner_result_free(&r);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_calibration_synthetic_host),
        cmocka_unit_test(test_calibration_block_between_sizes),
        cmocka_unit_test(test_calibration_ignores_pace),
        cmocka_unit_test(test_predict_with_host_costs),
        cmocka_unit_test(test_shared_pu_busy_at_most_whole),
        cmocka_unit_test(test_fan_out_one_slot_rings),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
