/*
 * test_mapper.c - the period-first mapper against exact optima from an
 * outside solver: GLPK's glpsol (Debian package glpk-utils) solving a 0/1
 * program written here in CPLEX LP form.  Skipped with a note when glpsol
 * is not installed.
 *
 * Why the program gives the optimum: for a graph without loops on
 * identical cores with point-to-point links and lags allowed, the best
 * self-timed period is the smallest busiest-core occupancy (mapper.h):
 * every core's round is a cycle of the IPC graph with one delay (so the
 * period is at least each core's occupancy), and lags taken from a
 * periodic schedule of that period reach it.  The program is
 * tk_write_occupancy_lp's (tests/support/testkit.h gives it).
 *
 * Checks: (a) on 44 random graphs (those glpsol settles within its
 * time limit of 2 s, at least 40, are compared) of 10-25 nodes, 2-4 cores
 * (on 3 cores at most 17 nodes, on 4 at most 13, which glpsol settles in
 * well under a second), send, recv, latency and per-word cost varied: the exact period of the mapper's map
 * (pm_ipc_compute) is never below the optimum, its mean ratio to it at
 * most 1.02 and its worst at most 1.08; the branch and bound's proven
 * optimum equals glpsol's; (b) same input, same map, also with an
 * evaluation budget that ends the search; (c) pins and classes kept
 * (pm_map_check), and the branch and bound with classes and a pin equal to
 * trying every assignment; (d) lags valid (pm_ipc_check_lags) everywhere;
 * (e) on a bus the period reported is the simulator's.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include <cmocka.h>

#include "pacemap/ipc.h"
#include "pacemap/mapper.h"
#include "pacemap/plan.h"
#include "pacemap/sim.h"
#include "sched_testlib.h"
#include "support/testkit.h"

/* glpsol's optimum, or -1 when it does not prove one in its time limit. */
static long long glpk_optimum(const pm_graph *g)
{
    double opt;
    return tk_glpsol(tk_write_occupancy_lp, g, 2, &opt) ? (long long)opt : -1;
}

/* A random graph without loops: edges from lower to higher ids, some with
 * delays (which lags make irrelevant to the period). */
static pm_graph *ff_graph(uint64_t *seed)
{
    uint32_t n = 10 + tk_rand(seed, 16), P = 2 + tk_rand(seed, 3);
    if (P > 2 && n > 29 - 4 * P) /* glpsol takes seconds to settle larger ones */
        n = 10 + tk_rand(seed, 20 - 4 * P);
    pm_graph *g = tl_graph(P);
    char name[16];
    for (uint32_t v = 0; v < n; v++) {
        snprintf(name, sizeof name, "v%u", v);
        tl_node(g, name, 1 + tk_rand(seed, 20));
    }
    uint32_t ne = n + tk_rand(seed, n / 2);
    for (uint32_t i = 0; i < ne; i++) {
        uint32_t a = tk_rand(seed, n - 1);
        uint32_t b = a + 1 + tk_rand(seed, n - 1 - a);
        tl_edge(g, a, b, tk_rand(seed, 4) == 0 ? 1 : 0, 1 + tk_rand(seed, 4));
    }
    tl_comm(g, tk_rand(seed, 30), tk_rand(seed, 4), tk_rand(seed, 6), tk_rand(seed, 6), PM_P2P);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    return g;
}

/* The mapper's map of g: checked, lags valid, its exact period. */
static pm_rat mapped_period(const pm_graph *g, const pm_mapper_opts *o, pm_mapper_info *info)
{
    pm_map *m = NULL;
    pm_diag d;
    assert_int_equal(pm_mapper_map(g, o, &m, info, &d), PM_OK);
    assert_int_equal(pm_map_check(m, g, &d), PM_OK);
    assert_int_equal(pm_ipc_check_lags(g, m, &d), PM_OK);
    pm_ipc ipc;
    assert_int_equal(pm_ipc_compute(g, m, &ipc, &d), PM_OK);
    assert_int_equal(pm_rat_cmp(ipc.period, info->period), 0);
    pm_rat p = ipc.period;
    pm_ipc_free(&ipc);
    pm_map_destroy(m);
    return p;
}

