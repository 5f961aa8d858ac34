/*
 * test_sdf.c - multirate graphs: repetition vectors against published ones,
 * consistent, inconsistent and deadlocked examples, overflow and size
 * guards, and properties of random graphs (balance, minimality, the
 * single-rate expansion and its token accounting, liveness, expanded maps).
 *
 * Outside sources are named beside each check.  Random graphs come from a
 * fixed-seed generator, so every run checks the same cases.
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
#include "pacemap/map.h"
#include "pacemap/reader.h"
#include "pacemap/sdf.h"
#include "support/testkit.h"

/* ---- building graphs ---------------------------------------------------------- */

typedef struct spec_edge {
    uint32_t src, dst;
    int64_t produce, consume, delay;
} spec_edge;

/* Nodes named by `names` (cycles 10 each), edges tagged line = index + 1. */
static pm_graph *build(uint32_t n, const char *const *names, const spec_edge *es,
                       uint32_t ne)
{
    pm_graph *g = pm_graph_create("t.pace");
    assert_non_null(g);
    for (uint32_t v = 0; v < n; v++)
        assert_int_equal(pm_graph_add_node(g, names[v], strlen(names[v]), 10, NULL), PM_OK);
    for (uint32_t i = 0; i < ne; i++) {
        pm_edge e = pm_graph_edge_default(es[i].src, es[i].dst);
        e.produce = es[i].produce;
        e.consume = es[i].consume;
        e.delay = es[i].delay;
        e.line = i + 1;
        e.col = 3;
        assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
    }
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    return g;
}

static void expect_rep(const pm_graph *g, const uint64_t *want)
{
    uint64_t *rep = NULL;
    pm_diag d;
    assert_int_equal(pm_sdf_repetition(g, &rep, &d), PM_OK);
    for (uint32_t v = 0; v < g->nnodes; v++)
        assert_int_equal(rep[v], want[v]);
    free(rep);
}

static const char *const ABC[] = { "a", "b", "c", "d", "e", "f", "g", "h" };

/* ---- published repetition vectors ------------------------------------------------ */

/* CD (44.1 kHz) to DAT (48 kHz) sample-rate conversion chain:
 * Bhattacharyya, Murthy & Lee, "Software Synthesis from Dataflow Graphs",
 * Kluwer 1996.  Repetition vector 147, 147, 98, 28, 32, 160 as published;
 * the per-edge rates are as remembered (the same rates as in
 * refdata/cd_dat.pace), and the vector follows from them exactly. */
static const spec_edge CD_DAT[] = {
    { 0, 1, 1, 1, 0 }, { 1, 2, 2, 3, 0 }, { 2, 3, 2, 7, 0 },
    { 3, 4, 8, 7, 0 }, { 4, 5, 5, 1, 0 },
};
static const uint64_t CD_DAT_REP[] = { 147, 147, 98, 28, 32, 160 };

static void test_cd_dat_by_hand(void **state)
{
    (void)state;
    static const char *const names[] = { "A", "B", "C", "D", "E", "F" };
    pm_graph *g = build(6, names, CD_DAT, 5);
    expect_rep(g, CD_DAT_REP); /* Bhattacharyya, Murthy & Lee 1996 */
    pm_graph_destroy(g);
}

static void test_cd_dat_from_refdata(void **state)
{
    (void)state;
    const char *dir = getenv("PM_REFDATA");
    if (!dir) {
        printf("note: PM_REFDATA not set, skipping the cd_dat.pace check\n");
        skip();
    }
    char path[1024];
    snprintf(path, sizeof path, "%s/cd_dat.pace", dir);
    FILE *f = fopen(path, "r");
    if (!f) {
        printf("note: %s absent, skipping the cd_dat.pace check\n", path);
        skip();
    }
    fclose(f);
    pm_graph *g = NULL;
    pm_diag d;
    assert_int_equal(pm_reader_read_file(path, &g, &d), PM_OK);
    static const char *const names[] = { "A", "B", "C", "D", "E", "F" };
    uint64_t *rep = NULL;
    assert_int_equal(pm_sdf_repetition(g, &rep, &d), PM_OK);
    for (uint32_t k = 0; k < 6; k++) {
        uint32_t v = pm_graph_find(g, names[k], 1);
        assert_int_not_equal(v, PM_NONE);
        assert_int_equal(rep[v], CD_DAT_REP[k]); /* Bhattacharyya, Murthy & Lee 1996 */
    }
    free(rep);
    pm_graph_destroy(g);
}

/* ---- Lee & Messerschmitt 1987 style examples ------------------------------------- */

/* Three actors with topology matrix [1 -1 0; 2 0 -1; 0 2 -1]: rank 2, so
 * consistent, q = (1, 1, 2).  In the manner of Lee & Messerschmitt, "Static
 * scheduling of synchronous data flow programs for digital signal
 * processing", IEEE Trans. Computers 1987, §III; the matrix is recalled from
 * memory and the vector solved by hand. */
static void test_lm87_consistent(void **state)
{
    (void)state;
    static const spec_edge es[] = { { 0, 1, 1, 1, 0 }, { 0, 2, 2, 1, 0 }, { 1, 2, 2, 1, 0 } };
    pm_graph *g = build(3, ABC, es, 3);
    expect_rep(g, (const uint64_t[]){ 1, 1, 2 });
    pm_graph_destroy(g);
}

