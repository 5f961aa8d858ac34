/*
 * test_sim_bus.c - the bus against a brute-force reference written here:
 * a cycle-by-cycle simulation of the rules of docs/simulation.md (at each
 * cycle the bus, if free, takes the waiting request with the smallest
 * (request time, producer core, edge, iteration); then every free core
 * begins its next firing if its tokens have arrived and, with a FIFO, the
 * consumer has begun the firing that frees room).  Node times and transfer
 * times are at least 1 here, so no zero-time chains arise within a cycle.
 * Every begin time of every firing must agree with pm_sim_run.
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
#include "support/testkit.h"

#define MAXN 8
#define MAXE 20
#define ITERS 24
#define NONE (-1)

static uint64_t rng_state = 777;
static uint32_t rnd(uint32_t n)
{
    return tk_rand(&rng_state, n);
}

typedef struct ref {
    const pm_graph *g;
    const pm_map *m;
    int64_t fifo;
    int64_t begin[MAXN][ITERS], end[MAXN][ITERS];
    int64_t arrive[MAXE][ITERS];  /* cross-core token arrival, NONE until granted */
    int64_t req[MAXE][ITERS];     /* request time, NONE until made */
    int64_t core_free[4];
    uint32_t pos[4], iter[4];
    int64_t bus_free;
    int waited;                   /* grants later than their request */
} ref;

static bool cross(const ref *r, uint32_t e)
{
    return r->m->core_of[r->g->edges[e].src] != r->m->core_of[r->g->edges[e].dst];
}

static int64_t nin(const ref *r, uint32_t v, bool out)
{
    int64_t k = 0;
    for (uint32_t e = 0; e < r->g->nedges; e++)
        if (cross(r, e) && (out ? r->g->edges[e].src : r->g->edges[e].dst) == v)
            k++;
    return k;
}

/* Can (v,k) begin at t? */
static bool ref_ready(const ref *r, uint32_t v, uint32_t k, int64_t t)
{
    const pm_graph *g = r->g;
    for (uint32_t e = 0; e < g->nedges; e++) {
        const pm_edge *ed = &g->edges[e];
        if (ed->dst == v && (int64_t)k >= ed->delay) {
            uint32_t j = k - (uint32_t)ed->delay;
            int64_t a = cross(r, e) ? r->arrive[e][j] : r->end[ed->src][j];
            if (a == NONE || a > t)
                return false;
        }
        if (ed->src == v && cross(r, e) && r->fifo) {
            int64_t cap = ed->delay > r->fifo ? ed->delay : r->fifo;
            int64_t j = (int64_t)k + ed->delay - cap;
            if (j >= 0 && (r->begin[ed->dst][j] == NONE || r->begin[ed->dst][j] > t))
                return false;
        }
    }
    return true;
}

static void ref_grant(ref *r, int64_t t)
{
    const pm_comm *c = &r->g->platform.comm;
    while (r->bus_free <= t) {
        int be = NONE, bk = 0;
        for (uint32_t e = 0; e < r->g->nedges; e++)
            for (int k = 0; k < ITERS; k++) {
                if (r->req[e][k] == NONE || r->req[e][k] > t || r->arrive[e][k] != NONE)
                    continue;
                if (be == NONE) {
                    be = (int)e, bk = k;
                    continue;
                }
                uint32_t ce = r->m->core_of[r->g->edges[e].src];
                uint32_t cb = r->m->core_of[r->g->edges[be].src];
                int64_t re = r->req[e][k], rb = r->req[be][bk];
                if (re < rb || (re == rb && (ce < cb || (ce == cb && (int)e < be))) ||
                    (re == rb && ce == cb && (int)e == be && k < bk))
                    be = (int)e, bk = k;
            }
        if (be == NONE)
            return;
        int64_t cost = c->latency + c->per_word * r->g->edges[be].words;
        r->arrive[be][bk] = t + cost;
        r->waited += t > r->req[be][bk];
        r->bus_free = t + cost;
    }
}

static void ref_begin(ref *r, uint32_t c, uint32_t v, uint32_t k, int64_t t)
{
    const pm_comm *cm = &r->g->platform.comm;
    int64_t end = t + cm->recv * nin(r, v, false) + r->g->nodes[v].cycles;
    r->begin[v][k] = t;
    r->end[v][k] = end;
    r->core_free[c] = end + cm->send * nin(r, v, true);
    for (uint32_t e = 0; e < r->g->nedges; e++)
        if (r->g->edges[e].src == v && cross(r, e))
            r->req[e][k] = end;
    if (++r->pos[c] == r->m->off[c + 1] - r->m->off[c])
        r->pos[c] = 0, r->iter[c]++;
}

