/*
 * test_refine.c - the local search for a lower simulated period: a
 * hand-worked loop split across cores, pins respected, never worse.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <cmocka.h>

#include "pacemap/refine.h"
#include "pacemap/sched.h"
#include "pacemap/sim.h"
#include "support/testkit.h"

/* a <-> b, one delay on b -> a; transfers cost 5 cycles. */
static pm_graph *refine_loop_graph(uint32_t pin_a, uint32_t pin_b)
{
    pm_graph *g = pm_graph_create("loop.pace");
    assert_int_equal(pm_graph_set_cores(g, 1, NULL, (const uint32_t[]){ 2 }), PM_OK);
    g->platform.comm.latency = 5;
    assert_int_equal(pm_graph_add_node(g, "a", 1, 10, NULL), PM_OK);
    assert_int_equal(pm_graph_add_node(g, "b", 1, 10, NULL), PM_OK);
    g->nodes[0].pin_core = pin_a;
    g->nodes[1].pin_core = pin_b;
    pm_edge ab = pm_graph_edge_default(0, 1), ba = pm_graph_edge_default(1, 0);
    ba.delay = 1;
    assert_int_equal(pm_graph_add_edge(g, &ab, NULL), PM_OK);
    assert_int_equal(pm_graph_add_edge(g, &ba, NULL), PM_OK);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    return g;
}

static pm_map *refine_split_map(void)
{
    const uint32_t a[] = { 0 }, b[] = { 1 };
    const uint32_t *lists[] = { a, b };
    const uint32_t counts[] = { 1, 1 };
    pm_map *m = NULL;
    assert_int_equal(pm_map_create(2, 2, lists, counts, &m), PM_OK);
    return m;
}

static pm_rat refine_period(const pm_graph *g, const pm_map *m)
{
    pm_sim_opts o = { .iterations = 64 };
    pm_sim_result r;
    memset(&r, 0, sizeof r);
    assert_int_equal(pm_sim_run(g, m, &o, &r, NULL), PM_OK);
    pm_rat p = r.period;
    pm_sim_result_free(&r);
    return p;
}

/* Split, the loop takes a (10) + transfer (5) + b (10) + transfer (5) = 30
 * cycles per delay; on one core it takes 20: the search must find that. */
static void test_loop_split_is_joined(void **state)
{
    (void)state;
    pm_graph *g = refine_loop_graph(PM_NONE, PM_NONE);
    pm_map *m = refine_split_map(), *out = NULL;
    pm_schedule *sc = NULL;
    assert_int_equal(pm_sched_from_map(g, m, &sc, NULL), PM_OK);
    assert_int_equal(pm_rat_cmp(refine_period(g, m), pm_rat_int(30)), 0);
    int improved = 0;
    assert_int_equal(pm_refine_map(g, m, sc, NULL, &out, &improved, NULL), PM_OK);
    assert_true(improved);
    assert_int_equal(pm_map_check(out, g, NULL), PM_OK);
    assert_int_equal(out->core_of[0], out->core_of[1]);
    assert_int_equal(pm_rat_cmp(refine_period(g, out), pm_rat_int(20)), 0);
    pm_map_destroy(out);
    pm_sched_destroy(sc);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

/* Pinned nodes stay where they are, even when moving them would help. */
static void test_pins_are_kept(void **state)
{
    (void)state;
    pm_graph *g = refine_loop_graph(0, 1);
    pm_map *m = refine_split_map(), *out = NULL;
    pm_schedule *sc = NULL;
    assert_int_equal(pm_sched_from_map(g, m, &sc, NULL), PM_OK);
    int improved = 1;
    assert_int_equal(pm_refine_map(g, m, sc, NULL, &out, &improved, NULL), PM_OK);
    assert_false(improved);
    assert_int_equal(out->core_of[0], 0);
    assert_int_equal(out->core_of[1], 1);
    pm_map_destroy(out);
    pm_sched_destroy(sc);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

/* A random graph with feed-forward edges (low to high id) and a few
 * back edges with delays. */
static pm_graph *refine_random_graph(uint64_t *seed, uint32_t n)
{
    pm_graph *g = pm_graph_create("random.pace");
    assert_int_equal(pm_graph_set_cores(g, 1, NULL, (const uint32_t[]){ 3 }), PM_OK);
    g->platform.comm.latency = tk_rand(seed, 20);
    g->platform.comm.per_word = tk_rand(seed, 3);
    char name[16];
    for (uint32_t v = 0; v < n; v++) {
        int len = snprintf(name, sizeof name, "n%u", v);
        assert_int_equal(pm_graph_add_node(g, name, (size_t)len, 1 + tk_rand(seed, 50), NULL),
                         PM_OK);
    }
    for (uint32_t k = 0; k < 2 * n; k++) {
        uint32_t u = tk_rand(seed, n), v = tk_rand(seed, n);
        pm_edge e = pm_graph_edge_default(u < v ? u : v, u < v ? v : u);
        if (u == v || tk_rand(seed, 4) == 0) {
            e = pm_graph_edge_default(u < v ? v : u, u < v ? u : v); /* backwards: needs delay */
            e.delay = 1 + tk_rand(seed, 2);
        }
        assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
    }
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    return g;
}

/* The search keeps a move only when the period drops: the result is never
 * worse than the list schedule's map, and it is a valid map. */
static void test_never_worse_on_random_graphs(void **state)
{
    (void)state;
    uint64_t seed = 12345;
    int better = 0;
    for (int t = 0; t < 60; t++) {
        pm_graph *g = refine_random_graph(&seed, 4 + (uint32_t)t % 9);
        pm_map *m = NULL, *out = NULL;
        pm_schedule *sc = NULL;
        assert_int_equal(pm_sched_list(g, NULL, &sc, &m, NULL), PM_OK);
        int improved = 0;
        assert_int_equal(pm_refine_map(g, m, sc, NULL, &out, &improved, NULL), PM_OK);
        assert_int_equal(pm_map_check(out, g, NULL), PM_OK);
        int cmp = pm_rat_cmp(refine_period(g, out), refine_period(g, m));
        assert_true(cmp <= 0);
        assert_int_equal(improved, cmp < 0);
        better += improved;
        pm_map_destroy(out);
        pm_map_destroy(m);
        pm_sched_destroy(sc);
        pm_graph_destroy(g);
    }
    print_message("refinement lowered the period on %d of 60 random graphs\n", better);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_loop_split_is_joined),
        cmocka_unit_test(test_pins_are_kept),
        cmocka_unit_test(test_never_worse_on_random_graphs),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