/* The same shape with the third row [0 1 -1]: rank 3, no repetition vector
 * (Lee & Messerschmitt 1987, the inconsistent case; recalled from memory).
 * Going b -> c <- a -> b the rates ask q[c] = q[b], q[a] = q[c]/2 and
 * q[b] = q[a]: b would fire 1/2 times as often as itself (by hand). */
static void test_lm87_inconsistent(void **state)
{
    (void)state;
    static const spec_edge es[] = { { 0, 1, 1, 1, 0 }, { 0, 2, 2, 1, 0 }, { 1, 2, 1, 1, 0 } };
    pm_graph *g = build(3, ABC, es, 3);
    uint64_t *rep = (uint64_t *)1;
    pm_diag d;
    assert_int_equal(pm_sdf_repetition(g, &rep, &d), PM_EINCONSISTENT);
    assert_null(rep);
    assert_string_equal(d.file, "t.pace");
    assert_true(d.line >= 1 && d.line <= 3 && d.col == 3); /* an edge of the cycle */
    assert_non_null(strstr(d.msg, "inconsistent rates on the cycle b -> c <- a -> b"));
    assert_non_null(strstr(d.msg, "1/2"));
    pm_graph_destroy(g);
}

static void test_inconsistent_self_loop_and_parallel_edges(void **state)
{
    (void)state;
    pm_diag d;
    uint64_t *rep;
    static const spec_edge self[] = { { 0, 1, 1, 1, 0 }, { 1, 1, 2, 1, 1 } };
    pm_graph *g = build(2, ABC, self, 2);
    assert_int_equal(pm_sdf_repetition(g, &rep, &d), PM_EINCONSISTENT);
    assert_non_null(strstr(d.msg, "cycle b -> b:"));
    assert_int_equal(d.line, 2);
    pm_graph_destroy(g);
    static const spec_edge par[] = { { 0, 1, 1, 1, 0 }, { 0, 1, 2, 1, 0 } };
    g = build(2, ABC, par, 2);
    assert_int_equal(pm_sdf_repetition(g, &rep, &d), PM_EINCONSISTENT);
    assert_non_null(strstr(d.msg, "cycle a -> b <- a:"));
    pm_graph_destroy(g);
}

/* A directed loop needs enough initial tokens for one period (Lee &
 * Messerschmitt 1987: a consistent graph may still deadlock).  Here a makes
 * 2 tokens for b's 2 firings and needs 2 back: with 1 delay it is stuck,
 * with 2 it completes (by hand). */
static void test_deadlock_names_the_loop(void **state)
{
    (void)state;
    pm_diag d;
    uint64_t *rep;
    spec_edge es[] = { { 0, 1, 2, 1, 0 }, { 1, 0, 1, 2, 1 } };
    pm_graph *g = build(2, ABC, es, 2);
    assert_int_equal(pm_sdf_repetition(g, &rep, &d), PM_OK);
    assert_int_equal(rep[0], 1);
    assert_int_equal(rep[1], 2);
    assert_int_equal(pm_sdf_check_iteration(g, rep, &d), PM_EDEADLOCK);
    assert_non_null(strstr(d.msg, "loop a -> b -> a"));
    assert_int_equal(d.line, 2); /* b -> a, the edge that lacks a token */
    free(rep);
    pm_graph_destroy(g);
    es[1].delay = 2;
    g = build(2, ABC, es, 2);
    assert_int_equal(pm_sdf_repetition(g, &rep, &d), PM_OK);
    assert_int_equal(pm_sdf_check_iteration(g, rep, &d), PM_OK);
    free(rep);
    pm_graph_destroy(g);
}

/* Only the loop is named, not the nodes stuck behind it. */
static void test_deadlock_skips_the_tail(void **state)
{
    (void)state;
    static const spec_edge es[] = { { 0, 1, 1, 1, 0 }, { 1, 2, 1, 1, 0 }, { 2, 3, 1, 1, 0 },
                                    { 3, 1, 1, 1, 0 }, { 3, 4, 1, 1, 0 } };
    pm_graph *g = build(5, ABC, es, 5);
    uint64_t *rep;
    pm_diag d;
    assert_int_equal(pm_sdf_repetition(g, &rep, &d), PM_OK);
    assert_int_equal(pm_sdf_check_iteration(g, rep, &d), PM_EDEADLOCK);
    assert_non_null(strstr(d.msg, "loop b -> c -> d -> b "));
    free(rep);
    pm_graph_destroy(g);
}

/* ---- ranges ------------------------------------------------------------------------ */

