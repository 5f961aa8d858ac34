/*
 * test_plan.c - the plan module: a multirate scenario keeps every firing of
 * a node on one core, chosen by the rule of plan.h (worked out by hand
 * below and re-derived here from the list schedule of the expansion),
 * refinement never raises the simulated period, map files round-trip, the
 * core count reaches both graphs, the sweep maps multirate points
 * through the plan, and the default (period-first) mapper reaches a
 * hand-worked optimum on a multirate scenario with firings kept together.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <cmocka.h>

#include "pacemap/plan.h"
#include "pacemap/reader.h"
#include "pacemap/map.h"
#include "pacemap/sdf.h"
#include "pacemap/sim.h"
#include "pacemap/sweep.h"

/* Invented for this test.  Repetition vector (balance equations): src 1,
 * a 3 (src makes 3 tokens, a takes 1), z 2, snk 1 (takes 3 from a and 2
 * from z).  The expansion: src#0 feeds a#0..a#2 and z#0, z#1; all of them
 * feed snk#0.  Transfers are free (no comm line), so on 2 cores a list
 * scheduler that never leaves a core idle while a firing is ready runs
 * src#0 at [0,1), then two of the 4-cycle firings of a side by side and
 * the third after them: a's firings split 2 + 1 between the cores.  The
 * rule sends a to the core that ran two of them (2 * (4 + 1) = 10 against
 * 5).  z's firings take 0 cycles; the +1 per firing makes the core that
 * ran more of them win, and a 1 + 1 split goes to core 0.  The rule is
 * about firings that can run side by side, so the scenario asks for
 * per-token transfers: with the default block transfers the firings of a
 * read one block of src in turn (a#0 -> a#1 -> a#2) and never split. */
static const char multirate[] =
    "procs 2\n"
    "comm transfer=token\n"
    "node src cycles=1\n"
    "node a cycles=4\n"
    "node z cycles=0\n"
    "node snk cycles=1\n"
    "edge src -> a produce=3\n"
    "edge src -> z produce=2\n"
    "edge a -> snk consume=3\n"
    "edge z -> snk consume=2\n";

/* A loop of four nodes with one delay, plus a side chain: the list
 * schedule spreads it for the makespan, which the refinement may improve
 * for the period (comm costs make cross-core loops dear). */
static const char loopy[] =
    "procs 3\n"
    "comm latency=6\n"
    "node p cycles=5\nnode q cycles=7\nnode r cycles=3\nnode s cycles=6\n"
    "node t cycles=8\nnode u cycles=2\n"
    "edge p -> q\nedge q -> r\nedge r -> s\nedge s -> p delay=1\n"
    "edge p -> t\nedge t -> u\nedge u -> s\n";

static void plan_of(const char *text, pm_plan *p)
{
    pm_graph *g = NULL;
    pm_diag d;
    pm_diag_clear(&d);
    if (pm_reader_read_string(text, strlen(text), "plan.pace", &g, &d) != PM_OK)
        fail_msg("scenario: %u:%u: %s", d.line, d.col, d.msg);
    if (pm_plan_init(p, g, &d) != PM_OK)
        fail_msg("plan: %s", d.msg);
}

static uint32_t node_id(const pm_graph *g, const char *name)
{
    for (uint32_t v = 0; v < g->nnodes; v++)
        if (strcmp(pm_graph_node_name(g, v), name) == 0)
            return v;
    fail_msg("no node %s", name);
    return PM_NONE;
}

/* The rule of plan.h, written again from its words: per node, cycles + 1
 * of each firing summed per core; the most wins, ties the lower core. */
static uint32_t rule_core(const pm_plan *p, const pm_schedule *sc, uint32_t v,
                          int64_t *first_start)
{
    int64_t work[8] = {0};
    assert_true(sc->ncores <= 8);
    *first_start = INT64_MAX;
    for (uint32_t x = 0; x < p->graph->nnodes; x++) {
        if (p->origin[x] != v)
            continue;
        work[sc->slots[x].core] += sc->slots[x].end - sc->slots[x].start + 1;
        if (sc->slots[x].start < *first_start)
            *first_start = sc->slots[x].start;
    }
    uint32_t best = 0;
    for (uint32_t c = 1; c < sc->ncores; c++)
        if (work[c] > work[best])
            best = c;
    return best;
}

