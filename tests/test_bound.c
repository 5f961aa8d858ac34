/*
 * test_bound.c - the bound module on hand-made graphs and properties:
 * error on a loop without delay, feed-forward graphs, self-loops, parallel
 * edges, zero-time nodes, parts worst first, the critical-loop limit,
 * floors and budget; scaling and delay properties, the Karp-based cross
 * check and the stand-alone certificate on random graphs.
 * Expected values here are worked out by hand in the comments.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "helpers/bound_gen.h"
#include "pacemap/bound.h"

/* Build a graph from "name:cycles" nodes and "a>b:delay" edges; edge i is
 * given line i+10, column 1 so diagnostics can be checked. */
static pm_graph *mk(const char *nodes, const char *edges)
{
    pm_graph *g = pm_graph_create("t.pace");
    char name[64];
    long long c;
    int n;
    for (const char *p = nodes; sscanf(p, " %63[^:]:%lld%n", name, &c, &n) == 2; p += n)
        assert_int_equal(pm_graph_add_node(g, name, strlen(name), c, NULL), PM_OK);
    char a[64], b[64];
    long long d;
    uint32_t line = 10;
    for (const char *p = edges; p && sscanf(p, " %63[^>]>%63[^:]:%lld%n", a, b, &d, &n) == 3;
         p += n) {
        pm_edge e = pm_graph_edge_default(pm_graph_find(g, a, strlen(a)),
                                    pm_graph_find(g, b, strlen(b)));
        assert_true(e.src != PM_NONE && e.dst != PM_NONE);
        e.delay = d;
        e.line = line++;
        e.col = 1;
        assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
    }
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    return g;
}

static bool rat_is(pm_rat r, int64_t num, int64_t den)
{
    return r.num == num && r.den == den;
}

static void test_zero_delay_loop_is_named_in_order(void **state)
{
    (void)state;
    /* c -> a closes the loop a -> b -> c -> a (all without delay) */
    pm_graph *g = mk("x:1 a:1 b:2 c:3", "x>a:0 a>b:0 b>c:0 c>a:0 c>x:1");
    pm_bound b;
    pm_diag d;
    assert_int_equal(pm_bound_compute(g, NULL, &b, &d), PM_EZERODELAY);
    assert_string_equal(d.msg, "loop without delay: a -> b -> c -> a "
                               "(add a delay on one of its edges)");
    assert_string_equal(d.file, "t.pace");
    assert_int_equal(d.line, 13); /* the last written edge of the loop, c -> a */
    assert_int_equal(b.ncritical, 0);
    pm_bound_free(&b);
    /* the shortest zero-delay loop through the lowest node on one (p; the
     * shorter self-loop q -> q does not pass p), from p; the diagnostic
     * points at p -> q, written last */
    pm_graph_destroy(g);
    g = mk("p:1 q:1 r:1", "q>r:0 r>p:0 p>q:0 q>q:0");
    assert_int_equal(pm_bound_compute(g, NULL, &b, &d), PM_EZERODELAY);
    assert_string_equal(d.msg, "loop without delay: p -> q -> r -> p "
                               "(add a delay on one of its edges)");
    assert_int_equal(d.line, 12);
    pm_graph_destroy(g);
    g = mk("s:1 t:0", "t>s:0 s>s:0");
    assert_int_equal(pm_bound_compute(g, NULL, &b, &d), PM_EZERODELAY);
    assert_string_equal(d.msg, "loop without delay: s -> s (add a delay on one of its edges)");
    assert_int_equal(d.line, 11);
    bool has;
    pm_rat r;
    assert_int_equal(pm_bound_karp(g, &has, &r, &d), PM_EZERODELAY);
    pm_graph_destroy(g);
}

/* A zero-delay loop of 200 long names: the middle is left out, the message
 * still starts at the smallest node and closes on it. */
