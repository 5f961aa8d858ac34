/*
 * test_vcd.c - the VCD writer, read back by a small independent reader
 * written here from the format of IEEE Std 1364-2005 clause 18 (header
 * sections closed by $end, $var TYPE WIDTH ID NAME $end, $enddefinitions,
 * #TIME stamps, vector changes "bVALUE ID", scalar changes "1ID", $scope
 * and $upscope).  Checks the header, the declarations, strictly increasing
 * timestamps and the values against the hand-worked FIFO pipeline of
 * test_sim.c, and the time axis against the clock: the standard's
 * $timescale gives the length of one time unit, so at 200 MHz (one cycle
 * 1 / 200e6 s = 5 ns) a cycle count t must appear as 5t units of 1 ns.
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
#include "pacemap/vcd.h"

#define MAXV 16
#define MAXC 256

typedef struct wave {
    int nvars;
    char id[MAXV][8], name[MAXV][48], type[MAXV][16];
    int width[MAXV];
    int nch;
    long long t[MAXC];
    int var[MAXC];
    long long val[MAXC];
    bool has_timescale, has_enddefs;
    char timescale[32];
    char legend[2048];
} wave;

static int wave_find(const wave *w, const char *id)
{
    for (int i = 0; i < w->nvars; i++)
        if (strcmp(w->id[i], id) == 0)
            return i;
    return -1;
}

/* Parse the whole text; fails the test on anything malformed. */
static void wave_read(const char *text, wave *w)
{
    memset(w, 0, sizeof *w);
    const char *p = text;
    char tok[256];
    int n;
    long long now = -1;
    bool defs = true;
    char scope[16] = "";
    while (sscanf(p, "%255s%n", tok, &n) == 1) {
        p += n;
        if (defs && strcmp(tok, "$var") == 0) {
            assert_true(w->nvars < MAXV);
            int k = w->nvars++;
            char end[8], ref[24];
            assert_int_equal(sscanf(p, "%15s %d %7s %23s %7s%n", w->type[k], &w->width[k],
                                    w->id[k], ref, end, &n), 5);
            assert_string_equal(end, "$end");
            /* name a variable by its scope: "core0.node", "links.a__b" */
            snprintf(w->name[k], sizeof w->name[k], "%s.%s", scope, ref);
            p += n;
        } else if (defs && strcmp(tok, "$scope") == 0) {
            char kind[16], end[8];
            assert_int_equal(sscanf(p, "%15s %15s %7s%n", kind, scope, end, &n), 3);
            assert_string_equal(end, "$end");
            p += n;
        } else if (defs && strcmp(tok, "$upscope") == 0) {
            assert_int_equal(sscanf(p, "%255s%n", tok, &n), 1);
            p += n;
        } else if (defs && strcmp(tok, "$enddefinitions") == 0) {
            w->has_enddefs = true;
            defs = false;
        } else if (defs && tok[0] == '$') {
            const char *e = strstr(p, "$end"); /* skip the section's text */
            assert_non_null(e);
            if (strcmp(tok, "$timescale") == 0) {
                w->has_timescale = true;
                assert_true(sscanf(p, " %31[^$]", w->timescale) == 1);
                size_t k = strlen(w->timescale);
                while (k > 0 && w->timescale[k - 1] == ' ')
                    w->timescale[--k] = '\0';
            }
            if (strcmp(tok, "$comment") == 0)
                snprintf(w->legend, sizeof w->legend, "%.*s", (int)(e - p), p);
            p = e + 4;
        } else if (!defs && tok[0] == '#') {
            long long t = atoll(tok + 1);
            assert_true(t > now); /* strictly increasing */
            now = t;
        } else if (!defs && tok[0] == 'b') {
            char id[8];
            assert_int_equal(sscanf(p, "%7s%n", id, &n), 1);
            p += n;
            int v = wave_find(w, id);
            assert_true(v >= 0);
            assert_true(now >= 0);
            assert_true(w->nch < MAXC);
            w->t[w->nch] = now;
            w->var[w->nch] = v;
            w->val[w->nch++] = strtoll(tok + 1, NULL, 2);
        } else if (!defs && (tok[0] == '0' || tok[0] == '1')) {
            int v = wave_find(w, tok + 1);
            assert_true(v >= 0 && w->width[v] == 1);
            assert_true(w->nch < MAXC);
            w->t[w->nch] = now;
            w->var[w->nch] = v;
            w->val[w->nch++] = tok[0] - '0';
        } else {
            assert_true(strcmp(tok, "$dumpvars") == 0 || strcmp(tok, "$end") == 0);
        }
    }
}

static long long wave_at(const wave *w, const char *name, long long t)
{
    long long v = -1;
    for (int i = 0; i < w->nch; i++)
        if (strcmp(w->name[w->var[i]], name) == 0 && w->t[i] <= t)
            v = w->val[i];
    return v;
}

static char *run_vcd(const pm_graph *g, const pm_map *m, const pm_sim_result *r)
{
    char *buf = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&buf, &len);
    assert_non_null(f);
    assert_int_equal(pm_vcd_write(g, m, r, f), PM_OK);
    fclose(f);
    return buf;
}

/* a(3) on core 0 feeds b(4) on core 1, transfer 5 cycles, FIFO of 2
 * (worked by hand in test_sim.c): a begins 0 3 8 12 16 and ends 3 6 11 15
 * 19, b begins 8 12 16 20 24.  Tokens on a -> b: 1 at 3, 2 at 6, 1 at 8,
 * 2 at 11, 1 at 12, ..., 0 at 24. */
