/*
 * test_floors.c - the floors for P cores: pins in the iteration bound, the
 * fractional work floor for core classes, packing, pinned cores, the bus,
 * and the map floor.  Expected values are worked out by hand in the
 * comments; the fractional floor is also checked against GLPK's glpsol
 * (Debian package glpk-utils) solving the same linear programme on 180
 * random platforms of 2, 3 and 4 classes, where it must equal the LP
 * optimum every time (skipped with a note when glpsol is missing).
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "pacemap/bound.h"
#include "support/testkit.h"

static bool rat_is(pm_rat r, int64_t num, int64_t den)
{
    return r.num == num && r.den == den;
}

/* A graph on classes `names` with `counts`; nodes added by fl_node. */
static pm_graph *fl_graph(uint32_t k, const char *const *names, const uint32_t *counts)
{
    pm_graph *g = pm_graph_create("t.pace");
    assert_int_equal(pm_graph_set_cores(g, k, names, counts), PM_OK);
    return g;
}

static uint32_t fl_node(pm_graph *g, const char *name, const int64_t *row, int64_t cycles)
{
    uint32_t v;
    assert_int_equal(pm_graph_add_node(g, name, strlen(name), cycles, &v), PM_OK);
    if (row)
        assert_int_equal(pm_graph_set_class_cycles(g, v, row), PM_OK);
    return v;
}

static void fl_edge(pm_graph *g, uint32_t a, uint32_t b, int64_t delay, int64_t words)
{
    pm_edge e = pm_graph_edge_default(a, b);
    e.delay = delay;
    e.words = words;
    assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
}

static void test_pinned_slow_class_sets_the_loop(void **state)
{
    (void)state;
    /* classes fast:1 slow:1; a, b take 50 on fast, 500 on slow; b pinned to
     * slow.  Loop a -> b -> a with one delay: the best any map reaches is
     * (50 + 500) / 1 = 550, not (50 + 50) / 1 = 100. */
    const char *names[] = { "fast", "slow" };
    const uint32_t counts[] = { 1, 1 };
    pm_graph *g = fl_graph(2, names, counts);
    const int64_t row[] = { 50, 500 };
    uint32_t a = fl_node(g, "a", row, 0), b = fl_node(g, "b", row, 0);
    g->nodes[b].pin_class = 1;
    fl_edge(g, a, b, 0, 1);
    fl_edge(g, b, a, 1, 1);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    assert_int_equal(pm_graph_min_cycles(g, a), 50);
    assert_int_equal(pm_graph_min_cycles(g, b), 500);
    pm_bound bd;
    assert_int_equal(pm_bound_compute(g, NULL, &bd, NULL), PM_OK);
    assert_true(rat_is(bd.iteration_bound, 550, 1));
    assert_int_equal(bd.critical[0].cycles, 550);
    pm_floors f;
    assert_int_equal(pm_bound_floors(g, &bd, 2, &f), PM_OK);
    /* work: b's 500 must run on the one slow core, a may run on fast: 500 */
    assert_true(rat_is(f.cores, 500, 1));
    assert_true(rat_is(f.node, 500, 1));
    assert_true(rat_is(f.lower_bound, 550, 1));
    assert_int_equal(f.binding, PM_FLOOR_LOOP);
    /* a pin to core 1 (a slow core) is the same as the pin to slow */
    g->nodes[b].pin_class = PM_NONE;
    g->nodes[b].pin_core = 1;
    assert_int_equal(pm_graph_min_cycles(g, b), 500);
    pm_bound_free(&bd);
    pm_graph_destroy(g);
}