static void test_overflow_is_reported(void **state)
{
    (void)state;
    pm_diag d;
    uint64_t *rep;
    /* 2^62 - 1 firings is the largest count allowed */
    spec_edge one[] = { { 0, 1, 1, PM_MAX_VALUE, 0 } };
    pm_graph *g = build(2, ABC, one, 1);
    expect_rep(g, (const uint64_t[]){ (uint64_t)PM_MAX_VALUE, 1 });
    pm_graph_destroy(g);
    /* 2^31 * 2^31 = 2^62: one too many */
    spec_edge two[] = { { 0, 1, 1, INT64_C(1) << 31, 0 }, { 1, 2, 1, INT64_C(1) << 31, 0 } };
    g = build(3, ABC, two, 2);
    assert_int_equal(pm_sdf_repetition(g, &rep, &d), PM_ERANGE);
    pm_graph_destroy(g);
    /* each fraction fits, their lcm (2^32+1)(2^32-1) does not */
    spec_edge lcm[] = { { 0, 1, 1, (INT64_C(1) << 32) + 1, 0 },
                        { 0, 2, 1, (INT64_C(1) << 32) - 1, 0 } };
    g = build(3, ABC, lcm, 2);
    assert_int_equal(pm_sdf_repetition(g, &rep, &d), PM_ERANGE);
    assert_non_null(strstr(d.msg, "2^62-1"));
    pm_graph_destroy(g);
    /* 2 tokens of 2^61 words travel as one expanded edge of 2^62 words */
    spec_edge wide[] = { { 0, 1, 2, 2, 0 } };
    g = build(2, ABC, wide, 1);
    g->edges[0].words = INT64_C(1) << 61;
    pm_graph *x = (pm_graph *)1;
    assert_int_equal(pm_sdf_single_rate(g, &x, NULL, NULL, &d), PM_ERANGE);
    assert_null(x);
    assert_int_equal(d.line, 1);
    pm_graph_destroy(g);
    spec_edge zero[] = { { 0, 1, 0, 1, 0 } };
    g = build(2, ABC, zero, 1);
    assert_int_equal(pm_sdf_repetition(g, &rep, &d), PM_ERANGE);
    assert_int_equal(d.line, 1);
    pm_graph_destroy(g);
}

static void test_size_guards(void **state)
{
    (void)state;
    pm_diag d;
    uint64_t *rep;
    pm_graph *x = (pm_graph *)1;
    spec_edge many[] = { { 0, 1, 1, 3000000, 0 } };
    pm_graph *g = build(2, ABC, many, 1);
    assert_int_equal(pm_sdf_repetition(g, &rep, &d), PM_OK);
    assert_int_equal(pm_sdf_expand(g, rep, &x, NULL, &d), PM_ELIMIT);
    assert_null(x);
    assert_non_null(strstr(d.msg, "3000001 firings"));
    free(rep);
    pm_graph_destroy(g);
    /* 5000 parallel edges with rates 999:1000 (q = 1000, 999): each gives
     * 1 + 998 + 999 runs (998 consumer and 999 producer boundaries inside
     * the 999000 tokens, none shared), so 9990000 edges in all */
    spec_edge *es = calloc(5000, sizeof *es);
    for (uint32_t i = 0; i < 5000; i++)
        es[i] = (spec_edge){ 0, 1, 999, 1000, 0 };
    g = build(2, ABC, es, 5000);
    assert_int_equal(pm_sdf_repetition(g, &rep, &d), PM_OK);
    assert_int_equal(pm_sdf_expand(g, rep, &x, NULL, &d), PM_ELIMIT);
    assert_non_null(strstr(d.msg, "9990000 edges"));
    assert_non_null(strstr(d.msg, "alone gives 1998"));
    free(rep);
    free(es);
    pm_graph_destroy(g);
}

/* ---- the expansion, worked examples ------------------------------------------------- */

static const pm_edge *find_edge(const pm_graph *x, const char *src, const char *dst,
                                int64_t delay)
{
    for (uint32_t e = 0; e < x->nedges; e++)
        if (!strcmp(pm_graph_node_name(x, x->edges[e].src), src) &&
            !strcmp(pm_graph_node_name(x, x->edges[e].dst), dst) && x->edges[e].delay == delay)
            return &x->edges[e];
    return NULL;
}

/* docs/multirate.md's example, worked by hand: a -> b produce=2 consume=3
 * delay=1, q = (3, 2), per-token transfers.  Tokens 0..5: 0 is initial
 * (made by a#2 one iteration earlier), 1-2 by a#0, 3-4 by a#1, 5 by a#2;
 * b#0 takes 0-2, b#1 takes 3-5. */
static void test_expand_worked_example(void **state)
{
    (void)state;
    static const spec_edge es[] = { { 0, 1, 2, 3, 1 } };
    pm_graph *g = build(2, ABC, es, 1);
    g->platform.block_transfers = false; /* what the tokens above assume */
    pm_graph *x;
    uint64_t *rep;
    uint32_t *origin;
    pm_diag d;
    assert_int_equal(pm_sdf_single_rate(g, &x, &rep, &origin, &d), PM_OK);
    assert_int_equal(x->nnodes, 5);
    assert_int_equal(x->nedges, 4);
    const pm_edge *e = find_edge(x, "a#2", "b#0", 1);
    assert_non_null(e);
    assert_int_equal(e->words, 1);
    assert_non_null(e = find_edge(x, "a#0", "b#0", 0));
    assert_int_equal(e->words, 2);
    assert_non_null(e = find_edge(x, "a#1", "b#1", 0));
    assert_int_equal(e->words, 2);
    assert_non_null(e = find_edge(x, "a#2", "b#1", 0));
    assert_int_equal(e->words, 1);
    assert_int_equal(origin[0], 0);
    assert_int_equal(origin[2], 0);
    assert_int_equal(origin[4], 1);
    assert_true(x->finalized);
    free(rep);
    free(origin);
    pm_graph_destroy(x);
    pm_graph_destroy(g);
}

/* The same example with block transfers (the scenario default), by hand:
 * a#0's block (tokens 1-2) and a#1's (3-4) each go whole to one reader;
 * a#2's block is token 5 and token 0 of the next iteration, first read by
 * b#1, so it goes whole (2 words) to b#1, and b#0 of the next iteration
 * follows b#1 with one delay and no words.  4 edges, as with tokens. */