/* Every firing of node v on `core`, in firing order on that core. */
static void expect_together(const pm_plan *p, const pm_map *m, uint32_t v, uint32_t core)
{
    uint32_t last = PM_NONE, seen = 0;
    for (uint32_t i = m->off[core]; i < m->off[core + 1]; i++) {
        uint32_t x = m->order[i];
        if (p->origin[x] != v)
            continue;
        assert_true(last == PM_NONE || x == last + 1); /* firings have consecutive ids */
        last = x;
        seen++;
    }
    assert_int_equal(seen, p->rep[v]);
}

static void test_multirate_rule(void **state)
{
    (void)state;
    pm_plan p;
    plan_of(multirate, &p);
    assert_true(p.multirate);
    assert_int_equal(p.graph->nnodes, 1 + 3 + 2 + 1);
    pm_diag d;
    pm_diag_clear(&d);
    pm_schedule *xs = NULL, *sc = NULL;
    pm_map *xm = NULL, *m = NULL;
    assert_int_equal(pm_sched_list(p.graph, NULL, &xs, &xm, &d), PM_OK);
    pm_plan_opts list = {.mapper = PM_PLAN_MAPPER_LIST};
    assert_int_equal(pm_plan_map(&p, &list, &sc, &m, &d), PM_OK);
    uint32_t a = node_id(p.source, "a"), per_core[2] = {0, 0};
    for (uint32_t x = 0; x < p.graph->nnodes; x++)
        if (p.origin[x] == a)
            per_core[xs->slots[x].core]++;
    /* the hand derivation: a splits 2 + 1, and goes where two ran */
    assert_true((per_core[0] == 2 && per_core[1] == 1) || (per_core[0] == 1 && per_core[1] == 2));
    int64_t first[4];
    uint32_t core[4];
    for (uint32_t v = 0; v < p.source->nnodes; v++) {
        core[v] = rule_core(&p, xs, v, &first[v]);
        expect_together(&p, m, v, core[v]);
    }
    assert_int_equal(core[a], per_core[0] == 2 ? 0 : 1);
    /* nodes of a core in the order of their earliest firing */
    for (uint32_t c = 0; c < m->ncores; c++)
        for (uint32_t i = m->off[c] + 1; i < m->off[c + 1]; i++) {
            uint32_t u = p.origin[m->order[i - 1]], v = p.origin[m->order[i]];
            assert_true(u == v || first[u] < first[v] || (first[u] == first[v] && u < v));
        }
    /* the schedule returned times that map */
    for (uint32_t x = 0; x < p.graph->nnodes; x++)
        assert_int_equal(sc->slots[x].core, m->core_of[x]);
    pm_sched_destroy(xs);
    pm_sched_destroy(sc);
    pm_map_destroy(xm);
    pm_map_destroy(m);
    pm_plan_free(&p);
    pm_plan_free(&p); /* twice is safe */
}

static pm_rat period_of(const pm_plan *p, const pm_map *m)
{
    pm_sim_opts so = {.iterations = 200};
    pm_sim_result r;
    pm_diag d;
    memset(&r, 0, sizeof r);
    assert_int_equal(pm_sim_run(p->graph, m, &so, &r, &d), PM_OK);
    pm_rat t = r.period;
    pm_sim_result_free(&r);
    return t;
}

static void expect_refine_no_worse(const char *text)
{
    pm_plan p;
    plan_of(text, &p);
    pm_diag d;
    pm_diag_clear(&d);
    pm_plan_opts plain = {.mapper = PM_PLAN_MAPPER_LIST},
                 refined = {.refine = true, .mapper = PM_PLAN_MAPPER_LIST};
    pm_map *m0 = NULL, *m1 = NULL;
    pm_schedule *s1 = NULL;
    assert_int_equal(pm_plan_map(&p, &plain, NULL, &m0, &d), PM_OK);
    assert_int_equal(pm_plan_map(&p, &refined, &s1, &m1, &d), PM_OK);
    assert_non_null(s1);
    assert_true(pm_rat_cmp(period_of(&p, m1), period_of(&p, m0)) <= 0);
    pm_sched_destroy(s1);
    pm_map_destroy(m0);
    pm_map_destroy(m1);
    pm_plan_free(&p);
}

