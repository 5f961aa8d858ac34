/*
 * test_mapdead.c - pm_map_deadlock_loop (where a map stalls) against the
 * self-timed simulator, which finds deadlocks by running: on random graphs
 * and maps, with and without lags, both must agree on whether the map
 * deadlocks, and every loop returned must be a circle of waits that carry
 * no token (a data edge u -> v with delay + lag[v] - lag[u] = 0, or the
 * next node of a core's order).  Also pm_map_file_locate on a hand file.
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

#include "pacemap/map.h"
#include "pacemap/sim.h"
#include "sched_testlib.h"

static pm_graph *random_graph(uint64_t *seed, uint32_t n, uint32_t procs)
{
    pm_graph *g = tl_graph(procs);
    char name[16];
    for (uint32_t v = 0; v < n; v++) {
        snprintf(name, sizeof name, "n%u", v);
        tl_node(g, name, 1 + tk_rand(seed, 9));
    }
    tl_comm(g, tk_rand(seed, 5), tk_rand(seed, 2), 0, 0, PM_P2P);
    uint32_t ne = tk_rand(seed, 2 * n + 1);
    for (uint32_t i = 0; i < ne; i++) {
        uint32_t u = tk_rand(seed, n), v = tk_rand(seed, n);
        /* forward edges may carry no delay; others need one */
        int64_t d = u < v ? (tk_rand(seed, 3) == 0 ? 1 : 0) : 1 + tk_rand(seed, 2);
        tl_edge(g, u, v, d, 1);
    }
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    return g;
}

/* Is w the next node after v in v's core order? */
static bool next_on_core(const pm_map *m, uint32_t v, uint32_t w)
{
    uint32_t c = m->core_of[v];
    for (uint32_t k = m->off[c]; k + 1 < m->off[c + 1]; k++)
        if (m->order[k] == v)
            return m->order[k + 1] == w;
    return false;
}

static bool zero_data_edge(const pm_graph *g, const pm_map *m, uint32_t v, uint32_t w)
{
    for (uint32_t e = 0; e < g->nedges; e++)
        if (g->edges[e].src == v && g->edges[e].dst == w &&
            g->edges[e].delay + (int64_t)m->lag[w] - (int64_t)m->lag[v] == 0)
            return true;
    return false;
}

static void check_one(const pm_graph *g, const pm_map *m, int *deadlocks, int *runs)
{
    uint32_t loop[64], len = 0;
    int rc = pm_map_deadlock_loop(g, m, loop, &len);
    pm_sim_opts o = { .iterations = 50 };
    pm_sim_result r;
    int src = pm_sim_run(g, m, &o, &r, NULL);
    pm_sim_result_free(&r);
    if (src == PM_EDEADLOCK) {
        assert_int_equal(rc, PM_EDEADLOCK);
        (*deadlocks)++;
    } else {
        assert_int_equal(src, PM_OK);
        assert_int_equal(rc, PM_OK);
        assert_int_equal(len, 0);
        (*runs)++;
    }
    for (uint32_t i = 0; i < len; i++) {
        uint32_t v = loop[i], w = loop[(i + 1) % len];
        assert_true(next_on_core(m, v, w) || zero_data_edge(g, m, v, w));
    }
}

static void test_agrees_with_simulator(void **state)
{
    (void)state;
    uint64_t seed = 2026;
    int deadlocks = 0, runs = 0, lagged = 0;
    for (int i = 0; i < 400; i++) {
        uint32_t n = 2 + tk_rand(&seed, 9), procs = 1 + tk_rand(&seed, 3);
        pm_graph *g = random_graph(&seed, n, procs);
        pm_map *m = tk_random_map(&seed, n, procs, 3);
        if (tk_rand(&seed, 3) == 0) { /* lags of 0 or 1, kept only if the map fits */
            for (uint32_t v = 0; v < n; v++)
                m->lag[v] = tk_rand(&seed, 2);
            if (pm_map_check(m, g, NULL) != PM_OK)
                memset(m->lag, 0, n * sizeof *m->lag);
            else
                lagged++;
        }
        check_one(g, m, &deadlocks, &runs);
        pm_map_destroy(m);
        pm_graph_destroy(g);
    }
    assert_true(deadlocks > 20 && runs > 100 && lagged > 10);
}

static void test_locate(void **state)
{
    (void)state;
    char path[] = "/tmp/pm_mapdead_XXXXXX";
    int fd = mkstemp(path);
    assert_true(fd >= 0);
    FILE *f = fdopen(fd, "w");
    /* line 3 lists pll.nco at column 14 (after the 13 characters "core 1: agc  ") */
    fputs("# a map\ncore 0: a b\ncore 1: agc  pll.nco@2 x # pll.nco\n", f);
    fclose(f);
    uint32_t line, col;
    assert_int_equal(pm_map_file_locate(path, 1, "pll.nco", &line, &col), PM_OK);
    assert_int_equal(line, 3);
    assert_int_equal(col, 14);
    assert_int_equal(pm_map_file_locate(path, 0, "b", &line, &col), PM_OK);
    assert_int_equal(line, 2);
    assert_int_equal(col, 11);
    /* a prefix of a name is not the name; the comment does not count */
    assert_int_equal(pm_map_file_locate(path, 1, "pll", &line, &col), PM_ENAME);
    assert_int_equal(pm_map_file_locate(path, 0, "pll.nco", &line, &col), PM_ENAME);
    unlink(path);
    assert_int_equal(pm_map_file_locate(path, 0, "a", &line, &col), PM_EIO);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_agrees_with_simulator),
        cmocka_unit_test(test_locate),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