static void test_expand_worked_example_block(void **state)
{
    (void)state;
    static const spec_edge es[] = { { 0, 1, 2, 3, 1 } };
    pm_graph *g = build(2, ABC, es, 1);
    g->platform.block_transfers = true;
    pm_graph *x;
    uint64_t *rep;
    uint32_t *origin;
    pm_diag d;
    assert_int_equal(pm_sdf_single_rate(g, &x, &rep, &origin, &d), PM_OK);
    assert_int_equal(x->nnodes, 5);
    assert_int_equal(x->nedges, 4);
    const pm_edge *e = find_edge(x, "b#1", "b#0", 1);
    assert_non_null(e);
    assert_int_equal(e->words, 0);
    assert_non_null(e = find_edge(x, "a#0", "b#0", 0));
    assert_int_equal(e->words, 2);
    assert_non_null(e = find_edge(x, "a#1", "b#1", 0));
    assert_int_equal(e->words, 2);
    assert_non_null(e = find_edge(x, "a#2", "b#1", 0));
    assert_int_equal(e->words, 2);
    assert_null(find_edge(x, "a#2", "b#0", 1));
    free(rep);
    free(origin);
    pm_graph_destroy(x);
    pm_graph_destroy(g);
}

/* A state self-loop `v -> v delay=1` becomes the firing chain with one
 * delay on the wrap-around link (by hand). */
static void test_expand_self_loop_is_a_chain(void **state)
{
    (void)state;
    static const spec_edge es[] = { { 0, 1, 3, 1, 0 }, { 1, 1, 1, 1, 1 } };
    pm_graph *g = build(2, ABC, es, 2);
    pm_graph *x;
    pm_diag d;
    assert_int_equal(pm_sdf_single_rate(g, &x, NULL, NULL, &d), PM_OK);
    assert_int_equal(x->nnodes, 4); /* a, b#0..b#2 */
    assert_string_equal(pm_graph_node_name(x, 0), "a");
    assert_non_null(find_edge(x, "b#0", "b#1", 0));
    assert_non_null(find_edge(x, "b#1", "b#2", 0));
    assert_non_null(find_edge(x, "b#2", "b#0", 1));
    assert_int_equal(x->nedges, 6);
    pm_graph_destroy(x);
    pm_graph_destroy(g);
}

/* ---- random graphs ------------------------------------------------------------------ */

static uint64_t rng_state = 0x9e3779b97f4a7c15ULL;

static uint32_t rnd(uint32_t n)
{
    return tk_rand(&rng_state, n);
}

static uint64_t gcd64(uint64_t a, uint64_t b)
{
    while (b) {
        uint64_t t = a % b;
        a = b;
        b = t;
    }
    return a;
}

/* A random consistent graph: firing counts q are chosen first, in `parts`
 * separate groups, and every edge's rates are made to balance them. */
typedef struct rgraph {
    pm_graph *g;
    uint64_t q[48];
    uint32_t part[48];
} rgraph;

static void random_edge(rgraph *r, uint32_t u, uint32_t v, uint32_t max_delay)
{
    uint64_t g = gcd64(r->q[u], r->q[v]), k = 1 + rnd(3);
    pm_edge e = pm_graph_edge_default(u, v);
    e.produce = (int64_t)(r->q[v] / g * k);
    e.consume = (int64_t)(r->q[u] / g * k);
    e.delay = max_delay ? rnd(max_delay + 1) : 0;
    e.words = 1 + rnd(3);
    e.line = r->g->nedges + 1;
    assert_int_equal(pm_graph_add_edge(r->g, &e, NULL), PM_OK);
}

static void random_graph(rgraph *r, uint32_t n, uint32_t maxq, uint32_t max_delay,
                         bool forward_only)
{
    uint32_t parts = 1 + rnd(3);
    r->g = pm_graph_create("r.pace");
    for (uint32_t v = 0; v < n; v++) {
        char name[16];
        snprintf(name, sizeof name, "n%u", v);
        assert_int_equal(pm_graph_add_node(r->g, name, strlen(name), 1 + rnd(50), NULL), PM_OK);
        r->q[v] = 1 + rnd(maxq);
        r->part[v] = v % parts;
    }
    for (uint32_t v = parts; v < n; v++) /* a spanning tree per part */
        random_edge(r, v - parts, v, max_delay);
    for (uint32_t k = rnd(n + 1); k > 0; k--) {
        uint32_t u = rnd(n), v = rnd(n);
        if (r->part[u] != r->part[v] || (forward_only && u >= v))
            continue;
        random_edge(r, u, v, max_delay);
    }
    assert_int_equal(pm_graph_finalize(r->g), PM_OK);
}

static void test_random_balance_and_minimality(void **state)
{
    (void)state;
    for (int round = 0; round < 300; round++) {
        rgraph r;
        random_graph(&r, 1 + rnd(40), 12, 2, false);
        uint64_t *rep;
        pm_diag d;
        assert_int_equal(pm_sdf_repetition(r.g, &rep, &d), PM_OK);
        for (uint32_t e = 0; e < r.g->nedges; e++) { /* balance equations */
            const pm_edge *pe = &r.g->edges[e];
            assert_true(rep[pe->src] * (uint64_t)pe->produce ==
                        rep[pe->dst] * (uint64_t)pe->consume);
        }
        uint64_t part_gcd[3] = { 0, 0, 0 };
        for (uint32_t v = 0; v < r.g->nnodes; v++)
            part_gcd[r.part[v]] = gcd64(part_gcd[r.part[v]], rep[v]);
        for (uint32_t v = 0; v < r.g->nnodes; v++) {
            assert_int_equal(part_gcd[r.part[v]], 1); /* smallest per part */
            uint32_t root = r.part[v]; /* node p is the first of part p */
            assert_true(rep[v] * r.q[root] == r.q[v] * rep[root]); /* proportional to q */
        }
        free(rep);
        pm_graph_destroy(r.g);
    }
}

