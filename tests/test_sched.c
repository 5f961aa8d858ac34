/*
 * test_sched.c - the list scheduler and map timing: hand-worked cases with
 * transfer costs, send/receive occupancy and a bus (expected slots worked
 * out by hand from the rules in sched.h), Graham's anomaly in greedy mode,
 * random graphs checked by the independent checker (tests/support), lower
 * bounds, map round trips, the loop rule and the loop-time floor, errors.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>

#include <cmocka.h>

#include "pacemap/map.h"
#include "pacemap/sched.h"
#include "sched_testlib.h"
#include "support/sched_checker.h"

static void expect_slot(const pm_schedule *s, uint32_t v, uint32_t core, int64_t a, int64_t b)
{
    assert_int_equal(s->slots[v].core, core);
    assert_int_equal(s->slots[v].start, a);
    assert_int_equal(s->slots[v].end, b);
}

static pm_schedule *run_checked(const pm_graph *g, const pm_sched_opts *o, pm_map **map)
{
    pm_schedule *s = NULL;
    pm_diag d;
    pm_diag_clear(&d);
    int rc = pm_sched_list(g, o, &s, map, &d);
    if (rc != PM_OK)
        print_error("pm_sched_list: %s: %s\n", pm_error_name(rc), d.msg);
    assert_int_equal(rc, PM_OK);
    const char *bad = sched_checker_verify(g, s);
    if (bad)
        print_error("checker: %s\n", bad);
    assert_null(bad);
    return s;
}

/* Fork-join a -> {b, c} -> d on 2 cores, cost = 10 + 2*1 = 12 cycles.
 * By hand: ranks a 42, b = c 31, d 5 (share 1/2 of 12 = 6).  a on core 0
 * [0,5); b: core 0 ends 25 vs core 1 (arrival 17) 37 -> core 0 [5,25);
 * c: core 0 45 vs core 1 [17,37) -> core 1; d: core 0 needs c at 49,
 * core 1 needs b at 37 -> core 1 [37,42).  Makespan 42. */
static void test_hand_p2p(void **state)
{
    (void)state;
    pm_graph *g = tl_graph(2);
    uint32_t a = tl_node(g, "a", 5), b = tl_node(g, "b", 20), c = tl_node(g, "c", 20),
             d = tl_node(g, "d", 5);
    tl_edge(g, a, b, 0, 1);
    tl_edge(g, a, c, 0, 1);
    tl_edge(g, b, d, 0, 1);
    tl_edge(g, c, d, 0, 1);
    tl_comm(g, 10, 2, 0, 0, PM_P2P);
    pm_graph_finalize(g);
    pm_schedule *s = run_checked(g, NULL, NULL);
    expect_slot(s, a, 0, 0, 5);
    expect_slot(s, b, 0, 5, 25);
    expect_slot(s, c, 1, 17, 37);
    expect_slot(s, d, 1, 37, 42);
    assert_int_equal(s->makespan, 42);
    assert_int_equal(s->ntransfers, 2);
    assert_int_equal(s->transfers[0].src, a); /* a -> c leaves at 5, arrives 17 */
    assert_int_equal(s->transfers[0].wire_start, 5);
    assert_int_equal(s->transfers[0].arrival, 17);
    assert_int_equal(s->transfers[1].src, b); /* b -> d: 25 -> 37 */
    assert_int_equal(s->transfers[1].arrival, 37);
    assert_int_equal(s->busy[0], 25);
    assert_int_equal(s->busy[1], 25);
    pm_sched_destroy(s);
    pm_graph_destroy(g);
}

/* One producer a (core 0, 10 cycles) feeds b (core 1) and c (core 2), cost
 * 10 each.  p2p: both arrive at 20.  Bus: a -> b holds the bus [10,20),
 * a -> c waits for it: [20,30), so c runs [30,35). */
static void hand_bus_case(pm_interconnect ic, int64_t c_start)
{
    pm_graph *g = tl_graph(3);
    uint32_t a = tl_node(g, "a", 10), b = tl_node(g, "b", 5), c = tl_node(g, "c", 5);
    tl_edge(g, a, b, 0, 1);
    tl_edge(g, a, c, 0, 1);
    g->nodes[a].pin_core = 0;
    g->nodes[b].pin_core = 1;
    g->nodes[c].pin_core = 2;
    tl_comm(g, 10, 0, 0, 0, ic);
    pm_graph_finalize(g);
    pm_schedule *s = run_checked(g, NULL, NULL);
    expect_slot(s, a, 0, 0, 10);
    expect_slot(s, b, 1, 20, 25);
    expect_slot(s, c, 2, c_start, c_start + 5);
    assert_int_equal(s->transfers[1].wire_start, c_start - 10);
    assert_int_equal(s->makespan, c_start + 5);
    pm_sched_destroy(s);
    pm_graph_destroy(g);
}