static void test_zero_delay_long_loop_is_shortened(void **state)
{
    (void)state;
    pm_graph *g = pm_graph_create("long.pace");
    char name[64];
    for (uint32_t i = 0; i < 200; i++) {
        int len = snprintf(name, sizeof name, "stage_with_a_long_name_%03u", i);
        assert_int_equal(pm_graph_add_node(g, name, (size_t)len, 1, NULL), PM_OK);
    }
    for (uint32_t i = 0; i < 200; i++) {
        pm_edge e = pm_graph_edge_default(i, (i + 1) % 200);
        assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
    }
    pm_graph_finalize(g);
    pm_bound b;
    pm_diag d;
    assert_int_equal(pm_bound_compute(g, NULL, &b, &d), PM_EZERODELAY);
    const char *want = "loop without delay: stage_with_a_long_name_000 -> ";
    assert_memory_equal(d.msg, want, strlen(want));
    assert_non_null(strstr(d.msg, " -> ... -> stage_with_a_long_name_000 "
                                  "(add a delay on one of its edges)"));
    assert_true(strlen(d.msg) < sizeof d.msg - 1);
    pm_graph_destroy(g);
}

static void test_feed_forward_graph_has_no_loop(void **state)
{
    (void)state;
    pm_graph *g = mk("a:3 b:5 c:2", "a>b:0 b>c:2 a>c:1");
    pm_bound b;
    assert_int_equal(pm_bound_compute(g, NULL, &b, NULL), PM_OK);
    assert_false(b.has_loop);
    assert_int_equal(b.ncritical, 0);
    assert_int_equal(b.nparts_total, 0);
    assert_int_equal(b.total_cycles, 10);
    assert_int_equal(b.largest_node, 1);
    assert_int_equal(b.largest_cycles, 5);
    pm_floors f;
    assert_int_equal(pm_bound_floors(g, &b, 4, &f), PM_OK);
    /* cores 10/4 = 5/2 < node 5: the node binds */
    assert_true(rat_is(f.cores, 5, 2));
    assert_true(rat_is(f.lower_bound, 5, 1));
    assert_int_equal(f.binding, PM_FLOOR_NODE);
    assert_false(f.has_loop);
    bool has = true;
    pm_rat r;
    assert_int_equal(pm_bound_karp(g, &has, &r, NULL), PM_OK);
    assert_false(has);
    pm_bound_free(&b);
    pm_graph_destroy(g);
    /* the empty graph */
    g = mk("", "");
    assert_int_equal(pm_bound_compute(g, NULL, &b, NULL), PM_OK);
    assert_false(b.has_loop);
    assert_int_equal(b.largest_node, PM_NONE);
    pm_bound_free(&b);
    pm_graph_destroy(g);
}