static void test_against_glpk(void **state)
{
    (void)state;
    if (system("glpsol --version > /dev/null 2>&1") != 0) {
        print_message("note: glpsol (glpk-utils) not installed; GLPK optimum check skipped\n");
        skip();
    }
    uint64_t seed = 4242;
    int solved = 0, proven = 0;
    double sum = 0, worst = 0, hsum = 0, hworst = 0;
    for (int i = 0; i < 44; i++) {
        pm_graph *g = ff_graph(&seed);
        long long opt = glpk_optimum(g);
        pm_mapper_info info, hinfo;
        pm_mapper_opts heur = { .no_exact = true };
        pm_rat p = mapped_period(g, NULL, &info);
        pm_rat h = mapped_period(g, &heur, &hinfo);
        if (opt > 0) {
            solved++;
            assert_true(pm_rat_cmp(p, pm_rat_int(opt)) >= 0);
            assert_true(pm_rat_cmp(h, pm_rat_int(opt)) >= 0);
            double r = pm_rat_to_double(p) / (double)opt, hr = pm_rat_to_double(h) / (double)opt;
            sum += r;
            hsum += hr;
            worst = r > worst ? r : worst;
            hworst = hr > hworst ? hr : hworst;
            if (info.proven) {
                proven++;
                assert_true(p.den == 1 && p.num == opt);
            }
        }
        pm_graph_destroy(g);
    }
    print_message("mapper/optimum over %d graphs: mean %.4f worst %.4f (%d proven); "
                  "without the branch and bound: mean %.4f worst %.4f\n",
                  solved, sum / solved, worst, proven, hsum / solved, hworst);
    assert_true(solved >= 40);
    assert_true(sum / solved <= 1.02);
    assert_true(worst <= 1.08);
}

/* A graph with loops, a pinned node and two core classes: 12 nodes in a
 * chain with two feedback edges; "dsp" runs everything, "host" only the
 * even nodes; node 3 pinned to core 0. */
static pm_graph *mixed_graph_n(uint32_t n)
{
    pm_graph *g = pm_graph_create("mixed");
    const char *names[] = { "dsp", "host" };
    uint32_t counts[] = { 2, 2 };
    assert_int_equal(pm_graph_set_cores(g, 2, names, counts), PM_OK);
    char name[16];
    for (uint32_t v = 0; v < n; v++) {
        snprintf(name, sizeof name, "m%u", v);
        uint32_t id = tl_node(g, name, 0);
        int64_t row[2] = { 5 + v % 4, v % 2 ? PM_CANNOT_RUN : 3 + v % 3 };
        assert_int_equal(pm_graph_set_class_cycles(g, id, row), PM_OK);
        if (v > 0)
            tl_edge(g, v - 1, v, 0, 2);
    }
    g->nodes[3].pin_core = 0;
    tl_edge(g, 5, 2, 1, 1);
    if (n > 11)
        tl_edge(g, 11, 7, 2, 1);
    tl_comm(g, 7, 1, 2, 2, PM_P2P);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    return g;
}

static pm_graph *mixed_graph(void)
{
    return mixed_graph_n(12);
}

/* The smallest busiest occupancy by trying every assignment: the
 * definition itself, written out without any pruning. */
static int64_t brute_occupancy(const pm_graph *g)
{
    uint32_t n = g->nnodes, P = g->platform.ncores, a[16] = { 0 };
    int64_t best = INT64_MAX;
    assert_true(n <= 16);
    for (;;) {
        int64_t occ[8] = { 0 }, top = 0;
        bool ok = true;
        for (uint32_t v = 0; v < n && ok; v++) {
            ok = pm_graph_can_run(g, v, a[v]);
            occ[a[v]] += ok ? pm_graph_cycles_on(g, v, g->platform.core_class[a[v]]) : 0;
        }
        for (uint32_t e = 0; e < g->nedges && ok; e++) {
            uint32_t x = a[g->edges[e].src], y = a[g->edges[e].dst];
            occ[x] += x != y ? g->platform.comm.send : 0;
            occ[y] += x != y ? g->platform.comm.recv : 0;
        }
        for (uint32_t c = 0; c < P && ok; c++)
            top = occ[c] > top ? occ[c] : top;
        if (ok && top < best)
            best = top;
        uint32_t i = 0;
        while (i < n && ++a[i] == P)
            a[i++] = 0;
        if (i == n)
            return best;
    }
}

/* (b), (c), (d): same map twice; pins, classes and lags kept. */
static void test_deterministic_pins_classes_lags(void **state)
{
    (void)state;
    pm_graph *g = mixed_graph();
    pm_map *a = NULL, *b = NULL;
    pm_mapper_info info;
    pm_diag d;
    assert_int_equal(pm_mapper_map(g, NULL, &a, &info, &d), PM_OK);
    assert_false(info.timed_out);
    assert_int_equal(pm_mapper_map(g, NULL, &b, &info, &d), PM_OK);
    assert_memory_equal(a->core_of, b->core_of, 12 * sizeof *a->core_of);
    assert_memory_equal(a->order, b->order, 12 * sizeof *a->order);
    assert_memory_equal(a->lag, b->lag, 12 * sizeof *a->lag);
    assert_int_equal(pm_map_check(a, g, &d), PM_OK);
    assert_int_equal(a->core_of[3], 0);
    for (uint32_t v = 1; v < 12; v += 2) /* odd nodes: dsp cores 0 and 1 only */
        assert_true(a->core_of[v] < 2);
    assert_int_equal(pm_ipc_check_lags(g, a, &d), PM_OK);
    /* no map beats the busiest core's occupancy: the period is at least it */
    assert_true(pm_rat_cmp(info.period, pm_rat_int(info.busiest)) >= 0);
    pm_map_destroy(a);
    pm_map_destroy(b);
    pm_graph_destroy(g);
}

