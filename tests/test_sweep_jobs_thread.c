/*
 * test_sweep_jobs_thread.c - the sweep on several threads gives the
 * result of one thread: every field of every point (periods, whose map,
 * the map itself, floors, limit and its evidence), the saturation and the
 * what-ifs, on a graph worked by hand, on a multirate scenario (each
 * thread expands its own copy), on a platform with core classes, and on
 * 30 random graphs.  Progress is reported once per point, and a failing
 * count is reported as one thread would: the smallest.
 *
 * The list scheduler's maps are used throughout: the period-first mapper
 * stops at a wall-clock budget, so its maps may differ between any two
 * runs, threaded or not.  The name ends in _thread so that `make tsan`
 * runs it.
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
    int rc = pm_reader_read_string(text, strlen(text), "test.pace", &g, &d);
    if (rc != PM_OK)
        fail_msg("scenario: %s:%u:%u: %s", d.file, d.line, d.col, d.msg);
    return g;
}

static void sweep_jobs(pm_plan *p, pm_sweep_opts o, uint32_t jobs, pm_sweep *s)
{
    o.jobs = jobs;
    pm_diag d;
    pm_diag_clear(&d);
    int rc = pm_sweep_run(p, &o, s, &d);
    if (rc != PM_OK)
        fail_msg("sweep with %u jobs: %s (%s)", jobs, pm_error_name(rc), d.msg);
}

static void same_rat(pm_rat a, pm_rat b)
{
    assert_int_equal(a.num, b.num);
    assert_int_equal(a.den, b.den);
}

static void same_u32s(const uint32_t *a, const uint32_t *b, uint32_t n)
{
    if (n)
        assert_memory_equal(a, b, n * sizeof *a);
}

static void same_map(const pm_map *a, const pm_map *b)
{
    assert_int_equal(a->ncores, b->ncores);
    assert_int_equal(a->nnodes, b->nnodes);
    same_u32s(a->off, b->off, a->ncores + 1);
    same_u32s(a->order, b->order, a->nnodes);
    assert_memory_equal(a->lag, b->lag, a->nnodes * sizeof *a->lag);
}

static void same_floors(const pm_floors *a, const pm_floors *b)
{
    same_rat(a->loop, b->loop);
    same_rat(a->node, b->node);
    same_rat(a->cores, b->cores);
    same_rat(a->lower_bound, b->lower_bound);
    same_rat(a->map_floor, b->map_floor);
    assert_int_equal(a->binding, b->binding);
    assert_int_equal(a->map_binding, b->map_binding);
}

static void same_limit(const pm_sweep_limit *a, const pm_sweep_limit *b)
{
    assert_int_equal(a->kind, b->kind);
    assert_int_equal(a->nnodes, b->nnodes);
    same_u32s(a->nodes, b->nodes, a->nnodes);
    assert_int_equal(a->nedges, b->nedges);
    same_u32s(a->edges, b->edges, a->nedges);
    assert_int_equal(a->cycles, b->cycles);
    assert_int_equal(a->delays, b->delays);
    assert_int_equal(a->nhops, b->nhops);
    assert_int_equal(a->norders, b->norders);
    assert_int_equal(a->nbus_waits, b->nbus_waits);
    assert_int_equal(a->single_core, b->single_core);
}

static void same_point(const pm_sweep_point *a, const pm_sweep_point *b)
{
    assert_int_equal(a->procs, b->procs);
    assert_int_equal(a->count, b->count);
    same_rat(a->period, b->period);
    same_rat(a->own_period, b->own_period);
    assert_int_equal(a->map_count, b->map_count);
    assert_int_equal(a->steady, b->steady);
    assert_int_equal(a->latency, b->latency);
    assert_int_equal(a->busiest, b->busiest);
    assert_int_equal(a->busiest_core, b->busiest_core);
    assert_int_equal(a->floor_searched, b->floor_searched);
    same_floors(&a->floors, &b->floors);
    same_map(a->map, b->map);
    same_limit(&a->limit, &b->limit);
}

static void same_whatif(const pm_sweep_whatif *a, const pm_sweep_whatif *b)
{
    assert_int_equal(a->present, b->present);
    assert_int_equal(a->point, b->point);
    assert_int_equal(a->nrows, b->nrows);
    for (uint32_t i = 0; i < a->nrows; i++) {
        assert_int_equal(a->rows[i].node, b->rows[i].node);
        same_rat(a->rows[i].after, b->rows[i].after);
        same_rat(a->rows[i].floor_after, b->rows[i].floor_after);
    }
    assert_int_equal(a->has_delay, b->has_delay);
    assert_int_equal(a->delay_edge, b->delay_edge);
    same_rat(a->delay_bound, b->delay_bound);
    assert_int_equal(a->has_next, b->has_next);
    same_rat(a->next_value, b->next_value);
}

static void same_sweep(const pm_sweep *a, const pm_sweep *b)
{
    assert_int_equal(a->npoints, b->npoints);
    for (uint32_t i = 0; i < a->npoints; i++)
        same_point(&a->points[i], &b->points[i]);
    assert_int_equal(a->saturation, b->saturation);
    assert_int_equal(a->best, b->best);
    assert_int_equal(a->saturation_proven, b->saturation_proven);
    same_whatif(&a->whatif, &b->whatif);
}

/* One thread and `jobs` threads on plan p; the one-thread result in *one. */
static void compare(pm_plan *p, const pm_sweep_opts *o, uint32_t jobs, pm_sweep *one)
{
    pm_sweep many;
    sweep_jobs(p, *o, 1, one);
    sweep_jobs(p, *o, jobs, &many);
    same_sweep(one, &many);
    pm_sweep_free(&many);
}

