/*
 * test_sweep.c - the speedup sweep on invented graphs whose answers are
 * worked out by hand in the comments beside each check: a fork-join whose
 * period falls as total / P until the largest node binds, a first-order
 * recursive loop that saturates at its loop bound, a feedback loop split
 * across cores by pins (a loop the mapping made, transfers named), the
 * what-ifs, the saturation rule, and refusals.
 *
 * The periods below are the best any map can do (each equals a floor or is
 * shown optimal by a counting argument in the comment); the list scheduler
 * reaches them on these graphs.
 */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <cmocka.h>

#include "pacemap/graph.h"
#include "pacemap/map.h"
#include "pacemap/plan.h"
#include "pacemap/reader.h"
#include "pacemap/sweep.h"

/* ---- helpers ------------------------------------------------------------ */

static pm_graph *load(const char *text)
{
    pm_graph *g = NULL;
    pm_diag d;
    pm_diag_clear(&d);
    int rc = pm_reader_read_string(text, strlen(text), "test.pace", &g, &d);
    if (rc != PM_OK)
        fail_msg("scenario: %s:%u:%u: %s", d.file, d.line, d.col, d.msg);
    return g;
}

/* A single-rate graph is its own plan: what pm_plan_init makes of it, but
 * borrowed, so that the tests keep and destroy g themselves. */
static int sweep(pm_graph *g, const pm_sweep_opts *o, pm_sweep *s, pm_diag *d)
{
    pm_plan p = {.graph = g, .source = g};
    return pm_sweep_run(g ? &p : NULL, o, s, d);
}

static void run(pm_graph *g, uint32_t from, uint32_t to, pm_sweep *s)
{
    pm_sweep_opts o = {.procs_from = from, .procs_to = to, .iterations = 200};
    pm_diag d;
    pm_diag_clear(&d);
    int rc = sweep(g, &o, s, &d);
    if (rc != PM_OK)
        fail_msg("sweep: %s (%s)", pm_error_name(rc), d.msg);
    assert_int_equal(s->npoints, to - from + 1);
}

static void expect_period(const pm_sweep *s, uint32_t procs, int64_t num, int64_t den)
{
    const pm_sweep_point *p = &s->points[procs - s->points[0].procs];
    assert_int_equal(p->procs, procs);
    assert_true(p->steady);
    if (p->period.num != num || p->period.den != den)
        fail_msg("P=%u: period %lld/%lld, expected %lld/%lld", procs, (long long)p->period.num,
                 (long long)p->period.den, (long long)num, (long long)den);
}

static const pm_sweep_point *point(const pm_sweep *s, uint32_t procs)
{
    return &s->points[procs - s->points[0].procs];
}

static const char *name(const pm_graph *g, uint32_t v)
{
    return pm_graph_node_name(g, v);
}

static void dump(const pm_graph *g, const pm_sweep *s)
{
    for (uint32_t i = 0; i < s->npoints; i++) {
        const pm_sweep_point *p = &s->points[i];
        print_message("P=%u period=%lld/%lld lb=%lld/%lld kind=%s", p->procs,
                      (long long)p->period.num, (long long)p->period.den,
                      (long long)p->floors.lower_bound.num, (long long)p->floors.lower_bound.den,
                      pm_sweep_limit_name(p->limit.kind));
        for (uint32_t k = 0; k < p->limit.nnodes; k++)
            print_message(" %s", name(g, p->limit.nodes[k]));
        print_message(" hops=%u orders=%u\n", p->limit.nhops, p->limit.norders);
    }
}

/* ---- fork-join: total / P, then the largest node ------------------------ */

/* Invented: a split (free), one 30-cycle branch and nine 10-cycle branches,
 * a join (free).  Total 120, largest node 30, no loop. */
static const char fork_join[] =
    "# invented for this test\n"
    "node split cycles=0\n"
    "node big cycles=30\n"
    "node s1 cycles=10\nnode s2 cycles=10\nnode s3 cycles=10\n"
    "node s4 cycles=10\nnode s5 cycles=10\nnode s6 cycles=10\n"
    "node s7 cycles=10\nnode s8 cycles=10\nnode s9 cycles=10\n"
    "node join cycles=0\n"
    "edge split -> big -> join\n"
    "edge split -> s1 -> join\nedge split -> s2 -> join\nedge split -> s3 -> join\n"
    "edge split -> s4 -> join\nedge split -> s5 -> join\nedge split -> s6 -> join\n"
    "edge split -> s7 -> join\nedge split -> s8 -> join\nedge split -> s9 -> join\n";

