/*
 * test_order.c - the zero-delay order and the zero-delay-loop finder
 * (pacemap/order.h): Kahn's order by both rules on a hand-worked graph,
 * cycles detected, and the one loop that 'check' (pm_order_check_zero_delay),
 * 'bound' (pm_bound_compute) and the scheduler (pm_sched_list) all report.
 * On random graphs the loop found is checked against definitions computed
 * another way here (Floyd-Warshall shortest paths over the edges without
 * delay): it is a cycle of such edges, through the lowest node on any such
 * cycle, and no cycle through that node is shorter.
 * Expected values are worked out by hand in the comments.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "pacemap/bound.h"
#include "pacemap/order.h"
#include "pacemap/sched.h"

/* A graph from "name:cycles" nodes and "a>b:delay" edges; edge i is given line i+1, column 6, like a scenario
 * whose edge lines come first. */
static pm_graph *mk(const char *nodes, const char *edges)
{
    pm_graph *g = pm_graph_create("t.pace");
    char name[64], a[64], b[64];
    long long c, d;
    int n;
    for (const char *p = nodes; sscanf(p, " %63[^:]:%lld%n", name, &c, &n) == 2; p += n)
        assert_int_equal(pm_graph_add_node(g, name, strlen(name), c, NULL), PM_OK);
    uint32_t line = 1;
    for (const char *p = edges; sscanf(p, " %63[^>]>%63[^:]:%lld%n", a, b, &d, &n) == 3;
         p += n) {
        pm_edge e = pm_graph_edge_default(pm_graph_find(g, a, strlen(a)),
                                    pm_graph_find(g, b, strlen(b)));
        assert_true(e.src != PM_NONE && e.dst != PM_NONE);
        e.delay = d;
        e.line = line++;
        e.col = 6;
        assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
    }
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    return g;
}

/* The CSR graph of the order tests:
 *   0 -> 3;  1 -> 0, 1 -> 4;  2 -> 0;  4 -> 3      (positions 0..4)
 * in-degrees: 0:2 1:0 2:0 3:2 4:1. */
static const uint32_t csr_off[] = { 0, 1, 3, 4, 4, 5 };
static const uint32_t csr_dst[] = { 3, 0, 4, 0, 3 };

static void test_fifo_order_by_hand(void **state)
{
    (void)state;
    /* queue [1 2]; take 1: 4 ready -> [2 4]; take 2: 0 ready -> [4 0];
     * take 4: 3 waits for 0; take 0: 3 ready -> [3]; take 3. */
    uint32_t order[5], count = 0;
    assert_int_equal(pm_order_csr(5, csr_off, csr_dst, NULL, PM_ORDER_FIFO, order, &count),
                     PM_OK);
    const uint32_t want[] = { 1, 2, 4, 0, 3 };
    assert_int_equal(count, 5);
    assert_memory_equal(order, want, sizeof want);
}

static void test_smallest_order_by_hand(void **state)
{
    (void)state;
    /* ready {1 2}: take 1, 4 ready -> {2 4}; take 2, 0 ready -> {0 4};
     * take 0 (smaller than 4), 3 waits for 4; take 4, 3 ready; take 3. */
    uint32_t order[5], count = 0;
    assert_int_equal(pm_order_csr(5, csr_off, csr_dst, NULL, PM_ORDER_SMALLEST, order, &count),
                     PM_OK);
    const uint32_t want[] = { 1, 2, 0, 4, 3 };
    assert_int_equal(count, 5);
    assert_memory_equal(order, want, sizeof want);
}

static void test_skipped_positions_are_not_edges(void **state)
{
    (void)state;
    /* without position 3 (2 -> 0), node 0 waits for 1 only: queue [1 2];
     * take 1: 0 and 4 ready -> [2 0 4]; take 2; take 0: 3 waits for 4;
     * take 4: 3 ready; take 3. */
    const uint8_t skip[] = { 0, 0, 0, 7, 0 };
    uint32_t order[5], count = 0;
    assert_int_equal(pm_order_csr(5, csr_off, csr_dst, skip, PM_ORDER_FIFO, order, &count),
                     PM_OK);
    const uint32_t want[] = { 1, 2, 0, 4, 3 };
    assert_int_equal(count, 5);
    assert_memory_equal(order, want, sizeof want);
}

