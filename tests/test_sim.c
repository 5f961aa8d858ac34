/*
 * test_sim.c - the self-timed simulator on small cases worked out by hand
 * (traces written out below), deadlocks with their waiting cycle, one core
 * (period = total cycles), bus against point-to-point, determinism.
 * The theorem check against Boost is in test_sim_ipc.c.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <cmocka.h>

#include "pacemap/graph.h"
#include "pacemap/map.h"
#include "pacemap/sim.h"
#include "support/testkit.h"

/* ---- building graphs ---------------------------------------------------- */

static pm_graph *mk_graph(uint32_t procs, uint32_t n, const int64_t *cycles)
{
    pm_graph *g = pm_graph_create("test.pace");
    assert_non_null(g);
    assert_int_equal(pm_graph_set_cores(g, 1, NULL, &procs), PM_OK);
    for (uint32_t v = 0; v < n; v++) {
        char name[8] = { (char)('a' + v), 0 };
        assert_int_equal(pm_graph_add_node(g, name, 1, cycles[v], NULL), PM_OK);
    }
    return g;
}

static void mk_edge(pm_graph *g, uint32_t u, uint32_t v, int64_t delay)
{
    pm_edge e = pm_graph_edge_default(u, v);
    e.delay = delay;
    assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
}

/* lists: per core a -1 terminated list of node ids. */
static pm_map *mk_map(const pm_graph *g, uint32_t procs, const int *lists)
{
    uint32_t *ids[8] = { 0 }, counts[8] = { 0 };
    const int *p = lists;
    for (uint32_t c = 0; c < procs; c++) {
        ids[c] = malloc(16 * sizeof **ids);
        while (*p >= 0)
            ids[c][counts[c]++] = (uint32_t)*p++;
        p++;
    }
    pm_map *m = NULL;
    assert_int_equal(pm_map_create(procs, g->nnodes, (const uint32_t *const *)ids, counts, &m),
                     PM_OK);
    for (uint32_t c = 0; c < procs; c++)
        free(ids[c]);
    return m;
}

static void expect_firing(const pm_sim_result *r, size_t i, char node, uint64_t k,
                          int64_t begin, int64_t end)
{
    assert_true(i < r->ntrace);
    assert_int_equal(r->trace[i].node, (uint32_t)(node - 'a'));
    assert_int_equal(r->trace[i].iteration, k);
    assert_int_equal(r->trace[i].begin, begin);
    assert_int_equal(r->trace[i].end, end);
}

/* ---- hand-worked cases -------------------------------------------------- */

/* One core runs a(3) b(5) c(2) with a -> b -> c -> a (1 delay).  By hand:
 * a0 [0,3) b0 [3,8) c0 [8,10) a1 [10,13) b1 [13,18) c1 [18,20): period 10
 * from the start, latency 10, and the loop c -> a -> b -> c sets it. */