static void test_self_loops_parallel_edges_and_zero_times(void **state)
{
    (void)state;
    /* f has self-loops with 1 and 3 delays: 7/1 beats 7/3.  g -> h -> g has
     * two parallel h -> g edges with 2 delays each: (3+4)/2 < 7.  z is a
     * zero-time node on a loop of its own: 0/1. */
    pm_graph *g = mk("f:7 g:3 h:4 z:0", "f>f:1 f>f:3 g>h:0 h>g:2 h>g:2 z>z:1 f>g:0");
    pm_bound b;
    assert_int_equal(pm_bound_compute(g, NULL, &b, NULL), PM_OK);
    assert_true(b.has_loop);
    assert_true(rat_is(b.iteration_bound, 7, 1));
    assert_int_equal(b.ncritical, 1);
    assert_int_equal(b.critical[0].len, 1);
    assert_int_equal(b.critical[0].cycles, 7);
    assert_int_equal(b.critical[0].delays, 1);
    /* parts worst first: f (7), g-h (7/2), z (0) */
    assert_int_equal(b.nparts_total, 3);
    assert_int_equal(b.nparts, 3);
    assert_true(rat_is(b.parts[0].bound, 7, 1));
    assert_true(rat_is(b.parts[1].bound, 7, 2));
    assert_int_equal(b.parts[1].nnodes, 2);
    assert_int_equal(b.parts[1].first_node, 1);
    assert_int_equal(b.parts[1].worst.nodes[0], 1);
    assert_int_equal(b.parts[1].worst.cycles, 7);
    assert_int_equal(b.parts[1].worst.delays, 2);
    assert_true(rat_is(b.parts[2].bound, 0, 1));
    pm_bound_free(&b);
    /* max_parts keeps the worst ones and still counts all */
    pm_bound_opts o = { .max_parts = 1 };
    assert_int_equal(pm_bound_compute(g, &o, &b, NULL), PM_OK);
    assert_int_equal(b.nparts, 1);
    assert_int_equal(b.nparts_total, 3);
    pm_bound_free(&b);
    pm_graph_destroy(g);
    /* the parallel edges make two distinct critical loops g -> h -> g */
    g = mk("g:3 h:4", "g>h:0 h>g:2 h>g:2");
    assert_int_equal(pm_bound_compute(g, NULL, &b, NULL), PM_OK);
    assert_int_equal(b.ncritical, 2);
    assert_int_not_equal(b.critical[0].edges[1], b.critical[1].edges[1]);
    pm_bound_free(&b);
    pm_graph_destroy(g);
}

static void test_all_loops_critical_and_the_limit(void **state)
{
    (void)state;
    /* a ring of equal nodes with a chord: every loop has ratio 1 */
    pm_graph *g = mk("a:1 b:1 c:1 d:1", "a>b:1 b>c:1 c>d:1 d>a:1 c>a:1 b>a:1 d>b:1");
    pm_bound b;
    assert_int_equal(pm_bound_compute(g, NULL, &b, NULL), PM_OK);
    assert_true(rat_is(b.iteration_bound, 1, 1));
    /* loops: abcd, abc, ab, bcd -> a b c d a, a b c a, a b a, b c d b */
    assert_int_equal(b.ncritical, 4);
    assert_false(b.critical_truncated);
    for (uint32_t i = 0; i < b.ncritical; i++) {
        uint32_t mn = PM_NONE;
        for (uint32_t k = 0; k < b.critical[i].len; k++)
            mn = b.critical[i].nodes[k] < mn ? b.critical[i].nodes[k] : mn;
        assert_int_equal(b.critical[i].nodes[0], mn); /* starts at its smallest */
        assert_int_equal(b.critical[i].cycles, b.critical[i].delays);
    }
    pm_bound_free(&b);
    pm_bound_opts o = { .max_critical = 3 };
    assert_int_equal(pm_bound_compute(g, &o, &b, NULL), PM_OK);
    assert_int_equal(b.ncritical, 3);
    assert_true(b.critical_truncated);
    pm_bound_free(&b);
    pm_graph_destroy(g);
}

static void test_multirate_and_class_times(void **state)
{
    (void)state;
    pm_graph *g = pm_graph_create("m.pace");
    uint32_t a, c;
    pm_graph_add_node(g, "a", 1, 4, &a);
    pm_graph_add_node(g, "c", 1, 4, &c);
    pm_edge e = pm_graph_edge_default(a, c);
    e.produce = 2;
    e.line = 7;
    pm_graph_add_edge(g, &e, NULL);
    pm_graph_finalize(g);
    pm_bound b;
    pm_diag d;
    assert_int_equal(pm_bound_compute(g, NULL, &b, &d), PM_EUNSUPPORTED);
    assert_int_equal(d.line, 7);
    assert_non_null(strstr(d.msg, "multirate"));
    pm_graph_destroy(g);
    /* per-class times: the floor uses the fastest class that can run it */
    g = pm_graph_create("k.pace");
    const char *names[] = { "dsp", "host" };
    uint32_t counts[] = { 2, 1 };
    assert_int_equal(pm_graph_set_cores(g, 2, names, counts), PM_OK);
    pm_graph_add_node(g, "x", 1, 0, &a);
    int64_t row[] = { 40, 95 }, row2[] = { PM_CANNOT_RUN, 30 };
    pm_graph_set_class_cycles(g, a, row);
    pm_graph_add_node(g, "y", 1, 0, &c);
    pm_graph_set_class_cycles(g, c, row2);
    e = pm_graph_edge_default(a, c);
    pm_graph_add_edge(g, &e, NULL);
    e = pm_graph_edge_default(c, a);
    e.delay = 2;
    pm_graph_add_edge(g, &e, NULL);
    pm_graph_finalize(g);
    assert_int_equal(pm_bound_compute(g, NULL, &b, &d), PM_OK);
    assert_true(rat_is(b.iteration_bound, 35, 1)); /* (40 + 30) / 2 */
    assert_int_equal(b.total_cycles, 70);
    pm_bound_free(&b);
    pm_graph_destroy(g);
}