static void test_cycle_leaves_nodes_unsorted(void **state)
{
    (void)state;
    /* 0 -> 1 -> 2 -> 1, 2 -> 3: only 0 is ever ready; 1 and 2 lie on the
     * cycle, 3 behind it. */
    const uint32_t off[] = { 0, 1, 2, 4, 4 }, dst[] = { 1, 2, 1, 3 };
    uint32_t order[4], count = 9;
    assert_int_equal(pm_order_csr(4, off, dst, NULL, PM_ORDER_FIFO, order, &count), PM_OK);
    assert_int_equal(count, 1);
    assert_int_equal(order[0], 0);
    assert_int_equal(pm_order_csr(4, off, dst, NULL, PM_ORDER_SMALLEST, order, &count), PM_OK);
    assert_int_equal(count, 1);
}

static void test_graph_order_ignores_delayed_edges(void **state)
{
    (void)state;
    /* c -> a carries a delay, so the loop a -> b -> c -> a does not stop
     * the order: queue [a d]; take a: b ready -> [d b]; take d: c still
     * waits for b; take b: c ready; take c. */
    pm_graph *g = mk("a:1 b:1 c:1 d:1", "a>b:0 b>c:0 c>a:1 d>c:0");
    uint32_t order[4], count = 0;
    assert_int_equal(pm_order_zero_delay(g, PM_ORDER_FIFO, order, &count), PM_OK);
    const uint32_t want[] = { 0, 3, 1, 2 };
    assert_int_equal(count, 4);
    assert_memory_equal(order, want, sizeof want);
    pm_zero_loop l;
    assert_int_equal(pm_order_zero_loop(g, &l), PM_OK);
    assert_int_equal(l.len, 0);
    pm_diag d;
    assert_int_equal(pm_order_check_zero_delay(g, &d), PM_OK);
    pm_graph_destroy(g);
}

/* The scenario
 *   1 node a / 2 node b / 3 node c
 *   4 edge a -> b / 5 edge b -> c / 6 edge c -> a / 7 edge b -> a
 * holds two loops without delay, a -> b -> c -> a and a -> b -> a.  The
 * lowest node on one is a; breadth first from a: a -> b, then from b the
 * edge b -> c and the edge b -> a, which returns to a: the loop is
 * a -> b -> a, reported at its last written edge, b -> a on line 7. */
static pm_graph *chord(void)
{
    pm_graph *g = mk("a:1 b:1 c:1", "a>b:0 b>c:0 c>a:0 b>a:0");
    for (uint32_t e = 0; e < g->nedges; e++)
        g->edges[e].line = e + 4;
    return g;
}

static void test_chord_loop_is_the_same_everywhere(void **state)
{
    (void)state;
    pm_graph *g = chord();
    pm_zero_loop l;
    assert_int_equal(pm_order_zero_loop(g, &l), PM_OK);
    const uint32_t nodes[] = { 0, 1 }, edges[] = { 0, 3 };
    assert_int_equal(l.len, 2);
    assert_memory_equal(l.nodes, nodes, sizeof nodes);
    assert_memory_equal(l.edges, edges, sizeof edges);
    assert_int_equal(l.at, 3);
    pm_order_zero_loop_free(&l);
    const char *want = "loop without delay: a -> b -> a (add a delay on one of its edges)";
    pm_diag d;
    assert_int_equal(pm_order_check_zero_delay(g, &d), PM_EZERODELAY); /* check */
    assert_string_equal(d.msg, want);
    assert_int_equal(d.line, 7);
    assert_int_equal(d.col, 6);
    pm_bound b;
    memset(&d, 0, sizeof d);
    assert_int_equal(pm_bound_compute(g, NULL, &b, &d), PM_EZERODELAY); /* bound, dot */
    assert_string_equal(d.msg, want);
    assert_int_equal(d.line, 7);
    pm_schedule *s = NULL;
    pm_map *m = NULL;
    memset(&d, 0, sizeof d);
    assert_int_equal(pm_sched_list(g, NULL, &s, &m, &d), PM_EZERODELAY); /* schedule */
    assert_string_equal(d.msg, want);
    assert_int_equal(d.line, 7);
    pm_graph_destroy(g);
}

static void test_loop_starts_at_lowest_node_on_a_loop(void **state)
{
    (void)state;
    /* u (node 0) is fed by the loop v -> w -> v but lies on none: the loop
     * is v -> w -> v, at w -> v (edge 2, line 3); the self-loop s -> s
     * (node 3) has a higher node. */
    pm_graph *g = mk("u:1 v:1 w:1 s:1", "v>u:0 v>w:0 w>v:0 s>s:0");
    pm_zero_loop l;
    assert_int_equal(pm_order_zero_loop(g, &l), PM_OK);
    const uint32_t nodes[] = { 1, 2 };
    assert_int_equal(l.len, 2);
    assert_memory_equal(l.nodes, nodes, sizeof nodes);
    assert_int_equal(l.at, 2);
    pm_order_zero_loop_free(&l);
    pm_graph_destroy(g);
    /* a self-loop alone: the loop of one edge */
    g = mk("s:1 t:1", "t>s:0 s>s:0");
    assert_int_equal(pm_order_zero_loop(g, &l), PM_OK);
    assert_int_equal(l.len, 1);
    assert_int_equal(l.nodes[0], 0);
    assert_int_equal(l.edges[0], 1);
    pm_order_zero_loop_free(&l);
    pm_graph_destroy(g);
}