static void test_one_core_loop(void **state)
{
    (void)state;
    int64_t t[] = { 3, 5, 2 };
    pm_graph *g = mk_graph(1, 3, t);
    mk_edge(g, 0, 1, 0);
    mk_edge(g, 1, 2, 0);
    mk_edge(g, 2, 0, 1);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    pm_map *m = mk_map(g, 1, (const int[]){ 0, 1, 2, -1 });
    pm_sim_opts o = { .iterations = 50, .record = 2 };
    pm_sim_result r;
    assert_int_equal(pm_sim_run(g, m, &o, &r, NULL), PM_OK);
    assert_true(r.steady);
    assert_true(r.period.num == 10 && r.period.den == 1);
    assert_int_equal(r.cyclicity, 1);
    assert_int_equal(r.transient, 0);
    assert_int_equal(r.latency_steady, 10);
    assert_int_equal(r.latency_max, 10);
    assert_int_equal(r.ntrace, 6);
    expect_firing(&r, 0, 'a', 0, 0, 3);
    expect_firing(&r, 1, 'b', 0, 3, 8);
    expect_firing(&r, 2, 'c', 0, 8, 10);
    expect_firing(&r, 3, 'a', 1, 10, 13);
    expect_firing(&r, 5, 'c', 1, 18, 20);
    assert_true(r.utilisation[0] > 0.999 && r.utilisation[0] < 1.001);
    assert_true(r.critical_matches);
    assert_int_equal(r.critical_cycles, 10);
    assert_int_equal(r.critical_delays, 1);
    assert_int_equal(r.makespan, 500);
    pm_sim_result_free(&r);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

static pm_graph *mk_pipe(int64_t latency, uint32_t procs)
{
    int64_t t[] = { 3, 4 };
    pm_graph *g = mk_graph(procs, 2, t);
    g->platform.comm.latency = latency - 1;
    g->platform.comm.per_word = 1; /* 1 word: transfer takes `latency` */
    mk_edge(g, 0, 1, 0);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    return g;
}

/* a(3) on core 0 feeds b(4) on core 1, transfer 5 cycles, FIFO of 2.
 * By hand: a0 [0,3) a1 [3,6); a2 waits for room until b0 begins at 8:
 * a2 [8,11); b0 [8,12) b1 [12,16) (token at 6+5=11); a3 [12,15) waits for
 * b1; b2 [16,20) (token 11+5); a4 [16,19).  Period 4, at most 2 tokens. */
static void test_fifo_back_pressure(void **state)
{
    (void)state;
    pm_graph *g = mk_pipe(5, 2);
    pm_map *m = mk_map(g, 2, (const int[]){ 0, -1, 1, -1 });
    pm_sim_opts o = { .iterations = 40, .fifo_cap = 2, .record = 5 };
    pm_sim_result r;
    assert_int_equal(pm_sim_run(g, m, &o, &r, NULL), PM_OK);
    const int64_t a_begin[] = { 0, 3, 8, 12, 16 }, b_begin[] = { 8, 12, 16, 20, 24 };
    size_t seen_a = 0, seen_b = 0;
    for (size_t i = 0; i < r.ntrace; i++) {
        const pm_sim_firing *f = &r.trace[i];
        if (f->node == 0)
            assert_int_equal(f->begin, a_begin[seen_a++]);
        else
            assert_int_equal(f->begin, b_begin[seen_b++]);
    }
    assert_int_equal(seen_a, 5);
    assert_true(r.steady && r.period.num == 4 && r.period.den == 1);
    assert_true(r.uniform);
    assert_int_equal(r.max_tokens[0], 2);
    assert_int_equal(r.ntransfers, 5);
    assert_int_equal(r.transfers[2].arrival, 16);
    pm_sim_result_free(&r);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

/* The same pipeline without a FIFO bound: a runs every 3 cycles, b every
 * 4, so tokens pile up.  After N iterations a's last token leaves at 3N
 * while b has begun the firings j with 4j + 8 <= 3N: for N = 100 that is
 * 74, so 26 tokens wait at most; for N = 1000, 749 and 251 tokens (more
 * than the window of begin times the point-to-point engine keeps, so its
 * counter moves to a queue half way: regression for that switch). */
static void test_unbounded_pile_up(void **state)
{
    (void)state;
    pm_graph *g = mk_pipe(5, 2);
    pm_map *m = mk_map(g, 2, (const int[]){ 0, -1, 1, -1 });
    const uint64_t iters[] = { 100, 1000 };
    const int64_t most[] = { 26, 251 };
    for (int i = 0; i < 2; i++) {
        pm_sim_opts o = { .iterations = iters[i] };
        pm_sim_result r;
        assert_int_equal(pm_sim_run(g, m, &o, &r, NULL), PM_OK);
        assert_true(r.steady && r.period.num == 4 && r.period.den == 1);
        assert_false(r.uniform);
        assert_int_equal(r.max_tokens[0], most[i]);
        assert_int_equal(r.makespan, 4 * ((int64_t)iters[i] - 1) + 8 + 4);
        pm_sim_result_free(&r);
    }
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

/* Bus: a(2) on core 0 and b(2) on core 1 both send to c(1) on core 2,
 * each transfer 3 cycles.  Both ask at 2; the tie goes to the lower core:
 * a's token [2,5), b's [5,8), c0 [8,9).  Next requests at 4 wait for the
 * bus: a [8,11), b [11,14), c1 at 14.  Two transfers per iteration on one
 * bus: period 6.  On point-to-point links c begins at 2k + 5: period 2. */
static pm_graph *mk_fan_in(pm_interconnect ic)
{
    int64_t t[] = { 2, 2, 1 };
    pm_graph *g = mk_graph(3, 3, t);
    g->platform.comm.latency = 3;
    g->platform.comm.per_word = 0;
    g->platform.interconnect = ic;
    mk_edge(g, 0, 2, 0);
    mk_edge(g, 1, 2, 0);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    return g;
}

static void test_bus_tie_and_period(void **state)
{
    (void)state;
    pm_graph *g = mk_fan_in(PM_BUS);
    pm_map *m = mk_map(g, 3, (const int[]){ 0, -1, 1, -1, 2, -1 });
    pm_sim_opts o = { .iterations = 60, .record = 2 };
    pm_sim_result r;
    assert_int_equal(pm_sim_run(g, m, &o, &r, NULL), PM_OK);
    assert_int_equal(r.ntransfers, 4);
    const int64_t grant[] = { 2, 5, 8, 11 };
    const uint32_t edge[] = { 0, 1, 0, 1 };
    for (int i = 0; i < 4; i++) {
        assert_int_equal(r.transfers[i].grant, grant[i]);
        assert_int_equal(r.transfers[i].edge, edge[i]);
    }
    assert_int_equal(r.transfers[2].request, 4);
    expect_firing(&r, r.ntrace - 2, 'c', 0, 8, 9);
    expect_firing(&r, r.ntrace - 1, 'c', 1, 14, 15);
    assert_true(r.steady && r.period.num == 6 && r.period.den == 1);
    assert_true(r.bus && r.bus_busy == 6);
    assert_true(r.bus_utilisation > 0.999 && r.bus_utilisation < 1.001);
    assert_true(r.critical_matches);
    assert_int_equal(r.critical_cycles, 6);
    pm_sim_result_free(&r);
    pm_graph_destroy(g);
    g = mk_fan_in(PM_P2P);
    assert_int_equal(pm_sim_run(g, m, &o, &r, NULL), PM_OK);
    assert_true(r.steady && r.period.num == 2 && r.period.den == 1);
    expect_firing(&r, r.ntrace - 1, 'c', 1, 7, 8);
    pm_sim_result_free(&r);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

/* Send and receive occupancy: a(3) on core 0 sends to b(4) on core 1 with
 * latency 2, send 1, recv 2, and b -> a with 2 delays (each node has one
 * cross-core input and output).  By hand: a0 receives [0,2) (the delayed
 * token exists at 0), runs [2,5), sends until 6; its token arrives at
 * 5 + 2 = 7; b0 receives [7,9), runs [9,13).  IPC loop a -> b -> a:
 * (2 + 3 + 2) + (2 + 4 + 2) over 2 delays = 15/2, more than either core's
 * own 6 and 7 cycles per iteration. */
static void test_send_recv_occupancy(void **state)
{
    (void)state;
    int64_t t[] = { 3, 4 };
    pm_graph *g = mk_graph(2, 2, t);
    g->platform.comm = (pm_comm){ .latency = 2, .per_word = 0, .send = 1, .recv = 2 };
    mk_edge(g, 0, 1, 0);
    mk_edge(g, 1, 0, 2);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    pm_map *m = mk_map(g, 2, (const int[]){ 0, -1, 1, -1 });
    pm_sim_opts o = { .iterations = 80, .record = 1 };
    pm_sim_result r;
    assert_int_equal(pm_sim_run(g, m, &o, &r, NULL), PM_OK);
    assert_int_equal(r.trace[0].begin, 0);
    assert_int_equal(r.trace[0].start, 2); /* a receives b's delayed token first */
    assert_int_equal(r.trace[0].free, 6);
    assert_int_equal(r.trace[1].begin, 7);
    assert_int_equal(r.trace[1].start, 9);
    assert_int_equal(r.trace[1].end, 13);
    assert_true(r.steady);
    assert_true(r.period.num == 15 && r.period.den == 2);
    pm_sim_result_free(&r);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

/* ---- deadlocks ---------------------------------------------------------- */

/* a on core 0 and b on core 1 need each other's token of the same
 * iteration: core 0 waits for b -> a from core 1, core 1 for a -> b. */
static void test_deadlock_two_cores(void **state)
{
    (void)state;
    int64_t t[] = { 1, 1 };
    pm_graph *g = mk_graph(2, 2, t);
    mk_edge(g, 0, 1, 0);
    mk_edge(g, 1, 0, 0);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    pm_map *m = mk_map(g, 2, (const int[]){ 0, -1, 1, -1 });
    pm_sim_result r;
    pm_diag d;
    assert_int_equal(pm_sim_run(g, m, NULL, &r, &d), PM_EDEADLOCK);
    assert_true(r.deadlock);
    assert_int_equal(r.nwaits, 2);
    assert_int_equal(r.waits[0].core, 0);
    assert_int_equal(r.waits[0].edge, 1);
    assert_int_equal(r.waits[0].waits_for_core, 1);
    assert_int_equal(r.waits[1].core, 1);
    assert_int_equal(r.waits[1].edge, 0);
    assert_int_equal(r.waits[1].waits_for_core, 0);
    assert_non_null(strstr(d.msg, "core 0 waits for a token of 'b' -> 'a'"));
    pm_sim_result_free(&r);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

/* One core told to run b before a although b needs a's token of the same
 * iteration: the core waits for itself. */
static void test_deadlock_core_order(void **state)
{
    (void)state;
    int64_t t[] = { 1, 1, 1 };
    pm_graph *g = mk_graph(2, 3, t);
    mk_edge(g, 0, 1, 0);
    mk_edge(g, 2, 0, 0);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    pm_map *m = mk_map(g, 2, (const int[]){ 1, 0, -1, 2, -1 });
    pm_sim_result r;
    pm_diag d;
    assert_int_equal(pm_sim_run(g, m, NULL, &r, &d), PM_EDEADLOCK);
    assert_int_equal(r.nwaits, 1);
    assert_int_equal(r.waits[0].core, 0);
    assert_int_equal(r.waits[0].node, 1);
    assert_int_equal(r.waits[0].waits_for_node, 0);
    assert_int_equal(r.waits[0].waits_for_core, 0);
    pm_sim_result_free(&r);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

/* FIFO too small.  Core 0 runs a then c, core 1 runs d then b; a -> b
 * (1 delay) and c -> d cross cores, a -> c stays on core 0.  With room for
 * one token, a may begin iteration 0 only once b began iteration 0
 * (0 + 1 - 1); core 1 first runs d, which needs c of iteration 0 from
 * core 0.  Waiting cycle: core 0 waits for room on a -> b (core 1), core 1
 * waits for a token of c -> d (core 0).  Room for two tokens runs. */
static void test_deadlock_fifo(void **state)
{
    (void)state;
    int64_t t[] = { 1, 1, 1, 1 };
    pm_graph *g = mk_graph(2, 4, t);
    mk_edge(g, 0, 1, 1); /* a -> b, 1 delay: capacity becomes 1 */
    mk_edge(g, 0, 2, 0); /* a -> c on core 0 */
    mk_edge(g, 2, 3, 0); /* c -> d across */
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    pm_map *m = mk_map(g, 2, (const int[]){ 0, 2, -1, 3, 1, -1 });
    pm_sim_opts o = { .iterations = 10, .fifo_cap = 1 };
    pm_sim_result r;
    assert_int_equal(pm_sim_run(g, m, &o, &r, NULL), PM_EDEADLOCK);
    assert_int_equal(r.nwaits, 2);
    assert_true(r.waits[0].core == 0 && r.waits[0].fifo && r.waits[0].edge == 0);
    assert_true(r.waits[1].core == 1 && !r.waits[1].fifo && r.waits[1].edge == 2);
    pm_sim_result_free(&r);
    /* with room for 2 tokens it runs */
    o.fifo_cap = 2;
    assert_int_equal(pm_sim_run(g, m, &o, &r, NULL), PM_OK);
    pm_sim_result_free(&r);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

/* ---- random properties -------------------------------------------------- */

static uint64_t rng_state = 12345;
static uint32_t rnd(uint32_t n)
{
    return tk_rand(&rng_state, n);
}

/* A random graph: forward edges (i < j) with few delays, backward edges
 * with at least one delay, so node order 0..n-1 is always runnable. */
static pm_graph *mk_random(uint32_t n, uint32_t procs, pm_interconnect ic)
{
    int64_t t[16];
    for (uint32_t v = 0; v < n; v++)
        t[v] = rnd(12);
    pm_graph *g = mk_graph(procs, n, t);
    g->platform.comm = (pm_comm){ rnd(6), rnd(3), 0, 0 };
    g->platform.interconnect = ic;
    uint32_t ne = n + rnd(2 * n);
    for (uint32_t i = 0; i < ne; i++) {
        uint32_t u = rnd(n), v = rnd(n);
        pm_edge e = pm_graph_edge_default(u < v ? u : v, u < v ? v : u);
        e.delay = u == v ? 1 + rnd(2) : rnd(4) == 0;
        e.words = 1 + rnd(3);
        if (u > v && rnd(2)) { /* a backward edge */
            e.src = u, e.dst = v, e.delay = 1 + rnd(3);
        }
        assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
    }
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    return g;
}

/* Nodes dealt to cores at random, each core in increasing node order. */
static pm_map *mk_random_map(const pm_graph *g, uint32_t procs)
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
    return m;
}

/* One core, no transfer cost: the core runs every node once per iteration
 * back to back, so the period is the total of the node times. */
static void test_one_core_period_is_total(void **state)
{
    (void)state;
    for (int trial = 0; trial < 100; trial++) {
        uint32_t n = 1 + rnd(12);
        pm_graph *g = mk_random(n, 1, PM_P2P);
        pm_map *m = mk_random_map(g, 1);
        int64_t total = 0;
        for (uint32_t v = 0; v < n; v++)
            total += g->nodes[v].cycles;
        pm_sim_opts o = { .iterations = 30 };
        pm_sim_result r;
        assert_int_equal(pm_sim_run(g, m, &o, &r, NULL), PM_OK);
        assert_true(r.steady);
        assert_true(r.period.num == total && r.period.den == 1);
        pm_sim_result_free(&r);
        pm_map_destroy(m);
        pm_graph_destroy(g);
    }
}

/* A bus serialises transfers that p2p links overlap; it can only delay
 * arrivals, and self-timed execution is monotone in arrival times, so the
 * bus period is never below the p2p period on the same map. */
static void test_bus_never_beats_p2p(void **state)
{
    (void)state;
    for (int trial = 0; trial < 150; trial++) {
        uint32_t n = 2 + rnd(10), procs = 1 + rnd(4);
        uint64_t seed = rng_state;
        pm_graph *g = mk_random(n, procs, PM_P2P);
        rng_state = seed;
        pm_graph *gb = mk_random(n, procs, PM_BUS);
        pm_map *m = mk_random_map(g, procs);
        pm_sim_opts o = { .iterations = 400, .fifo_cap = rnd(2) ? 0 : 1 + rnd(3) };
        pm_sim_result r, rb;
        int rc = pm_sim_run(g, m, &o, &r, NULL);
        /* a FIFO no larger than an edge's delays can deadlock: both must */
        assert_int_equal(pm_sim_run(gb, m, &o, &rb, NULL), rc);
        if (rc == PM_OK) {
            if (r.steady && rb.steady)
                assert_true(pm_rat_cmp(rb.period, r.period) >= 0);
            assert_true(rb.makespan >= r.makespan);
        }
        pm_sim_result_free(&r);
        pm_sim_result_free(&rb);
        pm_map_destroy(m);
        pm_graph_destroy(g);
        pm_graph_destroy(gb);
    }
}

/* A bus whose transfers take no time never makes anyone wait, so the
 * event-driven bus engine must reproduce the point-to-point run exactly
 * (send and receive occupancy still count on the cores). */
static void test_free_bus_equals_p2p(void **state)
{
    (void)state;
    for (int trial = 0; trial < 100; trial++) {
        uint32_t n = 2 + rnd(10), procs = 1 + rnd(4);
        uint64_t seed = rng_state;
        pm_graph *g = mk_random(n, procs, PM_P2P);
        rng_state = seed;
        pm_graph *gb = mk_random(n, procs, PM_BUS);
        pm_comm cm = { 0, 0, rnd(3), rnd(3) };
        g->platform.comm = gb->platform.comm = cm;
        pm_map *m = mk_random_map(g, procs);
        pm_sim_opts o = { .iterations = 300, .record = 3, .fifo_cap = rnd(2) ? 0 : 2 + rnd(2) };
        pm_sim_result r, rb;
        int rc = pm_sim_run(g, m, &o, &r, NULL);
        assert_int_equal(pm_sim_run(gb, m, &o, &rb, NULL), rc);
        if (rc == PM_OK) {
            assert_true(pm_rat_cmp(rb.period, r.period) == 0);
            assert_int_equal(rb.makespan, r.makespan);
            assert_int_equal(rb.ntrace, r.ntrace);
            for (size_t i = 0; i < r.ntrace; i++)
                assert_int_equal(rb.trace[i].begin, r.trace[i].begin);
            for (uint32_t e = 0; e < g->nedges; e++)
                assert_int_equal(rb.max_tokens[e], r.max_tokens[e]);
        }
        pm_sim_result_free(&r);
        pm_sim_result_free(&rb);
        pm_map_destroy(m);
        pm_graph_destroy(g);
        pm_graph_destroy(gb);
    }
}

/* Most tokens on edge e counted the slow, obvious way from a full trace:
 * every put (producer's end) and take (consumer's begin) as an event,
 * sorted by time with takes first on a tie (docs/simulation.md), and a
 * running count from the edge's initial tokens. */
static int ev_cmp(const void *a, const void *b)
{
    const int64_t *x = a, *y = b; /* {time, +1 put / -1 take} */
    if (x[0] != y[0])
        return x[0] < y[0] ? -1 : 1;
    return (x[1] > y[1]) - (x[1] < y[1]);
}

static int64_t most_tokens_from_trace(const pm_graph *g, uint32_t e, const pm_sim_result *r)
{
    int64_t (*ev)[2] = malloc((r->ntrace + 1) * sizeof *ev);
    size_t n = 0;
    for (size_t i = 0; i < r->ntrace; i++) {
        if (r->trace[i].node == g->edges[e].src)
            ev[n][0] = r->trace[i].end, ev[n++][1] = 1;
        if (r->trace[i].node == g->edges[e].dst)
            ev[n][0] = r->trace[i].begin, ev[n++][1] = -1;
    }
    qsort(ev, n, sizeof *ev, ev_cmp);
    int64_t held = g->edges[e].delay, most = held;
    for (size_t i = 0; i < n; i++) {
        held += ev[i][1];
        if (held > most)
            most = held;
    }
    free(ev);
    return most;
}

/* Both engines' token counts against the count from the trace, on random
 * graphs and maps, with and without FIFO bounds; a small cyclicity limit
 * shrinks the window of begin times the point-to-point engine keeps, so
 * edges that pile up tokens also take its queue path. */
static void test_tokens_match_trace(void **state)
{
    (void)state;
    for (int trial = 0; trial < 300; trial++) {
        uint32_t n = 2 + rnd(10), procs = 1 + rnd(4);
        pm_graph *g = mk_random(n, procs, rnd(3) ? PM_P2P : PM_BUS);
        g->platform.comm.send = rnd(3), g->platform.comm.recv = rnd(3);
        pm_map *m = mk_random_map(g, procs);
        pm_sim_opts o = { .iterations = 60 + rnd(200), .fifo_cap = rnd(2) ? 0 : 1 + rnd(3),
                          .max_cyclicity = rnd(2) ? 4 : 0 };
        o.record = (uint32_t)o.iterations;
        pm_sim_result r;
        int rc = pm_sim_run(g, m, &o, &r, NULL);
        if (rc == PM_OK) {
            assert_int_equal(r.ntrace, (size_t)o.iterations * n);
            for (uint32_t e = 0; e < g->nedges; e++) {
                const pm_edge *ed = &g->edges[e];
                if (m->core_of[ed->src] == m->core_of[ed->dst])
                    assert_int_equal(r.max_tokens[e], -1);
                else
                    assert_int_equal(r.max_tokens[e], most_tokens_from_trace(g, e, &r));
            }
        } else {
            assert_int_equal(rc, PM_EDEADLOCK);
        }
        pm_sim_result_free(&r);
        pm_map_destroy(m);
        pm_graph_destroy(g);
    }
}

/* g with every node time and transfer cost multiplied by `scale`. */
static pm_graph *mk_scaled(const pm_graph *g, int64_t scale)
{
    int64_t t[16];
    for (uint32_t v = 0; v < g->nnodes; v++)
        t[v] = g->nodes[v].cycles * scale;
    pm_graph *h = mk_graph(g->platform.ncores, g->nnodes, t);
    const pm_comm *c = &g->platform.comm;
    h->platform.comm = (pm_comm){ c->latency * scale, c->per_word * scale, c->send * scale,
                                  c->recv * scale };
    h->platform.interconnect = g->platform.interconnect;
    for (uint32_t e = 0; e < g->nedges; e++) {
        pm_edge x = g->edges[e];
        pm_edge y = pm_graph_edge_default(x.src, x.dst);
        y.delay = x.delay, y.words = x.words;
        assert_int_equal(pm_graph_add_edge(h, &y, NULL), PM_OK);
    }
    assert_int_equal(pm_graph_finalize(h), PM_OK);
    return h;
}

/* Self-timed begin times are max-plus sums of the times, so multiplying
 * every time by S multiplies every begin by S.  With S = 2^33 the times no
 * longer fit the point-to-point sweep's 32-bit fields and the causal
 * engine runs instead: both engines must give the same period, transient,
 * buffer counts and critical chain, up to the factor. */
static void test_engines_agree_on_scaled_times(void **state)
{
    (void)state;
    const int64_t S = INT64_C(1) << 33;
    for (int trial = 0; trial < 100; trial++) {
        uint32_t n = 2 + rnd(10), procs = 1 + rnd(4);
        pm_graph *g = mk_random(n, procs, PM_P2P);
        g->platform.comm.send = rnd(3), g->platform.comm.recv = rnd(3);
        pm_graph *h = mk_scaled(g, S);
        pm_map *m = mk_random_map(g, procs);
        pm_sim_opts o = { .iterations = 100 + rnd(200), .record = 3,
                          .fifo_cap = rnd(2) ? 0 : 1 + rnd(3) };
        pm_sim_result r, rh;
        int rc = pm_sim_run(g, m, &o, &r, NULL);
        assert_int_equal(pm_sim_run(h, m, &o, &rh, NULL), rc);
        if (rc == PM_OK) {
            assert_int_equal(rh.period.num * r.period.den, r.period.num * S * rh.period.den);
            assert_int_equal(rh.steady, r.steady);
            assert_int_equal(rh.transient, r.transient);
            assert_int_equal(rh.cyclicity, r.cyclicity);
            assert_int_equal(rh.makespan, r.makespan * S);
            assert_int_equal(rh.ncritical, r.ncritical);
            for (size_t i = 0; i < r.ntrace; i++)
                assert_int_equal(rh.trace[i].begin, r.trace[i].begin * S);
            for (uint32_t e = 0; e < g->nedges; e++)
                assert_int_equal(rh.max_tokens[e], r.max_tokens[e]);
        }
        pm_sim_result_free(&r);
        pm_sim_result_free(&rh);
        pm_map_destroy(m);
        pm_graph_destroy(g);
        pm_graph_destroy(h);
    }
}

/* Regression: the last iterations of a bus run see less contention (no
 * later requests compete for the bus), which once hid the steady state of
 * every bus run.  A chain over 4 cores with feedback, as in the bench. */
static void test_bus_run_reaches_steady_state(void **state)
{
    (void)state;
    uint32_t n = 300;
    int64_t t[300];
    for (uint32_t v = 0; v < n; v++)
        t[v] = 5 + rnd(40);
    pm_graph *g = pm_graph_create("chain");
    uint32_t procs = 4;
    assert_int_equal(pm_graph_set_cores(g, 1, NULL, &procs), PM_OK);
    for (uint32_t v = 0; v < n; v++) {
        char name[16];
        int len = snprintf(name, sizeof name, "n%u", v);
        assert_int_equal(pm_graph_add_node(g, name, (size_t)len, t[v], NULL), PM_OK);
    }
    g->platform.comm = (pm_comm){ 20, 1, 2, 2 };
    g->platform.interconnect = PM_BUS;
    for (uint32_t v = 1; v < n; v++) {
        mk_edge(g, v - 1, v, 0);
        mk_edge(g, v - 1 - rnd(v < 16 ? v : 16), v, 0);
        if (v > 20 && rnd(25) == 0)
            mk_edge(g, v, v - 1 - rnd(20), 1 + rnd(3));
    }
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    uint32_t lists[4][300], counts[4] = { 0 };
    const uint32_t *ptr[4] = { lists[0], lists[1], lists[2], lists[3] };
    for (uint32_t v = 0; v < n; v++)
        lists[(v / 16) % 4][counts[(v / 16) % 4]++] = v;
    pm_map *m = NULL;
    assert_int_equal(pm_map_create(4, n, ptr, counts, &m), PM_OK);
    pm_sim_opts o = { .iterations = 1500 };
    pm_sim_result r;
    assert_int_equal(pm_sim_run(g, m, &o, &r, NULL), PM_OK);
    assert_true(r.steady);
    assert_true(r.critical_matches);
    pm_sim_result_free(&r);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

/* Same input, same output, down to every recorded time. */
static void test_deterministic(void **state)
{
    (void)state;
    pm_graph *g = mk_random(10, 3, PM_BUS);
    pm_map *m = mk_random_map(g, 3);
    pm_sim_opts o = { .iterations = 200, .record = 5 };
    pm_sim_result a, b;
    assert_int_equal(pm_sim_run(g, m, &o, &a, NULL), PM_OK);
    assert_int_equal(pm_sim_run(g, m, &o, &b, NULL), PM_OK);
    assert_int_equal(a.ntrace, b.ntrace);
    assert_memory_equal(a.trace, b.trace, a.ntrace * sizeof *a.trace);
    assert_int_equal(a.ntransfers, b.ntransfers);
    if (a.ntransfers)
        assert_memory_equal(a.transfers, b.transfers, a.ntransfers * sizeof *a.transfers);
    assert_true(pm_rat_cmp(a.period, b.period) == 0);
    pm_sim_result_free(&a);
    pm_sim_result_free(&b);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

static void test_bad_input(void **state)
{
    (void)state;
    int64_t t[] = { 1, 1 };
    pm_graph *g = mk_graph(2, 2, t);
    pm_edge e = pm_graph_edge_default(0, 1);
    e.produce = 2;
    assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    pm_map *m = mk_map(g, 2, (const int[]){ 0, -1, 1, -1 });
    pm_sim_result r;
    assert_int_equal(pm_sim_run(g, m, NULL, &r, NULL), PM_EUNSUPPORTED);
    pm_map_destroy(m);
    m = mk_map(g, 2, (const int[]){ 0, 1, -1, -1 });
    m->core_of[1] = 7;
    assert_int_not_equal(pm_sim_run(g, m, NULL, &r, NULL), PM_OK);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_one_core_loop),
        cmocka_unit_test(test_fifo_back_pressure),
        cmocka_unit_test(test_unbounded_pile_up),
        cmocka_unit_test(test_bus_tie_and_period),
        cmocka_unit_test(test_send_recv_occupancy),
        cmocka_unit_test(test_deadlock_two_cores),
        cmocka_unit_test(test_deadlock_core_order),
        cmocka_unit_test(test_deadlock_fifo),
        cmocka_unit_test(test_one_core_period_is_total),
        cmocka_unit_test(test_bus_never_beats_p2p),
        cmocka_unit_test(test_free_bus_equals_p2p),
        cmocka_unit_test(test_tokens_match_trace),
        cmocka_unit_test(test_engines_agree_on_scaled_times),
        cmocka_unit_test(test_bus_run_reaches_steady_state),
        cmocka_unit_test(test_deterministic),
        cmocka_unit_test(test_bad_input),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