static void test_floors_binding_and_budget(void **state)
{
    (void)state;
    /* loop a -> b -> a: (30 + 20) / 2 = 25; total 30+20+60 = 110; largest 60 */
    pm_graph *g = mk("a:30 b:20 w:60", "a>b:1 b>a:1 b>w:0");
    g->platform.clock_hz = 600000000;
    g->platform.rate_hz = 48000; /* 12500 cycles per iteration */
    pm_bound b;
    assert_int_equal(pm_bound_compute(g, NULL, &b, NULL), PM_OK);
    pm_floors f;
    assert_int_equal(pm_bound_floors(g, &b, 1, &f), PM_OK);
    assert_true(rat_is(f.lower_bound, 110, 1)); /* cores: 110 / 1 */
    assert_int_equal(f.binding, PM_FLOOR_CORES);
    assert_true(f.has_budget);
    assert_true(rat_is(f.budget, 12500, 1));
    assert_true(rat_is(f.margin, 12390, 1));
    assert_true(fabs(f.margin_us - 12390.0 / 600.0) < 1e-9); /* 20.65 us */
    assert_true(f.loop_fits && f.lower_fits);
    assert_int_equal(pm_bound_floors(g, &b, 2, &f), PM_OK);
    assert_int_equal(f.binding, PM_FLOOR_NODE); /* 55 < 60 */
    assert_int_equal(pm_bound_floors(g, &b, 8, &f), PM_OK);
    assert_int_equal(f.binding, PM_FLOOR_NODE); /* 60 > 25 > 13.75 */
    assert_string_equal(pm_bound_floor_name(f.binding), "node");
    pm_bound_free(&b);
    pm_graph_destroy(g);
    /* loop 60 ties with the node 60 and with cores 120/2: the loop binds */
    g = mk("a:60 b:0 c:60", "a>b:0 b>a:1");
    assert_int_equal(pm_bound_compute(g, NULL, &b, NULL), PM_OK);
    assert_int_equal(pm_bound_floors(g, &b, 2, &f), PM_OK);
    assert_int_equal(f.binding, PM_FLOOR_LOOP);
    assert_string_equal(pm_bound_floor_name(f.binding), "loop");
    assert_false(f.has_budget);
    /* node ties with cores (120/2 = 60) when the loop is smaller */
    pm_bound_free(&b);
    pm_graph_destroy(g);
    g = mk("a:60 b:0 c:60", "a>b:1 b>a:1");
    g->platform.clock_hz = 1000;
    g->platform.rate_hz = 30; /* budget 100/3 < 60: does not fit */
    assert_int_equal(pm_bound_compute(g, NULL, &b, NULL), PM_OK);
    assert_true(rat_is(b.iteration_bound, 30, 1));
    assert_int_equal(pm_bound_floors(g, &b, 2, &f), PM_OK);
    assert_int_equal(f.binding, PM_FLOOR_NODE);
    assert_true(rat_is(f.budget, 100, 3));
    assert_true(f.loop_fits);   /* 30 <= 33.3 */
    assert_false(f.lower_fits); /* 60 > 33.3 */
    assert_true(rat_is(f.margin, -80, 3));
    assert_int_equal(pm_bound_floors(g, &b, 0, &f), PM_EINVAL);
    pm_bound_free(&b);
    pm_graph_destroy(g);
}