/* ---- random graphs against Floyd-Warshall ------------------------------- */

#define RN 9
#define INF 1000

static uint32_t rnd(uint64_t *s, uint32_t n)
{
    *s = *s * 6364136223846793005ULL + 1442695040888963407ULL;
    return (uint32_t)((*s >> 33) % n);
}

static pm_graph *random_graph(uint64_t *seed, int dist[RN][RN])
{
    pm_graph *g = pm_graph_create("r.pace");
    char name[8];
    for (uint32_t v = 0; v < RN; v++) {
        int len = snprintf(name, sizeof name, "n%u", v);
        pm_graph_add_node(g, name, (size_t)len, 1, NULL);
    }
    for (int i = 0; i < RN; i++)
        for (int j = 0; j < RN; j++)
            dist[i][j] = INF;
    uint32_t m = 4 + rnd(seed, 12);
    for (uint32_t k = 0; k < m; k++) {
        pm_edge e = pm_graph_edge_default(rnd(seed, RN), rnd(seed, RN));
        e.delay = rnd(seed, 3) == 0;
        e.line = k + 1;
        pm_graph_add_edge(g, &e, NULL);
        if (e.delay == 0)
            dist[e.src][e.dst] = 1;
    }
    pm_graph_finalize(g);
    for (int k = 0; k < RN; k++) /* dist[i][i]: the shortest loop through i */
        for (int i = 0; i < RN; i++)
            for (int j = 0; j < RN; j++)
                if (dist[i][k] + dist[k][j] < dist[i][j])
                    dist[i][j] = dist[i][k] + dist[k][j];
    return g;
}

static void check_loop(const pm_graph *g, const pm_zero_loop *l, int dist[RN][RN])
{
    int low = 0;
    while (low < RN && dist[low][low] >= INF)
        low++;
    if (low == RN) {
        assert_int_equal(l->len, 0);
        return;
    }
    assert_int_equal(l->nodes[0], low);
    assert_int_equal(l->len, dist[low][low]);
    uint32_t at = 0;
    for (uint32_t i = 0; i < l->len; i++) {
        const pm_edge *e = &g->edges[l->edges[i]];
        assert_int_equal(e->delay, 0);
        assert_int_equal(e->src, l->nodes[i]);
        assert_int_equal(e->dst, l->nodes[(i + 1) % l->len]);
        at = l->edges[i] > at ? l->edges[i] : at;
    }
    assert_int_equal(l->at, at);
}

static void test_random_loops_match_floyd_warshall(void **state)
{
    (void)state;
    uint64_t seed = 12345;
    for (int t = 0; t < 2000; t++) {
        int dist[RN][RN];
        pm_graph *g = random_graph(&seed, dist);
        pm_zero_loop l;
        uint32_t order[RN], count = 0;
        assert_int_equal(pm_order_zero_loop(g, &l), PM_OK);
        check_loop(g, &l, dist);
        assert_int_equal(pm_order_zero_delay(g, PM_ORDER_SMALLEST, order, &count), PM_OK);
        assert_int_equal(count == RN, l.len == 0);
        uint32_t pos[RN];
        for (uint32_t i = 0; i < count; i++)
            pos[order[i]] = i;
        for (uint32_t e = 0; count == RN && e < g->nedges; e++)
            if (g->edges[e].delay == 0)
                assert_true(pos[g->edges[e].src] < pos[g->edges[e].dst]);
        pm_order_zero_loop_free(&l);
        pm_graph_destroy(g);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_fifo_order_by_hand),
        cmocka_unit_test(test_smallest_order_by_hand),
        cmocka_unit_test(test_skipped_positions_are_not_edges),
        cmocka_unit_test(test_cycle_leaves_nodes_unsorted),
        cmocka_unit_test(test_graph_order_ignores_delayed_edges),
        cmocka_unit_test(test_chord_loop_is_the_same_everywhere),
        cmocka_unit_test(test_loop_starts_at_lowest_node_on_a_loop),
        cmocka_unit_test(test_random_loops_match_floyd_warshall),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
