/*
 * test_sdf_sim.c - simulating a multirate scenario agrees with the
 * self-timed theorem on its single-rate expansion (issue 7).
 *
 * Self-timed theorem (Sriram & Bhattacharyya, "Embedded Multiprocessors:
 * Scheduling and Synchronization", 2000): with point-to-point links and
 * unbounded buffers, the steady period of self-timed execution equals the
 * maximum cycle ratio of the inter-processor communication (IPC) graph.
 * A multirate graph (Lee & Messerschmitt, "Static scheduling of synchronous
 * data flow programs for digital signal processing", IEEE Trans. Computers
 * 1987) is expanded with pm_sdf_expand, its map of original nodes becomes a
 * map of firings with pm_map_expand, and pm_sim_run simulates that.
 * This file builds the IPC graph of the expansion under the expanded map
 * itself (the timing rules of docs/simulation.md, no simulator code; send = recv = 0):
 *   data edge u -> v, d delays:  weight t(u) (+ latency + per_word * words
 *                                when u, v are on different cores), d
 *   core order p then q:         weight t(p), 0 delays
 *   last -> first on each core:  weight t(last), 1 delay
 * and solves it with the Boost Graph Library (maximum_cycle_ratio,
 * boost/graph/howard_cycle_ratio.hpp) run by tests/helpers/bgl_ipc.cpp.
 * Boost works in doubles, so the exact fraction is recomputed from the
 * cycle it returns, and an exact longest-path check in this file confirms
 * that no cycle of the IPC graph has a larger ratio than the period.
 *
 * Cases: random small consistent multirate graphs (repetition vector chosen
 * first, rates made to balance it) with random maps onto 1..3 cores, and the
 * invented demo scenarios/rx_decimating.pace on 1, 2 and 3 cores.
 * Random cases come from a fixed-seed generator: every run checks the same.
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

#include "pacemap/bound.h"
#include "pacemap/error.h"
#include "pacemap/graph.h"
#include "pacemap/map.h"
#include "pacemap/reader.h"
#include "pacemap/sdf.h"
#include "pacemap/sim.h"
#include "support/testkit.h"

#define ATTEMPTS 800      /* random graphs generated */
#define MIN_RANDOM_RUN 100 /* of which at least this many must be simulated */
#define MAXN 5            /* original nodes */
#define MAXQ 4            /* firings of a node per chosen repetition vector */
#define MAXCASES (ATTEMPTS + 64)
#define ITERATIONS 1500

static uint64_t rng_state = 20261202;
static uint32_t rnd(uint32_t n)
{
    return tk_rand(&rng_state, n);
}

/* One simulated case: the expansion, its map, the run and its IPC graph. */
typedef struct ipc_edge {
    uint32_t u, v;
    int64_t w, d;
} ipc_edge;

typedef struct tcase {
    char label[64];
    pm_graph *xg;    /* expanded graph */
    pm_map *xm;      /* map of its firings */
    pm_sim_result r;
    ipc_edge *ipc;
    uint32_t nipc;
} tcase;

static tcase cases[MAXCASES];
static int ncases;

/* ---- the IPC graph of an expansion, from the documented semantics ------- */

static void build_ipc(tcase *tc)
{
    const pm_graph *g = tc->xg;
    const pm_map *m = tc->xm;
    const pm_comm *c = &g->platform.comm;
    tc->ipc = calloc((size_t)g->nedges + g->nnodes, sizeof *tc->ipc);
    assert_non_null(tc->ipc);
    uint32_t k = 0;
    for (uint32_t e = 0; e < g->nedges; e++) {
        const pm_edge *ed = &g->edges[e];
        int64_t w = g->nodes[ed->src].cycles;
        if (m->core_of[ed->src] != m->core_of[ed->dst])
            w += c->latency + c->per_word * ed->words;
        tc->ipc[k++] = (ipc_edge){ ed->src, ed->dst, w, ed->delay };
    }
    for (uint32_t p = 0; p < m->ncores; p++) {
        uint32_t lo = m->off[p], hi = m->off[p + 1];
        for (uint32_t i = lo; i < hi; i++) {
            uint32_t a = m->order[i], b = m->order[i + 1 < hi ? i + 1 : lo];
            tc->ipc[k++] = (ipc_edge){ a, b, g->nodes[a].cycles, i + 1 < hi ? 0 : 1 };
        }
    }
    tc->nipc = k;
}