/* A first-order recursive loop (add 10, mul 20, one delay: bound 30)
 * beside three filters of 20, no transfer costs.  With no costs the period
 * of the best map is the larger of the loop bound and the smallest
 * possible busiest core; the core sums are sums of {10, 20, 20, 20, 20}:
 *   P=1: 90;  P=2: 45 is no sum, so 50 (add+mul+f1 | f2+f3);
 *   P=3: 30 each would need three parts of 30, but after add+f1 the 20s
 *        left (mul, f2, f3) cannot make 30: 40 (add+mul | f1+f2 | f3);
 *   P=4: 30 (add+f1 | mul | f2 | f3), the loop bound;  P=5: 30. */
static void test_by_hand(void **state)
{
    (void)state;
    pm_graph *g = load("node add cycles=10\nnode mul cycles=20\nnode f1 cycles=20\n"
                       "node f2 cycles=20\nnode f3 cycles=20\n"
                       "edge add -> mul\nedge mul -> add delay=1\n");
    pm_plan p = {.graph = g, .source = g};
    pm_sweep_opts o = {.procs_from = 1, .procs_to = 5, .iterations = 200};
    pm_sweep one;
    compare(&p, &o, 4, &one);
    const int64_t hand[] = {90, 50, 40, 30, 30};
    for (uint32_t i = 0; i < 5; i++)
        same_rat(one.points[i].period, pm_rat_int(hand[i]));
    assert_int_equal(g->platform.ncores, 1); /* the caller's cores restored */
    pm_sweep_free(&one);
    pm_graph_destroy(g);
}

/* A multirate graph: every thread expands its own copy of the scenario. */
static void test_multirate(void **state)
{
    (void)state;
    pm_graph *src = load("comm latency=3\nnode a cycles=4\nnode b cycles=9\nnode c cycles=5\n"
                         "edge a -> b produce=1 consume=2\nedge b -> c produce=3 consume=1\n"
                         "edge c -> a produce=2 consume=3 delay=6\n");
    pm_plan p;
    pm_diag d;
    pm_diag_clear(&d);
    assert_int_equal(pm_plan_init(&p, src, &d), PM_OK);
    assert_true(p.multirate);
    pm_sweep_opts o = {.procs_from = 1, .procs_to = 6, .iterations = 100};
    pm_sweep one;
    compare(&p, &o, 3, &one);
    pm_sweep_free(&one);
    pm_plan_free(&p);
}

/* Named classes, one class's count swept: each thread copies the names. */
static void test_classes(void **state)
{
    (void)state;
    pm_graph *g = load("procs dsp:1 host:1\ncomm latency=2\n"
                       "node a cycles=dsp:4,host:9\nnode b cycles=dsp:6,host:8\n"
                       "node c cycles=dsp:5,host:5\nnode d cycles=dsp:7,host:3\n"
                       "edge a -> b\nedge a -> c\nedge b -> d\nedge c -> d\n");
    pm_plan p = {.graph = g, .source = g};
    pm_sweep_opts o = {.procs_from = 1, .procs_to = 4, .iterations = 100,
                       .by_class = true, .vary_class = 0};
    pm_sweep one;
    compare(&p, &o, 4, &one);
    assert_int_equal(g->platform.class_count[0], 1);
    pm_sweep_free(&one);
    pm_graph_destroy(g);
}