static void test_fork_join(void **state)
{
    (void)state;
    pm_graph *g = load(fork_join);
    pm_sweep s;
    run(g, 1, 6, &s);
    dump(g, &s);
    /* P = 1..4: 120 / P (the pieces 30 + 9 x 10 split evenly: 120, 60, 40,
     * 30); from P = 4 on the 30-cycle node binds: 30. */
    expect_period(&s, 1, 120, 1);
    expect_period(&s, 2, 60, 1);
    expect_period(&s, 3, 40, 1);
    expect_period(&s, 4, 30, 1);
    expect_period(&s, 5, 30, 1);
    expect_period(&s, 6, 30, 1);
    for (uint32_t p = 1; p <= 3; p++)
        assert_int_equal(point(&s, p)->limit.kind, PM_LIMIT_CORES);
    /* at P = 4, 120 / 4 = 30 = the node: the node is named (more cores
     * cannot move it) */
    for (uint32_t p = 4; p <= 6; p++) {
        const pm_sweep_limit *l = &point(&s, p)->limit;
        assert_int_equal(l->kind, PM_LIMIT_NODE);
        assert_int_equal(l->nnodes, 1);
        assert_string_equal(name(g, l->nodes[0]), "big");
    }
    assert_int_equal(s.points[s.saturation].procs, 4);
    assert_true(s.saturation_proven);
    assert_true(s.saturation_reached);
    /* speedup 120 / 40 = 3 at P = 3, efficiency 1 */
    assert_true(fabs(point(&s, 3)->speedup - 3.0) < 1e-12);
    assert_true(fabs(point(&s, 3)->efficiency - 1.0) < 1e-12);
    assert_true(fabs(point(&s, 6)->efficiency - 4.0 / 6.0) < 1e-12);
    /* what-if at P = 4: big 10 cycles faster -> 20; then the floor at 4
     * cores is max(node 20, total 110 / 4 = 27.5) = 55/2 */
    assert_int_equal(s.whatif.kind, PM_LIMIT_NODE);
    assert_int_equal(s.whatif.nrows, 1);
    assert_int_equal(s.whatif.rows[0].new_cycles, 20);
    assert_int_equal(s.whatif.rows[0].after.num, 55);
    assert_int_equal(s.whatif.rows[0].after.den, 2);
    /* next behind the node at P = 4: max(second node 10, cores 30) = cores 30 */
    assert_true(s.whatif.has_next);
    assert_int_equal(s.whatif.next_kind, PM_LIMIT_CORES);
    assert_int_equal(s.whatif.next_value.num, 30);
    pm_sweep_free(&s);
    pm_graph_destroy(g);
}

/* ---- a first-order recursive loop saturates at its bound --------------- */

/* Invented: a 4-channel front end; channel 0 is a first-order recursive
 * smoother y = x + a * y[n-1] (add 10, mul 20, one delay: loop bound
 * 30 / 1 = 30), channels 1-3 are 20-cycle filters.  Total 90. */
static const char recursive[] =
    "# invented for this test\n"
    "node add cycles=10\n"
    "node mul cycles=20\n"
    "node f1 cycles=20\nnode f2 cycles=20\nnode f3 cycles=20\n"
    "edge add -> mul\n"
    "edge mul -> add delay=1\n";

