/*
 * test_mapfile.c - `.map` files (docs/format.md): reading with comments and
 * blank lines, writing, and every error with its line and column; maps
 * that contradict the graph when timed.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "pacemap/map.h"
#include "pacemap/sched.h"
#include "sched_testlib.h"

/* src -> lo -> mix, src -> hi -> mix; 2 cores of classes dsp and host; hi
 * pinned to core 1, lo pinned to class dsp; mix cannot run on host. */
static pm_graph *small_graph(void)
{
    const char *names[2] = {"dsp", "host"};
    uint32_t counts[2] = {1, 1};
    pm_graph *g = pm_graph_create("g.pace");
    pm_graph_set_cores(g, 2, names, counts);
    uint32_t src = tl_node(g, "src", 4), lo = tl_node(g, "lo", 6), hi = tl_node(g, "hi", 6);
    uint32_t mix = tl_node(g, "mix", 3);
    int64_t row[2] = {3, PM_CANNOT_RUN};
    pm_graph_set_class_cycles(g, mix, row);
    g->nodes[hi].pin_core = 1;
    g->nodes[lo].pin_class = 0;
    tl_edge(g, src, lo, 0, 1);
    tl_edge(g, src, hi, 0, 1);
    tl_edge(g, lo, mix, 0, 1);
    tl_edge(g, hi, mix, 0, 1);
    pm_graph_finalize(g);
    return g;
}

static int read_map(const pm_graph *g, const char *text, pm_map **m, pm_diag *d)
{
    pm_diag_clear(d);
    return pm_map_read_string(text, strlen(text), "x.map", g, m, d);
}

static void test_read_ok(void **state)
{
    (void)state;
    pm_graph *g = small_graph();
    pm_map *m = NULL;
    pm_diag d;
    const char *text = "# hand partition\n\n  core 1 :hi   # pinned\ncore 0: src\tlo mix\n";
    assert_int_equal(read_map(g, text, &m, &d), PM_OK);
    assert_int_equal(m->ncores, 2);
    assert_int_equal(m->off[1] - m->off[0], 3);
    assert_int_equal(m->order[0], 0);
    assert_int_equal(m->order[2], 3);
    assert_int_equal(m->core_of[2], 1);
    char *buf = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&buf, &len);
    assert_int_equal(pm_map_write(m, g, f), PM_OK);
    fclose(f);
    assert_string_equal(buf, "# core: nodes in execution order\ncore 0: src lo mix\ncore 1: hi\n");
    free(buf);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

typedef struct bad_case {
    const char *text;
    int rc;
    uint32_t line, col;
    const char *needle;
} bad_case;

static void test_read_errors(void **state)
{
    (void)state;
    static const bad_case cases[] = {
        {"core 0: src lo mix\ncore 1: hi hx\n", PM_ENAME, 2, 12, "unknown node 'hx'"},
        {"core 0: src lo mix src\ncore 1: hi\n", PM_EMAP, 1, 20, "appears twice"},
        {"core 2: src\n", PM_EMAP, 1, 6, "core 2 does not exist"},
        {"core 0: src lo mix\ncore 0: hi\n", PM_EMAP, 2, 6, "listed twice"},
        {"core 0 src lo\n", PM_ESYNTAX, 1, 8, "expected ':'"},
        {"cpu 0: src\n", PM_ESYNTAX, 1, 1, "expected 'core N:'"},
        {"core x: src\n", PM_ESYNTAX, 1, 6, "core number"},
        {"core 0: src lo mix\n", PM_EMAP, 1, 1, "'hi' is missing"},
        {"core 0: src hi lo mix\n", PM_EMAP, 1, 13, "pinned to core 1"},
        {"core 1: src lo hi\ncore 0: mix\n", PM_EMAP, 1, 13, "pinned to class dsp"},
        {"core 0: src lo\ncore 1: hi mix\n", PM_EMAP, 2, 12, "no cycles for class host"},
        {"core 0: src lo mix : \ncore 1: hi\n", PM_ESYNTAX, 1, 20, "expected a node name"},
        /* lags: the column is the lag's first character, just after '@' */
        {"core 0: src lo@ mix\ncore 1: hi\n", PM_ESYNTAX, 1, 16, "expected a lag"},
        {"core 0: src lo@-1 mix\ncore 1: hi\n", PM_ESYNTAX, 1, 16, "found '-1'"},
        {"core 0: src lo@abc mix\ncore 1: hi\n", PM_ESYNTAX, 1, 16, "found 'abc'"},
        {"core 0: src lo@1048577 mix\ncore 1: hi\n", PM_EMAP, 1, 16, "larger than the most"},
        {"core 0: src lo@99999999999999999999 mix\ncore 1: hi\n", PM_EMAP, 1, 16,
         "larger than the most"},
        {"core 0: src @1 lo mix\ncore 1: hi\n", PM_ESYNTAX, 1, 13, "expected a node name"},
    };
    pm_graph *g = small_graph();
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        pm_map *m = NULL;
        pm_diag d;
        int rc = read_map(g, cases[i].text, &m, &d);
        print_message("case %zu: %s:%u:%u: %s\n", i, d.file, d.line, d.col, d.msg);
        assert_int_equal(rc, cases[i].rc);
        assert_null(m);
        assert_string_equal(d.file, "x.map");
        assert_int_equal(d.line, cases[i].line);
        assert_int_equal(d.col, cases[i].col);
        assert_non_null(strstr(d.msg, cases[i].needle));
    }
    pm_graph_destroy(g);
}

