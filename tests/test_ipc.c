/*
 * test_ipc.c - the exact period of a map (pm_ipc_compute) against the
 * self-timed theorem and a hand-worked example with lags.
 *
 * (a) Without lags and with point-to-point links the simulator's steady
 *     period must equal the maximum cycle ratio of the IPC graph (Sriram &
 *     Bhattacharyya, "Embedded Multiprocessors: Scheduling and
 *     Synchronization", 2000; the simulator itself is checked against the
 *     Boost Graph Library in test_sim_ipc.c): on random graphs and maps,
 *     pm_sim_run and pm_ipc_compute must agree, deadlocks included.
 * (b) A three-node example worked by hand below, with and without lags.
 * (c) Lags that leave an edge fewer than 0 delays are refused.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <cmocka.h>

#include "pacemap/ipc.h"
#include "pacemap/sim.h"
#include "sched_testlib.h"

static pm_graph *random_graph(uint64_t *seed, uint32_t n, uint32_t procs)
{
    pm_graph *g = tl_graph(procs);
    char name[16];
    for (uint32_t v = 0; v < n; v++) {
        snprintf(name, sizeof name, "n%u", v);
        tl_node(g, name, tk_rand(seed, 15));
    }
    tl_comm(g, tk_rand(seed, 8), tk_rand(seed, 3), tk_rand(seed, 3), tk_rand(seed, 3), PM_P2P);
    uint32_t ne = tk_rand(seed, 2 * n + 1);
    for (uint32_t i = 0; i < ne; i++) {
        uint32_t u = tk_rand(seed, n), v = tk_rand(seed, n);
        /* forward edges may carry no delay; others need one */
        int64_t d = u < v ? (tk_rand(seed, 3) == 0 ? 1 + tk_rand(seed, 2) : 0)
                          : 1 + tk_rand(seed, 3);
        tl_edge(g, u, v, d, 1 + tk_rand(seed, 4));
    }
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    return g;
}

static void test_matches_simulator_without_lags(void **state)
{
    (void)state;
    uint64_t seed = 77;
    int compared = 0, deadlocks = 0;
    for (int i = 0; i < 300; i++) {
        uint32_t n = 2 + tk_rand(&seed, 11), procs = 1 + tk_rand(&seed, 4);
        pm_graph *g = random_graph(&seed, n, procs);
        pm_map *m = tk_random_map(&seed, n, procs, 4);
        pm_sim_result r;
        pm_ipc ipc;
        pm_diag d;
        int src = pm_sim_run(g, m, NULL, &r, &d);
        int irc = pm_ipc_compute(g, m, &ipc, &d);
        if (src == PM_EDEADLOCK) {
            assert_int_equal(irc, PM_EDEADLOCK);
            deadlocks++;
        } else {
            assert_int_equal(src, PM_OK);
            assert_int_equal(irc, PM_OK);
            if (r.steady) {
                assert_int_equal(pm_rat_cmp(r.period, ipc.period), 0);
                compared++;
            }
            for (uint32_t c = 0; c < procs; c++)
                assert_int_equal(r.core_busy[c], ipc.core_busy[c]);
        }
        pm_sim_result_free(&r);
        pm_ipc_free(&ipc);
        pm_map_destroy(m);
        pm_graph_destroy(g);
    }
    assert_true(compared > 200);
    assert_true(deadlocks > 0);
}

/* a(4) -> b(4) on core 0 in that order, a -> c(6) -> b with c on core 1;
 * latency 5, per word 0, send 1, recv 1.  R/S: a sends once (S=1), c
 * receives and sends (R=S=1), b receives once (R=1).  Core 0 is busy
 * 4+1 + 1+4 = 10, core 1 1+6+1 = 8.  The cycle a -> c -> b -> (order, one
 * delay) a weighs (0+4) + 5 + (1+6) + 5 + (1+4) + 0 = 26.
 *   no lags: that cycle has 1 delay: period 26.
 *   lag c = 1, b = 1: a->c 1 delay, c->b 0, wrap 1: 26/2 = 13 (> 10).
 *   lag c = 1, b = 2: 3 delays: 26/3 < 10; the other cycles: core 0's
 *   order loop 10/1, core 1's 8/1, a -> b (2 delays) -> wrap: 9/3.  So 10. */
static pm_graph *hand_graph(void)
{
    pm_graph *g = tl_graph(2);
    tl_node(g, "a", 4);
    tl_node(g, "b", 4);
    tl_node(g, "c", 6);
    tl_edge(g, 0, 1, 0, 1);
    tl_edge(g, 0, 2, 0, 1);
    tl_edge(g, 2, 1, 0, 1);
    tl_comm(g, 5, 0, 1, 1, PM_P2P);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    return g;
}

static pm_rat period_with(const pm_graph *g, uint32_t lag_b, uint32_t lag_c, int *rc)
{
    uint32_t l0[] = { 0, 1 }, l1[] = { 2 }, counts[] = { 2, 1 };
    const uint32_t *lists[] = { l0, l1 };
    pm_map *m = NULL;
    assert_int_equal(pm_map_create(2, 3, lists, counts, &m), PM_OK);
    m->lag[1] = lag_b;
    m->lag[2] = lag_c;
    pm_ipc ipc;
    pm_diag d;
    *rc = pm_ipc_compute(g, m, &ipc, &d);
    pm_rat p = ipc.period;
    if (*rc == PM_OK) {
        assert_int_equal(ipc.core_busy[0], 10);
        assert_int_equal(ipc.core_busy[1], 8);
        assert_int_equal(ipc.busiest, 10);
    }
    pm_ipc_free(&ipc);
    pm_map_destroy(m);
    return p;
}

static void test_hand_example_with_lags(void **state)
{
    (void)state;
    pm_graph *g = hand_graph();
    int rc;
    pm_rat p = period_with(g, 0, 0, &rc);
    assert_int_equal(rc, PM_OK);
    assert_true(p.num == 26 && p.den == 1);
    p = period_with(g, 1, 1, &rc);
    assert_int_equal(rc, PM_OK);
    assert_true(p.num == 13 && p.den == 1);
    p = period_with(g, 2, 1, &rc);
    assert_int_equal(rc, PM_OK);
    assert_true(p.num == 10 && p.den == 1);
    /* (c) lag b = 0, c = 1: edge c -> b keeps 0 + 0 - 1 < 0 delays */
    period_with(g, 0, 1, &rc);
    assert_int_equal(rc, PM_EMAP);
    pm_graph_destroy(g);
}

/* Without lags the simulator must agree on the hand example too: 26. */
static void test_hand_example_simulated(void **state)
{
    (void)state;
    pm_graph *g = hand_graph();
    uint32_t l0[] = { 0, 1 }, l1[] = { 2 }, counts[] = { 2, 1 };
    const uint32_t *lists[] = { l0, l1 };
    pm_map *m = NULL;
    assert_int_equal(pm_map_create(2, 3, lists, counts, &m), PM_OK);
    pm_sim_result r;
    pm_diag d;
    assert_int_equal(pm_sim_run(g, m, NULL, &r, &d), PM_OK);
    assert_true(r.steady && r.period.num == 26 && r.period.den == 1);
    pm_sim_result_free(&r);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_matches_simulator_without_lags),
        cmocka_unit_test(test_hand_example_with_lags),
        cmocka_unit_test(test_hand_example_simulated),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