static void test_hand_bus(void **state)
{
    (void)state;
    hand_bus_case(PM_P2P, 20);
    hand_bus_case(PM_BUS, 30);
}

/* Send/receive occupancy: latency 3, per-word 1, 2 words (cost 5), send 2,
 * recv 4.  a (core 0, 6) -> b (core 1, 3); z (core 1, 10) unrelated.
 * a [0,6), send [6,8) on core 0, wire [8,13), z [0,10), receive [13,17)
 * on core 1, b [17,20).  Busy: core 0 = 6 + 2, core 1 = 10 + 4 + 3. */
static void test_hand_send_recv(void **state)
{
    (void)state;
    pm_graph *g = tl_graph(2);
    uint32_t a = tl_node(g, "a", 6), b = tl_node(g, "b", 3), z = tl_node(g, "z", 10);
    tl_edge(g, a, b, 0, 2);
    g->nodes[a].pin_core = 0;
    g->nodes[b].pin_core = 1;
    g->nodes[z].pin_core = 1;
    tl_comm(g, 3, 1, 2, 4, PM_P2P);
    pm_graph_finalize(g);
    pm_schedule *s = run_checked(g, NULL, NULL);
    expect_slot(s, a, 0, 0, 6);
    expect_slot(s, z, 1, 0, 10);
    expect_slot(s, b, 1, 17, 20);
    const pm_transfer *t = &s->transfers[0];
    assert_int_equal(t->send_start, 6);
    assert_int_equal(t->send_end, 8);
    assert_int_equal(t->arrival, 13);
    assert_int_equal(t->recv_start, 13);
    assert_int_equal(t->recv_end, 17);
    assert_int_equal(s->busy[0], 8);
    assert_int_equal(s->busy[1], 17);
    pm_sched_destroy(s);
    pm_graph_destroy(g);
}

/* Regression: with send occupancy the estimate used to put a producer's
 * send after whatever already followed it on its core, so every remote
 * placement looked late and all nodes piled onto core 0 (makespan 1520).
 * s (10) -> a, b, c (500 each) -> t (10), latency 20, send 2, 1 word, 3
 * cores.  Worked by hand with the map rule: a, b, c on distinct cores; s
 * [0,10) and its two sends [10,14) on its core, so its local consumer runs
 * [14,514) and the remote ones get data at 32 and 34, ending 532 and 534;
 * t beside the last of them: the other two arrive at 514 + 2 + 20 = 536
 * and 532 + 2 + 20 = 554, so t runs [554,564).  The worst placement of t
 * (beside a) ends at 534 + 2 + 20 + 10 = 566. */
static void test_send_spreads(void **state)
{
    (void)state;
    pm_graph *g = tl_graph(3);
    uint32_t s0 = tl_node(g, "s", 10), t = PM_NONE, mid[3];
    for (uint32_t i = 0; i < 3; i++) {
        char name[2] = {(char)('a' + i), 0};
        mid[i] = tl_node(g, name, 500);
    }
    t = tl_node(g, "t", 10);
    for (uint32_t i = 0; i < 3; i++)
        tl_edge(g, s0, mid[i], 0, 1);
    for (uint32_t i = 0; i < 3; i++)
        tl_edge(g, mid[i], t, 0, 1);
    tl_comm(g, 20, 0, 2, 0, PM_P2P);
    pm_graph_finalize(g);
    pm_schedule *s = run_checked(g, NULL, NULL);
    assert_int_not_equal(s->slots[mid[0]].core, s->slots[mid[1]].core);
    assert_int_not_equal(s->slots[mid[0]].core, s->slots[mid[2]].core);
    assert_int_not_equal(s->slots[mid[1]].core, s->slots[mid[2]].core);
    assert_true(s->makespan >= 564 && s->makespan <= 566);
    pm_sched_destroy(s);
    pm_graph_destroy(g);
}

/* Graham's anomaly (R. L. Graham, "Bounds on multiprocessing timing
 * anomalies", SIAM J. Appl. Math. 17(2), 1969): T1..T9 with times
 * 3,2,2,2,4,4,4,4,9, edges T1->T9, T4->T5..T8, list T1..T9: 12 on 3
 * cores, 15 on 4 (figures as given in the published example; also in
 * $PM_REFDATA/graham_anomaly.pace, checked in test_sched_ref.c). */
