/*
 * test_scale.c - the fast paths that large scenarios take give what the
 * general paths give: JSON primitives (escaped names, integers), the
 * repetition vector of graphs whose edges consume what they produce, the
 * adjacency lists built in one pass, and the part search over a compact
 * target array.
 *
 * Expected values are written out by hand from their definitions (RFC 8259
 * for JSON strings; the balance equations of Lee & Messerschmitt 1987 for
 * repetition vectors) or come from a brute-force scan of the edge list;
 * random graphs come from the tests' fixed-seed generator (tk_rand).
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "pacemap/error.h"
#include "pacemap/graph.h"
#include "pacemap/json.h"
#include "pacemap/scc.h"
#include "pacemap/sdf.h"
#include "support/testkit.h"

/* ---- JSON ---------------------------------------------------------------------- */

/* What the writer put into a memory stream, NUL-terminated; caller frees. */
typedef struct out_buf {
    FILE *f;
    char *text;
    size_t len;
} out_buf;

static void out_open(out_buf *b)
{
    b->text = NULL;
    b->len = 0;
    b->f = open_memstream(&b->text, &b->len);
    assert_non_null(b->f);
}

static void out_close(out_buf *b)
{
    assert_int_equal(fclose(b->f), 0);
}

static void test_json_names_escaped(void **state)
{
    (void)state;
    /* RFC 8259, section 7: '"' and '\\' are escaped with a backslash,
     * control characters below 0x20 must be escaped (\n, \t, \r short,
     * others as \u00XX); everything else, UTF-8 included, stands as is. */
    const char *names[] = { "plain", "a\"b", "c\\d", "tab\there", "\x01x", "\xc3\xa9t\xc3\xa9",
                            "nl\nend\r" };
    const char *want = "[\"plain\",\"a\\\"b\",\"c\\\\d\",\"tab\\there\",\"\\u0001x\","
                       "\"\xc3\xa9t\xc3\xa9\",\"nl\\nend\\r\"]\n";
    pm_graph *g = pm_graph_create("t.pace");
    assert_non_null(g);
    for (size_t i = 0; i < sizeof names / sizeof names[0]; i++)
        assert_int_equal(pm_graph_add_node(g, names[i], strlen(names[i]), 1, NULL), PM_OK);
    pm_json_names nm;
    assert_int_equal(pm_json_names_init(&nm, g), PM_OK);
    assert_int_equal(nm.n, g->nnodes);
    out_buf b;
    out_open(&b);
    pm_json j;
    pm_json_init(&j, b.f, 0);
    pm_json_array_begin(&j);
    for (uint32_t v = 0; v < g->nnodes; v++)
        pm_json_name(&j, &nm, v);
    pm_json_array_end(&j);
    pm_json_finish(&j);
    out_close(&b);
    assert_string_equal(b.text, want);
    free(b.text);

    /* the string primitive escapes the same way */
    out_open(&b);
    pm_json_init(&j, b.f, 0);
    pm_json_array_begin(&j);
    for (uint32_t v = 0; v < g->nnodes; v++)
        pm_json_string(&j, pm_graph_node_name(g, v));
    pm_json_array_end(&j);
    pm_json_finish(&j);
    out_close(&b);
    assert_string_equal(b.text, want);
    free(b.text);
    pm_json_names_free(&nm);
    pm_json_names_free(&nm); /* freed twice: a no-op */
    pm_graph_destroy(g);
}

static void test_json_integers(void **state)
{
    (void)state;
    out_buf b;
    out_open(&b);
    pm_json j;
    pm_json_init(&j, b.f, 1);
    pm_json_array_begin(&j);
    pm_json_int(&j, 0);
    pm_json_int(&j, -1);
    pm_json_int(&j, INT64_MAX);
    pm_json_int(&j, INT64_MIN);
    pm_json_uint(&j, UINT64_MAX);
    pm_json_uint(&j, 1000000);
    pm_json_array_end(&j);
    pm_json_finish(&j);
    out_close(&b);
    /* 2^63 - 1 = 9223372036854775807, 2^64 - 1 = 18446744073709551615 */
    assert_string_equal(b.text, "[\n 0,\n -1,\n 9223372036854775807,\n -9223372036854775808,"
                                "\n 18446744073709551615,\n 1000000\n]\n");
    free(b.text);
}

