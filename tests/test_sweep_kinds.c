/*
 * test_sweep_kinds.c - what the sweep names as the limit, one invented
 * scenario per kind with its arithmetic written out beside the check
 * (loop through transfers, node, busiest core with send/recv, bus,
 * mapping); sweeps over one core class's count; and the rule that the
 * period never grows with the core count, on 100 random graphs.
 *
 * The periods are derived by hand from the self-timed rule: a map's period
 * is the largest cycle ratio of its inter-processor communication graph
 * (Sriram & Bhattacharyya, "Embedded Multiprocessors: Scheduling and
 * Synchronization", 2000): the data edges with their transfer times, and
 * each core's order closed by one delay.
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
#include "pacemap/plan.h"
#include "pacemap/reader.h"
#include "pacemap/sweep.h"
#include "support/testkit.h"

static pm_graph *load(const char *text)
{
    pm_graph *g = NULL;
    pm_diag d;
    pm_diag_clear(&d);
    if (pm_reader_read_string(text, strlen(text), "kinds.pace", &g, &d) != PM_OK)
        fail_msg("scenario: %s:%u:%u: %s", d.file, d.line, d.col, d.msg);
    return g;
}

/* A single-rate graph is its own plan (borrowed: the test destroys g). */
static int sweep(pm_graph *g, const pm_sweep_opts *o, pm_sweep *s, pm_diag *d)
{
    pm_plan p = {.graph = g, .source = g};
    pm_diag_clear(d);
    return pm_sweep_run(&p, o, s, d);
}

static void run(pm_graph *g, pm_sweep_opts *o, pm_sweep *s)
{
    pm_diag d;
    if (!o->iterations)
        o->iterations = 200;
    int rc = sweep(g, o, s, &d);
    if (rc != PM_OK)
        fail_msg("sweep: %s (%s)", pm_error_name(rc), d.msg);
}

static void expect_rat(pm_rat r, int64_t num, int64_t den)
{
    if (r.num != num || r.den != den)
        fail_msg("got %lld/%lld, expected %lld/%lld", (long long)r.num, (long long)r.den,
                 (long long)num, (long long)den);
}

/* ---- one scenario per kind ---------------------------------------------- */

/* cores: a -> b pinned apart, latency 100, send 5, recv 7.  Core 0 runs a
 * (40) and sends (5): 45 per iteration; core 1 receives (7) and runs b
 * (40): 47.  The edge a -> b makes no cycle, so the period is the larger
 * core round, 47: above the work floor 80 / 2 = 40 and the node 40. */
static void test_cores_with_send_recv(void **state)
{
    (void)state;
    pm_graph *g = load("procs 2\ncomm latency=100 send=5 recv=7\n"
                       "node a cycles=40 pin=0\nnode b cycles=40 pin=1\nedge a -> b\n");
    pm_sweep s;
    pm_sweep_opts o = {.procs_from = 2, .procs_to = 2};
    run(g, &o, &s);
    const pm_sweep_point *p = &s.points[0];
    expect_rat(p->period, 47, 1);
    expect_rat(p->floors.lower_bound, 40, 1);
    assert_int_equal(p->limit.kind, PM_LIMIT_CORES);
    assert_int_equal(p->busiest_core, 1);
    assert_int_equal(p->busiest, 47);
    assert_int_equal(p->busiest_run, 40);
    assert_int_equal(p->limit.nnodes, 1);
    assert_string_equal(pm_graph_node_name(g, p->limit.nodes[0]), "b");
    pm_sweep_free(&s);
    pm_graph_destroy(g);
}

/* node: the largest node at its time on its core's class.  One core runs
 * x (50) alone, the other y and z (10 + 10): the period is 50, the node. */
static void test_node(void **state)
{
    (void)state;
    pm_graph *g = load("node x cycles=50\nnode y cycles=10\nnode z cycles=10\n");
    pm_sweep s;
    pm_sweep_opts o = {.procs_from = 2, .procs_to = 3};
    run(g, &o, &s);
    for (uint32_t i = 0; i < 2; i++) {
        expect_rat(s.points[i].period, 50, 1);
        assert_int_equal(s.points[i].limit.kind, PM_LIMIT_NODE);
        assert_string_equal(pm_graph_node_name(g, s.points[i].limit.nodes[0]), "x");
    }
    pm_sweep_free(&s);
    pm_graph_destroy(g);
}

