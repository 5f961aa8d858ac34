/*
 * test_sched_glpk.c - list schedules against exact optima on 120 small
 * random DAGs without transfer costs.  The optimum comes from an outside
 * solver: GLPK's glpsol (Debian package glpk-utils) solving a disjunctive
 * MILP written here in CPLEX LP form.  Checks: optimum <= makespan (any
 * valid schedule) and, for Graham's greedy list scheduling, makespan <=
 * (2 - 1/P) * optimum (R. L. Graham, "Bounds on multiprocessing timing
 * anomalies", SIAM J. Appl. Math. 17(2), 1969).  The default (insertion,
 * earliest finish) mode is checked against the same bound on these
 * instances as a regression guard; the theorem itself covers greedy mode.
 * Skipped with a note when glpsol is not installed.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <cmocka.h>

#include "pacemap/sched.h"
#include "sched_testlib.h"
#include "support/sched_checker.h"
#include "support/testkit.h"

/* reach[i][j]: a path i -> j (edges go from lower to higher ids). */
static void closure(const pm_graph *g, bool reach[16][16])
{
    for (uint32_t e = 0; e < g->nedges; e++)
        reach[g->edges[e].src][g->edges[e].dst] = true;
    for (uint32_t k = 0; k < g->nnodes; k++)
        for (uint32_t i = 0; i < g->nnodes; i++)
            for (uint32_t j = 0; j < g->nnodes; j++)
                reach[i][j] = reach[i][j] || (reach[i][k] && reach[k][j]);
}

/* Disjunctive formulation: s_j start, x_j_k on core k, y_i_j = i before j
 * when they share a core; big-M = total work. */
static void write_milp(FILE *f, const pm_graph *g, uint32_t P)
{
    uint32_t n = g->nnodes;
    int64_t M = 1;
    for (uint32_t v = 0; v < n; v++)
        M += g->nodes[v].cycles;
    fprintf(f, "Minimize\n obj: C\nSubject To\n");
    for (uint32_t j = 0; j < n; j++) {
        fprintf(f, " end%u: C - s%u >= %lld\n", j, j, (long long)g->nodes[j].cycles);
        fprintf(f, " one%u:", j);
        for (uint32_t k = 0; k < P; k++)
            fprintf(f, " %sx%u_%u", k ? "+ " : "", j, k);
        fprintf(f, " = 1\n");
    }
    for (uint32_t e = 0; e < g->nedges; e++) {
        const pm_edge *ed = &g->edges[e];
        fprintf(f, " prec%u: s%u - s%u >= %lld\n", e, ed->dst, ed->src,
                (long long)g->nodes[ed->src].cycles);
    }
    bool reach[16][16] = {{false}};
    closure(g, reach);
    for (uint32_t i = 0; i < n; i++)
        for (uint32_t j = i + 1; j < n; j++)
            for (uint32_t k = 0; k < P && !reach[i][j]; k++) {
                long long pi = g->nodes[i].cycles, pj = g->nodes[j].cycles, m = M;
                fprintf(f, " a%u_%u_%u: s%u - s%u + %lld y%u_%u + %lld x%u_%u + %lld x%u_%u <= %lld\n",
                        i, j, k, i, j, m, i, j, m, i, k, m, j, k, 3 * m - pi);
                fprintf(f, " b%u_%u_%u: s%u - s%u - %lld y%u_%u + %lld x%u_%u + %lld x%u_%u <= %lld\n",
                        i, j, k, j, i, m, i, j, m, i, k, m, j, k, 2 * m - pj);
            }
    /* identical cores: job j may use cores 0..j only (symmetry) */
    fprintf(f, " work: %u C >= %lld\n", P, (long long)(M - 1)); /* P * C >= total */
    for (uint32_t j = 0; j < n; j++)
        for (uint32_t k = j + 1; k < P; k++)
            fprintf(f, " sym%u_%u: x%u_%u = 0\n", j, k, j, k);
    fprintf(f, "Binary\n");
    for (uint32_t j = 0; j < n; j++)
        for (uint32_t k = 0; k < P; k++)
            fprintf(f, " x%u_%u\n", j, k);
    for (uint32_t i = 0; i < n; i++)
        for (uint32_t j = i + 1; j < n; j++)
            if (!reach[i][j])
                fprintf(f, " y%u_%u\n", i, j);
    fprintf(f, "End\n");
}

typedef struct milp_ctx {
    const pm_graph *g;
    uint32_t P;
} milp_ctx;

static void write_milp_ctx(FILE *f, const void *ctx)
{
    const milp_ctx *m = ctx;
    write_milp(f, m->g, m->P);
}

/* Solve with glpsol; the optimum, or -1 on any failure. */
static long long glpk_optimum(const pm_graph *g, uint32_t P)
{
    milp_ctx m = {g, P};
    double opt;
    return tk_glpsol(write_milp_ctx, &m, 0, &opt) ? (long long)opt : -1;
}

static pm_graph *small_dag(uint64_t *seed, uint32_t P)
{
    uint32_t n = 5 + tk_rand(seed, 5);
    pm_graph *g = tl_graph(P);
    char name[32];
    for (uint32_t v = 0; v < n; v++) {
        snprintf(name, sizeof name, "t%u", v);
        tl_node(g, name, 1 + tk_rand(seed, 9));
    }
    for (uint32_t a = 0; a < n; a++)
        for (uint32_t b = a + 1; b < n; b++)
            if (tk_rand(seed, 4) == 0)
                tl_edge(g, a, b, 0, 1);
    pm_graph_finalize(g);
    return g;
}

static int64_t makespan_of(const pm_graph *g, bool greedy)
{
    pm_sched_opts o = {.greedy = greedy};
    pm_schedule *s = NULL;
    pm_diag d;
    assert_int_equal(pm_sched_list(g, &o, &s, NULL, &d), PM_OK);
    assert_null(sched_checker_verify(g, s));
    int64_t m = s->makespan;
    pm_sched_destroy(s);
    return m;
}

static void test_against_glpk(void **state)
{
    (void)state;
    if (system("glpsol --version > /dev/null 2>&1") != 0) {
        print_message("note: glpsol (glpk-utils) not installed; GLPK optimum check skipped\n");
        skip();
    }
    uint64_t seed = 2024;
    int solved = 0, tight_greedy = 0;
    for (int i = 0; i < 120; i++) {
        uint32_t P = 2 + tk_rand(&seed, 2);
        pm_graph *g = small_dag(&seed, P);
        long long opt = glpk_optimum(g, P); /* GLPK glpsol, exact MILP optimum */
        assert_true(opt > 0);
        solved++;
        int64_t greedy = makespan_of(g, true), heft = makespan_of(g, false);
        assert_true(greedy >= opt && heft >= opt);
        /* Graham 1969: makespan * P <= (2P - 1) * optimum */
        assert_true(greedy * P <= (int64_t)(2 * P - 1) * opt);
        assert_true(heft * P <= (int64_t)(2 * P - 1) * opt);
        tight_greedy += greedy == opt;
        pm_graph_destroy(g);
    }
    print_message("%d instances solved by glpsol; greedy optimal on %d\n", solved, tight_greedy);
    assert_int_equal(solved, 120);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_against_glpk),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
