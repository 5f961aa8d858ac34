/*
 * test_mapexpand.c - maps of a multirate graph's expansion with lags
 * (pm_map_expand, pm_map_collapse, map.h): every firing carries its
 * node's lag, the firing order is one round of the graph retimed by the
 * lags, collapse gives the lags back, and lags that would make an edge's
 * token count negative are refused.
 *
 * Expected orders are worked by hand beside each check from the rule in
 * map.h: an edge u -> v starts a round with delay + (lag[v] - lag[u]) *
 * produce * rep[u] tokens; an entry of a core's list may start only after
 * the entry before it has started; the earliest ready entry fires first.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>

#include <stdlib.h>
#include <string.h>

#include "pacemap/error.h"
#include "pacemap/graph.h"
#include "pacemap/map.h"
#include "pacemap/sdf.h"

typedef struct spec_edge {
    uint32_t src, dst;
    int64_t produce, consume, delay;
} spec_edge;

static pm_graph *build(uint32_t n, const char *const *names, const spec_edge *es, uint32_t ne)
{
    pm_graph *g = pm_graph_create("t.pace");
    assert_non_null(g);
    for (uint32_t v = 0; v < n; v++)
        assert_int_equal(pm_graph_add_node(g, names[v], strlen(names[v]), 10, NULL), PM_OK);
    for (uint32_t i = 0; i < ne; i++) {
        pm_edge e = pm_graph_edge_default(es[i].src, es[i].dst);
        e.produce = es[i].produce;
        e.consume = es[i].consume;
        e.delay = es[i].delay;
        e.line = i + 1;
        assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
    }
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    return g;
}

static pm_map *one_list(uint32_t ncores, uint32_t nnodes, const uint32_t *const *lists,
                        const uint32_t *counts, const uint32_t *lag)
{
    pm_map *m = NULL;
    assert_int_equal(pm_map_create(ncores, nnodes, lists, counts, &m), PM_OK);
    for (uint32_t v = 0; lag && v < nnodes; v++)
        m->lag[v] = lag[v];
    return m;
}

static void expect_map(const pm_map *xm, const uint32_t *off, const uint32_t *order,
                       const uint32_t *lag)
{
    for (uint32_t c = 0; c <= xm->ncores; c++)
        assert_int_equal(xm->off[c], off[c]);
    for (uint32_t k = 0; k < xm->nnodes; k++) {
        assert_int_equal(xm->order[k], order[k]);
        assert_int_equal(xm->lag[k], lag[k]);
    }
}

/* a -(2:1)-> b -(1:2)-> c, no delays: rep = 1, 2, 1; expanded ids a 0,
 * b#0 1, b#1 2, c 3.  Core 0 runs a; core 1 runs c before b, which only a
 * lag allows: with lag[c] = 1, b -> c starts a round with
 * 0 + (1 - 0) * 1 * 2 = 2 tokens, so c (iteration r - 1) fires first, then
 * b#0, b#1 once a has put its 2 tokens on a -> b.  Hand-worked result:
 * core 0 [0], core 1 [3, 1, 2], lags 0 0 0 1.  Without the lag c waits
 * for b, which may not start before it: a deadlock. */
static void test_lag_lets_consumer_go_first(void **state)
{
    (void)state;
    static const spec_edge es[] = {{0, 1, 2, 1, 0}, {1, 2, 1, 2, 0}};
    static const char *const names[] = {"a", "b", "c"};
    pm_graph *g = build(3, names, es, 2);
    uint64_t *rep;
    pm_diag d;
    assert_int_equal(pm_sdf_repetition(g, &rep, &d), PM_OK);
    assert_true(rep[0] == 1 && rep[1] == 2 && rep[2] == 1);
    const uint32_t *lists[2] = {(const uint32_t[]){0}, (const uint32_t[]){2, 1}};
    const uint32_t counts[2] = {1, 2};
    pm_map *m = one_list(2, 3, lists, counts, (const uint32_t[]){0, 0, 1}), *xm, *back;
    assert_int_equal(pm_map_expand(g, rep, m, &xm, &d), PM_OK);
    expect_map(xm, (const uint32_t[]){0, 1, 4}, (const uint32_t[]){0, 3, 1, 2},
               (const uint32_t[]){0, 0, 0, 1});
    assert_int_equal(pm_map_collapse(g, rep, xm, &back, &d), PM_OK);
    expect_map(back, (const uint32_t[]){0, 1, 3}, (const uint32_t[]){0, 2, 1},
               (const uint32_t[]){0, 0, 1}); /* the round trip keeps order and lags */
    pm_map_destroy(back);
    pm_map_destroy(xm);
    m->lag[2] = 0;
    assert_int_equal(pm_map_expand(g, rep, m, &xm, &d), PM_EDEADLOCK);
    assert_null(xm);
    assert_non_null(strstr(d.msg, "core 1 waits at 'c' (0 of 1 firings done)"));
    pm_map_destroy(m);
    free(rep);
    pm_graph_destroy(g);
}