/* 4..11 nodes, forward edges and a few back with a delay, transfer costs. */
static pm_graph *random_graph(uint64_t *seed)
{
    uint32_t n = 4 + tk_rand(seed, 8);
    char text[4096];
    int k = snprintf(text, sizeof text, "comm latency=%u send=%u recv=%u\n", tk_rand(seed, 40),
                     tk_rand(seed, 6), tk_rand(seed, 6));
    for (uint32_t v = 0; v < n; v++)
        k += snprintf(text + k, sizeof text - (size_t)k, "node v%u cycles=%u\n", v,
                      1 + tk_rand(seed, 30));
    for (uint32_t i = 0, m = n + tk_rand(seed, n); i < m; i++) {
        uint32_t a = tk_rand(seed, n - 1), b = a + 1 + tk_rand(seed, n - 1 - a);
        bool back = tk_rand(seed, 5) == 0;
        k += snprintf(text + k, sizeof text - (size_t)k, "edge v%u -> v%u%s\n", back ? b : a,
                      back ? a : b, back ? " delay=1" : "");
    }
    return load(text);
}

static void test_random(void **state)
{
    (void)state;
    uint64_t seed = 1616;
    uint32_t reused = 0;
    for (int i = 0; i < 30; i++) {
        pm_graph *g = random_graph(&seed);
        pm_plan p = {.graph = g, .source = g};
        pm_sweep_opts o = {.procs_from = 1, .procs_to = 6, .iterations = 60};
        pm_sweep one;
        compare(&p, &o, 1 + (uint32_t)i % 5, &one);
        for (uint32_t j = 0; j < one.npoints; j++)
            reused += one.points[j].map_count != one.points[j].count;
        pm_sweep_free(&one);
        pm_graph_destroy(g);
    }
    print_message("points running a smaller count's map: %u\n", reused);
}

typedef struct seen {
    uint32_t calls, last_done, by_count[8];
} seen;

static void on_progress(void *ctx, uint32_t procs, uint32_t done, uint32_t total)
{
    seen *s = ctx;
    assert_int_equal(total, 6);
    assert_int_equal(done, s->last_done + 1); /* one call at a time, counted */
    s->last_done = done;
    s->calls++;
    assert_true(procs >= 1 && procs <= 6);
    s->by_count[procs]++;
}

static void test_progress(void **state)
{
    (void)state;
    uint64_t seed = 7;
    pm_graph *g = random_graph(&seed);
    pm_plan p = {.graph = g, .source = g};
    seen s = {0};
    pm_sweep_opts o = {.procs_from = 1, .procs_to = 6, .iterations = 60,
                       .progress = on_progress, .progress_ctx = &s};
    pm_sweep out;
    sweep_jobs(&p, o, 3, &out);
    assert_int_equal(s.calls, 6);
    for (uint32_t c = 1; c <= 6; c++)
        assert_int_equal(s.by_count[c], 1);
    pm_sweep_free(&out);
    pm_graph_destroy(g);
}

/* A pin to core 2 fails at 1 and 2 cores: the error names 1 core, as the
 * one-thread sweep's does, whichever thread failed first. */
static void test_first_error(void **state)
{
    (void)state;
    pm_graph *g = load("procs 3\nnode a cycles=5 pin=2\nnode b cycles=5\nedge a -> b\n");
    pm_plan p = {.graph = g, .source = g};
    char msg[2][sizeof ((pm_diag *)0)->msg];
    int rc[2];
    for (int k = 0; k < 2; k++) {
        pm_sweep_opts o = {.procs_from = 1, .procs_to = 4, .jobs = k ? 4 : 1};
        pm_sweep s;
        pm_diag d;
        pm_diag_clear(&d);
        rc[k] = pm_sweep_run(&p, &o, &s, &d);
        memcpy(msg[k], d.msg, sizeof msg[k]);
        pm_sweep_free(&s);
    }
    assert_int_equal(rc[0], PM_EPLATFORM);
    assert_int_equal(rc[1], rc[0]);
    assert_string_equal(msg[1], msg[0]);
    assert_non_null(strstr(msg[0], "with 1 cores"));
    assert_int_equal(g->platform.ncores, 3);
    pm_graph_destroy(g);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_by_hand),    cmocka_unit_test(test_multirate),
        cmocka_unit_test(test_classes),    cmocka_unit_test(test_random),
        cmocka_unit_test(test_progress),   cmocka_unit_test(test_first_error),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
