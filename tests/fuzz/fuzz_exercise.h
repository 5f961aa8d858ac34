/*
 * fuzz_exercise.h - what the fuzz targets do with an input that reads, shared
 * with tests/test_fuzz_regress.c so a saved input replays the same calls.
 *
 * A scenario that reads is walked (indices in range), then handed to the
 * analyses that trust the reader's output: repetition vector and one-
 * iteration check, single-rate expansion, iteration bound and floors, list
 * scheduling, timing of the map, its loop-time floor and a short self-timed
 * simulation, a -p override.  A map that reads must pass pm_map_check, be
 * timed and simulated, and survive a write and read-back.  Errors from the analyses are legal answers (a zero-delay loop,
 * an overflow) as long as they keep the error contract; crashes, leaks and
 * broken invariants are not.  Sizes are capped so each input stays fast.
 * Test code, not part of the library.
 */
#ifndef PACEMAP_FUZZ_EXERCISE_H
#define PACEMAP_FUZZ_EXERCISE_H

#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "fuzz_common.h"
#include "pacemap/bound.h"
#include "pacemap/graph.h"
#include "pacemap/map.h"
#include "pacemap/sched.h"
#include "pacemap/sdf.h"
#include "pacemap/sim.h"

/* Caps of the exercise (not of the library). */
#define FUZZ_MAX_CHECK_FIRINGS 100000u /* one-iteration check */
#define FUZZ_MAX_EXPAND_FIRINGS 2048u  /* single-rate expansion */
#define FUZZ_MAX_SCHED_NODES 512u      /* list scheduling */
#define FUZZ_MAX_FLOOR_EDGES 2048u     /* loop-time floor, O(k V E) */
#define FUZZ_MAX_SIM_NODES 256u        /* simulation */
#define FUZZ_SIM_ITERATIONS 24u

/* An analysis failed: fine if it kept the contract. */
static void fuzz_analysis_error(int rc, const pm_diag *d)
{
    if (rc != PM_OK)
        fuzz_check_diag(rc, NULL, d);
}

/* The graph's arrays must agree with its counts. */
static void fuzz_walk_graph(const pm_graph *g)
{
    const pm_platform *p = &g->platform;
    if (!g->finalized || p->ncores == 0 || p->nclasses == 0)
        fuzz_fail("graph not finalized or without cores", NULL);
    for (uint32_t c = 0; c < p->ncores; c++)
        if (p->core_class[c] >= p->nclasses)
            fuzz_fail("core of an unknown class", NULL);
    for (uint32_t v = 0; v < g->nnodes; v++) {
        const pm_node *n = &g->nodes[v];
        const char *name = pm_graph_node_name(g, v);
        if (!name || name[0] == '\0')
            fuzz_fail("node without a name", NULL);
        if (n->pin_core != PM_NONE && n->pin_core >= p->ncores)
            fuzz_fail("pin to a core that does not exist", NULL);
        if (n->pin_class != PM_NONE && n->pin_class >= p->nclasses)
            fuzz_fail("pin to a class that does not exist", NULL);
        for (uint32_t c = 0; c < p->nclasses; c++)
            if (pm_graph_cycles_on(g, v, c) > PM_MAX_VALUE)
                fuzz_fail("cycles above the scenario limit", NULL);
    }
    for (uint32_t e = 0; e < g->nedges; e++) {
        const pm_edge *ed = &g->edges[e];
        if (ed->src >= g->nnodes || ed->dst >= g->nnodes)
            fuzz_fail("edge names a node that does not exist", NULL);
        if (ed->delay < 0 || ed->words < 0 || ed->produce < 1 || ed->consume < 1)
            fuzz_fail("edge attribute out of range", NULL);
    }
}

/* A short simulation of map m, with and without a FIFO capacity. */
static void fuzz_simulate(const pm_graph *g, const pm_map *m)
{
#ifdef FUZZ_NO_SIM
    return;
#endif
    if (g->nnodes > FUZZ_MAX_SIM_NODES || !pm_graph_is_single_rate(g))
        return;
    for (uint32_t fifo = 0; fifo <= 1; fifo++) {
        pm_sim_opts o = { .iterations = FUZZ_SIM_ITERATIONS, .fifo_cap = fifo, .record = 3 };
        pm_sim_result r;
        memset(&r, 0, sizeof r);
        pm_diag d;
        pm_diag_clear(&d);
        int rc = pm_sim_run(g, m, &o, &r, &d);
        fuzz_analysis_error(rc, &d);
        if (rc == PM_OK && r.iterations != FUZZ_SIM_ITERATIONS)
            fuzz_fail("the simulation stopped early without an error", NULL);
        pm_sim_result_free(&r);
    }
}

/* Time map m on g, compute its loop-time floor, simulate it. */
static void fuzz_time_map(const pm_graph *g, const pm_map *m)
{
    fuzz_simulate(g, m);

    pm_diag d;
    pm_diag_clear(&d);
    pm_schedule *s = NULL;
    int rc = pm_sched_from_map(g, m, &s, &d);
    fuzz_analysis_error(rc, &d);
    if (rc == PM_OK && (!s || s->nnodes != g->nnodes || s->makespan < 0))
        fuzz_fail("pm_sched_from_map gave a broken schedule", NULL);
    pm_sched_destroy(s);
    if (g->nedges > FUZZ_MAX_FLOOR_EDGES)
        return;
    pm_rat floor;
    uint32_t *loop = NULL, nloop = 0;
    pm_diag_clear(&d);
    rc = pm_sched_loop_floor(g, m, &floor, &loop, &nloop, &d);
    fuzz_analysis_error(rc, &d);
    for (uint32_t i = 0; rc == PM_OK && i < nloop; i++)
        if (loop[i] >= g->nnodes)
            fuzz_fail("loop-time floor names a node that does not exist", NULL);
    free(loop);
}