static void test_refine_never_worse(void **state)
{
    (void)state;
    expect_refine_no_worse(loopy);
    expect_refine_no_worse(multirate);
}

static void expect_same_map(const pm_map *a, const pm_map *b)
{
    assert_int_equal(a->ncores, b->ncores);
    assert_int_equal(a->nnodes, b->nnodes);
    assert_memory_equal(a->core_of, b->core_of, a->nnodes * sizeof *a->core_of);
    assert_memory_equal(a->off, b->off, (a->ncores + 1) * sizeof *a->off);
    assert_memory_equal(a->order, b->order, a->nnodes * sizeof *a->order);
}

/* Written with the scenario's node names and read back, the map of the
 * plan is the same map (for a multirate plan: the same firings on the same
 * cores in the same order, since every firing of a node shares its core). */
static void expect_round_trip(const char *text)
{
    pm_plan p;
    plan_of(text, &p);
    pm_diag d;
    pm_diag_clear(&d);
    pm_map *m = NULL, *back = NULL;
    assert_int_equal(pm_plan_map(&p, NULL, NULL, &m, &d), PM_OK);
    char path[] = "/tmp/pm_plan_XXXXXX";
    int fd = mkstemp(path);
    assert_true(fd >= 0);
    FILE *f = fdopen(fd, "w");
    assert_non_null(f);
    assert_int_equal(pm_plan_map_write(&p, m, f), PM_OK);
    assert_int_equal(fclose(f), 0);
    assert_int_equal(pm_plan_map_read(&p, path, &back, &d), PM_OK);
    expect_same_map(m, back);
    /* the file names the scenario's nodes, never a firing */
    char text_back[4096];
    f = fopen(path, "r");
    size_t n = fread(text_back, 1, sizeof text_back - 1, f);
    fclose(f);
    text_back[n] = '\0';
    assert_null(strstr(text_back, "a#"));
    assert_null(strstr(text_back, "z#"));
    remove(path);
    pm_map_destroy(m);
    pm_map_destroy(back);
    pm_plan_free(&p);
}

static void test_map_round_trip(void **state)
{
    (void)state;
    expect_round_trip(multirate);
    expect_round_trip(loopy);
}

static void test_set_procs(void **state)
{
    (void)state;
    pm_plan p;
    plan_of(multirate, &p);
    pm_diag d;
    pm_diag_clear(&d);
    assert_int_equal(pm_plan_set_procs(&p, 3, &d), PM_OK);
    assert_int_equal(p.source->platform.ncores, 3);
    assert_int_equal(p.graph->platform.ncores, 3);
    pm_map *m = NULL;
    assert_int_equal(pm_plan_map(&p, NULL, NULL, &m, &d), PM_OK);
    assert_int_equal(m->ncores, 3);
    pm_map_destroy(m);
    pm_plan_free(&p);
    /* a single-rate plan is the scenario itself */
    plan_of(loopy, &p);
    assert_false(p.multirate);
    assert_ptr_equal(p.graph, p.source);
    assert_null(p.rep);
    assert_null(p.origin);
    pm_plan_free(&p);
    /* misuse */
    assert_int_equal(pm_plan_init(&p, NULL, &d), PM_EINVAL);
    assert_int_equal(pm_plan_map(NULL, NULL, NULL, &m, &d), PM_EINVAL);
    assert_null(m);
}

/* The sweep maps each core count of a multirate plan through the plan.
 * At P = 1 one core runs the whole iteration, 1 + 3 * 4 + 2 * 0 + 1 = 14
 * cycles, and no delay lets iterations overlap on it: period 14.  At any
 * P the three firings of a share one core (the plan's rule), 3 * 4 = 12
 * cycles per iteration on it, so no period falls below 12. */