/* ---- repetition vector ---------------------------------------------------------- */

static pm_graph *rates_graph(void)
{
    /* a -(3:3)-> b -(7:7)-> c, d -(1:1)-> d, e alone */
    pm_graph *g = pm_graph_create("t.pace");
    assert_non_null(g);
    const char *n[] = { "a", "b", "c", "d", "e" };
    for (int i = 0; i < 5; i++)
        assert_int_equal(pm_graph_add_node(g, n[i], 1, 5, NULL), PM_OK);
    pm_edge e = pm_graph_edge_default(0, 1);
    e.produce = e.consume = 3;
    assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
    e = pm_graph_edge_default(1, 2);
    e.produce = e.consume = 7;
    e.delay = 2;
    assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
    e = pm_graph_edge_default(3, 3);
    e.delay = 1;
    assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
    return g;
}

static void test_rep_balanced_rates(void **state)
{
    (void)state;
    /* Balance: q[src] * produce = q[dst] * consume.  With produce ==
     * consume on every edge, q is constant on each connected part, and the
     * smallest positive integer vector is 1 everywhere. */
    pm_graph *g = rates_graph();
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    uint64_t *rep = NULL;
    pm_diag d;
    pm_diag_clear(&d);
    assert_int_equal(pm_sdf_repetition(g, &rep, &d), PM_OK);
    for (uint32_t v = 0; v < g->nnodes; v++)
        assert_int_equal(rep[v], 1);
    free(rep);
    pm_graph_destroy(g);
}

static void test_rep_one_unbalanced_edge(void **state)
{
    (void)state;
    /* The same graph plus c -(2:1)-> e: q[e] * 1 = q[c] * 2, so e fires twice
     * per firing of a, b and c (q = 1 1 1 . 2); d's part stays 1. */
    pm_graph *g = rates_graph();
    pm_edge e = pm_graph_edge_default(2, 4);
    e.produce = 2;
    assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    uint64_t *rep = NULL;
    pm_diag d;
    pm_diag_clear(&d);
    assert_int_equal(pm_sdf_repetition(g, &rep, &d), PM_OK);
    const uint64_t want[] = { 1, 1, 1, 1, 2 };
    for (uint32_t v = 0; v < g->nnodes; v++)
        assert_int_equal(rep[v], want[v]);
    free(rep);
    pm_graph_destroy(g);
}

/* ---- adjacency and parts ---------------------------------------------------------- */

static pm_graph *random_graph(uint64_t *seed, uint32_t n, uint32_t m)
{
    pm_graph *g = pm_graph_create("r.pace");
    assert_non_null(g);
    for (uint32_t v = 0; v < n; v++) {
        char name[16];
        int len = snprintf(name, sizeof name, "v%u", v);
        assert_int_equal(pm_graph_add_node(g, name, (size_t)len, 1, NULL), PM_OK);
    }
    for (uint32_t i = 0; i < m; i++) {
        pm_edge e = pm_graph_edge_default(tk_rand(seed, n), tk_rand(seed, n));
        e.delay = tk_rand(seed, 2);
        assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
    }
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    return g;
}

/* The edges of v by source (or destination), in increasing id: a plain
 * scan of the edge list. */
static void check_list(const pm_graph *g, uint32_t v, bool out)
{
    const uint32_t *off = out ? g->out_off : g->in_off;
    const uint32_t *list = out ? g->out_edge : g->in_edge;
    uint32_t at = off[v];
    for (uint32_t e = 0; e < g->nedges; e++) {
        if ((out ? g->edges[e].src : g->edges[e].dst) != v)
            continue;
        assert_true(at < off[v + 1]);
        assert_int_equal(list[at++], e);
    }
    assert_int_equal(at, off[v + 1]);
}