static int64_t graham_makespan(uint32_t P, int64_t minus)
{
    static const int64_t t[9] = {3, 2, 2, 2, 4, 4, 4, 4, 9};
    pm_graph *g = tl_graph(P);
    char name[32];
    for (int i = 0; i < 9; i++) {
        snprintf(name, sizeof name, "T%d", i + 1);
        tl_node(g, name, t[i] - minus);
    }
    tl_edge(g, 0, 8, 0, 1);
    for (uint32_t k = 4; k < 8; k++)
        tl_edge(g, 3, k, 0, 1);
    pm_graph_finalize(g);
    uint32_t list[9] = {0, 1, 2, 3, 4, 5, 6, 7, 8};
    pm_sched_opts o = {.greedy = true, .priority = list};
    pm_schedule *s = run_checked(g, &o, NULL);
    int64_t m = s->makespan;
    pm_sched_destroy(s);
    pm_graph_destroy(g);
    return m;
}

static void test_graham_anomaly(void **state)
{
    (void)state;
    assert_int_equal(graham_makespan(3, 0), 12); /* Graham 1969 */
    assert_int_equal(graham_makespan(4, 0), 15); /* Graham 1969: more cores, longer */
    assert_int_equal(graham_makespan(3, 1), 13); /* Graham 1969: all times - 1 */
}

/* A random DAG with platform variations; edges only from lower to higher
 * ids (zero delay) plus a few delayed back edges. */
static pm_graph *random_graph(uint64_t *seed, uint32_t n, uint32_t P, int variant)
{
    pm_graph *g;
    if (variant % 3 == 2) {
        const char *names[2] = {"dsp", "host"};
        uint32_t counts[2] = {P - P / 2, P / 2 ? P / 2 : 1};
        g = pm_graph_create("test");
        pm_graph_set_cores(g, 2, names, counts);
    } else {
        g = tl_graph(P);
    }
    char name[32];
    for (uint32_t v = 0; v < n; v++) {
        snprintf(name, sizeof name, "n%u", v);
        tl_node(g, name, tk_rand(seed, 20));
        if (variant % 3 == 2) {
            int64_t row[2] = {tk_rand(seed, 20), tk_rand(seed, 4) ? (int64_t)tk_rand(seed, 30) : -1};
            pm_graph_set_class_cycles(g, v, row);
        }
        if (tk_rand(seed, 10) == 0)
            g->nodes[v].pin_core = 0;
    }
    for (uint32_t v = 1; v < n; v++)
        for (uint32_t k = 0, m = tk_rand(seed, 3); k < m; k++)
            tl_edge(g, tk_rand(seed, v), v, 0, 1 + tk_rand(seed, 4));
    for (uint32_t k = 0; k < n / 4; k++)
        tl_edge(g, n - 1 - tk_rand(seed, n / 2 + 1), tk_rand(seed, n / 2 + 1), 1, 1);
    int64_t sr = variant % 2 ? 2 : 0;
    tl_comm(g, tk_rand(seed, 8), tk_rand(seed, 3), sr, sr, variant % 4 == 1 ? PM_BUS : PM_P2P);
    pm_graph_finalize(g);
    return g;
}

/* Map text round trip: write, read back, time again: the same slots. */
static void round_trip(const pm_graph *g, const pm_map *m, const pm_schedule *s)
{
    char *buf = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&buf, &len);
    assert_int_equal(pm_map_write(m, g, f), PM_OK);
    fclose(f);
    pm_map *back = NULL;
    pm_diag d;
    int rc = pm_map_read_string(buf, len, "rt.map", g, &back, &d);
    if (rc != PM_OK)
        print_error("%s:%u:%u: %s\n", d.file, d.line, d.col, d.msg);
    assert_int_equal(rc, PM_OK);
    pm_schedule *s2 = NULL;
    assert_int_equal(pm_sched_from_map(g, back, &s2, &d), PM_OK);
    assert_null(sched_checker_verify(g, s2));
    for (uint32_t v = 0; v < g->nnodes; v++) {
        assert_int_equal(s2->slots[v].core, s->slots[v].core);
        assert_int_equal(s2->slots[v].start, s->slots[v].start);
        assert_int_equal(s2->slots[v].end, s->slots[v].end);
    }
    assert_int_equal(s2->makespan, s->makespan);
    pm_sched_destroy(s2);
    pm_map_destroy(back);
    free(buf);
}

static void check_lower_bounds(const pm_graph *g, const pm_schedule *s)
{
    int64_t total = 0;
    for (uint32_t v = 0; v < g->nnodes; v++)
        total += pm_graph_min_cycles(g, v);
    uint32_t P = g->platform.ncores;
    assert_true(s->makespan >= sched_checker_critical_path(g));
    assert_true(s->makespan * P >= total);
}

static void test_random_checked(void **state)
{
    (void)state;
    uint64_t seed = 12345;
    for (int i = 0; i < 1000; i++) {
        uint32_t n = 2 + tk_rand(&seed, 40), P = 1 + tk_rand(&seed, 5);
        pm_graph *g = random_graph(&seed, n, P, i);
        for (int mode = 0; mode < 3; mode++) {
            pm_sched_opts o = {.loop_blind = mode == 1, .greedy = mode == 2};
            pm_map *m = NULL;
            pm_schedule *s = run_checked(g, &o, &m);
            check_lower_bounds(g, s);
            round_trip(g, m, s);
            pm_sched_destroy(s);
            pm_map_destroy(m);
        }
        pm_graph_destroy(g);
    }
}