/* Bound, floors and a schedule of a single-rate graph. */
static void fuzz_single_rate(const pm_graph *g)
{
    pm_diag d;
    pm_diag_clear(&d);
    pm_bound b;
    int rc = pm_bound_compute(g, NULL, &b, &d);
    fuzz_analysis_error(rc, &d);
    if (rc == PM_OK) {
        pm_floors f;
        for (uint32_t p = 1; p <= 3; p++)
            (void)pm_bound_floors(g, &b, p, &f);
        pm_bound_free(&b);
    }
    if (g->nnodes > FUZZ_MAX_SCHED_NODES)
        return;
    pm_map *m = NULL;
    pm_diag_clear(&d);
    rc = pm_sched_list(g, NULL, NULL, &m, &d);
    fuzz_analysis_error(rc, &d);
    if (rc == PM_OK) {
        pm_diag_clear(&d);
        if (!m || pm_map_check(m, g, &d) != PM_OK)
            fuzz_fail("the list scheduler made a map that fails pm_map_check", &d);
        fuzz_time_map(g, m);
    }
    pm_map_destroy(m);
}

/* Repetition vector, one-iteration check, expansion when small. */
static void fuzz_multirate(const pm_graph *g)
{
    pm_diag d;
    pm_diag_clear(&d);
    uint64_t *rep = NULL;
    int rc = pm_sdf_repetition(g, &rep, &d);
    fuzz_analysis_error(rc, &d);
    if (rc != PM_OK)
        return;
    uint64_t sum = 0;
    for (uint32_t v = 0; v < g->nnodes; v++) {
        if (rep[v] == 0 || rep[v] > (uint64_t)PM_MAX_VALUE)
            fuzz_fail("repetition entry out of range", NULL);
        sum += rep[v] < FUZZ_MAX_CHECK_FIRINGS ? rep[v] : FUZZ_MAX_CHECK_FIRINGS;
    }
    if (sum <= FUZZ_MAX_CHECK_FIRINGS) {
        rc = pm_sdf_check_iteration(g, rep, &d);
        fuzz_analysis_error(rc, &d);
        if (rc == PM_OK && sum <= FUZZ_MAX_EXPAND_FIRINGS) {
            pm_graph *x = NULL;
            uint32_t *origin = NULL;
            rc = pm_sdf_expand(g, rep, &x, &origin, &d);
            fuzz_analysis_error(rc, &d);
            if (rc == PM_OK) {
                fuzz_walk_graph(x);
                for (uint32_t v = 0; v < x->nnodes; v++)
                    if (origin[v] >= g->nnodes)
                        fuzz_fail("expanded node of no original node", NULL);
                fuzz_single_rate(x);
            }
            free(origin);
            pm_graph_destroy(x);
        }
    }
    free(rep);
}

/* Everything after a successful scenario read; destroys g. */
static void fuzz_exercise_graph(pm_graph *g, uint32_t procs)
{
    fuzz_walk_graph(g);
    if (pm_graph_is_single_rate(g))
        fuzz_single_rate(g);
    else
        fuzz_multirate(g);
    if (!g->platform.classes_named) {
        pm_diag d;
        pm_diag_clear(&d);
        fuzz_analysis_error(pm_graph_set_procs_override(g, procs, &d), &d);
    }
    pm_graph_destroy(g);
}

static int fuzz_map_equal(const pm_map *a, const pm_map *b)
{
    if (a->ncores != b->ncores || a->nnodes != b->nnodes)
        return 0;
    for (uint32_t c = 0; c <= a->ncores; c++)
        if (a->off[c] != b->off[c])
            return 0;
    return memcmp(a->order, b->order, a->nnodes * sizeof *a->order) == 0 &&
           memcmp(a->core_of, b->core_of, a->nnodes * sizeof *a->core_of) == 0;
}

/* Write m, read it back against the same graph: the same map. */
static void fuzz_round_trip(const pm_map *m, const pm_graph *g)
{
    char *buf = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&buf, &len);
    if (!f)
        return;
    int rc = pm_map_write(m, g, f);
    fclose(f);
    if (rc != PM_OK)
        fuzz_fail("pm_map_write failed on a valid map", NULL);
    pm_map *again = NULL;
    pm_diag d;
    pm_diag_clear(&d);
    if (pm_map_read_string(buf, len, "again.map", g, &again, &d) != PM_OK)
        fuzz_fail("a written map does not read back", &d);
    if (!fuzz_map_equal(m, again))
        fuzz_fail("a written map reads back different", NULL);
    pm_map_destroy(again);
    free(buf);
}

/* Everything after a successful map read; destroys m. */
static void fuzz_exercise_map(pm_map *m, const pm_graph *g)
{
    pm_diag d;
    pm_diag_clear(&d);
    if (pm_map_check(m, g, &d) != PM_OK)
        fuzz_fail("a map that reads fails pm_map_check", &d);
    fuzz_round_trip(m, g);
    fuzz_time_map(g, m);
    pm_map_destroy(m);
}

#endif
