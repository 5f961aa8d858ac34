/*
 * test_sched_loops.c - loop awareness: the loop-time floor of maps (worked
 * by hand), and the loop-aware scheduler against its loop-blind variant on
 * a receive chain with a tracking loop (an invented demonstration graph).
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>

#include <cmocka.h>

#include "pacemap/bound.h"
#include "pacemap/map.h"
#include "pacemap/reader.h"
#include "pacemap/sdf.h"
#include "pacemap/sched.h"
#include "pacemap/sim.h"
#include "sched_testlib.h"
#include "support/sched_checker.h"

/* a (7) -> b (5) -> a with 2 delays on b -> a.  Latency 10, per word 1,
 * 2 words, send 3, recv 4: a crossing costs 3 + 12 + 4 = 19.
 * One core: (7 + 5) / 2 = 6.  Split: (7 + 5 + 2 * 19) / 2 = 25. */
static void test_floor_by_hand(void **state)
{
    (void)state;
    pm_graph *g = tl_graph(2);
    uint32_t a = tl_node(g, "a", 7), b = tl_node(g, "b", 5);
    tl_node(g, "lone", 100);
    tl_edge(g, a, b, 0, 2);
    tl_edge(g, b, a, 2, 2);
    tl_comm(g, 10, 1, 3, 4, PM_P2P);
    pm_graph_finalize(g);
    uint32_t l0[] = {0, 1}, l1[] = {2}, s0[] = {0}, s1[] = {1, 2}, c2[] = {2, 1}, c11[] = {1, 2};
    const uint32_t *same[] = {l0, l1}, *split[] = {s0, s1};
    pm_map *m1 = NULL, *m2 = NULL;
    pm_map_create(2, 3, same, c2, &m1);
    pm_map_create(2, 3, split, c11, &m2);
    pm_rat f;
    uint32_t *loop = NULL, n = 0;
    pm_diag d;
    assert_int_equal(pm_sched_loop_floor(g, m1, &f, &loop, &n, &d), PM_OK);
    assert_int_equal(f.num, 6);
    assert_int_equal(f.den, 1);
    assert_int_equal(n, 2);
    free(loop);
    assert_int_equal(pm_sched_loop_floor(g, m2, &f, NULL, &n, &d), PM_OK);
    assert_int_equal(f.num, 25);
    assert_int_equal(f.den, 1);
    pm_map_destroy(m1);
    pm_map_destroy(m2);
    pm_graph_destroy(g);
}

/* Two loops: x -> y -> x (3 + 4 over 3 delays = 7/3) and a self-loop z
 * (2 over 1 = 2); the floor is 7/3 on one core.  No loop at all: 0, and
 * no loop nodes. */