static void test_recursive_loop(void **state)
{
    (void)state;
    pm_graph *g = load(recursive);
    pm_sweep s;
    run(g, 1, 5, &s);
    dump(g, &s);
    /* P=1: 90.  P=2: core loads are multiples of 10 and at least 90/2, so
     * at least 50.  P=3: three cores of 30 would need the four 20-cycle
     * pieces (mul, f1..f3) on separate cores: at least 40.  P>=4: the
     * loop bound 30 (every other floor is lower: node 20, 90/4). */
    expect_period(&s, 1, 90, 1);
    expect_period(&s, 2, 50, 1);
    expect_period(&s, 3, 40, 1);
    expect_period(&s, 4, 30, 1);
    expect_period(&s, 5, 30, 1);
    assert_int_equal(point(&s, 1)->limit.kind, PM_LIMIT_CORES);
    /* P=2, 3: above the lower bound, but no map does better (see above):
     * the busiest core carries the period, 50 and 40 cycles of nodes (one
     * core, no transfers) */
    for (uint32_t p = 2; p <= 3; p++) {
        const pm_sweep_point *pt = point(&s, p);
        assert_int_equal(pt->limit.kind, PM_LIMIT_CORES);
        assert_int_equal(pt->limit.cycles, p == 2 ? 50 : 40);
        assert_int_equal(pt->busiest, p == 2 ? 50 : 40);
        assert_int_equal(pt->busiest_run, pt->busiest);
        assert_int_equal(pt->limit.single_core, pt->busiest_core);
        int64_t sum = 0;
        for (uint32_t i = 0; i < pt->limit.nnodes; i++)
            sum += g->nodes[pt->limit.nodes[i]].cycles;
        assert_int_equal(sum, p == 2 ? 50 : 40);
    }
    for (uint32_t p = 4; p <= 5; p++) {
        const pm_sweep_limit *l = &point(&s, p)->limit;
        assert_int_equal(l->kind, PM_LIMIT_LOOP);
        assert_int_equal(l->nnodes, 2);
        assert_int_equal(l->cycles, 30);
        assert_int_equal(l->delays, 1);
        assert_true(l->exact);
        bool add = false, mul = false;
        for (uint32_t i = 0; i < 2; i++) {
            add |= strcmp(name(g, l->nodes[i]), "add") == 0;
            mul |= strcmp(name(g, l->nodes[i]), "mul") == 0;
        }
        assert_true(add && mul);
    }
    assert_int_equal(s.points[s.saturation].procs, 4);
    assert_true(s.saturation_proven);
    /* what-ifs at P=4 (faster = 10 cycles by default): add 10 -> 0 gives
     * the loop 20/1; mul 20 -> 10 gives 20/1; either way the floor at 4
     * cores is max(20, node 20, 80/4) = 20. */
    const pm_sweep_whatif *w = &s.whatif;
    assert_int_equal(w->kind, PM_LIMIT_LOOP);
    assert_int_equal(w->nrows, 2);
    for (uint32_t i = 0; i < 2; i++) {
        assert_int_equal(w->rows[i].new_cycles, w->rows[i].cycles - 10);
        assert_int_equal(w->rows[i].after.num, 20);
        assert_int_equal(w->rows[i].after.den, 1);
        assert_int_equal(w->rows[i].loop_alone.num, 20);
        assert_int_equal(w->rows[i].floor_after.num, 20);
    }
    /* one more delay: 30 / 2 = 15; the floor at 4 cores is then
     * max(15, 20, 90/4) = 45/2 */
    assert_true(w->has_delay);
    assert_int_equal(w->delay_bound.num, 15);
    assert_int_equal(w->delay_bound.den, 1);
    assert_int_equal(w->delay_loop_alone.num, 15);
    assert_int_equal(w->delay_floor.num, 45);
    assert_int_equal(w->delay_floor.den, 2);
    /* behind the loop at P=4: no other loop; node 20 < cores 90/4 */
    assert_true(w->has_next);
    assert_int_equal(w->next_kind, PM_LIMIT_CORES);
    assert_int_equal(w->next_value.num, 45);
    assert_int_equal(w->next_value.den, 2);
    pm_sweep_free(&s);
    pm_graph_destroy(g);
}

/* ---- a feedback loop split across cores: a loop the mapping made -------- */

/* Invented: a tracking loop whose two halves are pinned to different cores
 * (a -> b -> a, one delay), 5 cycles per transfer.  The graph's loop
 * bound is (20 + 20) / 1 = 40; through the two transfers the loop takes
 * 20 + 5 + 20 + 5 = 50 cycles per iteration. */
static const char split_loop[] =
    "# invented for this test\n"
    "procs 2\n"
    "comm latency=5\n"
    "node a cycles=20 pin=0\n"
    "node b cycles=20 pin=1\n"
    "edge a -> b\n"
    "edge b -> a delay=1\n";

static bool has_hop(const pm_graph *g, const pm_sweep_limit *l, const char *from,
                    const char *to, uint32_t fc, uint32_t tc)
{
    for (uint32_t i = 0; i < l->nhops; i++) {
        const pm_edge *e = &g->edges[l->hops[i].edge];
        if (strcmp(name(g, e->src), from) == 0 && strcmp(name(g, e->dst), to) == 0 &&
            l->hops[i].from_core == fc && l->hops[i].to_core == tc && l->hops[i].cost == 5)
            return true;
    }
    return false;
}

