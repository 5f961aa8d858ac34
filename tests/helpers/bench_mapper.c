/*
 * bench_mapper.c - the period-first mapper's time and period against the
 * proven floor, for tests/bench/bench_mapper.sh.
 *
 * Usage: bench_mapper SCENARIO CORES [BUDGET_MS]
 * Reads a single-rate scenario, gives it CORES identical cores, maps it
 * with pm_mapper_map (default budgets unless BUDGET_MS) and prints one
 * line:
 *   wall_ms cpu_ms period floor ratio evals timed_out proven
 * where floor is pm_bound_floors' map_floor for CORES (the iteration
 * bound when there are loops) and ratio = period / floor.  The machine
 * may be shared: wall and CPU time are both printed.
 */
#include <stdio.h>
#include <stdlib.h>
#include <time.h>

#include "pacemap/bound.h"
#include "pacemap/mapper.h"
#include "pacemap/reader.h"

static double bm_ms(clockid_t id)
{
    struct timespec t;
    clock_gettime(id, &t);
    return (double)t.tv_sec * 1e3 + (double)t.tv_nsec / 1e6;
}

static int bm_floor(const pm_graph *g, uint32_t procs, pm_rat *floor)
{
    pm_bound b;
    pm_floors f;
    int rc = pm_bound_compute(g, NULL, &b, NULL);
    if (rc == PM_OK) {
        rc = pm_bound_floors(g, &b, procs, &f);
        pm_bound_free(&b);
    }
    if (rc == PM_OK)
        *floor = f.map_floor;
    return rc;
}

int main(int argc, char **argv)
{
    if (argc < 3) {
        fprintf(stderr, "usage: bench_mapper SCENARIO CORES [BUDGET_MS]\n");
        return 2;
    }
    uint32_t procs = (uint32_t)strtoul(argv[2], NULL, 10);
    pm_mapper_opts o = { .time_ms = argc > 3 ? (uint32_t)strtoul(argv[3], NULL, 10) : 0 };
    pm_graph *g = NULL;
    pm_diag d;
    pm_diag_clear(&d);
    pm_rat floor = pm_rat_int(0);
    if (pm_reader_read_file(argv[1], &g, &d) != PM_OK
        || pm_graph_set_procs_override(g, procs, &d) != PM_OK || bm_floor(g, procs, &floor)) {
        fprintf(stderr, "bench_mapper: %s: %s\n", argv[1], d.msg);
        pm_graph_destroy(g);
        return 1;
    }
    pm_map *m = NULL;
    pm_mapper_info info;
    double w0 = bm_ms(CLOCK_MONOTONIC), c0 = bm_ms(CLOCK_PROCESS_CPUTIME_ID);
    int rc = pm_mapper_map(g, &o, &m, &info, &d);
    double w1 = bm_ms(CLOCK_MONOTONIC), c1 = bm_ms(CLOCK_PROCESS_CPUTIME_ID);
    if (rc != PM_OK) {
        fprintf(stderr, "bench_mapper: %s\n", d.msg);
        pm_graph_destroy(g);
        return 1;
    }
    double p = pm_rat_to_double(info.period), f = pm_rat_to_double(floor);
    printf("%.1f %.1f %.6g %.6g %.4f %u %d %d\n", w1 - w0, c1 - c0, p, f, f > 0 ? p / f : 0.0,
           info.evals, info.timed_out, info.proven);
    pm_map_destroy(m);
    pm_graph_destroy(g);
    return 0;
}