/* NAME@L gives the node lag L; written back, the map reads the same. */
static void test_lag_round_trip(void **state)
{
    (void)state;
    pm_graph *g = small_graph();
    pm_map *m = NULL;
    pm_diag d;
    /* src -> lo, src -> hi, lo -> mix, hi -> mix, no delays: lags 0, 1, 1, 2
     * keep every retimed count d + lag[v] - lag[u] at 1 */
    const char *text = "core 0: src lo@1 mix@2\ncore 1: hi@1\n";
    assert_int_equal(read_map(g, text, &m, &d), PM_OK);
    assert_int_equal(m->lag[0], 0);
    assert_int_equal(m->lag[1], 1);
    assert_int_equal(m->lag[2], 1);
    assert_int_equal(m->lag[3], 2);
    assert_true(pm_map_has_lags(m));
    char *buf = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&buf, &len);
    assert_int_equal(pm_map_write(m, g, f), PM_OK);
    fclose(f);
    assert_string_equal(buf, "# core: nodes in execution order\n"
                             "core 0: src lo@1 mix@2\ncore 1: hi@1\n");
    pm_map *again = NULL;
    assert_int_equal(read_map(g, buf, &again, &d), PM_OK);
    for (uint32_t v = 0; v < 4; v++) {
        assert_int_equal(again->lag[v], m->lag[v]);
        assert_int_equal(again->core_of[v], m->core_of[v]);
    }
    free(buf);
    pm_map_destroy(again);
    pm_map_destroy(m);
    /* mix@0 after lo@1: edge lo -> mix would have 0 + 0 - 1 delays; the
     * message names the edge at its place in the graph file */
    assert_int_equal(read_map(g, "core 0: src lo@1 mix\ncore 1: hi\n", &m, &d), PM_EMAP);
    assert_null(m);
    assert_string_equal(d.file, "g.pace");
    assert_non_null(strstr(d.msg, "edge 'lo' -> 'mix' has 0 delays"));
    assert_non_null(strstr(d.msg, "need at least 1"));
    pm_graph_destroy(g);
}

static void test_read_file(void **state)
{
    (void)state;
    pm_graph *g = small_graph();
    char path[] = "/tmp/pm_mapfile_XXXXXX";
    int fd = mkstemp(path);
    assert_true(fd >= 0);
    FILE *f = fdopen(fd, "w");
    fputs("core 0: src lo mix\ncore 1: hi\n", f);
    fclose(f);
    pm_map *m = NULL;
    pm_diag d;
    assert_int_equal(pm_map_read_file(path, g, &m, &d), PM_OK);
    assert_int_equal(m->core_of[3], 0);
    pm_map_destroy(m);
    remove(path);
    assert_int_equal(pm_map_read_file(path, g, &m, &d), PM_EIO);
    assert_null(m);
    pm_graph_destroy(g);
}

/* A map whose order on a core runs a consumer before its producer can
 * never run: PM_EDEADLOCK, naming a node. */
static void test_map_deadlock(void **state)
{
    (void)state;
    pm_graph *g = small_graph();
    pm_map *m = NULL;
    pm_diag d;
    assert_int_equal(read_map(g, "core 0: lo src mix\ncore 1: hi\n", &m, &d), PM_OK);
    pm_schedule *s = NULL;
    assert_int_equal(pm_sched_from_map(g, m, &s, &d), PM_EDEADLOCK);
    assert_null(s);
    assert_non_null(strstr(d.msg, "can never start"));
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

/* A zero-delay loop is refused by every entry point. */
static void test_zero_delay_loop(void **state)
{
    (void)state;
    pm_graph *g = tl_graph(2);
    tl_node(g, "a", 1);
    tl_node(g, "b", 1);
    tl_edge(g, 0, 1, 0, 1);
    tl_edge(g, 1, 0, 0, 1);
    pm_graph_finalize(g);
    pm_schedule *s = NULL;
    pm_map *m = NULL;
    pm_diag d;
    assert_int_equal(pm_sched_list(g, NULL, &s, &m, &d), PM_EZERODELAY);
    assert_null(s);
    assert_null(m);
    assert_non_null(strstr(d.msg, "without delay"));
    pm_graph_destroy(g);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_read_ok),
        cmocka_unit_test(test_read_errors),
        cmocka_unit_test(test_read_file),
        cmocka_unit_test(test_lag_round_trip),
        cmocka_unit_test(test_map_deadlock),
        cmocka_unit_test(test_zero_delay_loop),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