static void write_ipc(FILE *f, const tcase *tc)
{
    fprintf(f, "%u %u\n", tc->xg->nnodes, tc->nipc);
    for (uint32_t i = 0; i < tc->nipc; i++)
        fprintf(f, "%u %u %lld %lld\n", tc->ipc[i].u, tc->ipc[i].v, (long long)tc->ipc[i].w,
                (long long)tc->ipc[i].d);
}

/* Exact: true when some cycle has w/d > num/den, i.e. a positive cycle for
 * the weights den*w - num*d (longest paths by Bellman-Ford do not settle
 * within n passes). */
static bool ipc_exceeds(const tcase *tc, pm_rat lambda)
{
    uint32_t n = tc->xg->nnodes;
    pm_i128 *dist = calloc(n, sizeof *dist);
    assert_non_null(dist);
    bool changed = true;
    for (uint32_t pass = 0; pass <= n && changed; pass++) {
        changed = false;
        for (uint32_t i = 0; i < tc->nipc; i++) {
            const ipc_edge *e = &tc->ipc[i];
            pm_i128 cand = dist[e->u] + (pm_i128)lambda.den * e->w - (pm_i128)lambda.num * e->d;
            if (cand > dist[e->v]) {
                dist[e->v] = cand;
                changed = true;
            }
        }
    }
    free(dist);
    return changed;
}

/* ---- running one multirate graph under one map -------------------------- */

/* Expand g for rep, expand map m, simulate.  False (nothing kept) when
 * pm_map_expand finds the map's order cannot complete an iteration. */
static bool add_case(const pm_graph *g, const uint64_t *rep, const pm_map *m, const char *label)
{
    assert_true(ncases < MAXCASES);
    tcase *tc = &cases[ncases];
    memset(tc, 0, sizeof *tc);
    snprintf(tc->label, sizeof tc->label, "%s", label);
    pm_diag d;
    pm_map *xm = NULL;
    int rc = pm_map_expand(g, rep, m, &xm, &d);
    if (rc == PM_EDEADLOCK)
        return false;
    if (rc != PM_OK)
        fail_msg("%s: pm_map_expand: %s", label, d.msg);
    if (pm_sdf_expand(g, rep, &tc->xg, NULL, &d) != PM_OK)
        fail_msg("%s: pm_sdf_expand: %s", label, d.msg);
    tc->xm = xm;
    assert_int_equal(xm->nnodes, tc->xg->nnodes);
    assert_true(pm_graph_is_single_rate(tc->xg));
    pm_sim_opts o = { .iterations = ITERATIONS };
    rc = pm_sim_run(tc->xg, xm, &o, &tc->r, &d);
    /* pm_map_expand promises orders that cannot deadlock self-timed */
    if (rc != PM_OK)
        fail_msg("%s: pm_sim_run returned %d: %s", label, rc, d.msg);
    if (!tc->r.steady)
        fail_msg("%s: no steady state in %d iterations", label, ITERATIONS);
    build_ipc(tc);
    ncases++;
    return true;
}

/* ---- random consistent multirate graphs --------------------------------- */

static uint32_t gcd32(uint32_t a, uint32_t b)
{
    while (b) {
        uint32_t t = a % b;
        a = b, b = t;
    }
    return a;
}

