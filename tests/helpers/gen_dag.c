/*
 * gen_dag.c - random feed-forward graphs for the scheduler bench.
 *
 *   gen_dag pace N [SEED]        write a .pace scenario with N nodes to stdout
 *   gen_dag time N P REPS [SEED] build the same graph in memory and time
 *                                pm_sched_list on P cores, REPS runs; prints
 *                                one line "N P median_ms min_ms median_cpu_ms
 *                                makespan" (wall-clock and CPU time)
 *
 * Each node after the first takes 1 to 3 producers among the previous 1000
 * nodes (a long, locally connected DSP-like chain), cycles 1..100, 1..4
 * words per edge; transfers cost 10 + 1 per word.  Invented data.
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "pacemap/sched.h"
#include "../support/testkit.h" /* tk_rand */

/* Calls emit(v, cycles) per node and edge(a, b, words) per edge. */
typedef struct gd_sink {
    void (*node)(void *ctx, uint32_t v, int64_t cycles);
    void (*edge)(void *ctx, uint32_t a, uint32_t b, int64_t words);
    void *ctx;
} gd_sink;

static void gd_generate(uint32_t n, uint64_t seed, const gd_sink *k)
{
    for (uint32_t v = 0; v < n; v++)
        k->node(k->ctx, v, 1 + tk_rand(&seed, 100));
    for (uint32_t v = 1; v < n; v++) {
        uint32_t w = v < 1000 ? v : 1000, m = 1 + tk_rand(&seed, 3);
        for (uint32_t i = 0; i < m; i++)
            k->edge(k->ctx, v - 1 - tk_rand(&seed, w), v, 1 + tk_rand(&seed, 4));
    }
}

static void pace_node(void *ctx, uint32_t v, int64_t cycles)
{
    printf("node n%u cycles=%lld\n", v, (long long)cycles);
    (void)ctx;
}

static void pace_edge(void *ctx, uint32_t a, uint32_t b, int64_t words)
{
    printf("edge n%u -> n%u words=%lld\n", a, b, (long long)words);
    (void)ctx;
}

static void mem_node(void *ctx, uint32_t v, int64_t cycles)
{
    char name[32];
    int len = snprintf(name, sizeof name, "n%u", v);
    pm_graph_add_node(ctx, name, (size_t)len, cycles, NULL);
}

static void mem_edge(void *ctx, uint32_t a, uint32_t b, int64_t words)
{
    pm_edge e = pm_graph_edge_default(a, b);
    e.words = words;
    pm_graph_add_edge(ctx, &e, NULL);
}

static double gd_clock(clockid_t id)
{
    struct timespec t;
    clock_gettime(id, &t);
    return (double)t.tv_sec + (double)t.tv_nsec * 1e-9;
}

static int gd_cmp(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

static int gd_time(uint32_t n, uint32_t P, int reps, uint64_t seed)
{
    pm_graph *g = pm_graph_create("bench");
    gd_sink k = {mem_node, mem_edge, g};
    gd_generate(n, seed, &k);
    pm_graph_set_procs_override(g, P, NULL);
    g->platform.comm = (pm_comm){10, 1, 0, 0};
    if (pm_graph_finalize(g) != PM_OK)
        return 1;
    double t[64], cpu[64];
    int64_t makespan = 0;
    reps = reps < 1 ? 1 : (reps > 64 ? 64 : reps);
    for (int r = 0; r < reps; r++) {
        pm_schedule *s = NULL;
        pm_map *m = NULL;
        pm_diag d;
        double t0 = gd_clock(CLOCK_MONOTONIC), c0 = gd_clock(CLOCK_PROCESS_CPUTIME_ID);
        int rc = pm_sched_list(g, NULL, &s, &m, &d);
        t[r] = gd_clock(CLOCK_MONOTONIC) - t0;
        cpu[r] = gd_clock(CLOCK_PROCESS_CPUTIME_ID) - c0;
        if (rc != PM_OK) {
            fprintf(stderr, "gen_dag: %s\n", d.msg);
            return 1;
        }
        makespan = s->makespan;
        pm_sched_destroy(s);
        pm_map_destroy(m);
    }
    qsort(t, (size_t)reps, sizeof t[0], gd_cmp);
    qsort(cpu, (size_t)reps, sizeof cpu[0], gd_cmp);
    printf("%u %u %.1f %.1f %.1f %lld\n", n, P, t[reps / 2] * 1e3, t[0] * 1e3,
           cpu[reps / 2] * 1e3, (long long)makespan);
    pm_graph_destroy(g);
    return 0;
}

int main(int argc, char **argv)
{
    if (argc >= 3 && strcmp(argv[1], "pace") == 0) {
        gd_sink k = {pace_node, pace_edge, NULL};
        printf("# invented random feed-forward graph for benchmarks\n");
        gd_generate((uint32_t)strtoul(argv[2], NULL, 10),
                    argc > 3 ? strtoull(argv[3], NULL, 10) : 1, &k);
        return 0;
    }
    if (argc >= 5 && strcmp(argv[1], "time") == 0)
        return gd_time((uint32_t)strtoul(argv[2], NULL, 10), (uint32_t)strtoul(argv[3], NULL, 10),
                       atoi(argv[4]), argc > 5 ? strtoull(argv[5], NULL, 10) : 1);
    fprintf(stderr, "usage: gen_dag pace N [SEED] | gen_dag time N P REPS [SEED]\n");
    return 2;
}
