/*
 * bench_sim.c - simulator throughput for tests/bench/bench_sim.sh.
 *
 * Usage: bench_sim NODES ITERATIONS CORES p2p|bus [FIFO]
 * Builds an invented graph: node i takes the token of i-1 and of one
 * random earlier node within 64, one node in 50 feeds back 1..3 delays,
 * blocks of 64 consecutive nodes are dealt to the cores in turn (each core
 * runs its nodes in index order).  Prints one line:
 *   firings SECONDS FIRINGS_PER_S PEAK_RSS_KB PERIOD_NUM/PERIOD_DEN STEADY
 * Timing is CPU time of pm_sim_run only (the machine may be shared).
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <time.h>

#include "pacemap/graph.h"
#include "pacemap/map.h"
#include "pacemap/sim.h"
#include "../support/testkit.h" /* tk_rand */

static uint64_t bench_rng = 88172645463325252u;
static uint32_t bench_rnd(uint32_t n)
{
    return tk_rand(&bench_rng, n);
}

static pm_graph *bench_graph(uint32_t n, uint32_t procs, int bus)
{
    pm_graph *g = pm_graph_create("bench");
    if (!g || pm_graph_set_cores(g, 1, NULL, &procs))
        return NULL;
    g->platform.comm = (pm_comm){ 20, 1, 2, 2 };
    g->platform.interconnect = bus ? PM_BUS : PM_P2P;
    for (uint32_t v = 0; v < n; v++) {
        char name[16];
        int len = snprintf(name, sizeof name, "n%u", v);
        if (pm_graph_add_node(g, name, (size_t)len, 5 + bench_rnd(40), NULL))
            return NULL;
    }
    for (uint32_t v = 1; v < n; v++) {
        pm_edge e = pm_graph_edge_default(v - 1, v);
        uint32_t back = 1 + bench_rnd(v < 64 ? v : 64);
        pm_edge f = pm_graph_edge_default(v - back, v);
        if (pm_graph_add_edge(g, &e, NULL) || pm_graph_add_edge(g, &f, NULL))
            return NULL;
        if (bench_rnd(50) == 0 && v > 100) {
            pm_edge b = pm_graph_edge_default(v, v - 1 - bench_rnd(100));
            b.delay = 1 + bench_rnd(3);
            if (pm_graph_add_edge(g, &b, NULL))
                return NULL;
        }
    }
    return pm_graph_finalize(g) ? NULL : g;
}

static pm_map *bench_map(uint32_t n, uint32_t procs)
{
    uint32_t **lists = calloc(procs, sizeof *lists), *counts = calloc(procs, sizeof *counts);
    for (uint32_t c = 0; c < procs; c++)
        lists[c] = malloc(n * sizeof **lists);
    for (uint32_t v = 0; v < n; v++) {
        uint32_t c = (v / 64) % procs;
        lists[c][counts[c]++] = v;
    }
    pm_map *m = NULL;
    pm_map_create(procs, n, (const uint32_t *const *)lists, counts, &m);
    for (uint32_t c = 0; c < procs; c++)
        free(lists[c]);
    free(lists);
    free(counts);
    return m;
}

int main(int argc, char **argv)
{
    if (argc < 5) {
        fprintf(stderr, "usage: bench_sim NODES ITERATIONS CORES p2p|bus [FIFO]\n");
        return 2;
    }
    uint32_t n = (uint32_t)strtoul(argv[1], NULL, 10);
    uint64_t iters = strtoull(argv[2], NULL, 10);
    uint32_t procs = (uint32_t)strtoul(argv[3], NULL, 10);
    int bus = strcmp(argv[4], "bus") == 0;
    pm_graph *g = bench_graph(n, procs, bus);
    pm_map *m = g ? bench_map(n, procs) : NULL;
    if (!m) {
        fprintf(stderr, "bench_sim: cannot build the graph\n");
        return 1;
    }
    pm_sim_opts o = { .iterations = iters, .fifo_cap = argc > 5 ? (uint32_t)atoi(argv[5]) : 0 };
    pm_sim_result r;
    pm_diag d;
    struct timespec t0, t1;
    clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &t0);
    int rc = pm_sim_run(g, m, &o, &r, &d);
    clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &t1);
    if (rc) {
        fprintf(stderr, "bench_sim: %s: %s\n", pm_error_name(rc), d.msg);
        return 1;
    }
    double sec = (double)(t1.tv_sec - t0.tv_sec) + 1e-9 * (double)(t1.tv_nsec - t0.tv_nsec);
    struct rusage ru;
    getrusage(RUSAGE_SELF, &ru);
    printf("%llu %.3f %.0f %ld %lld/%lld %s\n", (unsigned long long)r.firings, sec,
           (double)r.firings / sec, ru.ru_maxrss, (long long)r.period.num,
           (long long)r.period.den, r.steady ? "steady" : "not-steady");
    pm_sim_result_free(&r);
    pm_map_destroy(m);
    pm_graph_destroy(g);
    return 0;
}