/* A random single-rate graph with everything the expansion must copy. */
static pm_graph *random_single_rate(void)
{
    pm_graph *g = pm_graph_create("s.pace");
    static const char *const classes[] = { "dsp", "host" };
    assert_int_equal(pm_graph_set_cores(g, 2, classes, (const uint32_t[]){ 2, 1 }), PM_OK);
    g->platform.comm = (pm_comm){ 30, 2, 4, 5 };
    g->platform.interconnect = PM_BUS;
    g->platform.clock_hz = 600000000;
    g->platform.rate_hz = 48000;
    uint32_t n = 1 + rnd(30);
    for (uint32_t v = 0; v < n; v++) {
        char name[16];
        snprintf(name, sizeof name, "v%u", v);
        assert_int_equal(pm_graph_add_node(g, name, strlen(name), rnd(100), NULL), PM_OK);
        if (rnd(3) == 0)
            assert_int_equal(pm_graph_set_class_cycles(g, v, (const int64_t[]){ rnd(9),
                                                                                  PM_CANNOT_RUN }),
                             PM_OK);
        g->nodes[v].pin_core = rnd(4) == 0 ? rnd(2) : PM_NONE;
        g->nodes[v].work = (pm_work_kind)rnd(4);
        g->nodes[v].work_param = rnd(64);
        g->nodes[v].line = v + 1;
        g->nodes[v].col = 1;
    }
    for (uint32_t k = rnd(3 * n); k > 0; k--) {
        uint32_t u = rnd(n), v = rnd(n);
        pm_edge e = pm_graph_edge_default(u <= v ? u : v, u <= v ? v : u);
        e.delay = u == v ? 1 + rnd(2) : rnd(3); /* zero delays only go forward */
        e.words = rnd(5);
        e.line = 100 + k;
        assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
    }
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    return g;
}

static void assert_same_platform(const pm_platform *a, const pm_platform *b)
{
    assert_int_equal(a->nclasses, b->nclasses);
    assert_int_equal(a->ncores, b->ncores);
    for (uint32_t c = 0; c < a->nclasses; c++) {
        assert_string_equal(a->class_names[c], b->class_names[c]);
        assert_int_equal(a->class_count[c], b->class_count[c]);
    }
    for (uint32_t c = 0; c < a->ncores; c++)
        assert_int_equal(a->core_class[c], b->core_class[c]);
    assert_memory_equal(&a->comm, &b->comm, sizeof a->comm);
    assert_int_equal(a->interconnect, b->interconnect);
    assert_int_equal(a->clock_hz, b->clock_hz);
    assert_int_equal(a->rate_hz, b->rate_hz);
    assert_int_equal(a->classes_named, b->classes_named);
}

static void assert_same_graph(const pm_graph *g, const pm_graph *x)
{
    assert_int_equal(x->nnodes, g->nnodes);
    assert_int_equal(x->nedges, g->nedges);
    for (uint32_t v = 0; v < g->nnodes; v++) {
        const pm_node *a = &g->nodes[v], *b = &x->nodes[v];
        assert_string_equal(pm_graph_node_name(g, v), pm_graph_node_name(x, v));
        for (uint32_t c = 0; c < g->platform.nclasses; c++)
            assert_int_equal(pm_graph_cycles_on(g, v, c), pm_graph_cycles_on(x, v, c));
        assert_true(a->pin_core == b->pin_core && a->pin_class == b->pin_class);
        assert_true(a->work == b->work && a->work_param == b->work_param);
        assert_true(a->line == b->line && a->col == b->col);
    }
    for (uint32_t e = 0; e < g->nedges; e++)
        assert_memory_equal(&g->edges[e], &x->edges[e], sizeof(pm_edge));
    assert_same_platform(&g->platform, &x->platform);
}

static void test_single_rate_expands_to_itself(void **state)
{
    (void)state;
    for (int round = 0; round < 100; round++) {
        pm_graph *g = random_single_rate();
        pm_graph *x;
        uint64_t *rep;
        uint32_t *origin;
        pm_diag d;
        assert_int_equal(pm_sdf_single_rate(g, &x, &rep, &origin, &d), PM_OK);
        for (uint32_t v = 0; v < g->nnodes; v++)
            assert_true(rep[v] == 1 && origin[v] == v);
        assert_same_graph(g, x);
        free(rep);
        free(origin);
        pm_graph_destroy(x);
        pm_graph_destroy(g);
    }
}

/* Token accounting of edge e, enumerated token by token: which producer
 * firing made each token consumed in iteration 0, and which consumer firing
 * takes it.  The d initial tokens are the last d tokens earlier iterations
 * made, counted back from the newest: token d-1-k came from global firing
 * -1 - k/p.  The result, tally[(i * qv + j) * 16 + delay], counts tokens. */