/* Rates that balance q on u -> v: q[u] * produce == q[v] * consume. */
static pm_edge balanced_edge(const uint32_t *q, uint32_t u, uint32_t v)
{
    pm_edge e = pm_graph_edge_default(u, v);
    uint32_t l = q[u] / gcd32(q[u], q[v]) * q[v], k = 1 + rnd(2);
    e.produce = (int64_t)(l / q[u] * k);
    e.consume = (int64_t)(l / q[v] * k);
    e.words = 1 + rnd(3);
    int64_t per_iter = (int64_t)q[u] * e.produce;
    if (u < v) /* forward: mostly no initial tokens, sometimes many */
        e.delay = rnd(3) == 0 ? (int64_t)rnd((uint32_t)(2 * per_iter + 1)) : 0;
    else /* loop-closing or self-loop: at least one token */
        e.delay = 1 + (int64_t)rnd((uint32_t)per_iter + 1);
    return e;
}

/* A spanning tree of forward edges, then a few random ones (back edges and
 * self-loops close loops). */
static pm_graph *random_sdf(uint32_t n, uint32_t procs, const uint32_t *q)
{
    pm_graph *g = tk_random_nodes(&rng_state, n, procs, 16);
    uint32_t latency = rnd(8), per_word = rnd(3);
    g->platform.comm = (pm_comm){ latency, per_word, 0, 0 };
    for (uint32_t v = 1; v < n; v++) {
        pm_edge e = balanced_edge(q, rnd(v), v);
        assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
    }
    for (uint32_t i = rnd(n + 2); i > 0; i--) {
        pm_edge e = balanced_edge(q, rnd(n), rnd(n));
        assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
    }
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    return g;
}

static pm_map *random_map(uint32_t n, uint32_t procs)
{
    return tk_random_map(&rng_state, n, procs, 3);
}

/* The chosen q balances every edge, so the smallest vector exists and q is
 * a multiple of it on each weakly connected part (Lee & Messerschmitt
 * 1987: the balance equations' solutions are multiples of one vector). */
static void check_rep(const pm_graph *g, const uint32_t *q, const uint64_t *rep)
{
    for (uint32_t e = 0; e < g->nedges; e++) {
        const pm_edge *ed = &g->edges[e];
        assert_true(rep[ed->src] * (uint64_t)ed->produce == rep[ed->dst] * (uint64_t)ed->consume);
        assert_true(q[ed->src] * rep[ed->dst] == q[ed->dst] * rep[ed->src]);
    }
}

/* One attempt; returns 0 simulated, 1 rejected by the one-iteration check,
 * 2 map order rejected by pm_map_expand. */
static int random_attempt(int i, bool *multirate)
{
    uint32_t n = 2 + rnd(MAXN - 1), procs = 1 + rnd(3), q[MAXN];
    for (uint32_t v = 0; v < n; v++)
        q[v] = 1 + rnd(MAXQ);
    pm_graph *g = random_sdf(n, procs, q);
    uint64_t *rep = NULL, qq[MAXN];
    pm_diag d;
    if (pm_sdf_repetition(g, &rep, &d) != PM_OK)
        fail_msg("attempt %d: consistent by construction, yet: %s", i, d.msg);
    check_rep(g, q, rep);
    /* one case in four: the chosen q itself (a multiple: that many periods) */
    const uint64_t *use = rep;
    if (rnd(4) == 0) {
        for (uint32_t v = 0; v < n; v++)
            qq[v] = q[v];
        use = qq;
    }
    *multirate = !pm_graph_is_single_rate(g);
    int outcome = 1;
    if (pm_sdf_check_iteration(g, use, &d) == PM_OK) {
        pm_map *m = random_map(n, procs);
        char label[64];
        snprintf(label, sizeof label, "random %d", i);
        outcome = add_case(g, use, m, label) ? 0 : 2;
        pm_map_destroy(m);
    }
    free(rep);
    pm_graph_destroy(g);
    return outcome;
}

/* ---- the comparison ------------------------------------------------------ */

