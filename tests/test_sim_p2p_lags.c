/*
 * test_sim_p2p_lags.c - the compiled point-to-point pass runs maps with
 * lags exactly as the causal engine does.
 *
 * Two ways to make the causal engine run the same map:
 *  (a) a bus whose transfers take no time (latency and per-word 0) never
 *      makes a transfer wait, so the causal bus engine must give the very
 *      same run as the point-to-point pass: begins, period, transient,
 *      makespan, buffer counts, firings compared equal (not the latency
 *      and the critical chain, which a bus run measures its own way, lags
 *      or not);
 *  (b) multiplying every time by S = 2^33 multiplies every begin by S
 *      (self-timed begins are max-plus sums of the times), and such times
 *      no longer fit the pass's 32-bit fields, so the causal engine runs:
 *      the same run up to the factor S, with transfer costs this time.
 * On random graphs with loops and random valid lags (every retimed delay
 * d + lag[dst] - lag[src] >= 0), random maps, unbounded and bounded FIFOs.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>

#include <stdlib.h>
#include <string.h>

#include "pacemap/map.h"
#include "pacemap/sim.h"
#include "support/testkit.h"

static uint64_t rng = 777;
static uint32_t rnd(uint32_t n)
{
    return tk_rand(&rng, n);
}

/* Random graph of n nodes: forward edges with few delays, backward edges
 * with some, self-loops; every time multiplied by scale. */
static pm_graph *mk_graph(uint32_t n, uint32_t procs, const int64_t *t, const pm_comm *cm,
                          const uint32_t (*edges)[4], uint32_t ne, int64_t scale,
                          pm_interconnect ic)
{
    pm_graph *g = pm_graph_create("lags.pace");
    assert_non_null(g);
    assert_int_equal(pm_graph_set_cores(g, 1, NULL, &procs), PM_OK);
    for (uint32_t v = 0; v < n; v++) {
        char name[8] = { (char)('a' + v), 0 };
        assert_int_equal(pm_graph_add_node(g, name, 1, t[v] * scale, NULL), PM_OK);
    }
    g->platform.comm = (pm_comm){ cm->latency * scale, cm->per_word * scale, cm->send * scale,
                                  cm->recv * scale };
    g->platform.interconnect = ic;
    for (uint32_t i = 0; i < ne; i++) {
        pm_edge e = pm_graph_edge_default(edges[i][0], edges[i][1]);
        e.delay = edges[i][2];
        e.words = edges[i][3];
        assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
    }
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    return g;
}

static uint32_t random_edges(uint32_t n, uint32_t (*edges)[4])
{
    uint32_t ne = n + rnd(2 * n);
    for (uint32_t i = 0; i < ne; i++) {
        uint32_t u = rnd(n), v = rnd(n);
        uint32_t a = u < v ? u : v, b = u < v ? v : u;
        uint32_t d = u == v ? 1 + rnd(2) : rnd(4) == 0;
        if (u > v && rnd(2)) /* a backward edge */
            a = u, b = v, d = 1 + rnd(3);
        edges[i][0] = a, edges[i][1] = b, edges[i][2] = d, edges[i][3] = 1 + rnd(3);
    }
    return ne;
}

/* Nodes dealt to cores at random, each core in increasing node order
 * (runnable without lags, as the edges without delay go forward), then
 * random lags 0..3 raised until every retimed delay is >= 0. */
static pm_map *mk_lagged_map(const pm_graph *g, uint32_t procs)
{
    uint32_t lists[8][16], counts[8] = { 0 };
    const uint32_t *ptr[8];
    for (uint32_t v = 0; v < g->nnodes; v++) {
        uint32_t c = rnd(procs);
        lists[c][counts[c]++] = v;
    }
    for (uint32_t c = 0; c < procs; c++)
        ptr[c] = lists[c];
    pm_map *m = NULL;
    assert_int_equal(pm_map_create(procs, g->nnodes, ptr, counts, &m), PM_OK);
    for (uint32_t v = 0; v < g->nnodes; v++)
        m->lag[v] = rnd(4);
    tk_raise_lags(g, m);
    return m;
}

