/*
 * test_graph.c - the graph model: names, edges, adjacency, core classes.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>
#include <cmocka.h>

#include "pacemap/graph.h"

static pm_graph *graph_chain(uint32_t n)
{
    pm_graph *g = pm_graph_create("chain.pace");
    char name[32];
    for (uint32_t i = 0; i < n; i++) {
        int len = snprintf(name, sizeof name, "n%u", i);
        assert_int_equal(pm_graph_add_node(g, name, (size_t)len, i + 1, NULL), PM_OK);
    }
    for (uint32_t i = 0; i + 1 < n; i++) {
        pm_edge e = pm_graph_edge_default(i, i + 1);
        assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
    }
    return g;
}

static void test_names_are_found_after_many_inserts(void **state)
{
    (void)state;
    pm_graph *g = graph_chain(5000);
    assert_int_equal(pm_graph_find(g, "n4321", 5), 4321);
    assert_int_equal(pm_graph_find(g, "n43210", 6), PM_NONE);
    /* a prefix of an existing name is a different name */
    assert_int_equal(pm_graph_find(g, "n432", 4), 432);
    assert_string_equal(pm_graph_node_name(g, 77), "n77");
    assert_int_equal(pm_graph_add_node(g, "n7", 2, 1, NULL), PM_ENAME);
    pm_graph_destroy(g);
}

static void test_adjacency_lists_every_edge_once(void **state)
{
    (void)state;
    pm_graph *g = graph_chain(4);
    pm_edge back = pm_graph_edge_default(3, 0);
    back.delay = 2;
    assert_int_equal(pm_graph_add_edge(g, &back, NULL), PM_OK);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    for (uint32_t v = 0; v < g->nnodes; v++) {
        assert_int_equal(g->out_off[v + 1] - g->out_off[v], 1);
        assert_int_equal(g->in_off[v + 1] - g->in_off[v], 1);
        uint32_t e = g->out_edge[g->out_off[v]];
        assert_int_equal(g->edges[e].src, v);
    }
    assert_int_equal(g->edges[g->in_edge[g->in_off[0]]].delay, 2);
    assert_int_equal(pm_graph_add_node(g, "late", 4, 1, NULL), PM_EINVAL);
    pm_graph_destroy(g);
}

static void test_class_cycles_and_min(void **state)
{
    (void)state;
    pm_graph *g = pm_graph_create(NULL);
    const char *names[] = { "dsp", "host" };
    const uint32_t counts[] = { 2, 1 };
    assert_int_equal(pm_graph_set_cores(g, 2, names, counts), PM_OK);
    assert_int_equal(g->platform.ncores, 3);
    assert_int_equal(g->platform.core_class[2], 1);
    assert_int_equal(pm_graph_find_class(g, "host", 4), 1);
    uint32_t v;
    assert_int_equal(pm_graph_add_node(g, "fir", 3, 0, &v), PM_OK);
    const int64_t row[] = { 40, 95 };
    assert_int_equal(pm_graph_set_class_cycles(g, v, row), PM_OK);
    assert_int_equal(pm_graph_cycles_on(g, v, 1), 95);
    assert_int_equal(pm_graph_min_cycles(g, v), 40);
    const int64_t only_host[] = { PM_CANNOT_RUN, 70 };
    assert_int_equal(pm_graph_add_node(g, "ui", 2, 0, &v), PM_OK);
    assert_int_equal(pm_graph_set_class_cycles(g, v, only_host), PM_OK);
    assert_int_equal(pm_graph_min_cycles(g, v), 70);
    /* cores 0-1 are dsp, core 2 host: "ui" runs on the host only */
    assert_false(pm_graph_can_run(g, v, 0));
    assert_true(pm_graph_can_run(g, v, 2));
    g->nodes[0].pin_core = 1;
    assert_false(pm_graph_can_run(g, 0, 0));
    assert_true(pm_graph_can_run(g, 0, 1));
    pm_graph_destroy(g);
}

static void test_procs_override_checks_pins(void **state)
{
    (void)state;
    pm_graph *g = graph_chain(3);
    g->nodes[2].pin_core = 3;
    pm_diag d;
    assert_int_equal(pm_graph_set_procs_override(g, 2, &d), PM_EPLATFORM);
    assert_non_null(strstr(d.msg, "'n2' is pinned to core 3"));
    assert_int_equal(pm_graph_set_procs_override(g, 4, &d), PM_OK);
    assert_int_equal(g->platform.ncores, 4);
    pm_graph_destroy(g);
}

/* Suggestions, distances worked by hand (optimal string alignment):
 * "acg" -> "agc" is one swap of adjacent letters (1 step, allowed for 3
 * letters); "mixr" -> "mixer" one insertion; "c" has 1 step to "a" but a
 * 1-letter name allows 0 steps; "zzz" is 3 steps from everything. */
static void test_suggest_nearest_name(void **state)
{
    (void)state;
    pm_graph *g = pm_graph_create(NULL);
    const char *names[] = { "a", "agc", "amp", "mixer" };
    for (uint32_t i = 0; i < 4; i++)
        assert_int_equal(pm_graph_add_node(g, names[i], strlen(names[i]), 1, NULL), PM_OK);
    assert_int_equal(pm_graph_suggest_node(g, "acg", 3), 1);
    assert_int_equal(pm_graph_suggest_node(g, "mixr", 4), 3);
    assert_int_equal(pm_graph_suggest_node(g, "c", 1), PM_NONE);
    assert_int_equal(pm_graph_suggest_node(g, "zzz", 3), PM_NONE);
    assert_int_equal(pm_graph_suggest_class(g, "dsp", 3), PM_NONE); /* no named classes */
    pm_graph_destroy(g);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_names_are_found_after_many_inserts),
        cmocka_unit_test(test_adjacency_lists_every_edge_once),
        cmocka_unit_test(test_class_cycles_and_min),
        cmocka_unit_test(test_suggest_nearest_name),
        cmocka_unit_test(test_procs_override_checks_pins),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