/* bus: s on core 0 feeds x1..x4 on core 1 over a bus, 30 cycles each,
 * and x4 feeds s back (three delays, so s may run ahead and the bus always
 * has a transfer waiting).  The bus carries those 5 transfers, 5 x 30 =
 * 150 cycles per iteration, one at a time; the cores carry 2 and 8, and
 * the loop s -> x4 -> s takes (2 + 30 + 2 + 30) / 3 alone: the bus sets
 * the period, 150.  (With one delay the bus would also wait for s and x4
 * to run, 2 + 2 more per iteration: a cycle of the map, not the bus.) */
static void test_bus(void **state)
{
    (void)state;
    pm_graph *g = load("procs 2\ninterconnect bus\ncomm latency=30\n"
                       "node s cycles=2 pin=0\nnode x1 cycles=2 pin=1\nnode x2 cycles=2 pin=1\n"
                       "node x3 cycles=2 pin=1\nnode x4 cycles=2 pin=1\n"
                       "edge s -> x1\nedge s -> x2\nedge s -> x3\nedge s -> x4\n"
                       "edge x4 -> s delay=3\n");
    pm_sweep s;
    pm_sweep_opts o = {.procs_from = 2, .procs_to = 2};
    run(g, &o, &s);
    const pm_sweep_point *p = &s.points[0];
    expect_rat(p->period, 150, 1);
    assert_int_equal(p->bus_busy, 150);
    assert_int_equal(p->limit.kind, PM_LIMIT_BUS);
    pm_sweep_free(&s);
    pm_graph_destroy(g);
}

/* mapping: a -> b and c -> d (10 cycles each, transfers 30) on a hand map
 * that crosses them: core 0 runs a then d, core 1 runs c then b.  The
 * cycle a -> b (transfer) -> c of the next iteration (core 1's order
 * wraps) -> d (transfer) -> a of the iteration after (core 0 wraps) takes
 * 10 + 30 + 10 + 10 + 30 + 10 = 100 cycles over 2 iterations: 50.  The
 * cores carry 20 each, the nodes 10, there is no loop: none of those, so
 * the map itself; its floor is the best occupancy 20, 150 % below. */