static void tally_tokens(const pm_edge *pe, uint64_t qu, uint64_t qv, uint64_t *tally)
{
    uint64_t p = (uint64_t)pe->produce, c = (uint64_t)pe->consume, d = (uint64_t)pe->delay;
    for (uint64_t t = 0; t < qv * c; t++) {
        int64_t firing = t < d ? -1 - (int64_t)((d - 1 - t) / p) : (int64_t)((t - d) / p);
        int64_t iter = 0;
        while (firing < 0)
            firing += (int64_t)qu, iter--;
        uint64_t j = t / c;
        assert_true(-iter < 16);
        tally[((uint64_t)firing * qv + j) * 16 + (uint64_t)-iter]++;
    }
}

static void check_edge_tokens(const pm_graph *g, const pm_graph *x, const uint64_t *rep,
                              const uint32_t *first, uint32_t e)
{
    const pm_edge *pe = &g->edges[e];
    uint64_t qu = rep[pe->src], qv = rep[pe->dst];
    uint64_t *tally = calloc(qu * qv * 16, sizeof *tally);
    tally_tokens(pe, qu, qv, tally);
    uint64_t runs = 0, seen = 0;
    for (uint64_t k = 0; k < qu * qv * 16; k++)
        runs += tally[k] != 0;
    for (uint32_t f = 0; f < x->nedges; f++) {
        const pm_edge *xe = &x->edges[f];
        if (xe->line != pe->line)
            continue;
        seen++;
        uint64_t i = xe->src - first[pe->src], j = xe->dst - first[pe->dst];
        assert_true(i < qu && j < qv && xe->delay >= 0 && xe->delay < 16);
        assert_int_equal((uint64_t)xe->words, tally[(i * qv + j) * 16 + (uint64_t)xe->delay] *
                                                  (uint64_t)pe->words);
        assert_int_equal(xe->produce, 1);
        assert_int_equal(xe->consume, 1);
    }
    assert_int_equal(seen, runs); /* every exchanging pair, each once */
    free(tally);
}

static void test_multirate_expansion_tokens(void **state)
{
    (void)state;
    for (int round = 0; round < 150; round++) {
        rgraph r;
        random_graph(&r, 1 + rnd(12), 6, 9, false);
        uint64_t *rep;
        uint32_t *origin;
        pm_graph *x;
        pm_diag d;
        assert_int_equal(pm_sdf_repetition(r.g, &rep, &d), PM_OK);
        assert_int_equal(pm_sdf_expand(r.g, rep, &x, &origin, &d), PM_OK);
        uint32_t first[49] = { 0 };
        for (uint32_t v = 0; v < r.g->nnodes; v++)
            first[v + 1] = first[v] + (uint32_t)rep[v];
        assert_int_equal(x->nnodes, first[r.g->nnodes]); /* sum of q */
        for (uint32_t v = 0; v < r.g->nnodes; v++)
            for (uint32_t i = 0; i < rep[v]; i++) {
                char want[32];
                if (rep[v] == 1)
                    snprintf(want, sizeof want, "%s", pm_graph_node_name(r.g, v));
                else
                    snprintf(want, sizeof want, "%s#%u", pm_graph_node_name(r.g, v), i);
                assert_string_equal(pm_graph_node_name(x, first[v] + i), want);
                assert_int_equal(origin[first[v] + i], v);
                assert_int_equal(x->nodes[first[v] + i].cycles, r.g->nodes[v].cycles);
            }
        for (uint32_t e = 0; e < r.g->nedges; e++)
            check_edge_tokens(r.g, x, rep, first, e);
        free(rep);
        free(origin);
        pm_graph_destroy(x);
        pm_graph_destroy(r.g);
    }
}

/* Kahn's algorithm over the zero-delay edges of x plus, when m is given,
 * the order of each core: true when they form no cycle. */
static bool zero_delay_acyclic(const pm_graph *x, const pm_map *m)
{
    uint32_t n = x->nnodes, *indeg = calloc(n + 1, sizeof *indeg), *stack = malloc((n + 1) * 4);
    uint32_t *next = malloc((n + 1) * sizeof *next);
    for (uint32_t v = 0; v < n; v++)
        next[v] = PM_NONE;
    for (uint32_t c = 0; m && c < m->ncores; c++)
        for (uint32_t k = m->off[c]; k + 1 < m->off[c + 1]; k++)
            next[m->order[k]] = m->order[k + 1], indeg[m->order[k + 1]]++;
    for (uint32_t e = 0; e < x->nedges; e++)
        indeg[x->edges[e].dst] += x->edges[e].delay == 0;
    uint32_t top = 0, done = 0;
    for (uint32_t v = 0; v < n; v++)
        if (!indeg[v])
            stack[top++] = v;
    while (top) {
        uint32_t v = stack[--top];
        done++;
        for (uint32_t k = x->out_off[v]; k < x->out_off[v + 1]; k++) {
            const pm_edge *e = &x->edges[x->out_edge[k]];
            if (e->delay == 0 && --indeg[e->dst] == 0)
                stack[top++] = e->dst;
        }
        if (next[v] != PM_NONE && --indeg[next[v]] == 0)
            stack[top++] = next[v];
    }
    free(indeg);
    free(stack);
    free(next);
    return done == n;
}

/* A random map: random core per node, nodes in id order on each core. */
static pm_map *random_map(const pm_graph *g, uint32_t ncores)
{
    uint32_t *lists[4], counts[4] = { 0 };
    for (uint32_t c = 0; c < ncores; c++)
        lists[c] = malloc((g->nnodes + 1) * sizeof *lists[c]);
    for (uint32_t v = 0; v < g->nnodes; v++) {
        uint32_t c = rnd(ncores);
        lists[c][counts[c]++] = v;
    }
    pm_map *m;
    assert_int_equal(pm_map_create(ncores, g->nnodes, (const uint32_t *const *)lists, counts,
                                   &m), PM_OK);
    for (uint32_t c = 0; c < ncores; c++)
        free(lists[c]);
    return m;
}