static void test_mapping_loop(void **state)
{
    (void)state;
    pm_graph *g = load(split_loop);
    pm_sweep s;
    run(g, 2, 3, &s);
    dump(g, &s);
    for (uint32_t p = 2; p <= 3; p++) {
        expect_period(&s, p, 50, 1);
        const pm_sweep_limit *l = &point(&s, p)->limit;
        /* a loop of the graph with the two transfers the pins put on it */
        assert_int_equal(l->kind, PM_LIMIT_LOOP);
        assert_int_equal(l->nedges, 2);
        assert_int_equal(l->nhops, 2);
        assert_true(has_hop(g, l, "a", "b", 0, 1));
        assert_true(has_hop(g, l, "b", "a", 1, 0));
        assert_int_equal(l->cycles, 50);
        assert_int_equal(l->delays, 1);
        assert_true(l->exact);
        assert_int_equal(l->single_core, PM_NONE);
    }
    /* 50 is no floor (loop 40, node 20), but 3 cores do no better */
    assert_int_equal(s.saturation, 0);
    assert_false(s.saturation_proven);
    assert_true(s.saturation_reached);
    /* what-if: either node 10 cycles faster -> 10 + 5 + 20 + 5 = 40 on the
     * same map; the floor at 2 cores becomes the loop 30 */
    const pm_sweep_whatif *w = &s.whatif;
    assert_int_equal(w->kind, PM_LIMIT_LOOP);
    assert_true(w->same_map);
    assert_int_equal(w->nrows, 2);
    for (uint32_t i = 0; i < 2; i++) {
        assert_int_equal(w->rows[i].after.num, 40);
        assert_int_equal(w->rows[i].after.den, 1);
        assert_int_equal(w->rows[i].loop_alone.num, 40);
        assert_int_equal(w->rows[i].floor_after.num, 30);
    }
    /* one more delay on the loop: its own ratio 50 / 2 = 25 */
    assert_true(w->has_delay);
    assert_int_equal(w->delay_loop_alone.num, 25);
    /* next: the lower bound, the graph's loop a -> b at 40 */
    assert_int_equal(w->next_kind, PM_LIMIT_LOOP);
    assert_int_equal(w->next_value.num, 40);
    assert_int_equal(w->nnext_nodes, 2);
    pm_sweep_free(&s);
    pm_graph_destroy(g);
}

/* The same loop over a shared bus: the transfers are named as bus hops. */
static void test_mapping_loop_bus(void **state)
{
    (void)state;
    char text[512];
    snprintf(text, sizeof text, "%sinterconnect bus\n", split_loop);
    pm_graph *g = load(text);
    pm_sweep s;
    run(g, 2, 2, &s);
    /* one transfer at a time, and there are never two at once: still
     * 20 + 5 + 20 + 5 = 50 */
    expect_period(&s, 2, 50, 1);
    const pm_sweep_limit *l = &s.points[0].limit;
    assert_int_equal(l->kind, PM_LIMIT_LOOP);
    assert_int_equal(l->nhops, 2);
    assert_true(has_hop(g, l, "a", "b", 0, 1));
    assert_true(has_hop(g, l, "b", "a", 1, 0));
    assert_true(l->hops[0].bus && l->hops[1].bus);
    assert_int_equal(l->nnodes, 2);
    pm_sweep_free(&s);
    pm_graph_destroy(g);
}

/* A hand map that splits the recursive loop over two cores, transfers 10
 * cycles each: add 10 + 10 + mul 20 + 10 = 50 per iteration, where the
 * graph's bound is 30 and the core loads are 30, 40, 20. */