/* ---- properties on random graphs ---------------------------------------- */

static pm_graph *scaled_copy(const pm_graph *g, int64_t k)
{
    pm_graph *h = pm_graph_create("scaled");
    for (uint32_t v = 0; v < g->nnodes; v++) {
        const char *nm = pm_graph_node_name(g, v);
        pm_graph_add_node(h, nm, strlen(nm), pm_graph_min_cycles(g, v) * k, NULL);
    }
    for (uint32_t e = 0; e < g->nedges; e++)
        pm_graph_add_edge(h, &g->edges[e], NULL);
    pm_graph_finalize(h);
    return h;
}

static void test_scaling_node_times_scales_the_bound(void **state)
{
    (void)state;
    for (uint64_t s = 0; s < 40; s++) {
        pm_graph *g = gen_graph_random(s, 5 + (uint32_t)s * 5, 12 + (uint32_t)s * 15, 40, 3);
        /* k = 2^40 on odd seeds pushes biases past 64 bits (the wide path) */
        int64_t k = s % 2 ? INT64_C(1) << 40 : 7;
        pm_graph *h = scaled_copy(g, k);
        pm_bound a, b;
        assert_int_equal(pm_bound_compute(g, NULL, &a, NULL), PM_OK);
        assert_int_equal(pm_bound_compute(h, NULL, &b, NULL), PM_OK);
        assert_int_equal(a.has_loop, b.has_loop);
        if (a.has_loop) {
            pm_rat kb;
            assert_int_equal(pm_rat_mul(a.iteration_bound, pm_rat_int(k), &kb), PM_OK);
            assert_int_equal(pm_rat_cmp(kb, b.iteration_bound), 0);
        }
        pm_bound_free(&a);
        pm_bound_free(&b);
        pm_graph_destroy(g);
        pm_graph_destroy(h);
    }
}

static void test_delay_on_critical_loop_never_raises(void **state)
{
    (void)state;
    for (uint64_t s = 100; s < 140; s++) {
        pm_graph *g = gen_graph_random(s, 30, 90, 40, 2);
        pm_bound a;
        assert_int_equal(pm_bound_compute(g, NULL, &a, NULL), PM_OK);
        if (!a.has_loop) {
            pm_bound_free(&a);
            pm_graph_destroy(g);
            continue;
        }
        pm_graph *h = scaled_copy(g, 1);
        h->edges[a.critical[0].edges[0]].delay += 1;
        pm_bound b;
        assert_int_equal(pm_bound_compute(h, NULL, &b, NULL), PM_OK);
        assert_true(pm_rat_cmp(b.iteration_bound, a.iteration_bound) <= 0);
        pm_bound_free(&a);
        pm_bound_free(&b);
        pm_graph_destroy(g);
        pm_graph_destroy(h);
    }
}

static void test_karp_cross_check_equals_howard(void **state)
{
    (void)state;
    int loops = 0;
    for (uint64_t s = 200; s < 260; s++) {
        uint32_t n = 2 + (uint32_t)(s % 60);
        pm_graph *g = gen_graph_random(s, n, n + (uint32_t)(s % 3) * n, 30, 4);
        pm_bound a;
        bool has;
        pm_rat r;
        assert_int_equal(pm_bound_compute(g, NULL, &a, NULL), PM_OK);
        assert_int_equal(pm_bound_karp(g, &has, &r, NULL), PM_OK);
        assert_int_equal(has, a.has_loop);
        if (has) {
            assert_int_equal(pm_rat_cmp(r, a.iteration_bound), 0);
            loops++;
        }
        pm_bound_free(&a);
        pm_graph_destroy(g);
    }
    assert_true(loops > 40);
}