/* Determinism without the clock: with an evaluation budget that ends the
 * search first, two runs give the same map; on a bus the period reported
 * is the simulated one (the IPC ratio is only a floor there). */
static void test_evals_budget_and_bus(void **state)
{
    (void)state;
    pm_graph *g = mixed_graph();
    g->platform.interconnect = PM_BUS;
    pm_mapper_opts o = { .max_evals = 40, .time_ms = 600000 };
    pm_map *a = NULL, *b = NULL;
    pm_mapper_info ia, ib;
    pm_diag d;
    assert_int_equal(pm_mapper_map(g, &o, &a, &ia, &d), PM_OK);
    assert_int_equal(pm_mapper_map(g, &o, &b, &ib, &d), PM_OK);
    assert_false(ia.timed_out);
    assert_int_equal(ia.evals, ib.evals);
    assert_memory_equal(a->core_of, b->core_of, 12 * sizeof *a->core_of);
    assert_memory_equal(a->order, b->order, 12 * sizeof *a->order);
    assert_memory_equal(a->lag, b->lag, 12 * sizeof *a->lag);
    pm_sim_opts so = { .iterations = 128 };
    pm_sim_result r;
    assert_int_equal(pm_sim_run(g, a, &so, &r, &d), PM_OK);
    assert_int_equal(pm_rat_cmp(r.period, ia.period), 0);
    pm_ipc ipc;
    assert_int_equal(pm_ipc_compute(g, a, &ipc, &d), PM_OK);
    assert_true(pm_rat_cmp(ia.period, ipc.period) >= 0);
    pm_ipc_free(&ipc);
    pm_sim_result_free(&r);
    pm_map_destroy(a);
    pm_map_destroy(b);
    pm_graph_destroy(g);
}

/* The branch and bound with core classes and a pin: the optimum of
 * trying every assignment, and an assignment that keeps them. */
static void test_exact_classes_pins(void **state)
{
    (void)state;
    pm_graph *g = mixed_graph_n(9);
    uint32_t assign[9] = { 0 };
    int64_t best = 0, brute = brute_occupancy(g);
    bool proven = false;
    assert_int_equal(pm_mapper_exact(g, 0, INT64_MAX / 4, assign, &best, &proven), PM_OK);
    assert_true(proven);
    assert_int_equal(best, brute);
    assert_int_equal(assign[3], 0);
    for (uint32_t v = 0; v < 9; v++)
        assert_true(pm_graph_can_run(g, v, assign[v]));
    pm_graph_destroy(g);
}

/* The plan runs the period-first mapper by default: its map then equals
 * pm_mapper_map's; a lagged map gets no one-iteration schedule, and its
 * period from pm_plan_period is the IPC ratio; asked for the list
 * scheduler, the plan gives a map without lags. */
static void test_plan_default(void **state)
{
    (void)state;
    pm_plan p;
    pm_diag d;
    assert_int_equal(pm_plan_init(&p, mixed_graph(), &d), PM_OK);
    pm_schedule *sc = NULL;
    pm_map *m = NULL, *direct = NULL;
    assert_int_equal(pm_plan_map(&p, NULL, &sc, &m, &d), PM_OK);
    assert_int_equal(pm_mapper_map(p.graph, NULL, &direct, NULL, &d), PM_OK);
    assert_memory_equal(m->core_of, direct->core_of, 12 * sizeof *m->core_of);
    assert_memory_equal(m->lag, direct->lag, 12 * sizeof *m->lag);
    if (pm_map_has_lags(m))
        assert_null(sc);
    else
        assert_non_null(sc);
    pm_plan_timing pt;
    pm_ipc ipc;
    assert_int_equal(pm_plan_period(&p, m, &pt, &d), PM_OK);
    assert_int_equal(pm_ipc_compute(p.graph, m, &ipc, &d), PM_OK);
    assert_true(pt.exact);
    assert_int_equal(pm_rat_cmp(pt.period, ipc.period), 0);
    pm_ipc_free(&ipc);
    pm_sched_destroy(sc);
    pm_map_destroy(m);
    pm_map_destroy(direct);
    pm_plan_opts po = { .mapper = PM_PLAN_MAPPER_LIST };
    assert_int_equal(pm_plan_map(&p, &po, NULL, &m, &d), PM_OK);
    assert_false(pm_map_has_lags(m));
    pm_map_destroy(m);
    pm_plan_free(&p);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_against_glpk),
        cmocka_unit_test(test_deterministic_pins_classes_lags),
        cmocka_unit_test(test_exact_classes_pins),
        cmocka_unit_test(test_evals_budget_and_bus),
        cmocka_unit_test(test_plan_default),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