static void test_sweep_multirate(void **state)
{
    (void)state;
    pm_plan p;
    plan_of(multirate, &p);
    pm_sweep_opts o = {.procs_from = 1, .procs_to = 3, .iterations = 100};
    pm_sweep s;
    pm_diag d;
    pm_diag_clear(&d);
    int rc = pm_sweep_run(&p, &o, &s, &d);
    if (rc != PM_OK)
        fail_msg("sweep: %s (%s)", pm_error_name(rc), d.msg);
    assert_int_equal(s.points[0].period.num, 14);
    assert_int_equal(s.points[0].period.den, 1);
    for (uint32_t i = 1; i < s.npoints; i++)
        assert_true(pm_rat_cmp(s.points[i].period, pm_rat_int(12)) >= 0);
    /* the core count of both graphs is restored */
    assert_int_equal(p.source->platform.ncores, 2);
    assert_int_equal(p.graph->platform.ncores, 2);
    pm_sweep_free(&s);
    pm_plan_free(&p);
}

/* Invented: a makes one token per firing, b takes two (repetitions a 2,
 * b 1), send and receive 5 cycles each.  By hand, with every firing of a
 * node on one core: both nodes on one core take 2 * 40 + 60 = 140 cycles
 * per iteration; a and b apart put on a's core 2 * 40 + 2 sends * 5 = 90
 * and on b's 60 + 2 receives * 5 = 70, and no loop runs through both
 * cores (the data only goes forward), so the best period is 90. */
static const char split[] =
    "procs 2\n"
    "comm send=5 recv=5 latency=7\n"
    "node a cycles=40\n"
    "node b cycles=60\n"
    "edge a -> b consume=2\n";

/* The default (period-first) mapper on a multirate scenario: the hand
 * optimum above, every firing of a node on one core with one lag, never
 * worse than the refined list map, and the same period from the
 * simulator as from the IPC ratio. */
static void test_period_mapper_multirate(void **state)
{
    (void)state;
    pm_plan p;
    plan_of(split, &p);
    pm_diag d;
    pm_diag_clear(&d);
    pm_map *m = NULL;
    assert_int_equal(pm_plan_map(&p, NULL, NULL, &m, &d), PM_OK);
    pm_plan_timing pt;
    assert_int_equal(pm_plan_period(&p, m, &pt, &d), PM_OK);
    assert_true(pt.exact);
    assert_int_equal(pm_rat_cmp(pt.period, pm_rat_int(90)), 0);
    assert_int_equal(pm_rat_cmp(period_of(&p, m), pm_rat_int(90)), 0);
    for (uint32_t x = 0; x < p.graph->nnodes; x++) {
        uint32_t first = x;
        while (first > 0 && p.origin[first - 1] == p.origin[x])
            first--;
        assert_int_equal(m->core_of[x], m->core_of[first]);
        assert_int_equal(m->lag[x], m->lag[first]);
    }
    pm_map_destroy(m);
    pm_plan_free(&p);
    /* the loop-free multirate scenario of the rule test: no worse than the list */
    plan_of(multirate, &p);
    pm_plan_opts list = {.mapper = PM_PLAN_MAPPER_LIST, .refine = true};
    pm_map *lm = NULL;
    assert_int_equal(pm_plan_map(&p, NULL, NULL, &m, &d), PM_OK);
    assert_int_equal(pm_plan_map(&p, &list, NULL, &lm, &d), PM_OK);
    assert_true(pm_rat_cmp(period_of(&p, m), period_of(&p, lm)) <= 0);
    pm_map_destroy(m);
    pm_map_destroy(lm);
    pm_plan_free(&p);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_multirate_rule),
        cmocka_unit_test(test_refine_never_worse),
        cmocka_unit_test(test_map_round_trip),
        cmocka_unit_test(test_set_procs),
        cmocka_unit_test(test_period_mapper_multirate),
        cmocka_unit_test(test_sweep_multirate),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