/* src -(2:1)-> a, a -> b, b -> a with one delay: rep src 1, a 2, b 2;
 * ids src 0, a#0 1, a#1 2, b#0 3, b#1 4.  One core, order a b src, lags
 * a = b = 1.  Round-start tokens: src -> a 0 + 1 * 2 * 1 = 2, a -> b 0,
 * b -> a 1 + 0 = 1 (the loop keeps its one delay).  Play: a#0 (b -> a
 * allows one), then b may start: b#0; its token lets a#1 fire (earliest
 * in the list), then b#1; src starts after b: [1, 3, 2, 4, 0], every
 * firing of a and b with lag 1.  Without lags a waits for src, which may
 * not start before it. */
static void test_lags_on_a_loop(void **state)
{
    (void)state;
    static const spec_edge es[] = {{0, 1, 2, 1, 0}, {1, 2, 1, 1, 0}, {2, 1, 1, 1, 1}};
    static const char *const names[] = {"src", "a", "b"};
    pm_graph *g = build(3, names, es, 3);
    uint64_t *rep;
    pm_diag d;
    assert_int_equal(pm_sdf_repetition(g, &rep, &d), PM_OK);
    const uint32_t *lists[1] = {(const uint32_t[]){1, 2, 0}};
    pm_map *m = one_list(1, 3, lists, (const uint32_t[]){3}, (const uint32_t[]){0, 1, 1});
    pm_map *xm, *back;
    assert_int_equal(pm_map_expand(g, rep, m, &xm, &d), PM_OK);
    expect_map(xm, (const uint32_t[]){0, 5}, (const uint32_t[]){1, 3, 2, 4, 0},
               (const uint32_t[]){0, 1, 1, 1, 1});
    assert_int_equal(pm_map_collapse(g, rep, xm, &back, &d), PM_OK);
    expect_map(back, (const uint32_t[]){0, 3}, (const uint32_t[]){1, 2, 0},
               (const uint32_t[]){0, 1, 1});
    pm_map_destroy(back);
    pm_map_destroy(xm);
    m->lag[1] = m->lag[2] = 0;
    assert_int_equal(pm_map_expand(g, rep, m, &xm, &d), PM_EDEADLOCK);
    assert_non_null(strstr(d.msg, "core 0 waits at 'a' (0 of 2 firings done)"));
    pm_map_destroy(m);
    free(rep);
    pm_graph_destroy(g);
}

/* Lags that take more tokens than an edge holds: on src -(2:1)-> a,
 * lag[src] = 1, lag[a] = 0 gives 0 + (0 - 1) * 2 * 1 = -2 tokens; on the
 * loop a -> b -> a (one delay), lag[b] = 1 alone gives b -> a
 * 1 + (0 - 1) * 1 * 2 = -1.  Both are refused, naming the edge's line. */
static void test_negative_retimed_tokens_refused(void **state)
{
    (void)state;
    static const spec_edge es[] = {{0, 1, 2, 1, 0}, {1, 2, 1, 1, 0}, {2, 1, 1, 1, 1}};
    static const char *const names[] = {"src", "a", "b"};
    pm_graph *g = build(3, names, es, 3);
    uint64_t *rep;
    pm_diag d;
    assert_int_equal(pm_sdf_repetition(g, &rep, &d), PM_OK);
    const uint32_t *lists[1] = {(const uint32_t[]){0, 1, 2}};
    pm_map *m = one_list(1, 3, lists, (const uint32_t[]){3}, (const uint32_t[]){1, 0, 0});
    pm_map *xm;
    assert_int_equal(pm_map_expand(g, rep, m, &xm, &d), PM_EMAP);
    assert_null(xm);
    assert_int_equal(d.line, 1);
    assert_non_null(strstr(d.msg, "'src' -> 'a'"));
    m->lag[0] = 0;
    m->lag[2] = 1;
    assert_int_equal(pm_map_expand(g, rep, m, &xm, &d), PM_EMAP);
    assert_int_equal(d.line, 3);
    assert_non_null(strstr(d.msg, "'b' -> 'a'"));
    pm_map_destroy(m);
    free(rep);
    pm_graph_destroy(g);
}

/* A single-rate graph expands to itself, lags included (rep all 1). */
static void test_single_rate_keeps_lags(void **state)
{
    (void)state;
    static const spec_edge es[] = {{0, 1, 1, 1, 0}, {1, 2, 1, 1, 0}};
    static const char *const names[] = {"x", "y", "z"};
    pm_graph *g = build(3, names, es, 2);
    const uint64_t rep[3] = {1, 1, 1};
    pm_diag d;
    /* core 0: x; core 1: z before y, which lag[z] = 2 > lag[y] = 1 allows */
    const uint32_t *lists[2] = {(const uint32_t[]){0}, (const uint32_t[]){2, 1}};
    pm_map *m = one_list(2, 3, lists, (const uint32_t[]){1, 2}, (const uint32_t[]){0, 1, 2});
    pm_map *xm;
    assert_int_equal(pm_map_expand(g, rep, m, &xm, &d), PM_OK);
    expect_map(xm, (const uint32_t[]){0, 1, 3}, (const uint32_t[]){0, 2, 1},
               (const uint32_t[]){0, 1, 2});
    pm_map_destroy(xm);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_lag_lets_consumer_go_first),
        cmocka_unit_test(test_lags_on_a_loop),
        cmocka_unit_test(test_negative_retimed_tokens_refused),
        cmocka_unit_test(test_single_rate_keeps_lags),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