/* Same input, same output, bit for bit. */
static void test_deterministic(void **state)
{
    (void)state;
    uint64_t s1 = 99, s2 = 99;
    pm_graph *g1 = random_graph(&s1, 60, 4, 1), *g2 = random_graph(&s2, 60, 4, 1);
    pm_schedule *a = run_checked(g1, NULL, NULL), *b = run_checked(g2, NULL, NULL);
    assert_memory_equal(a->slots, b->slots, 60 * sizeof *a->slots);
    assert_int_equal(a->ntransfers, b->ntransfers);
    pm_sched_destroy(a);
    pm_sched_destroy(b);
    pm_graph_destroy(g1);
    pm_graph_destroy(g2);
}

/* Edge cases: an empty graph, one core, times that overflow 62 bits. */
static void test_edge_cases(void **state)
{
    (void)state;
    pm_graph *g = tl_graph(3);
    pm_graph_finalize(g);
    pm_schedule *s = run_checked(g, NULL, NULL);
    assert_int_equal(s->makespan, 0);
    pm_sched_destroy(s);
    pm_graph_destroy(g);

    g = tl_graph(1);
    uint32_t a = tl_node(g, "a", 3), b = tl_node(g, "b", 0), c = tl_node(g, "c", 4);
    tl_edge(g, a, b, 0, 1);
    tl_edge(g, b, c, 0, 1);
    pm_graph_finalize(g);
    s = run_checked(g, NULL, NULL);
    expect_slot(s, b, 0, 3, 3); /* zero-cycle node between its neighbours */
    assert_int_equal(s->makespan, 7);
    pm_sched_destroy(s);
    pm_graph_destroy(g);

    g = tl_graph(1);
    a = tl_node(g, "a", PM_MAX_VALUE);
    b = tl_node(g, "b", PM_MAX_VALUE);
    tl_edge(g, a, b, 0, 1);
    pm_graph_finalize(g);
    pm_diag d;
    assert_int_equal(pm_sched_list(g, NULL, &s, NULL, &d), PM_ERANGE);
    assert_null(s);
    pm_graph_destroy(g);

    /* sends of 2^61 cycles, five after one producer: their times pass 62
     * bits, an error rather than a wrapped product (4 * 2^61 = 2^63) */
    g = tl_graph(2);
    a = tl_node(g, "a", 1);
    for (uint32_t i = 0; i < 5; i++) {
        char name[3] = {'x', (char)('0' + i), 0};
        uint32_t v = tl_node(g, name, 1);
        g->nodes[v].pin_core = 1;
        tl_edge(g, a, v, 0, 1);
    }
    g->nodes[a].pin_core = 0;
    tl_comm(g, 0, 0, INT64_C(1) << 61, 0, PM_P2P);
    pm_graph_finalize(g);
    assert_int_equal(pm_sched_list(g, NULL, &s, NULL, &d), PM_ERANGE);
    assert_null(s);
    pm_graph_destroy(g);
}

/* Random bytes as a map file: an error or a valid map, never a crash. */
static void test_map_garbage(void **state)
{
    (void)state;
    uint64_t seed = 7;
    pm_graph *g = random_graph(&seed, 6, 2, 0);
    static const char alphabet[] = "core 01:n2345#\n\t x";
    for (int i = 0; i < 3000; i++) {
        char buf[64];
        size_t len = tk_rand(&seed, sizeof buf);
        for (size_t k = 0; k < len; k++)
            buf[k] = tk_rand(&seed, 8) ? alphabet[tk_rand(&seed, sizeof alphabet - 1)]
                                       : (char)tk_rand(&seed, 256);
        pm_map *m = NULL;
        pm_diag d;
        int rc = pm_map_read_string(buf, len, "junk.map", g, &m, &d);
        assert_true(rc == PM_OK ? m != NULL : m == NULL);
        if (rc == PM_OK)
            assert_int_equal(pm_map_check(m, g, &d), PM_OK);
        pm_map_destroy(m);
    }
    pm_graph_destroy(g);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_hand_p2p),
        cmocka_unit_test(test_hand_bus),
        cmocka_unit_test(test_hand_send_recv),
        cmocka_unit_test(test_send_spreads),
        cmocka_unit_test(test_graham_anomaly),
        cmocka_unit_test(test_random_checked),
        cmocka_unit_test(test_deterministic),
        cmocka_unit_test(test_edge_cases),
        cmocka_unit_test(test_map_garbage),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