static void test_floor_fraction_and_none(void **state)
{
    (void)state;
    pm_graph *g = tl_graph(1);
    uint32_t x = tl_node(g, "x", 3), y = tl_node(g, "y", 4), z = tl_node(g, "z", 2);
    tl_edge(g, x, y, 1, 1);
    tl_edge(g, y, x, 2, 1);
    tl_edge(g, z, z, 1, 1);
    pm_graph_finalize(g);
    uint32_t l0[] = {0, 1, 2}, cnt[] = {3};
    const uint32_t *lists[] = {l0};
    pm_map *m = NULL;
    pm_map_create(1, 3, lists, cnt, &m);
    pm_rat f;
    uint32_t n = 0, *loop = NULL;
    pm_diag d;
    assert_int_equal(pm_sched_loop_floor(g, m, &f, &loop, &n, &d), PM_OK);
    assert_int_equal(f.num, 7);
    assert_int_equal(f.den, 3);
    assert_int_equal(n, 2);
    assert_true((loop[0] == x && loop[1] == y) || (loop[0] == y && loop[1] == x));
    free(loop);
    pm_map_destroy(m);
    pm_graph_destroy(g);

    g = tl_graph(1);
    tl_node(g, "p", 3);
    tl_node(g, "q", 3);
    tl_edge(g, 0, 1, 0, 1);
    pm_graph_finalize(g);
    uint32_t l1[] = {0, 1}, c1[] = {2};
    const uint32_t *lists1[] = {l1};
    pm_map_create(1, 2, lists1, c1, &m);
    assert_int_equal(pm_sched_loop_floor(g, m, &f, &loop, &n, &d), PM_OK);
    assert_int_equal(f.num, 0);
    assert_int_equal(n, 0);
    assert_null(loop);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

/* An invented receive chain: source -> mixer -> (tracking loop: phase
 * detector -> loop filter -> NCO -> mixer, one delay) and mixer -> two
 * channel filters -> decimator -> sink.  Transfers cost 20 + 4 words. */
static pm_graph *receive_chain(uint32_t P)
{
    pm_graph *g = tl_graph(P);
    uint32_t src = tl_node(g, "src", 10), mix = tl_node(g, "mixer", 20);
    uint32_t pd = tl_node(g, "phase_det", 15), lf = tl_node(g, "loop_filter", 10);
    uint32_t nco = tl_node(g, "nco", 25), f1 = tl_node(g, "fir1", 60);
    uint32_t f2 = tl_node(g, "fir2", 60), dec = tl_node(g, "decim", 40);
    uint32_t out = tl_node(g, "sink", 10);
    tl_edge(g, src, mix, 0, 4);
    tl_edge(g, mix, pd, 0, 4);
    tl_edge(g, pd, lf, 0, 4);
    tl_edge(g, lf, nco, 0, 4);
    tl_edge(g, nco, mix, 1, 4);
    tl_edge(g, mix, f1, 0, 4);
    tl_edge(g, f1, f2, 0, 4);
    tl_edge(g, f2, dec, 0, 4);
    tl_edge(g, dec, out, 0, 4);
    tl_edge(g, lf, dec, 0, 4); /* lock indicator gates the output */
    tl_comm(g, 20, 1, 0, 0, PM_P2P);
    pm_graph_finalize(g);
    return g;
}

static pm_rat floor_of(const pm_graph *g, bool blind)
{
    pm_sched_opts o = {.loop_blind = blind};
    pm_schedule *s = NULL;
    pm_map *m = NULL;
    pm_diag d;
    assert_int_equal(pm_sched_list(g, &o, &s, &m, &d), PM_OK);
    assert_null(sched_checker_verify(g, s));
    pm_rat f;
    uint32_t n;
    assert_int_equal(pm_sched_loop_floor(g, m, &f, NULL, &n, &d), PM_OK);
    pm_sched_destroy(s);
    pm_map_destroy(m);
    return f;
}

static void test_loop_aware_beats_blind(void **state)
{
    (void)state;
    for (uint32_t P = 2; P <= 3; P++) {
        pm_graph *g = receive_chain(P);
        pm_rat aware = floor_of(g, false), blind = floor_of(g, true);
        /* the loop alone: 20 + 15 + 10 + 25 = 70 cycles over 1 delay (by hand) */
        assert_int_equal(aware.num, 70);
        assert_int_equal(aware.den, 1);
        print_message("P=%u loop-time floor: aware %lld/%lld, blind %lld/%lld\n", P,
                      (long long)aware.num, (long long)aware.den, (long long)blind.num,
                      (long long)blind.den);
        assert_true(pm_rat_cmp(blind, aware) > 0);
        pm_graph_destroy(g);
    }
}

/* The simulated period of the list scheduler's map (self-timed run of
 * pm_sim_run), checked by the independent checker on the way. */
static pm_rat sim_period_of(const pm_graph *g, bool blind)
{
    pm_sched_opts o = {.loop_blind = blind};
    pm_schedule *s = NULL;
    pm_map *m = NULL;
    pm_diag d;
    assert_int_equal(pm_sched_list(g, &o, &s, &m, &d), PM_OK);
    assert_null(sched_checker_verify(g, s));
    pm_sim_opts so = {.iterations = 200};
    pm_sim_result r = {0};
    assert_int_equal(pm_sim_run(g, m, &so, &r, &d), PM_OK);
    pm_rat p = r.period;
    pm_sim_result_free(&r);
    pm_sched_destroy(s);
    pm_map_destroy(m);
    return p;
}

/* The same receive chain, in the simulator: the loop-aware map runs with a
 * shorter period than the loop-blind one, and the loop that sets the
 * iteration bound (70 cycles over 1 delay, by hand) still binds it from
 * below. */
static void test_loop_aware_beats_blind_simulated(void **state)
{
    (void)state;
    for (uint32_t P = 2; P <= 4; P++) {
        pm_graph *g = receive_chain(P);
        pm_rat aware = sim_period_of(g, false), blind = sim_period_of(g, true);
        print_message("P=%u simulated period: aware %lld/%lld, blind %lld/%lld\n", P,
                      (long long)aware.num, (long long)aware.den, (long long)blind.num,
                      (long long)blind.den);
        assert_true(pm_rat_cmp(aware, pm_rat_int(70)) >= 0);
        assert_true(pm_rat_cmp(blind, aware) > 0);
        pm_graph_destroy(g);
    }
}

/* The demo decimating receiver (scenarios/rx_decimating.pace, invented),
 * expanded to single rate, on 2 cores.  Its tracking part (16000 cycles)
 * exceeds the floor T = iteration bound, but the loop that sets the bound
 * fits, so that loop's firings share a core; the self-timed period of the
 * loop-aware map is closer to the bound than the loop-blind one's, and no
 * map beats the bound. */
static void test_decimating_receiver(void **state)
{
    (void)state;
    pm_graph *src = NULL, *g = NULL;
    uint64_t *rep = NULL;
    pm_diag d;
    uint32_t two = 2;
    assert_int_equal(pm_reader_read_file("scenarios/rx_decimating.pace", &src, &d), PM_OK);
    assert_int_equal(pm_graph_set_cores(src, 1, NULL, &two), PM_OK);
    assert_int_equal(pm_sdf_single_rate(src, &g, &rep, NULL, &d), PM_OK);
    pm_bound b = {0};
    assert_int_equal(pm_bound_compute(g, NULL, &b, &d), PM_OK);
    assert_true(b.has_loop && b.nparts >= 1);
    pm_map *m = NULL;
    assert_int_equal(pm_sched_list(g, NULL, NULL, &m, &d), PM_OK);
    const pm_loop *worst = &b.parts[0].worst;
    for (uint32_t i = 1; i < worst->len; i++)
        assert_int_equal(m->core_of[worst->nodes[i]], m->core_of[worst->nodes[0]]);
    pm_rat aware = sim_period_of(g, false), blind = sim_period_of(g, true);
    print_message("rx_decimating -p 2, firings: aware %lld/%lld, blind %lld/%lld, bound "
                  "%lld/%lld\n", (long long)aware.num, (long long)aware.den,
                  (long long)blind.num, (long long)blind.den,
                  (long long)b.iteration_bound.num, (long long)b.iteration_bound.den);
    assert_true(pm_rat_cmp(aware, b.iteration_bound) >= 0);
    assert_true(pm_rat_cmp(blind, aware) > 0);
    pm_map_destroy(m);
    pm_bound_free(&b);
    free(rep);
    pm_graph_destroy(g);
    pm_graph_destroy(src);
}

/* A loop whose work (70) exceeds the target period (50) is not kept
 * together: the result is the loop-blind one. */
static void test_loop_rule_respects_target(void **state)
{
    (void)state;
    pm_graph *g = receive_chain(2);
    pm_sched_opts o = {.target_period = 50}, blind = {.loop_blind = true};
    pm_schedule *s = NULL, *b = NULL;
    pm_diag d;
    assert_int_equal(pm_sched_list(g, &o, &s, NULL, &d), PM_OK);
    assert_int_equal(pm_sched_list(g, &blind, &b, NULL, &d), PM_OK);
    assert_null(sched_checker_verify(g, s));
    assert_null(sched_checker_verify(g, b));
    assert_memory_equal(s->slots, b->slots, g->nnodes * sizeof *s->slots);
    pm_sched_destroy(s);
    pm_sched_destroy(b);
    pm_graph_destroy(g);
}

/* One ring of 100000 nodes, edges added against the ring's direction, 3
 * delays: the only cycle is the ring, so on one core the floor is the sum
 * of the node times over 3 (worked out here by the formula). */
static void test_floor_large_ring(void **state)
{
    (void)state;
    const uint32_t n = 100000;
    pm_graph *g = tl_graph(1);
    char name[32];
    int64_t total = 0;
    for (uint32_t i = 0; i < n; i++) {
        snprintf(name, sizeof name, "r%u", i);
        tl_node(g, name, (int64_t)(i % 7) + 1);
        total += (int64_t)(i % 7) + 1;
    }
    for (uint32_t i = n; i-- > 0;)
        tl_edge(g, i, (i + 1) % n, i % 40000 == 0 ? 1 : 0, 1);
    pm_graph_finalize(g);
    pm_map *m = NULL;
    pm_diag d;
    assert_int_equal(pm_sched_list(g, NULL, NULL, &m, &d), PM_OK);
    pm_rat f, want;
    uint32_t len = 0;
    assert_int_equal(pm_sched_loop_floor(g, m, &f, NULL, &len, &d), PM_OK);
    assert_int_equal(pm_rat_make(total, 3, &want), PM_OK);
    assert_int_equal(pm_rat_cmp(f, want), 0);
    assert_int_equal(len, n);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_floor_by_hand),
        cmocka_unit_test(test_floor_fraction_and_none),
        cmocka_unit_test(test_loop_aware_beats_blind),
        cmocka_unit_test(test_loop_aware_beats_blind_simulated),
        cmocka_unit_test(test_decimating_receiver),
        cmocka_unit_test(test_loop_rule_respects_target),
        cmocka_unit_test(test_floor_large_ring),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