/* Floors: the iteration bound of the expansion (pm_bound_compute; Ito &
 * Parhi 1995) and total work of one iteration over the cores. */
static void check_floors(const tcase *tc)
{
    pm_rat p = tc->r.period;
    pm_bound b;
    pm_diag d;
    if (pm_bound_compute(tc->xg, NULL, &b, &d) != PM_OK)
        fail_msg("%s: pm_bound_compute: %s", tc->label, d.msg);
    if (b.has_loop && (pm_i128)p.num * b.iteration_bound.den <
                          (pm_i128)b.iteration_bound.num * p.den)
        fail_msg("%s: period %lld/%lld below the iteration bound %lld/%lld", tc->label,
                 (long long)p.num, (long long)p.den, (long long)b.iteration_bound.num,
                 (long long)b.iteration_bound.den);
    assert_true((pm_i128)p.num * tc->xm->ncores >= (pm_i128)b.total_cycles * p.den);
    pm_bound_free(&b);
}

/* Boost on every case's IPC graph in one helper run, then the assertions. */
static void compare_all(void)
{
    char in_path[] = "/tmp/pm_sdf_sim_XXXXXX";
    int fd = mkstemp(in_path);
    assert_true(fd >= 0);
    FILE *in = fdopen(fd, "w");
    assert_non_null(in);
    for (int i = 0; i < ncases; i++)
        write_ipc(in, &cases[i]);
    assert_int_equal(fclose(in), 0);
    char cmd[1200];
    snprintf(cmd, sizeof cmd, "%s/bgl_ipc < %s", tk_helper_dir(), in_path);
    FILE *out = popen(cmd, "r");
    assert_non_null(out);
    for (int i = 0; i < ncases; i++) {
        tcase *tc = &cases[i];
        long w = 0, d = 1;
        /* every IPC graph has a cycle (each core's order closes on itself);
         * Boost names none only when every weight is 0 */
        if (!tk_read_ratio(out, &w, &d))
            w = 0, d = 1;
        pm_rat p = tc->r.period;
        /* Self-timed theorem (Sriram & Bhattacharyya 2000) with the
         * critical cycle of Boost's maximum_cycle_ratio: period == W/D */
        if ((pm_i128)p.num * d != (pm_i128)w * p.den)
            fail_msg("%s: simulated period %lld/%lld, Boost's IPC cycle %ld/%ld (%u firings)",
                     tc->label, (long long)p.num, (long long)p.den, w, d, tc->xg->nnodes);
        /* and, exactly, no IPC cycle beats the period (Boost uses doubles) */
        if (ipc_exceeds(tc, p))
            fail_msg("%s: an IPC cycle exceeds the simulated period", tc->label);
        /* the exact check is not vacuous: just below the period it finds one */
        if (p.num > 0) {
            pm_rat below = { 2 * p.num - 1, 2 * p.den };
            assert_true(ipc_exceeds(tc, below));
        }
        check_floors(tc);
    }
    assert_int_equal(pclose(out), 0);
    unlink(in_path);
}

static void free_cases(void)
{
    for (int i = 0; i < ncases; i++) {
        pm_sim_result_free(&cases[i].r);
        pm_map_destroy(cases[i].xm);
        pm_graph_destroy(cases[i].xg);
        free(cases[i].ipc);
    }
    ncases = 0;
}

/* ---- tests ---------------------------------------------------------------- */

static void test_random_multirate(void **state)
{
    (void)state;
    int outcome[3] = { 0 }, multirate = 0;
    for (int i = 0; i < ATTEMPTS; i++) {
        bool mr = false;
        int o = random_attempt(i, &mr);
        outcome[o]++;
        if (o == 0 && mr)
            multirate++;
    }
    compare_all();
    printf("%d random graphs simulated and agree with Boost (%d of them multirate); "
           "%d failed the one-iteration check, %d map orders rejected\n",
           outcome[0], multirate, outcome[1], outcome[2]);
    assert_true(outcome[0] >= MIN_RANDOM_RUN);
    assert_true(multirate >= MIN_RANDOM_RUN * 3 / 4);
    free_cases();
}