static void test_fractional_work_floor_two_classes(void **state)
{
    (void)state;
    /* dsp:2 host:1.  p, q: 60 on dsp, 30 on host; r: 20 on dsp only.
     * Split a share s of the host work to dsp: host 60 - 30 s', dsp
     * (20 + 60 s') / 2 with s' the node fraction moved; equal at s' = 5/6:
     * T = 35.  Dual: y = (1/4, 1/2) (2 * 1/4 + 1/2 = 1) gives
     * 2 * min(60/4, 30/2) + 20/4 = 30 + 5 = 35, so 35 is the LP optimum. */
    const char *names[] = { "dsp", "host" };
    const uint32_t counts[] = { 2, 1 };
    pm_graph *g = fl_graph(2, names, counts);
    const int64_t pq[] = { 60, 30 }, r[] = { 20, PM_CANNOT_RUN };
    fl_node(g, "p", pq, 0);
    fl_node(g, "q", pq, 0);
    fl_node(g, "r", r, 0);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    pm_rat w;
    assert_int_equal(pm_bound_work_floor(g, counts, &w), PM_OK);
    assert_true(rat_is(w, 35, 1));
    pm_bound bd;
    assert_int_equal(pm_bound_compute(g, NULL, &bd, NULL), PM_OK);
    pm_floors f;
    assert_int_equal(pm_bound_floors(g, &bd, 3, &f), PM_OK);
    assert_true(rat_is(f.cores, 35, 1));
    assert_int_equal(f.binding, PM_FLOOR_CORES); /* largest node 30 < 35 */
    /* with another core count the cores count as identical: 80 / 4 = 20 */
    assert_int_equal(pm_bound_floors(g, &bd, 4, &f), PM_OK);
    assert_true(rat_is(f.cores, 20, 1));
    pm_bound_free(&bd);
    pm_graph_destroy(g);
}

static pm_floors floors_of(pm_graph *g, uint32_t procs)
{
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    pm_bound bd;
    pm_floors f;
    assert_int_equal(pm_bound_compute(g, NULL, &bd, NULL), PM_OK);
    assert_int_equal(pm_bound_floors(g, &bd, procs, &f), PM_OK);
    pm_bound_free(&bd);
    return f;
}

static void test_packing_floor(void **state)
{
    (void)state;
    /* 5, 4, 3 on 2 cores: work 12/2 = 6, largest 5; two of the three
     * largest share a core: T >= 4 + 3 = 7 ({5}, {4, 3} reaches it). */
    pm_graph *g = pm_graph_create(NULL);
    fl_node(g, "a", NULL, 5);
    fl_node(g, "b", NULL, 4);
    fl_node(g, "c", NULL, 3);
    pm_floors f = floors_of(g, 2);
    assert_true(rat_is(f.lower_bound, 6, 1));
    assert_true(rat_is(f.packing, 7, 1));
    assert_true(rat_is(f.map_floor, 7, 1));
    assert_int_equal(f.map_binding, PM_FLOOR_PACKING);
    assert_string_equal(pm_bound_floor_name(f.map_binding), "packing");
    pm_graph_destroy(g);
    /* five nodes of 5 on 2 cores: one core holds 3 of them, T >= 15 (the
     * j = 2 sum), above work 25/2 and above 5 + 5 (j = 1) */
    g = pm_graph_create(NULL);
    const char *nm[] = { "a", "b", "c", "d", "e" };
    for (int i = 0; i < 5; i++)
        fl_node(g, nm[i], NULL, 5);
    f = floors_of(g, 2);
    assert_true(rat_is(f.cores, 25, 2));
    assert_true(rat_is(f.map_floor, 15, 1));
    /* as many cores as nodes: no packing floor */
    f = floors_of(g, 5);
    assert_true(rat_is(f.packing, 0, 1));
    assert_true(rat_is(f.map_floor, 5, 1));
    assert_int_equal(f.map_binding, PM_FLOOR_NODE);
    pm_graph_destroy(g);
}