/* Every expanded node once, on its node's core, a node's firings in order. */
static void check_expanded_map(const pm_map *m, const pm_map *xm, const uint32_t *origin,
                               uint32_t nx)
{
    assert_int_equal(xm->nnodes, nx);
    assert_int_equal(xm->off[xm->ncores], nx);
    uint32_t *seen = calloc(nx + 1, sizeof *seen);
    for (uint32_t c = 0; c < xm->ncores; c++)
        for (uint32_t k = xm->off[c]; k < xm->off[c + 1]; k++) {
            uint32_t f = xm->order[k];
            assert_true(f < nx && !seen[f]);
            seen[f] = 1;
            assert_int_equal(m->core_of[origin[f]], c);
            if (f > 0 && origin[f - 1] == origin[f])
                assert_true(seen[f - 1]); /* firing i-1 ran before firing i */
        }
    free(seen);
}

static void assert_same_map(const pm_map *a, const pm_map *b)
{
    assert_int_equal(a->ncores, b->ncores);
    assert_int_equal(a->nnodes, b->nnodes);
    for (uint32_t c = 0; c <= a->ncores; c++)
        assert_int_equal(a->off[c], b->off[c]);
    for (uint32_t k = 0; k < a->nnodes; k++) {
        assert_int_equal(a->order[k], b->order[k]);
        assert_int_equal(a->core_of[k], b->core_of[k]);
    }
}

/* Liveness and the expansion agree: the one-iteration check passes exactly
 * when the expanded graph has no loop without delay, i.e. when its
 * iteration bound (Ito & Parhi 1995) is finite.  And a map of a live graph
 * expands to per-core orders that cannot deadlock. */
static void test_liveness_matches_expansion(void **state)
{
    (void)state;
    int live = 0, dead = 0, maps = 0;
    for (int round = 0; round < 300; round++) {
        rgraph r;
        random_graph(&r, 2 + rnd(10), 5, 2, false);
        uint64_t *rep;
        uint32_t *origin;
        pm_graph *x;
        pm_diag d;
        assert_int_equal(pm_sdf_repetition(r.g, &rep, &d), PM_OK);
        int rc = pm_sdf_check_iteration(r.g, rep, &d);
        assert_true(rc == PM_OK || rc == PM_EDEADLOCK);
        assert_int_equal(pm_sdf_expand(r.g, rep, &x, &origin, &d), PM_OK);
        assert_int_equal(rc == PM_OK, zero_delay_acyclic(x, NULL));
        rc == PM_OK ? live++ : dead++;
        pm_map *m = random_map(r.g, 1 + rnd(3)), *xm;
        int mrc = pm_map_expand(r.g, rep, m, &xm, &d);
        if (rc != PM_OK)
            assert_int_equal(mrc, PM_EDEADLOCK);
        if (mrc == PM_OK) {
            maps++;
            check_expanded_map(m, xm, origin, x->nnodes);
            assert_true(zero_delay_acyclic(x, xm));
            pm_map *back;
            assert_int_equal(pm_map_collapse(r.g, rep, xm, &back, &d), PM_OK);
            assert_same_map(m, back);
            pm_map_destroy(back);
            pm_map_destroy(xm);
        }
        pm_map_destroy(m);
        free(rep);
        free(origin);
        pm_graph_destroy(x);
        pm_graph_destroy(r.g);
    }
    assert_true(live > 30 && dead > 30 && maps > 30); /* both kinds were exercised */
}

/* ---- maps ----------------------------------------------------------------------------- */

static void test_map_of_single_rate_graph_is_unchanged(void **state)
{
    (void)state;
    for (int round = 0; round < 50; round++) {
        pm_graph *g = random_single_rate(); /* zero delays go forward in id order */
        uint64_t *rep;
        pm_diag d;
        assert_int_equal(pm_sdf_repetition(g, &rep, &d), PM_OK);
        pm_map *m = random_map(g, 1 + rnd(3)), *xm;
        assert_int_equal(pm_map_expand(g, rep, m, &xm, &d), PM_OK);
        assert_int_equal(xm->ncores, m->ncores);
        for (uint32_t c = 0; c <= m->ncores; c++)
            assert_int_equal(xm->off[c], m->off[c]);
        for (uint32_t k = 0; k < m->nnodes; k++)
            assert_int_equal(xm->order[k], m->order[k]);
        pm_map_destroy(m);
        pm_map_destroy(xm);
        free(rep);
        pm_graph_destroy(g);
    }
}

/* src feeds a 2 tokens per iteration; a and b form a loop with one token.
 * On one core in the order src a b, the firings must interleave:
 * src, a#0, b#0, a#1, b#1 (a#1 needs b#0's token; worked by hand). */