static void test_adjacency_brute_force(void **state)
{
    (void)state;
    uint64_t seed = 16;
    for (int round = 0; round < 20; round++) {
        uint32_t n = 1 + tk_rand(&seed, 60), m = tk_rand(&seed, 200);
        pm_graph *g = random_graph(&seed, n, m);
        assert_int_equal(g->out_off[0], 0);
        assert_int_equal(g->in_off[0], 0);
        for (uint32_t v = 0; v < n; v++) {
            check_list(g, v, true);
            check_list(g, v, false);
        }
        pm_graph_destroy(g);
    }
}

static bool keep_all(const pm_graph *g, uint32_t e, void *ctx)
{
    (void)g;
    (void)e;
    (void)ctx;
    return true;
}

static void test_parts_hand_worked(void **state)
{
    (void)state;
    /* 0 -> 1 -> 2 -> 0, 2 -> 3, 3 <-> 4, 5 alone: parts {0,1,2}, {3,4}, {5} */
    pm_graph *g = pm_graph_create("t.pace");
    const char *n[] = { "a", "b", "c", "d", "e", "f" };
    for (int i = 0; i < 6; i++)
        assert_int_equal(pm_graph_add_node(g, n[i], 1, 1, NULL), PM_OK);
    const uint32_t es[][2] = { { 0, 1 }, { 1, 2 }, { 2, 0 }, { 2, 3 }, { 3, 4 }, { 4, 3 } };
    for (int i = 0; i < 6; i++) {
        pm_edge e = pm_graph_edge_default(es[i][0], es[i][1]);
        assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
    }
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    pm_scc s;
    assert_int_equal(pm_scc_compute(g, NULL, NULL, &s), PM_OK);
    assert_int_equal(s.ncomp, 3);
    assert_int_equal(s.comp[0], s.comp[1]);
    assert_int_equal(s.comp[1], s.comp[2]);
    assert_int_equal(s.comp[3], s.comp[4]);
    assert_int_not_equal(s.comp[0], s.comp[3]);
    assert_int_not_equal(s.comp[5], s.comp[0]);
    assert_int_not_equal(s.comp[5], s.comp[3]);
    pm_scc_free(&s);
    pm_graph_destroy(g);
}

/* Without a filter the search runs over a gathered target array; with a
 * filter that keeps everything it reads the edge records: same parts. */
static void test_parts_compact_same(void **state)
{
    (void)state;
    uint64_t seed = 1616;
    for (int round = 0; round < 30; round++) {
        uint32_t n = 1 + tk_rand(&seed, 80), m = tk_rand(&seed, 3 * n);
        pm_graph *g = random_graph(&seed, n, m);
        pm_scc a, b;
        assert_int_equal(pm_scc_compute(g, NULL, NULL, &a), PM_OK);
        assert_int_equal(pm_scc_compute(g, keep_all, NULL, &b), PM_OK);
        assert_int_equal(a.ncomp, b.ncomp);
        assert_memory_equal(a.comp, b.comp, n * sizeof *a.comp);
        assert_memory_equal(a.order, b.order, n * sizeof *a.order);
        assert_memory_equal(a.start, b.start, (a.ncomp + 1) * sizeof *a.start);
        pm_scc_free(&a);
        pm_scc_free(&b);
        pm_graph_destroy(g);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_json_names_escaped),
        cmocka_unit_test(test_json_integers),
        cmocka_unit_test(test_rep_balanced_rates),
        cmocka_unit_test(test_rep_one_unbalanced_edge),
        cmocka_unit_test(test_adjacency_brute_force),
        cmocka_unit_test(test_parts_hand_worked),
        cmocka_unit_test(test_parts_compact_same),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