static void test_mapping(void **state)
{
    (void)state;
    pm_graph *g = load("procs 2\ncomm latency=30\n"
                       "node a cycles=10\nnode b cycles=10\nnode c cycles=10\nnode d cycles=10\n"
                       "edge a -> b\nedge c -> d\n");
    static const char text[] = "core 0: a d\ncore 1: c b\n";
    pm_map *m = NULL;
    pm_diag d;
    assert_int_equal(pm_map_read_string(text, strlen(text), "x.map", g, &m, &d), PM_OK);
    pm_sweep s;
    pm_sweep_opts o = {.procs_from = 2, .procs_to = 2, .map = m};
    run(g, &o, &s);
    const pm_sweep_point *p = &s.points[0];
    expect_rat(p->period, 50, 1);
    assert_int_equal(p->limit.kind, PM_LIMIT_MAPPING);
    assert_int_equal(p->limit.cycles, 100);
    assert_int_equal(p->limit.delays, 2);
    assert_int_equal(p->limit.nhops, 2);
    assert_int_equal(p->limit.norders, 2);
    expect_rat(p->floors.map_floor, 20, 1);
    bool opt;
    pm_rat pct;
    assert_int_equal(pm_bound_gap(p->period, p->floors.map_floor, &opt, &pct), PM_OK);
    expect_rat(pct, 150, 1);
    pm_sweep_free(&s);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

/* ---- one class's count --------------------------------------------------- */

/* d1..d4 run only on dsp (20 each), h only on host (10).  With n dsp cores
 * and the one host core: 80, 40, 40, 20 (four equal nodes on n cores put
 * ceil(4 / n) on one).  For n = 3 the floors see it too: by pigeonhole one
 * of 3 cores holds two of the 4 dsp-only nodes, 40. */
static const char classes[] = "procs dsp:1 host:1\n"
                              "node h cycles=host:10\n"
                              "node d1 cycles=dsp:20\nnode d2 cycles=dsp:20\n"
                              "node d3 cycles=dsp:20\nnode d4 cycles=dsp:20\n"
                              "edge h -> d1\n";

static void test_class_count(void **state)
{
    (void)state;
    pm_graph *g = load(classes);
    pm_sweep s;
    pm_sweep_opts o = {.procs_from = 1, .procs_to = 4, .by_class = true, .vary_class = 0};
    run(g, &o, &s);
    assert_int_equal(s.vary_class, 0);
    const int64_t want[] = {80, 40, 40, 20};
    for (uint32_t i = 0; i < 4; i++) {
        const pm_sweep_point *p = &s.points[i];
        assert_int_equal(p->count, i + 1);
        assert_int_equal(p->procs, i + 2);
        expect_rat(p->period, want[i], 1);
        /* the host core comes after the dsp cores: h runs on core n */
        uint32_t h = pm_graph_find(g, "h", 1);
        assert_int_equal(p->map->core_of[h], i + 1);
    }
    expect_rat(s.points[2].floors.map_floor, 40, 1);
    assert_int_equal(s.points[s.saturation].count, 4);
    /* the scenario's own cores are back */
    assert_int_equal(g->platform.class_count[0], 1);
    assert_int_equal(g->platform.ncores, 2);
    assert_int_equal(g->platform.core_class[1], 1);
    pm_sweep_free(&s);
    pm_graph_destroy(g);
}

/* A node pinned to the host core by number would move when the dsp count
 * changes: refused, naming it.  Pinned to a dsp core, it sets the least
 * dsp count. */
static void test_class_pins(void **state)
{
    (void)state;
    pm_graph *g = load("procs dsp:2 host:1\nnode a cycles=dsp:5,host:5 pin=2\n"
                       "node b cycles=dsp:5\n");
    pm_sweep s;
    pm_diag d;
    pm_sweep_opts o = {.procs_from = 1, .procs_to = 3, .iterations = 50, .by_class = true};
    assert_int_equal(sweep(g, &o, &s, &d), PM_EPLATFORM);
    assert_non_null(strstr(d.msg, "'a'"));
    assert_non_null(strstr(d.msg, "pin it to its class"));
    pm_sweep_free(&s);
    assert_int_equal(g->platform.ncores, 3);
    pm_graph_destroy(g);
    g = load("procs dsp:2 host:1\nnode a cycles=dsp:5,host:5 pin=1\nnode b cycles=dsp:5\n");
    assert_int_equal(sweep(g, &o, &s, &d), PM_EPLATFORM);
    assert_non_null(strstr(d.msg, "only 1"));
    pm_sweep_free(&s);
    o.procs_from = 2;
    run(g, &o, &s);
    assert_int_equal(s.npoints, 2);
    pm_sweep_free(&s);
    /* no class to vary on identical cores */
    pm_graph_destroy(g);
    g = load("procs 2\nnode a cycles=5\n");
    assert_int_equal(sweep(g, &o, &s, &d), PM_EPLATFORM);
    pm_sweep_free(&s);
    pm_graph_destroy(g);
}

/* ---- the period never grows with P ---------------------------------------- */

/* A random graph of 4..11 nodes: edges forward, some back with a delay
 * (when `loops`), transfer costs that make the list scheduler's choices
 * uneven. */
static pm_graph *random_graph(uint64_t *seed, bool loops)
{
    uint32_t n = 4 + tk_rand(seed, 8);
    char text[4096];
    int k = snprintf(text, sizeof text, "comm latency=%u send=%u recv=%u\n", tk_rand(seed, 40),
                     tk_rand(seed, 6), tk_rand(seed, 6));
    for (uint32_t v = 0; v < n; v++)
        k += snprintf(text + k, sizeof text - (size_t)k, "node v%u cycles=%u\n", v,
                      1 + tk_rand(seed, 30));
    uint32_t edges = n + tk_rand(seed, n);
    for (uint32_t i = 0; i < edges; i++) {
        uint32_t a = tk_rand(seed, n - 1), b = a + 1 + tk_rand(seed, n - 1 - a);
        if (tk_rand(seed, 5) == 0 && loops)
            k += snprintf(text + k, sizeof text - (size_t)k, "edge v%u -> v%u delay=1\n", b, a);
        else
            k += snprintf(text + k, sizeof text - (size_t)k, "edge v%u -> v%u\n", a, b);
    }
    return load(text);
}

/* 100 graphs with the list scheduler's maps, then 20 with the period-first
 * mapper's (maps with lags), on a small time budget. */
static void test_never_grows(void **state)
{
    (void)state;
    uint64_t seed = 2026;
    uint32_t reused = 0;
    pm_plan_opts period_first = {.mapper = PM_PLAN_MAPPER_PERIOD, .mapper_ms = 20};
    for (int i = 0; i < 120; i++) {
        pm_graph *g = random_graph(&seed, true);
        pm_sweep s;
        pm_sweep_opts o = {.procs_from = 1, .procs_to = 4, .iterations = 60,
                           .plan = i < 100 ? NULL : &period_first};
        run(g, &o, &s);
        for (uint32_t j = 0; j < s.npoints; j++) {
            const pm_sweep_point *p = &s.points[j];
            if (j > 0 && pm_rat_cmp(p->period, s.points[j - 1].period) > 0)
                fail_msg("graph %d: period grows from P=%u to P=%u", i, j, j + 1);
            /* a smaller count's map runs only when its own was worse */
            assert_true(p->map_count <= p->count);
            if (p->map_count < p->count) {
                reused++;
                assert_true(pm_rat_cmp(p->own_period, p->period) > 0);
                assert_true(p->idle_cores >= p->count - p->map_count);
            }
        }
        pm_sweep_free(&s);
        pm_graph_destroy(g);
    }
    print_message("maps of a smaller core count reused at %u points\n", reused);
}

/* ---- the map floor against GLPK --------------------------------------------- */

/* On 30 small random graphs without loops at P = 2 and 3, where the best
 * period of any map (lags allowed) is the best busiest-core occupancy
 * (include/pacemap/mapper.h gives the argument), which glpsol proves:
 * map_floor never exceeds it; where the sweep's exhaustive search raised
 * the floor, they are equal; and the period achieved is never below it. */
static void test_map_floor_against_glpk(void **state)
{
    (void)state;
    if (system("glpsol --version > /dev/null 2>&1") != 0) {
        print_message("note: glpsol (glpk-utils) not installed; map floor check skipped\n");
        skip();
    }
    uint64_t seed = 77;
    uint32_t searched = 0;
    for (int i = 0; i < 30; i++) {
        pm_graph *g = random_graph(&seed, false);
        pm_sweep s;
        pm_sweep_opts o = {.procs_from = 2, .procs_to = 3, .iterations = 60};
        run(g, &o, &s);
        for (uint32_t j = 0; j < s.npoints; j++) {
            const pm_sweep_point *p = &s.points[j];
            assert_int_equal(pm_plan_set_procs(&(pm_plan){.graph = g, .source = g}, p->procs,
                                               NULL), PM_OK);
            double opt;
            assert_true(tk_glpsol(tk_write_occupancy_lp, g, 10, &opt));
            assert_true(pm_rat_to_double(p->floors.map_floor) <= opt + 1e-6);
            assert_true(pm_rat_cmp(p->floors.map_floor, p->period) <= 0 || !p->steady);
            if (p->floor_searched) {
                searched++;
                assert_true(p->floors.map_floor.den == 1 &&
                            (double)p->floors.map_floor.num == opt);
            }
        }
        pm_sweep_free(&s);
        pm_graph_destroy(g);
    }
    print_message("map floor raised by the search and equal to glpsol's at %u of 60 points\n",
                  searched);
    assert_true(searched > 0);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_cores_with_send_recv),
        cmocka_unit_test(test_node),
        cmocka_unit_test(test_bus),
        cmocka_unit_test(test_mapping),
        cmocka_unit_test(test_class_count),
        cmocka_unit_test(test_class_pins),
        cmocka_unit_test(test_never_grows),
        cmocka_unit_test(test_map_floor_against_glpk),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