/* Maps of the demo's nodes by name: one string per core. */
static pm_map *named_map(const pm_graph *g, uint32_t procs, const char *const *cores)
{
    uint32_t lists[3][16], counts[3] = { 0 };
    const uint32_t *ptr[3];
    for (uint32_t c = 0; c < procs; c++) {
        char buf[128];
        snprintf(buf, sizeof buf, "%s", cores[c]);
        for (char *s = strtok(buf, " "); s; s = strtok(NULL, " ")) {
            uint32_t v = pm_graph_find(g, s, strlen(s));
            assert_int_not_equal(v, PM_NONE);
            lists[c][counts[c]++] = v;
        }
        ptr[c] = lists[c];
    }
    pm_map *m = NULL;
    assert_int_equal(pm_map_create(procs, g->nnodes, ptr, counts, &m), PM_OK);
    pm_diag d;
    assert_int_equal(pm_map_check(m, g, &d), PM_OK);
    return m;
}

static const char *const RX_MAPS[][3] = {
    { "adc nco mix dec4 chan dec2 track", NULL, NULL },
    { "nco adc mix dec4 chan dec2 track", NULL, NULL },
    { "adc nco mix dec4", "chan dec2 track", NULL },
    { "adc mix dec4 chan", "nco dec2 track", NULL },
    { "nco mix chan track", "adc dec4 dec2", NULL },
    { "adc nco mix", "dec4 chan", "dec2 track" },
    { "nco track", "adc mix dec4", "chan dec2" },
    { "adc mix", "nco dec4 dec2", "chan track" },
};
static const uint32_t RX_PROCS[] = { 1, 1, 2, 2, 2, 3, 3, 3 };

static void test_rx_decimating(void **state)
{
    (void)state;
    pm_graph *g = NULL;
    pm_diag d;
    if (pm_reader_read_file("scenarios/rx_decimating.pace", &g, &d) != PM_OK)
        fail_msg("scenarios/rx_decimating.pace: %s", d.msg);
    assert_false(pm_graph_is_single_rate(g));
    uint64_t *rep = NULL;
    assert_int_equal(pm_sdf_repetition(g, &rep, &d), PM_OK);
    assert_int_equal(pm_sdf_check_iteration(g, rep, &d), PM_OK);
    int ran = 0, rejected = 0;
    size_t nmaps = sizeof RX_PROCS / sizeof RX_PROCS[0];
    for (size_t i = 0; i < nmaps + 12; i++) {
        /* the hand maps, then random ones on 1, 2, 3 cores */
        uint32_t procs = i < nmaps ? RX_PROCS[i] : 1 + (uint32_t)(i % 3);
        pm_map *m = i < nmaps ? named_map(g, procs, RX_MAPS[i]) : random_map(g->nnodes, procs);
        char label[64];
        snprintf(label, sizeof label, "rx_decimating map %zu (%u cores)", i, procs);
        if (add_case(g, rep, m, label))
            ran++;
        else if (i < nmaps)
            fail_msg("%s: hand map rejected by pm_map_expand", label);
        else
            rejected++;
        pm_map_destroy(m);
    }
    compare_all();
    printf("rx_decimating: %d maps on 1..3 cores agree with Boost (%d random orders "
           "rejected)\n", ran, rejected);
    assert_true(ran >= (int)nmaps);
    free_cases();
    free(rep);
    pm_graph_destroy(g);
}

int main(void)
{
    char path[1024];
    snprintf(path, sizeof path, "%s/bgl_ipc", tk_helper_dir());
    if (access(path, X_OK) != 0) {
        printf("note: %s not built; Boost reference skipped\n", path);
        return 0;
    }
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_random_multirate),
        cmocka_unit_test(test_rx_decimating),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