static void test_pinned_core_and_bus_floors(void **state)
{
    (void)state;
    /* procs 2; a (10) and b (10) pinned to core 0, c (5) pinned to core 1;
     * edge a -> c must cross: core 0 sends (3), core 1 receives (2).
     * core 0: 10 + 10 + 3 = 23; core 1: 5 + 2 = 7.  Work 25/2. */
    const uint32_t two[] = { 2 };
    pm_graph *g = fl_graph(1, NULL, two);
    uint32_t a = fl_node(g, "a", NULL, 10), b = fl_node(g, "b", NULL, 10);
    uint32_t c = fl_node(g, "c", NULL, 5);
    g->nodes[a].pin_core = 0;
    g->nodes[b].pin_core = 0;
    g->nodes[c].pin_core = 1;
    fl_edge(g, a, c, 0, 2);
    fl_edge(g, a, b, 0, 1); /* same core: no cost */
    g->platform.comm = (pm_comm){ .latency = 4, .per_word = 1, .send = 3, .recv = 2 };
    g->platform.interconnect = PM_BUS;
    pm_floors f = floors_of(g, 2);
    assert_true(rat_is(f.lower_bound, 25, 2));
    assert_true(rat_is(f.pinned, 23, 1));
    assert_int_equal(f.pinned_core, 0);
    /* bus: the one forced transfer, 4 + 1 * 2 words = 6 per iteration */
    assert_true(rat_is(f.bus, 6, 1));
    assert_true(rat_is(f.map_floor, 23, 1));
    assert_int_equal(f.map_binding, PM_FLOOR_PINNED);
    /* unpinned c may join a on core 0: nothing is forced across */
    g->nodes[c].pin_core = PM_NONE;
    f = floors_of(g, 2);
    assert_true(rat_is(f.bus, 0, 1));
    assert_true(rat_is(f.pinned, 20, 1));
    pm_graph_destroy(g);
}

static void test_huge_comm_costs_saturate(void **state)
{
    (void)state;
    /* tests/bad/lim_recv_overflow.pace: recv = 2^62 - 1, a pinned to core 0,
     * b to core 1, b -> a: core 0 carries 1 + (2^62 - 1), more than 62
     * bits; the floor is reported as 2^62 - 1 (below the true load, still a
     * floor) instead of failing the command. */
    const uint32_t two[] = { 2 };
    pm_graph *g = fl_graph(1, NULL, two);
    uint32_t a = fl_node(g, "a", NULL, 1), b = fl_node(g, "b", NULL, 1);
    g->nodes[a].pin_core = 0;
    g->nodes[b].pin_core = 1;
    fl_edge(g, a, b, 0, 1);
    fl_edge(g, b, a, 1, 1);
    g->platform.comm.recv = PM_MAX_VALUE;
    pm_floors f = floors_of(g, 2);
    assert_true(rat_is(f.pinned, PM_MAX_VALUE, 1));
    assert_int_equal(f.map_binding, PM_FLOOR_PINNED);
    pm_graph_destroy(g);
}

/* ---- against GLPK ------------------------------------------------------- */

static uint32_t fl_rand(uint64_t *s, uint32_t n)
{
    *s = *s * 6364136223846793005ULL + 1442695040888963407ULL;
    return (uint32_t)(*s >> 33) % n;
}

/* The LP of floors_work.c in CPLEX LP format:
 *   min T  s.t.  sum_k x_v_k = 1;  sum_v t_vk x_v_k - n_k T <= 0. */
static void write_lp(FILE *f, const pm_graph *g, const uint32_t *counts)
{
    uint32_t K = g->platform.nclasses;
    fprintf(f, "Minimize\n obj: T\nSubject To\n");
    for (uint32_t v = 0; v < g->nnodes; v++) {
        fprintf(f, " n%u:", v);
        for (uint32_t k = 0; k < K; k++)
            if (pm_graph_cycles_on(g, v, k) >= 0 &&
                (g->nodes[v].pin_class == PM_NONE || g->nodes[v].pin_class == k))
                fprintf(f, " + x%u_%u", v, k);
        fprintf(f, " = 1\n");
    }
    for (uint32_t k = 0; k < K; k++) {
        fprintf(f, " c%u: - %u T", k, counts[k]);
        for (uint32_t v = 0; v < g->nnodes; v++)
            if (pm_graph_cycles_on(g, v, k) >= 0 &&
                (g->nodes[v].pin_class == PM_NONE || g->nodes[v].pin_class == k))
                fprintf(f, " + %lld x%u_%u", (long long)pm_graph_cycles_on(g, v, k), v, k);
        fprintf(f, " <= 0\n");
    }
    fprintf(f, "End\n");
}