static void ref_run(ref *r)
{
    memset(r->begin, 0xff, sizeof r->begin); /* all NONE (-1) */
    memset(r->end, 0xff, sizeof r->end);
    memset(r->arrive, 0xff, sizeof r->arrive);
    memset(r->req, 0xff, sizeof r->req);
    for (int64_t t = 0; t < 100000; t++) {
        ref_grant(r, t);
        bool moved = true, left = false;
        while (moved) {
            moved = false;
            for (uint32_t c = 0; c < r->m->ncores; c++) {
                uint32_t cnt = r->m->off[c + 1] - r->m->off[c];
                if (!cnt || r->iter[c] >= ITERS || r->core_free[c] > t)
                    continue;
                uint32_t v = r->m->order[r->m->off[c] + r->pos[c]];
                if (ref_ready(r, v, r->iter[c], t))
                    ref_begin(r, c, v, r->iter[c], t), moved = true;
            }
        }
        for (uint32_t c = 0; c < r->m->ncores; c++)
            if (r->m->off[c + 1] > r->m->off[c] && r->iter[c] < ITERS)
                left = true;
        if (!left)
            return;
    }
    fail_msg("reference did not finish");
}

static pm_graph *random_graph(uint32_t n, uint32_t procs)
{
    pm_graph *g = pm_graph_create("bus");
    assert_int_equal(pm_graph_set_cores(g, 1, NULL, &procs), PM_OK);
    for (uint32_t v = 0; v < n; v++) {
        char name[8] = { (char)('a' + v), 0 };
        assert_int_equal(pm_graph_add_node(g, name, 1, 1 + rnd(9), NULL), PM_OK);
    }
    g->platform.comm = (pm_comm){ 1 + rnd(5), rnd(3), rnd(3), rnd(3) };
    g->platform.interconnect = PM_BUS;
    uint32_t ne = 1 + rnd(MAXE - 1);
    for (uint32_t i = 0; i < ne; i++) {
        uint32_t u = rnd(n), v = rnd(n);
        pm_edge e = pm_graph_edge_default(u, v);
        e.words = 1 + rnd(3);
        e.delay = u < v ? (rnd(4) == 0) : 1 + rnd(2);
        assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
    }
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    return g;
}

static void test_bus_matches_brute_force(void **state)
{
    (void)state;
    int compared = 0, waited = 0;
    for (int trial = 0; trial < 200; trial++) {
        uint32_t n = 2 + rnd(MAXN - 1), procs = 2 + rnd(3);
        pm_graph *g = random_graph(n, procs);
        uint32_t lists[4][MAXN], counts[4] = { 0 };
        const uint32_t *ptr[4] = { lists[0], lists[1], lists[2], lists[3] };
        for (uint32_t v = 0; v < n; v++) {
            uint32_t c = rnd(procs);
            lists[c][counts[c]++] = v;
        }
        pm_map *m = NULL;
        assert_int_equal(pm_map_create(procs, n, ptr, counts, &m), PM_OK);
        static ref r;
        memset(&r, 0, sizeof r);
        r.g = g, r.m = m, r.fifo = rnd(3) ? 0 : 1 + rnd(3);
        pm_sim_opts o = { .iterations = ITERS, .record = ITERS, .fifo_cap = (uint32_t)r.fifo };
        pm_sim_result res;
        int rc = pm_sim_run(g, m, &o, &res, NULL);
        if (rc == PM_OK) {
            ref_run(&r);
            for (size_t i = 0; i < res.ntrace; i++) {
                const pm_sim_firing *f = &res.trace[i];
                if (f->begin != r.begin[f->node][f->iteration])
                    fail_msg("trial %d: node %u iteration %llu begins at %lld, reference %lld",
                             trial, f->node, (unsigned long long)f->iteration,
                             (long long)f->begin, (long long)r.begin[f->node][f->iteration]);
            }
            compared++;
            waited += r.waited;
        }
        pm_sim_result_free(&res);
        pm_map_destroy(m);
        pm_graph_destroy(g);
    }
    printf("%d random bus runs agree with the cycle-by-cycle reference "
           "(%d transfers waited for the bus)\n", compared, waited);
    assert_true(compared >= 150);
    assert_true(waited > 1000); /* the bus order was really exercised */
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_bus_matches_brute_force),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
