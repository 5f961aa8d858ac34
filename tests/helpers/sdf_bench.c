/*
 * sdf_bench.c - bench helper: times the multirate path on synthetic graphs
 * near the expansion's size guard and prints medians of several runs.
 *   chain: a decimating chain of 13 stateful stages, 1,988,281 firings per
 *          iteration (10^6 at the input, halved six times, then 5:1 steps);
 *   pingpong: two nodes in a loop with one initial token and 10^6 firings
 *          each, the worst case of the batched one-iteration check.
 * Usage: sdf_bench [RUNS].  Prints one line per measurement.
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <time.h>

#include "pacemap/map.h"
#include "pacemap/sdf.h"

static double bench_now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + (double)ts.tv_nsec * 1e-9;
}

static int bench_cmp(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

static pm_graph *bench_chain(void)
{
    pm_graph *g = pm_graph_create("chain");
    char name[16];
    for (uint32_t v = 0; v < 13; v++) {
        snprintf(name, sizeof name, "s%u", v);
        pm_graph_add_node(g, name, strlen(name), 10 + v, NULL);
        pm_edge self = pm_graph_edge_default(v, v);
        self.delay = 1;
        pm_graph_add_edge(g, &self, NULL);
        if (v) {
            pm_edge e = pm_graph_edge_default(v - 1, v);
            e.consume = v <= 6 ? 2 : 5;
            pm_graph_add_edge(g, &e, NULL);
        }
    }
    pm_graph_finalize(g);
    return g;
}

static pm_graph *bench_pingpong(void)
{
    pm_graph *g = pm_graph_create("pingpong");
    pm_graph_add_node(g, "src", 3, 1, NULL);
    pm_graph_add_node(g, "a", 1, 1, NULL);
    pm_graph_add_node(g, "b", 1, 1, NULL);
    pm_edge in = pm_graph_edge_default(0, 1), ab = pm_graph_edge_default(1, 2), ba = pm_graph_edge_default(2, 1);
    in.produce = 1000000;
    ba.delay = 1;
    pm_graph_add_edge(g, &in, NULL);
    pm_graph_add_edge(g, &ab, NULL);
    pm_graph_add_edge(g, &ba, NULL);
    pm_graph_finalize(g);
    return g;
}

/* Median seconds of `runs` calls of one stage (0 rep, 1 check, 2 expand,
 * 3 expand_map on one core). */
static double bench_stage(const pm_graph *g, int stage, int runs, uint32_t *size)
{
    double *t = malloc((size_t)runs * sizeof *t);
    uint64_t *rep;
    pm_diag d;
    pm_sdf_repetition(g, &rep, &d);
    uint32_t *order = malloc((g->nnodes + 1) * sizeof *order);
    for (uint32_t v = 0; v < g->nnodes; v++)
        order[v] = v;
    pm_map *m;
    pm_map_create(1, g->nnodes, (const uint32_t *const *)&order, &g->nnodes, &m);
    for (int r = 0; r < runs; r++) {
        double t0 = bench_now();
        uint64_t *r2;
        pm_graph *x;
        pm_map *xm;
        int rc = stage == 0 ? pm_sdf_repetition(g, &r2, &d)
               : stage == 1 ? pm_sdf_check_iteration(g, rep, &d)
               : stage == 2 ? pm_sdf_expand(g, rep, &x, NULL, &d)
                            : pm_map_expand(g, rep, m, &xm, &d);
        t[r] = bench_now() - t0;
        if (rc != PM_OK) {
            fprintf(stderr, "stage %d: %s\n", stage, d.msg);
            exit(1);
        }
        if (stage == 0)
            free(r2);
        if (stage == 2)
            *size = x->nedges, pm_graph_destroy(x);
        if (stage == 3)
            *size = xm->nnodes, pm_map_destroy(xm);
    }
    qsort(t, (size_t)runs, sizeof *t, bench_cmp);
    double med = t[runs / 2];
    free(t);
    free(rep);
    free(order);
    pm_map_destroy(m);
    return med;
}

int main(int argc, char **argv)
{
    int runs = argc > 1 ? atoi(argv[1]) : 5;
    if (runs < 1)
        runs = 1;
    static const char *const stages[] = { "repetition", "check", "expand", "expand_map" };
    pm_graph *graphs[2] = { bench_chain(), bench_pingpong() };
    for (int k = 0; k < 2; k++)
        for (int s = 0; s < 4; s++) {
            if (k == 1 && s != 1)
                continue;
            uint32_t size = 0;
            double med = bench_stage(graphs[k], s, runs, &size);
            printf("sdf %-9s %-10s median %9.4f s over %d runs", k ? "pingpong" : "chain",
                   stages[s], med, runs);
            if (size)
                printf("  (%u %s)", size, s == 2 ? "expanded edges" : "firings mapped");
            printf("\n");
        }
    struct rusage ru;
    getrusage(RUSAGE_SELF, &ru);
    printf("sdf peak resident memory %ld MB\n", ru.ru_maxrss / 1024);
    pm_graph_destroy(graphs[0]);
    pm_graph_destroy(graphs[1]);
    return 0;
}