typedef struct lp_ctx {
    const pm_graph *g;
    const uint32_t *counts;
} lp_ctx;

static void write_lp_ctx(FILE *f, const void *ctx)
{
    const lp_ctx *l = ctx;
    write_lp(f, l->g, l->counts);
}

/* glpsol's optimum of the LP, or -1 on failure. */
static double glpk_lp(const pm_graph *g, const uint32_t *counts)
{
    lp_ctx l = {g, counts};
    double opt;
    return tk_glpsol(write_lp_ctx, &l, 0, &opt) ? opt : -1;
}

/* A random platform of 2 to 4 classes and 3..10 nodes (some class-bound,
 * some pinned to a class). */
static pm_graph *random_classes(uint64_t *s, uint32_t K, uint32_t *counts)
{
    const char *names[] = { "a", "b", "c", "d" };
    for (uint32_t k = 0; k < K; k++)
        counts[k] = 1 + fl_rand(s, 3);
    pm_graph *g = fl_graph(K, names, counts);
    uint32_t n = 3 + fl_rand(s, 8);
    for (uint32_t v = 0; v < n; v++) {
        int64_t row[4];
        uint32_t any = 0;
        for (uint32_t k = 0; k < K; k++) {
            row[k] = fl_rand(s, 4) == 0 ? PM_CANNOT_RUN : 1 + (int64_t)fl_rand(s, 90);
            any += row[k] >= 0;
        }
        if (!any)
            row[0] = 7;
        char name[16];
        snprintf(name, sizeof name, "v%u", v);
        uint32_t id = fl_node(g, name, row, 0);
        uint32_t k = fl_rand(s, K);
        if (fl_rand(s, 5) == 0 && row[k] >= 0)
            g->nodes[id].pin_class = k;
    }
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    return g;
}

static void test_fractional_floor_against_glpk(void **state)
{
    (void)state;
    if (system("glpsol --version > /dev/null 2>&1") != 0) {
        print_message("note: glpsol (glpk-utils) not installed; LP check skipped\n");
        return;
    }
    uint64_t s = 12345;
    for (int i = 0; i < 180; i++) {
        uint32_t K = 2 + (uint32_t)(i % 3), counts[4];
        pm_graph *g = random_classes(&s, K, counts);
        pm_rat w;
        assert_int_equal(pm_bound_work_floor(g, counts, &w), PM_OK);
        double lp = glpk_lp(g, counts); /* GLPK glpsol, LP optimum */
        assert_true(lp >= 0);
        double fw = pm_rat_to_double(w);
        /* the exact optimum, for 2, 3 and 4 classes alike (glpsol prints
         * its objective to 6 significant digits) */
        if (fabs(fw - lp) > 1e-5 * lp + 1e-5)
            fail_msg("case %d, %u classes: floor %lld/%lld = %.9g, glpsol %.9g", i, K,
                     (long long)w.num, (long long)w.den, fw, lp);
        pm_graph_destroy(g);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_pinned_slow_class_sets_the_loop),
        cmocka_unit_test(test_fractional_work_floor_two_classes),
        cmocka_unit_test(test_packing_floor),
        cmocka_unit_test(test_pinned_core_and_bus_floors),
        cmocka_unit_test(test_huge_comm_costs_saturate),
        cmocka_unit_test(test_fractional_floor_against_glpk),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