static void test_certificate_accepts_bound_rejects_less(void **state)
{
    (void)state;
    for (uint64_t s = 300; s < 330; s++) {
        pm_graph *g = gen_graph_random(s, 40, 120, 50, 3);
        pm_bound a;
        assert_int_equal(pm_bound_compute(g, NULL, &a, NULL), PM_OK);
        if (a.has_loop) {
            pm_rat l = a.iteration_bound, less;
            bool ok;
            assert_int_equal(pm_bound_certify(g, l, &ok), PM_OK);
            assert_true(ok);
            /* lambda - epsilon with epsilon = 1/(1000 * den) */
            assert_int_equal(pm_rat_make(l.num * 1000 - 1, l.den * 1000, &less), PM_OK);
            assert_int_equal(pm_bound_certify(g, less, &ok), PM_OK);
            assert_false(ok);
        }
        pm_bound_free(&a);
        pm_graph_destroy(g);
    }
}

/* Huge node times and delays: exact arithmetic near the 62-bit limit. */
static void test_large_values_stay_exact(void **state)
{
    (void)state;
    int64_t big = (INT64_C(1) << 62) - 100; /* total 2^62 - 95 still fits */
    pm_graph *g = pm_graph_create("big");
    uint32_t a, c;
    pm_graph_add_node(g, "a", 1, big, &a);
    pm_graph_add_node(g, "c", 1, 5, &c);
    pm_edge e = pm_graph_edge_default(a, c);
    e.delay = (INT64_C(1) << 61) - 1;
    pm_graph_add_edge(g, &e, NULL);
    e = pm_graph_edge_default(c, a);
    e.delay = 2;
    pm_graph_add_edge(g, &e, NULL);
    e = pm_graph_edge_default(c, c);
    e.delay = 3;
    pm_graph_add_edge(g, &e, NULL);
    pm_graph_finalize(g);
    pm_bound b;
    assert_int_equal(pm_bound_compute(g, NULL, &b, NULL), PM_OK);
    pm_rat want;
    assert_int_equal(pm_rat_make(big + 5, (INT64_C(1) << 61) + 1, &want), PM_OK);
    /* (2^62 - 95) / (2^61 + 1), about 2, beats the self-loop 5/3 */
    assert_int_equal(pm_rat_cmp(b.iteration_bound, want), 0);
    pm_bound_free(&b);
    /* a second edge pushes the sum of delays past 62 bits */
    pm_graph_destroy(g);
    g = pm_graph_create("over");
    pm_graph_add_node(g, "a", 1, 1, &a);
    e = pm_graph_edge_default(a, a);
    e.delay = PM_MAX_VALUE;
    pm_graph_add_edge(g, &e, NULL);
    pm_graph_add_edge(g, &e, NULL);
    pm_graph_finalize(g);
    pm_diag d;
    assert_int_equal(pm_bound_compute(g, NULL, &b, &d), PM_ERANGE);
    pm_graph_destroy(g);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_zero_delay_loop_is_named_in_order),
        cmocka_unit_test(test_zero_delay_long_loop_is_shortened),
        cmocka_unit_test(test_feed_forward_graph_has_no_loop),
        cmocka_unit_test(test_self_loops_parallel_edges_and_zero_times),
        cmocka_unit_test(test_all_loops_critical_and_the_limit),
        cmocka_unit_test(test_multirate_and_class_times),
        cmocka_unit_test(test_floors_binding_and_budget),
        cmocka_unit_test(test_scaling_node_times_scales_the_bound),
        cmocka_unit_test(test_delay_on_critical_loop_never_raises),
        cmocka_unit_test(test_karp_cross_check_equals_howard),
        cmocka_unit_test(test_certificate_accepts_bound_rejects_less),
        cmocka_unit_test(test_large_values_stay_exact),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