static void vcd_pipeline(uint64_t clock_hz, long long unit_per_cycle, const char *timescale)
{
    uint32_t procs = 2;
    pm_graph *g = pm_graph_create("t");
    assert_int_equal(pm_graph_set_cores(g, 1, NULL, &procs), PM_OK);
    assert_int_equal(pm_graph_add_node(g, "a", 1, 3, NULL), PM_OK);
    assert_int_equal(pm_graph_add_node(g, "b", 1, 4, NULL), PM_OK);
    g->platform.comm.latency = 5;
    g->platform.clock_hz = clock_hz;
    pm_edge e = pm_graph_edge_default(0, 1);
    assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    uint32_t l0[] = { 0 }, l1[] = { 1 }, counts[] = { 1, 1 };
    const uint32_t *lists[] = { l0, l1 };
    pm_map *m = NULL;
    assert_int_equal(pm_map_create(2, 2, lists, counts, &m), PM_OK);
    pm_sim_opts o = { .iterations = 20, .fifo_cap = 2, .record = 5 };
    pm_sim_result r;
    assert_int_equal(pm_sim_run(g, m, &o, &r, NULL), PM_OK);
    char *text = run_vcd(g, m, &r);
    wave w;
    wave_read(text, &w);
    assert_true(w.has_timescale && w.has_enddefs);
    assert_string_equal(w.timescale, timescale);
    /* per core: node, io and one wire per node; then the one link */
    assert_int_equal(w.nvars, 7);
    assert_string_equal(w.name[0], "core0.node");
    assert_string_equal(w.name[1], "core0.io");
    assert_string_equal(w.name[2], "core0.a");
    assert_string_equal(w.name[5], "core1.b");
    assert_string_equal(w.name[6], "links.a__b");
    for (int i = 0; i < w.nvars; i++) {
        assert_string_equal(w.type[i], i == 2 || i == 5 ? "wire" : "integer");
        for (int j = 0; j < i; j++)
            assert_string_not_equal(w.id[i], w.id[j]);
    }
    /* the legend maps numbers to node names */
    assert_non_null(strstr(w.legend, "1 a\n"));
    assert_non_null(strstr(w.legend, "2 b\n"));
    long long u = unit_per_cycle;
    assert_int_equal(wave_at(&w, "core0.node", 0), 1); /* a running */
    assert_int_equal(wave_at(&w, "core0.a", 0), 1);
    assert_int_equal(wave_at(&w, "core0.node", 7 * u), 0); /* waiting for room */
    assert_int_equal(wave_at(&w, "core0.a", 7 * u), 0);
    assert_int_equal(wave_at(&w, "core1.node", 9 * u), 2); /* b running */
    assert_int_equal(wave_at(&w, "core1.b", 9 * u), 1);
    const long long t[] = { 0, 3, 6, 8, 11, 12, 15, 16, 19, 20, 24 };
    const long long tokens[] = { 0, 1, 2, 1, 2, 1, 2, 1, 2, 1, 0 };
    for (int i = 0; i < 11; i++) {
        assert_int_equal(wave_at(&w, "links.a__b", t[i] * u), tokens[i]);
        if (t[i] > 0) /* the change is at t, not a unit earlier */
            assert_int_equal(wave_at(&w, "links.a__b", t[i] * u - 1), tokens[i - 1]);
    }
    /* same input, same bytes */
    char *again = run_vcd(g, m, &r);
    assert_string_equal(text, again);
    free(text);
    free(again);
    pm_sim_result_free(&r);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

/* No clock: one cycle per unit (the declared 1 ns stands for a cycle). */
static void test_vcd_pipeline(void **state)
{
    (void)state;
    vcd_pipeline(0, 1, "1 ns");
}

/* 200 MHz: 1 / 200e6 s = 5e-9 s = 5 units of 1 ns per cycle. */
static void test_vcd_200mhz(void **state)
{
    (void)state;
    vcd_pipeline(200000000, 5, "1 ns");
}

/* 1 GHz: 1 / 1e9 s = 1 ns per cycle.  25 MHz: 40 ns = 4 units of 10 ns. */
static void test_vcd_other_clocks(void **state)
{
    (void)state;
    vcd_pipeline(1000000000, 1, "1 ns");
    vcd_pipeline(25000000, 4, "10 ns");
}

/* A name with '.' is shown as an identifier, its exact name in the legend. */
static void test_vcd_dotted_name(void **state)
{
    (void)state;
    uint32_t procs = 1;
    pm_graph *g = pm_graph_create("t");
    assert_int_equal(pm_graph_set_cores(g, 1, NULL, &procs), PM_OK);
    assert_int_equal(pm_graph_add_node(g, "pll.nco", 7, 3, NULL), PM_OK);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    uint32_t l0[] = { 0 }, counts[] = { 1 };
    const uint32_t *lists[] = { l0 };
    pm_map *m = NULL;
    assert_int_equal(pm_map_create(1, 1, lists, counts, &m), PM_OK);
    pm_sim_opts o = { .iterations = 3, .record = 3 };
    pm_sim_result r;
    assert_int_equal(pm_sim_run(g, m, &o, &r, NULL), PM_OK);
    char *text = run_vcd(g, m, &r);
    wave w;
    wave_read(text, &w);
    assert_string_equal(w.name[2], "core0.pll_nco");
    assert_non_null(strstr(w.legend, "1 pll_nco (pll.nco)"));
    free(text);
    pm_sim_result_free(&r);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_vcd_pipeline),
        cmocka_unit_test(test_vcd_200mhz),
        cmocka_unit_test(test_vcd_other_clocks),
        cmocka_unit_test(test_vcd_dotted_name),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