/* a and b describe the same run, b's times S times a's. */
static void expect_same_run(const pm_sim_result *a, const pm_sim_result *b, int64_t S,
                            const pm_graph *g)
{
    assert_int_equal(a->firings, b->firings);
    assert_int_equal(a->steady, b->steady);
    assert_int_equal(a->period.num * S * b->period.den, b->period.num * a->period.den);
    assert_int_equal(a->cyclicity, b->cyclicity);
    assert_int_equal(a->transient, b->transient);
    assert_int_equal(a->uniform, b->uniform);
    assert_int_equal(a->makespan * S, b->makespan);
    if (!b->bus) { /* a bus run measures its latency its own way */
        assert_int_equal(a->latency_steady * S, b->latency_steady);
        assert_int_equal(a->latency_max * S, b->latency_max);
    }
    for (uint32_t e = 0; e < g->nedges; e++)
        assert_int_equal(a->max_tokens[e], b->max_tokens[e]);
    assert_int_equal(a->ntrace, b->ntrace);
    for (size_t i = 0; i < a->ntrace; i++) {
        assert_int_equal(a->trace[i].node, b->trace[i].node);
        assert_int_equal(a->trace[i].iteration, b->trace[i].iteration);
        assert_int_equal(a->trace[i].begin * S, b->trace[i].begin);
        assert_int_equal(a->trace[i].free * S, b->trace[i].free);
    }
    assert_int_equal(a->ntransfers, b->ntransfers);
    for (size_t i = 0; i < a->ntransfers; i++) {
        assert_int_equal(a->transfers[i].edge, b->transfers[i].edge);
        assert_int_equal(a->transfers[i].request * S, b->transfers[i].request);
    }
    if (b->bus) /* a bus chain has transfer elements */
        return;
    assert_int_equal(a->ncritical, b->ncritical);
    for (uint32_t i = 0; i < a->ncritical; i++) {
        assert_int_equal(a->critical[i].node, b->critical[i].node);
        assert_int_equal(a->critical[i].iteration, b->critical[i].iteration);
        assert_int_equal(a->critical[i].via, b->critical[i].via);
    }
    assert_int_equal(a->critical_delays, b->critical_delays);
    assert_int_equal(a->critical_cycles * S, b->critical_cycles);
}

/* One random case through both engines: (a) when free_bus, else (b). */
static void one_case(bool free_bus, int *lagged)
{
    uint32_t n = 2 + rnd(12), procs = 1 + rnd(4), edges[40][4];
    int64_t t[16];
    for (uint32_t v = 0; v < n; v++)
        t[v] = rnd(12);
    pm_comm cm = { free_bus ? 0 : rnd(6), free_bus ? 0 : rnd(3), rnd(3), rnd(3) };
    uint32_t ne = random_edges(n, edges);
    int64_t S = free_bus ? 1 : INT64_C(1) << 33;
    pm_graph *g = mk_graph(n, procs, t, &cm, edges, ne, 1, PM_P2P);
    pm_graph *h = mk_graph(n, procs, t, &cm, edges, ne, S, free_bus ? PM_BUS : PM_P2P);
    pm_map *m = mk_lagged_map(g, procs);
    *lagged += pm_map_has_lags(m);
    pm_sim_opts o = { .iterations = 50 + rnd(250), .record = 4,
                      .fifo_cap = rnd(2) ? 0 : 1 + rnd(3) };
    pm_sim_result a, b;
    int rc = pm_sim_run(g, m, &o, &a, NULL);
    assert_int_equal(pm_sim_run(h, m, &o, &b, NULL), rc);
    if (rc == PM_OK)
        expect_same_run(&a, &b, S, g);
    if (rc == PM_OK && !free_bus) /* (b): the chain too, element by element */
        assert_int_equal(a.critical_matches, b.critical_matches);
    pm_sim_result_free(&a);
    pm_sim_result_free(&b);
    pm_map_destroy(m);
    pm_graph_destroy(g);
    pm_graph_destroy(h);
}

static void test_free_bus_equals_pass(void **state)
{
    (void)state;
    int lagged = 0;
    for (int i = 0; i < 300; i++)
        one_case(true, &lagged);
    assert_true(lagged > 200);
}

static void test_scaled_times_equal_pass(void **state)
{
    (void)state;
    int lagged = 0;
    for (int i = 0; i < 300; i++)
        one_case(false, &lagged);
    assert_true(lagged > 200);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_free_bus_equals_pass),
        cmocka_unit_test(test_scaled_times_equal_pass),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