static void test_hand_map(void **state)
{
    (void)state;
    char text[512];
    snprintf(text, sizeof text, "%sprocs 3\ncomm latency=10\n", recursive);
    pm_graph *g = load(text);
    static const char map_text[] = "core 0: add f1\ncore 1: mul f2\ncore 2: f3\n";
    pm_map *m = NULL;
    pm_diag d;
    assert_int_equal(pm_map_read_string(map_text, strlen(map_text), "hand.map", g, &m, &d),
                     PM_OK);
    pm_sweep s;
    pm_sweep_opts o = {.procs_from = 3, .procs_to = 3, .iterations = 200, .map = m};
    assert_int_equal(sweep(g, &o, &s, &d), PM_OK);
    expect_period(&s, 3, 50, 1);
    const pm_sweep_limit *l = &s.points[0].limit;
    assert_int_equal(l->kind, PM_LIMIT_LOOP); /* the graph's loop through two transfers */
    assert_int_equal(l->cycles, 50);
    assert_int_equal(l->nhops, 2);
    for (uint32_t i = 0; i < 2; i++)
        assert_int_equal(l->hops[i].cost, 10);
    /* what-if on the same map: mul 20 -> 10 gives 40, still above the
     * core 1 load 30 and the bound */
    assert_int_equal(s.whatif.kind, PM_LIMIT_LOOP);
    assert_true(s.whatif.same_map);
    bool seen = false;
    for (uint32_t i = 0; i < s.whatif.nrows; i++)
        if (strcmp(name(g, s.whatif.rows[i].node), "mul") == 0) {
            assert_int_equal(s.whatif.rows[i].after.num, 40);
            seen = true;
        }
    assert_true(seen);
    pm_sweep_free(&s);
    /* a map fixes the core count */
    o.procs_from = 2;
    assert_int_equal(sweep(g, &o, &s, &d), PM_EINVAL);
    pm_sweep_free(&s);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

/* ---- two loops: the what-if must follow the next loop -------------------- */

/* Invented: loop A (a1 10 + a2 20, one delay: 30) and an independent
 * stateful node b1 (25, self-loop with one delay: 25).  Total 55. */
static const char two_loops[] =
    "# invented for this test\n"
    "node a1 cycles=10\nnode a2 cycles=20\nnode b1 cycles=25\n"
    "edge a1 -> a2\nedge a2 -> a1 delay=1\nedge b1 -> b1 delay=1\n";

static void test_two_loops(void **state)
{
    (void)state;
    pm_graph *g = load(two_loops);
    pm_sweep s;
    run(g, 1, 3, &s);
    dump(g, &s);
    /* P=1: 55 (cores).  P=2: A on one core (30), b1 on the other: 30 = L. */
    expect_period(&s, 1, 55, 1);
    expect_period(&s, 2, 30, 1);
    expect_period(&s, 3, 30, 1);
    assert_int_equal(s.points[s.saturation].procs, 2);
    const pm_sweep_whatif *w = &s.whatif;
    assert_int_equal(w->kind, PM_LIMIT_LOOP);
    assert_int_equal(w->nrows, 2);
    /* a1 10 -> 0 alone would give loop A 20/1, but b1's loop 25 then
     * binds: the recomputed bound is 25, not 20.  Same for a2 20 -> 10.
     * Floor at 2 cores: max(25, node 25, 45/2) = 25. */
    for (uint32_t i = 0; i < 2; i++) {
        assert_int_equal(w->rows[i].loop_alone.num, 20);
        assert_int_equal(w->rows[i].after.num, 25);
        assert_int_equal(w->rows[i].after.den, 1);
        assert_int_equal(w->rows[i].floor_after.num, 25);
    }
    /* one more delay on A: 30/2 = 15 alone, the bound falls to b1's 25,
     * the floor at 2 cores to max(25, 25, 55/2) = 55/2 */
    assert_true(w->has_delay);
    assert_int_equal(w->delay_loop_alone.num, 15);
    assert_int_equal(w->delay_bound.num, 25);
    assert_int_equal(w->ndelay_next, 1);
    assert_string_equal(name(g, w->delay_next[0]), "b1");
    assert_int_equal(w->delay_floor.num, 55);
    assert_int_equal(w->delay_floor.den, 2);
    /* next behind loop A at P=2: b1's loop 25, the node 25, cores 55/2:
     * the cores */
    assert_int_equal(w->next_kind, PM_LIMIT_CORES);
    assert_int_equal(w->next_value.num, 55);
    assert_int_equal(w->next_value.den, 2);
    pm_sweep_free(&s);
    /* at P = 3 alone the cores give 55/3 < 25: the loop b1 is next */
    run(g, 3, 3, &s);
    assert_int_equal(s.whatif.next_kind, PM_LIMIT_LOOP);
    assert_int_equal(s.whatif.next_value.num, 25);
    assert_int_equal(s.whatif.nnext_nodes, 1);
    assert_string_equal(name(g, s.whatif.next_nodes[0]), "b1");
    pm_sweep_free(&s);
    pm_graph_destroy(g);
}

/* Whole nodes: 13 cycles of work cannot split 6.5 / 6.5 over 2 cores. */
static void test_cores_ceiling(void **state)
{
    (void)state;
    pm_graph *g = load("# invented for this test\n"
                       "node a cycles=4\nnode b cycles=4\nnode c cycles=3\nnode d cycles=2\n");
    pm_sweep s;
    run(g, 2, 2, &s);
    /* best split {4,3} | {4,2}: 7 = ceil(13 / 2), above W/P = 13/2 and the
     * node 4; no map does better, so it is the cores, not the mapping */
    expect_period(&s, 2, 7, 1);
    assert_int_equal(s.points[0].floors.lower_bound.num, 13);
    assert_int_equal(s.points[0].floors.lower_bound.den, 2);
    assert_int_equal(s.points[0].limit.kind, PM_LIMIT_CORES);
    pm_sweep_free(&s);
    pm_graph_destroy(g);
}

/* ---- saturation rule, refusals ------------------------------------------ */

static void test_not_saturated(void **state)
{
    (void)state;
    pm_graph *g = load(fork_join);
    pm_sweep s;
    run(g, 1, 2, &s);
    /* 120 then 60: still improving at the end of the range, and 60 is no
     * floor that more cores cannot move */
    assert_int_equal(s.saturation, 1);
    assert_false(s.saturation_proven);
    assert_false(s.saturation_reached);
    assert_int_equal(s.best, 1);
    pm_sweep_free(&s);
    pm_graph_destroy(g);
}

static int sweep_rc(pm_graph *g, uint32_t from, uint32_t to, pm_diag *d)
{
    pm_sweep s;
    pm_sweep_opts o = {.procs_from = from, .procs_to = to, .iterations = 50};
    pm_diag_clear(d);
    int rc = sweep(g, &o, &s, d);
    pm_sweep_free(&s);
    pm_sweep_free(&s); /* twice is safe */
    return rc;
}

static void test_refusals(void **state)
{
    (void)state;
    pm_diag d;
    pm_graph *g = load(split_loop);
    assert_int_equal(pm_sweep_min_procs(g), 2);
    /* b is pinned to core 1: one core cannot hold it */
    assert_int_equal(sweep_rc(g, 1, 2, &d), PM_EPLATFORM);
    assert_non_null(strstr(d.msg, "'b'"));
    assert_non_null(strstr(d.msg, "with 1 cores"));
    /* the core count is restored after a failed sweep too */
    assert_int_equal(g->platform.ncores, 2);
    assert_int_equal(sweep_rc(g, 3, 2, &d), PM_EINVAL);
    assert_int_equal(sweep_rc(g, 2, 2 + PM_SWEEP_MAX_POINTS, &d), PM_ELIMIT);
    pm_graph_destroy(g);

    g = load("procs dsp:1 host:1\nnode a cycles=dsp:4,host:9\n");
    assert_int_equal(sweep_rc(g, 1, 4, &d), PM_EPLATFORM);
    assert_non_null(strstr(d.msg, "core classes"));
    /* its own core count is fine: a is 4 cycles at best */
    pm_sweep s;
    pm_sweep_opts o = {.procs_from = 2, .procs_to = 2};
    assert_int_equal(sweep(g, &o, &s, &d), PM_OK);
    assert_int_equal(s.points[0].period.num, 4);
    pm_sweep_free(&s);
    pm_graph_destroy(g);

    g = pm_graph_create("empty");
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    assert_int_equal(sweep_rc(g, 1, 2, &d), PM_EINVAL);
    pm_graph_destroy(g);
    assert_int_equal(sweep(NULL, &o, &s, &d), PM_EINVAL);
    assert_int_equal(sweep(g = load(recursive), NULL, &s, &d), PM_EINVAL);
    pm_graph_destroy(g);
}

/* The sweep restores the scenario's own core count. */
static void test_restores_procs(void **state)
{
    (void)state;
    pm_graph *g = load(recursive);
    assert_int_equal(g->platform.ncores, 1);
    pm_sweep s;
    run(g, 2, 4, &s);
    assert_int_equal(g->platform.ncores, 1);
    pm_sweep_free(&s);
    pm_graph_destroy(g);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_fork_join),
        cmocka_unit_test(test_recursive_loop),
        cmocka_unit_test(test_mapping_loop),
        cmocka_unit_test(test_mapping_loop_bus),
        cmocka_unit_test(test_hand_map),
        cmocka_unit_test(test_two_loops),
        cmocka_unit_test(test_cores_ceiling),
        cmocka_unit_test(test_not_saturated),
        cmocka_unit_test(test_refusals),
        cmocka_unit_test(test_restores_procs),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