static void test_map_interleaves_a_loop(void **state)
{
    (void)state;
    static const spec_edge es[] = { { 0, 1, 2, 1, 0 }, { 1, 2, 1, 1, 0 }, { 2, 1, 1, 1, 1 } };
    static const char *const names[] = { "src", "a", "b" };
    pm_graph *g = build(3, names, es, 3);
    uint64_t *rep;
    pm_diag d;
    assert_int_equal(pm_sdf_repetition(g, &rep, &d), PM_OK);
    pm_map *m, *xm;
    assert_int_equal(pm_map_create(1, 3, (const uint32_t *const[]){ (const uint32_t[]){ 0, 1, 2 } },
                                   (const uint32_t[]){ 3 }, &m), PM_OK);
    assert_int_equal(pm_map_expand(g, rep, m, &xm, &d), PM_OK);
    static const uint32_t want[] = { 0, 1, 3, 2, 4 }; /* src a#0 b#0 a#1 b#1 */
    assert_int_equal(xm->off[1], 5);
    for (uint32_t k = 0; k < 5; k++)
        assert_int_equal(xm->order[k], want[k]);
    pm_map_destroy(xm);
    pm_map_destroy(m);
    /* the order b a src cannot start: b waits for a, which may not start */
    assert_int_equal(pm_map_create(1, 3, (const uint32_t *const[]){ (const uint32_t[]){ 2, 1, 0 } },
                                   (const uint32_t[]){ 3 }, &m), PM_OK);
    assert_int_equal(pm_map_expand(g, rep, m, &xm, &d), PM_EDEADLOCK);
    assert_null(xm);
    assert_non_null(strstr(d.msg, "core 0 waits at 'b' (0 of 2 firings done)"));
    pm_map_destroy(m);
    /* a map missing a node */
    assert_int_equal(pm_map_create(1, 3, (const uint32_t *const[]){ (const uint32_t[]){ 0, 1 } },
                                   (const uint32_t[]){ 2 }, &m), PM_OK);
    assert_int_equal(pm_map_expand(g, rep, m, &xm, &d), PM_EMAP);
    pm_map_destroy(m);
    free(rep);
    pm_graph_destroy(g);
}

/* A schedule of the expansion may scatter a node's firings over cores;
 * collapsing keeps the core and the place of each node's firing 0. */
static void test_collapse_scattered_map(void **state)
{
    (void)state;
    static const spec_edge es[] = { { 0, 1, 2, 1, 0 }, { 1, 2, 1, 2, 0 } };
    pm_graph *g = build(3, ABC, es, 2); /* q = 1, 2, 1: ids a 0, b#0 1, b#1 2, c 3 */
    uint64_t *rep;
    pm_diag d;
    assert_int_equal(pm_sdf_repetition(g, &rep, &d), PM_OK);
    pm_map *xm, *m;
    assert_int_equal(pm_map_create(2, 4, (const uint32_t *const[]){ (const uint32_t[]){ 0, 2, 3 },
                                                                    (const uint32_t[]){ 1 } },
                                   (const uint32_t[]){ 3, 1 }, &xm), PM_OK);
    assert_int_equal(pm_map_collapse(g, rep, xm, &m, &d), PM_OK);
    assert_int_equal(m->core_of[0], 0);
    assert_int_equal(m->core_of[1], 1); /* where b#0 ran */
    assert_int_equal(m->core_of[2], 0);
    assert_int_equal(m->off[1], 2);
    assert_true(m->order[0] == 0 && m->order[1] == 2 && m->order[2] == 1);
    pm_map_destroy(m);
    pm_map_destroy(xm);
    /* a firing listed twice */
    assert_int_equal(pm_map_create(1, 4, (const uint32_t *const[]){ (const uint32_t[]){ 0, 1, 1, 3 } },
                                   (const uint32_t[]){ 4 }, &xm), PM_OK);
    assert_int_equal(pm_map_collapse(g, rep, xm, &m, &d), PM_EMAP);
    assert_null(m);
    pm_map_destroy(xm);
    free(rep);
    pm_graph_destroy(g);
}

static void test_rep_must_balance(void **state)
{
    (void)state;
    static const spec_edge es[] = { { 0, 1, 2, 1, 0 } };
    pm_graph *g = build(2, ABC, es, 1);
    pm_graph *x;
    pm_diag d;
    assert_int_equal(pm_sdf_expand(g, (const uint64_t[]){ 1, 1 }, &x, NULL, &d), PM_EINVAL);
    assert_int_equal(pm_sdf_check_iteration(g, (const uint64_t[]){ 2, 3 }, &d), PM_EINVAL);
    assert_int_equal(pm_sdf_check_iteration(g, (const uint64_t[]){ 1, 2 }, &d), PM_OK);
    pm_graph_destroy(g);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_cd_dat_by_hand),
        cmocka_unit_test(test_cd_dat_from_refdata),
        cmocka_unit_test(test_lm87_consistent),
        cmocka_unit_test(test_lm87_inconsistent),
        cmocka_unit_test(test_inconsistent_self_loop_and_parallel_edges),
        cmocka_unit_test(test_deadlock_names_the_loop),
        cmocka_unit_test(test_deadlock_skips_the_tail),
        cmocka_unit_test(test_overflow_is_reported),
        cmocka_unit_test(test_size_guards),
        cmocka_unit_test(test_expand_worked_example),
        cmocka_unit_test(test_expand_worked_example_block),
        cmocka_unit_test(test_expand_self_loop_is_a_chain),
        cmocka_unit_test(test_random_balance_and_minimality),
        cmocka_unit_test(test_single_rate_expands_to_itself),
        cmocka_unit_test(test_multirate_expansion_tokens),
        cmocka_unit_test(test_liveness_matches_expansion),
        cmocka_unit_test(test_map_of_single_rate_graph_is_unchanged),
        cmocka_unit_test(test_map_interleaves_a_loop),
        cmocka_unit_test(test_collapse_scattered_map),
        cmocka_unit_test(test_rep_must_balance),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
