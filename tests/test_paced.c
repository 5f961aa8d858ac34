/*
 * test_paced.c - paced runs of the simulator (the input delivers a sample
 * every I cycles), buffers under pacing, fitted capacities and capacity
 * lines in map files.
 *
 * (a) Hand-worked traces, the arithmetic written out beside each check: a
 *     two-core chain that keeps up, a fractional interval, one core that
 *     does not keep up (overruns from iteration 5 on), a loop over two
 *     cores slower than the input, a multirate decimator whose edge holds
 *     five tokens at once (grouped over its four firing edges).
 * (b) An independent paced model written here: the max-plus recurrence of
 *     self-timed execution (Sriram & Bhattacharyya, "Embedded
 *     Multiprocessors: Scheduling and Synchronization", 2000) with releases
 *     and FIFO back-pressure,
 *       s(v,k) = max(release(v,k), free of the core's previous firing,
 *                    end(u,k-d) [+ transfer] for each input u -> v,
 *                    s(w, k-(C-d)) for each cross-core output v -> w of
 *                    capacity C),
 *     evaluated firing by firing until nothing moves, on random graphs and
 *     maps: latency min and max, overruns and most tokens per edge equal
 *     the simulator's.  With fitted capacities the model keeps up (no
 *     overrun, no deadlock, every node den iterations later by num cycles
 *     for I = num/den); with one token less on any edge it does not.
 * (c) Capacity lines: read, errors at their line and column, round trip.
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

#include "pacemap/fitbuf.h"
#include "pacemap/gantt.h"
#include "pacemap/vcd.h"
#include "pacemap/graph.h"
#include "pacemap/map.h"
#include "pacemap/plan.h"
#include "pacemap/reader.h"
#include "pacemap/sim.h"
#include "support/testkit.h"

#define CASES 400
#define MAXN 9
#define NIT 160

static uint64_t rng_state = 777;
static uint32_t rnd(uint32_t n)
{
    return tk_rand(&rng_state, n);
}

/* ---- small builders ------------------------------------------------------- */

static pm_graph *chain(int64_t ta, int64_t tb, int64_t latency)
{
    pm_graph *g = pm_graph_create("chain");
    uint32_t two = 2;
    assert_int_equal(pm_graph_set_cores(g, 1, NULL, &two), PM_OK);
    assert_int_equal(pm_graph_add_node(g, "a", 1, ta, NULL), PM_OK);
    assert_int_equal(pm_graph_add_node(g, "b", 1, tb, NULL), PM_OK);
    g->platform.comm.latency = latency;
    pm_edge e = pm_graph_edge_default(0, 1);
    assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    return g;
}

static pm_map *map2(uint32_t ca, uint32_t cb)
{
    uint32_t l0[2], l1[2], c[2] = { 0, 0 };
    uint32_t *lists[2] = { l0, l1 };
    lists[ca][c[ca]++] = 0;
    lists[cb][c[cb]++] = 1;
    pm_map *m = NULL;
    assert_int_equal(pm_map_create(2, 2, (const uint32_t *const *)lists, c, &m), PM_OK);
    return m;
}

static pm_sim_result run_paced(const pm_graph *g, const pm_map *m, int64_t num, int64_t den,
                               uint64_t n)
{
    pm_sim_pace pace = { .interval = { num, den } };
    pm_sim_opts o = { .iterations = n, .pace = &pace };
    pm_sim_result r;
    assert_int_equal(pm_sim_run(g, m, &o, &r, NULL), PM_OK);
    assert_true(r.pace.on);
    return r;
}

/* ---- (a) hand-worked traces ----------------------------------------------- */

/* a(10) on core 0 -> b(20) on core 1, transfer 5 cycles, I = 50.
 * Iteration k: a runs 50k..50k+10, the token arrives 50k+15, b runs
 * 50k+15..50k+35 (core 1 was free since 50(k-1)+35).  Latency 35 every
 * iteration; a begins at 50k < 50(k+1): no overrun; the token waits from
 * 50k+10 (push) to 50k+15 (pop): one token at most. */
static void test_chain_keeps_up(void **st)
{
    (void)st;
    pm_graph *g = chain(10, 20, 5);
    pm_map *m = map2(0, 1);
    pm_sim_result r = run_paced(g, m, 50, 1, 20);
    assert_int_equal(r.pace.latency_min, 35);
    assert_int_equal(r.pace.latency_max, 35);
    assert_int_equal(r.pace.latency_p99, 35);
    assert_true(r.pace.latency_mean == 35.0);
    assert_int_equal(r.pace.overruns, 0);
    assert_int_equal(r.max_tokens[0], 1);
    pm_sim_result_free(&r);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

/* Both on core 0, I = 100/3: releases ceil(100k/3) = 0, 34, 67, 100, 134.
 * a + b take 30 < 33.3 cycles, so the core is free before each release
 * (k = 1: free at 30, release 34) and b ends 30 after the release. */
static void test_fractional_interval(void **st)
{
    (void)st;
    pm_graph *g = chain(10, 20, 0);
    pm_map *m = map2(0, 0);
    pm_sim_result r = run_paced(g, m, 100, 3, 30);
    assert_int_equal(r.pace.latency_min, 30);
    assert_int_equal(r.pace.latency_max, 30);
    assert_int_equal(r.pace.overruns, 0);
    pm_sim_pace pace = { .interval = { 100, 3 } };
    assert_int_equal(pm_sim_release(&pace, 1, 1), 34);
    assert_int_equal(pm_sim_release(&pace, 2, 1), 67);
    assert_int_equal(pm_sim_release(&pace, 3, 1), 100);
    assert_int_equal(pm_sim_release(&pace, 4, 1), 134);
    pm_sim_result_free(&r);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

/* a(30) -> b(30) on core 0, I = 50: 60 cycles of work per 50.  a_0 runs
 * 0..30, b_0 30..60; for k >= 1 the core is free at 60k, so a_k begins at
 * 60k and b_k ends 60k + 60.  Latency_k = 60k + 60 - 50k = 10k + 60
 * (k = 0: 60).  Overrun when a_k begins at or after its next release
 * 50(k+1): 60k >= 50k + 50, k >= 5.  With N = 10: overruns k = 5..9 = 5;
 * latencies 60, 70, ..., 150: min 60, max 150, mean (60 + 150) / 2 = 105,
 * p99 the ceil(9.9) = 10th smallest = 150. */
static void test_chain_falls_behind(void **st)
{
    (void)st;
    pm_graph *g = chain(30, 30, 0);
    pm_map *m = map2(0, 0);
    pm_sim_result r = run_paced(g, m, 50, 1, 10);
    assert_int_equal(r.pace.latency_min, 60);
    assert_int_equal(r.pace.latency_max, 150);
    assert_int_equal(r.pace.latency_p99, 150);
    assert_true(r.pace.latency_mean == 105.0);
    assert_int_equal(r.pace.overruns, 5);
    assert_int_equal(r.pace.first_overrun, 5);
    pm_sim_result_free(&r);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

/* a(20) on core 0, b(20) on core 1, a -> b and b -> a with one delay,
 * transfers 5: the loop takes 20 + 5 + 20 + 5 = 50 per iteration, I = 40.
 * a_0 0..20, b_0 25..45; a_k begins max(40k, end of b_{k-1} + 5) = 50k,
 * b_k ends 50k + 45.  No node lacks an input or an output edge, so there
 * are no inputs (no overrun counted) and every node is a sink: latency_k
 * = 50k + 45 - 40k = 10k + 45: 45, 55, 65, 75 for N = 4. */
static void test_loop_slower_than_input(void **st)
{
    (void)st;
    pm_graph *g = pm_graph_create("loop");
    uint32_t two = 2;
    assert_int_equal(pm_graph_set_cores(g, 1, NULL, &two), PM_OK);
    assert_int_equal(pm_graph_add_node(g, "a", 1, 20, NULL), PM_OK);
    assert_int_equal(pm_graph_add_node(g, "b", 1, 20, NULL), PM_OK);
    g->platform.comm.latency = 5;
    pm_edge e = pm_graph_edge_default(0, 1);
    assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
    e = pm_graph_edge_default(1, 0);
    e.delay = 1;
    assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    pm_map *m = map2(0, 1);
    pm_sim_result r = run_paced(g, m, 40, 1, 4);
    assert_int_equal(r.pace.latency_min, 45);
    assert_int_equal(r.pace.latency_max, 75);
    assert_true(r.pace.latency_mean == 60.0);
    assert_int_equal(r.pace.overruns, 0);
    pm_sim_result_free(&r);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

static pm_plan load_plan(const char *text)
{
    pm_graph *g = NULL;
    pm_diag d;
    assert_int_equal(pm_reader_read_string(text, strlen(text), "t.pace", &g, &d), PM_OK);
    pm_plan p;
    assert_int_equal(pm_plan_init(&p, g, &d), PM_OK);
    return p;
}

static pm_map *plan_map(const pm_plan *p, const char *text)
{
    char path[] = "/tmp/pm_paced_XXXXXX";
    int fd = mkstemp(path);
    assert_true(fd >= 0);
    assert_int_equal(write(fd, text, strlen(text)), (ssize_t)strlen(text));
    close(fd);
    pm_map *m = NULL;
    pm_diag d;
    assert_int_equal(pm_plan_map_read(p, path, &m, &d), PM_OK);
    unlink(path);
    return m;
}

/* adc (1 cycle, 4 firings) on core 0 -> dec (2 cycles, consumes 4) on core
 * 1, transfer 3 cycles, I = 400 Hz / 50 Hz = 8: adc firing j released at
 * ceil(8j/4) = 2j, dec iteration k at 8k.  Iteration 0: adc ends at 1, 3,
 * 5, 7; the last token arrives 10; dec runs 10..12.  Iteration 1: adc
 * firings released 8, 10, 12, 14 end 9, 11, 13, 15; dec begins at 15 + 3
 * = 18, ends 20 = 8 + 12.  So latency 12 every iteration, no overrun
 * (firing j begins at 2j < 2(j+1)).  Tokens: pushes at 1, 3, 5, 7, 9, ...
 * (2j + 1), pops of 4 at 10, 18, 26, ...: just before 10 the edge holds
 * the 5 tokens pushed at 1, 3, 5, 7, 9 (and again 5 before 18: pushes up
 * to 17, less the 4 popped at 10): 5 at most, for the one scenario edge. */
static void test_multirate_decimator(void **st)
{
    (void)st;
    pm_plan p = load_plan("clock 400Hz\nrate 50Hz\nprocs 2\ncomm latency=3 word-bytes=2\n"
                          "node adc cycles=1\nnode dec cycles=2\n"
                          "edge adc -> dec consume=4 words=3\n");
    pm_map *m = plan_map(&p, "core 0: adc\ncore 1: dec\n");
    pm_rat iv;
    assert_int_equal(pm_fitbuf_interval(p.source, &iv, NULL), PM_OK);
    assert_int_equal(iv.num, 8);
    assert_int_equal(iv.den, 1);
    pm_sim_pace pace;
    assert_int_equal(pm_fitbuf_pace_init(&p, iv, 0, 1, &pace), PM_OK);
    pm_sim_opts o = { .iterations = 12, .pace = &pace, .record = 12 };
    pm_sim_result r;
    assert_int_equal(pm_sim_run(p.graph, m, &o, &r, NULL), PM_OK);
    assert_int_equal(r.pace.latency_min, 12);
    assert_int_equal(r.pace.latency_max, 12);
    assert_int_equal(r.pace.overruns, 0);
    int64_t tokens[1];
    assert_int_equal(pm_fitbuf_tokens(&p, m, &r, tokens), PM_OK);
    assert_int_equal(tokens[0], 5);
    /* 5 tokens of 3 words of 2 bytes */
    assert_int_equal(pm_fitbuf_word_bytes(p.source), 2);
    pm_sim_result_free(&r);
    pm_fitbuf_pace_free(&pace);
    pm_map_destroy(m);
    pm_plan_free(&p);
}

/* No clock or no rate: a clear error. */
static void test_interval_needs_clock_and_rate(void **st)
{
    (void)st;
    pm_plan p = load_plan("clock 400Hz\nnode a cycles=1\n");
    pm_rat iv;
    pm_diag d;
    pm_diag_clear(&d);
    assert_int_equal(pm_fitbuf_interval(p.source, &iv, &d), PM_EPLATFORM);
    assert_non_null(strstr(d.msg, "'rate'"));
    pm_plan_free(&p);
}

/* ---- (b) the independent model ---------------------------------------------- */

typedef struct model {
    const pm_graph *g;
    const pm_map *m;
    const uint32_t *cap; /* per edge, 0 = unbounded */
    int64_t num, den;
    int64_t jitter;      /* releases late by 0..jitter (docs/simulation.md) */
    uint64_t seed;
    uint64_t N;
    int64_t s[NIT][MAXN];
    bool done[NIT][MAXN];
    int64_t t[MAXN], recv[MAXN], send[MAXN];
    bool input[MAXN], sink[MAXN];
    bool deadlock;
} model;

/* The lateness as documented: splitmix64's output function (Steele, Lea
 * & Flood, OOPSLA 2014) of seed + T * 0x9e3779b97f4a7c15, mod (J + 1). */
static int64_t md_late(const model *md, int64_t T)
{
    if (!md->jitter)
        return 0;
    uint64_t z = md->seed + (uint64_t)T * UINT64_C(0x9e3779b97f4a7c15);
    z = (z ^ (z >> 30)) * UINT64_C(0xbf58476d1ce4e5b9);
    z = (z ^ (z >> 27)) * UINT64_C(0x94d049bb133111eb);
    z ^= z >> 31;
    return (int64_t)(z % (uint64_t)(md->jitter + 1));
}

static int64_t md_release(const model *md, uint64_t k)
{
    int64_t T = (int64_t)((k * (uint64_t)md->num + (uint64_t)md->den - 1) / (uint64_t)md->den);
    return T + md_late(md, T);
}

static bool md_cross(const model *md, const pm_edge *e)
{
    return md->m->core_of[e->src] != md->m->core_of[e->dst];
}

static void md_prepare(model *md)
{
    const pm_graph *g = md->g;
    const pm_comm *c = &g->platform.comm;
    bool any_sink = false;
    for (uint32_t v = 0; v < g->nnodes; v++) {
        md->t[v] = g->nodes[v].cycles;
        md->recv[v] = md->send[v] = 0;
        md->input[v] = md->sink[v] = true;
    }
    for (uint32_t e = 0; e < g->nedges; e++) {
        const pm_edge *ed = &g->edges[e];
        if (ed->src != ed->dst)
            md->input[ed->dst] = false, md->sink[ed->src] = false;
        if (md_cross(md, ed))
            md->recv[ed->dst] += c->recv, md->send[ed->src] += c->send;
    }
    for (uint32_t v = 0; v < g->nnodes; v++)
        any_sink |= md->sink[v];
    for (uint32_t v = 0; v < g->nnodes && !any_sink; v++)
        md->sink[v] = true;
}

static int64_t md_end(const model *md, uint32_t v, uint64_t k)
{
    return md->s[k][v] + md->recv[v] + md->t[v];
}

/* s(v,k) from what it waits for; false when one of those is not known. */
static bool md_try(const model *md, uint32_t v, uint64_t k, int64_t prev_free, int64_t *x)
{
    const pm_graph *g = md->g;
    int64_t s = md_release(md, k) > prev_free ? md_release(md, k) : prev_free;
    for (uint32_t e = 0; e < g->nedges; e++) {
        const pm_edge *ed = &g->edges[e];
        uint64_t d = (uint64_t)ed->delay;
        if (ed->dst == v && k >= d) {
            if (!md->done[k - d][ed->src])
                return false;
            int64_t a = md_end(md, ed->src, k - d);
            if (md_cross(md, ed))
                a += g->platform.comm.latency + g->platform.comm.per_word * ed->words;
            s = a > s ? a : s;
        }
        uint64_t C = md->cap ? md->cap[e] : 0;
        C = C && C < d ? d : C;
        if (ed->src == v && C && md_cross(md, ed) && k >= C - d) {
            if (!md->done[k - (C - d)][ed->dst])
                return false;
            s = md->s[k - (C - d)][ed->dst] > s ? md->s[k - (C - d)][ed->dst] : s;
        }
    }
    *x = s;
    return true;
}

/* Every core runs its order N times; sweep until nothing moves. */
static void md_run(model *md)
{
    const pm_map *m = md->m;
    memset(md->done, 0, sizeof md->done);
    uint64_t it[8] = { 0 };
    uint32_t pos[8] = { 0 };
    int64_t free_at[8] = { 0 };
    for (bool moved = true; moved;) {
        moved = false;
        for (uint32_t c = 0; c < m->ncores; c++) {
            uint32_t cnt = m->off[c + 1] - m->off[c];
            while (cnt && it[c] < md->N) {
                uint32_t v = m->order[m->off[c] + pos[c]];
                int64_t x;
                if (!md_try(md, v, it[c], free_at[c], &x))
                    break;
                md->s[it[c]][v] = x, md->done[it[c]][v] = true, moved = true;
                free_at[c] = md_end(md, v, it[c]) + md->send[v];
                if (++pos[c] == cnt)
                    pos[c] = 0, it[c]++;
            }
        }
    }
    md->deadlock = false;
    for (uint32_t c = 0; c < m->ncores; c++)
        md->deadlock |= m->off[c + 1] > m->off[c] && it[c] < md->N;
}

static void md_latency(const model *md, int64_t *lo, int64_t *hi, uint64_t *overruns)
{
    *lo = INT64_MAX, *hi = INT64_MIN, *overruns = 0;
    for (uint64_t k = 0; k < md->N; k++) {
        int64_t last = INT64_MIN;
        for (uint32_t v = 0; v < md->g->nnodes; v++) {
            if (md->sink[v] && md_end(md, v, k) > last)
                last = md_end(md, v, k);
            *overruns += md->input[v] && md->s[k][v] >= md_release(md, k + 1);
        }
        int64_t lat = last - md_release(md, k);
        *lo = lat < *lo ? lat : *lo;
        *hi = lat > *hi ? lat : *hi;
    }
}

typedef struct md_ev {
    int64_t t, d;
} md_ev;

static int md_ev_cmp(const void *a, const void *b)
{
    const md_ev *x = a, *y = b;
    return x->t != y->t ? (x->t > y->t) - (x->t < y->t) : (x->d > y->d) - (x->d < y->d);
}

/* Tokens on e: pushed at the producer's end, popped at the consumer's
 * begin, a pop before a push of the same cycle, the delays there first. */
static int64_t md_tokens(const model *md, uint32_t e)
{
    const pm_edge *ed = &md->g->edges[e];
    md_ev ev[2 * NIT];
    size_t n = 0;
    for (uint64_t k = 0; k < md->N; k++) {
        ev[n++] = (md_ev){ md_end(md, ed->src, k), 1 };
        ev[n++] = (md_ev){ md->s[k][ed->dst], -1 };
    }
    qsort(ev, n, sizeof *ev, md_ev_cmp);
    int64_t occ = ed->delay, most = occ;
    for (size_t i = 0; i < n; i++) {
        occ += ev[i].d;
        most = occ > most ? occ : most;
    }
    return most;
}

/* Keeps up: no deadlock, no overrun, and at the end every node den
 * iterations later by exactly num cycles (period I). */
static bool md_keeps_up(model *md)
{
    md_run(md);
    if (md->deadlock)
        return false;
    int64_t lo, hi;
    uint64_t ov;
    md_latency(md, &lo, &hi, &ov);
    if (ov)
        return false;
    uint64_t last = md->N - 1;
    for (uint32_t v = 0; v < md->g->nnodes; v++)
        if (md->s[last][v] - md->s[last - (uint64_t)md->den][v] != md->num)
            return false;
    return true;
}

static pm_graph *random_graph(uint32_t n, uint32_t procs)
{
    pm_graph *g = pm_graph_create("random");
    assert_int_equal(pm_graph_set_cores(g, 1, NULL, &procs), PM_OK);
    for (uint32_t v = 0; v < n; v++) {
        char name[16];
        snprintf(name, sizeof name, "n%u", v);
        assert_int_equal(pm_graph_add_node(g, name, strlen(name), 1 + rnd(15), NULL), PM_OK);
    }
    g->platform.comm = (pm_comm){ 1 + rnd(60), rnd(3), rnd(3), rnd(3) };
    uint32_t ne = rnd(2 * n + 1);
    for (uint32_t i = 0; i < ne; i++) {
        uint32_t u = rnd(n), v = rnd(n);
        pm_edge e = pm_graph_edge_default(u, v);
        e.words = 1 + rnd(4);
        e.delay = u < v ? (rnd(4) == 0 ? 1 : 0) : 1 + rnd(2);
        assert_int_equal(pm_graph_add_edge(g, &e, NULL), PM_OK);
    }
    assert_int_equal(pm_graph_finalize(g), PM_OK);
    return g;
}

/* The simulator and the model agree on latency, overruns and tokens. */
static void check_against_model(model *md, const pm_sim_result *r)
{
    md_run(md);
    assert_false(md->deadlock);
    int64_t lo, hi;
    uint64_t ov;
    md_latency(md, &lo, &hi, &ov);
    assert_int_equal(r->pace.latency_min, lo);
    assert_int_equal(r->pace.latency_max, hi);
    assert_int_equal(r->pace.overruns, ov);
    for (uint32_t e = 0; e < md->g->nedges; e++)
        if (md_cross(md, &md->g->edges[e]))
            assert_int_equal(r->max_tokens[e], md_tokens(md, e));
}

/* Fitted capacities keep the model up; one token less on any edge not. */
static uint32_t check_fit(model *md, const pm_sim_opts *o)
{
    uint32_t cap[4 * MAXN + 2] = { 0 };
    assert_int_equal(pm_fitbuf_fit(md->g, md->m, o, cap, NULL), PM_OK);
    md->cap = cap;
    assert_true(md_keeps_up(md));
    uint32_t checked = 0;
    for (uint32_t e = 0; e < md->g->nedges; e++) {
        uint32_t least = md->g->edges[e].delay > 1 ? (uint32_t)md->g->edges[e].delay : 1;
        if (!cap[e] || cap[e] <= least)
            continue;
        cap[e]--;
        assert_false(md_keeps_up(md));
        cap[e]++;
        checked++;
    }
    md->cap = NULL;
    return checked;
}

static void test_model_random(void **st)
{
    (void)st;
    static model md;
    uint32_t compared = 0, fitted = 0, behind = 0, tighter = 0;
    for (int i = 0; i < CASES; i++) {
        uint32_t n = 2 + rnd(MAXN - 1), procs = 1 + rnd(3);
        pm_graph *g = random_graph(n, procs);
        pm_map *m = tk_random_map(&rng_state, n, procs, 6);
        pm_sim_result u;
        pm_sim_opts uo = { .iterations = NIT };
        if (pm_sim_run(g, m, &uo, &u, NULL) != PM_OK || !u.steady) {
            pm_sim_result_free(&u);
            pm_map_destroy(m);
            pm_graph_destroy(g);
            continue;
        }
        /* I from 3/4 to 3/2 of the unpaced period, on a denominator of 4 */
        int64_t num = (u.period.num * (3 + rnd(4)) + u.period.den * 4 - 1) / (u.period.den * 4);
        md = (model){ .g = g, .m = m, .num = num * 4 + rnd(4), .den = 4, .N = NIT };
        md_prepare(&md);
        if (i % 5 == 4) /* some with jitter: compared, not fitted */
            md.jitter = 1 + rnd(20), md.seed = rnd(1000);
        pm_sim_pace pace = { .interval = { md.num, md.den }, .jitter = md.jitter,
                             .seed = md.seed };
        pm_sim_opts o = { .iterations = NIT, .pace = &pace };
        pm_sim_result r;
        assert_int_equal(pm_sim_run(g, m, &o, &r, NULL), PM_OK);
        check_against_model(&md, &r);
        compared++;
        bool keeps = r.pace.overruns == 0 && pm_rat_cmp(u.period, pace.interval) <= 0;
        behind += !keeps;
        if (keeps && !md.jitter) {
            tighter += check_fit(&md, &o);
            fitted++;
        }
        pm_sim_result_free(&r);
        pm_sim_result_free(&u);
        pm_map_destroy(m);
        pm_graph_destroy(g);
    }
    print_message("compared %u, behind %u, fitted %u, one less %u\n", compared, behind, fitted, tighter);
    assert_true(compared >= 200);
    assert_true(fitted >= 40);
    assert_true(behind >= 20);
    assert_true(tighter >= 20);
}

/* Jitter: releases are late by 0..J, the same for the same nominal time,
 * and the model with those releases agrees on overruns. */
static void test_jitter_repeatable(void **st)
{
    (void)st;
    pm_sim_pace p = { .interval = { 50, 1 }, .jitter = 7, .seed = 3 };
    bool some_late = false;
    for (uint64_t j = 0; j < 200; j++) {
        int64_t a = pm_sim_release(&p, j, 1), b = pm_sim_release(&p, 2 * j, 2);
        assert_int_equal(a, b); /* both nominal 50j */
        assert_true(a >= (int64_t)(50 * j) && a <= (int64_t)(50 * j) + 7);
        some_late |= a != (int64_t)(50 * j);
    }
    assert_true(some_late);
}

/* Charts of a paced run: releases 0, 50, 100 of I = 50 (ceil(50k)) become
 * the VCD variable `release` (1, 2, 3 at those times) and dashed marks in
 * the SVG. */
static void test_release_marks(void **st)
{
    (void)st;
    pm_graph *g = chain(10, 20, 5);
    pm_map *m = map2(0, 1);
    pm_sim_pace pace = { .interval = { 50, 1 } };
    pm_sim_opts o = { .iterations = 10, .pace = &pace, .record = 3 };
    pm_sim_result r;
    assert_int_equal(pm_sim_run(g, m, &o, &r, NULL), PM_OK);
    assert_int_equal(r.pace.nreleases, 3);
    assert_int_equal(r.pace.releases[2], 100);
    char *buf = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&buf, &len);
    assert_int_equal(pm_vcd_write(g, m, &r, f), PM_OK);
    fclose(f);
    assert_non_null(strstr(buf, " release $end"));
    assert_non_null(strstr(buf, "#100\n"));
    free(buf);
    const char *lanes[] = { "core 0", "core 1" };
    pm_gantt_box box = { 0, 0, 10, "a", 0 };
    pm_gantt chart = { "t", 2, lanes, &box, 1, NULL, 0, 0, NULL };
    f = open_memstream(&buf, &len);
    assert_int_equal(pm_gantt_write_svg_marked(&chart, r.pace.releases, 2, f), PM_OK);
    fclose(f);
    const char *p = buf;
    int marks = 0;
    while ((p = strstr(p, "class=\"release\"")) != NULL)
        marks++, p++;
    assert_int_equal(marks, 1); /* of 0 and 50 only 0 lies within the 10 cycles charted */
    free(buf);
    pm_sim_result_free(&r);
    pm_map_destroy(m);
    pm_graph_destroy(g);
}

/* ---- multirate transfers as blocks ---------------------------------------------- */

static void block_case(const char *mode, int64_t latency, int64_t period)
{
    char text[512];
    snprintf(text, sizeof text, "procs 2\ncomm latency=10 per-word=1 send=2 recv=3 transfer=%s\n"
             "node src cycles=5\nnode dst cycles=4\nedge src -> dst produce=4\n", mode);
    pm_plan p = load_plan(text);
    pm_map *m = plan_map(&p, "core 0: src\ncore 1: dst\n");
    pm_sim_opts o = { .iterations = 1 }; /* iteration 0 alone: its latency */
    pm_sim_result r;
    assert_int_equal(pm_sim_run(p.graph, m, &o, &r, NULL), PM_OK);
    assert_int_equal(r.latency_max, latency);
    pm_sim_result_free(&r);
    o.iterations = 50; /* src outruns dst: the period is dst's core's */
    assert_int_equal(pm_sim_run(p.graph, m, &o, &r, NULL), PM_OK);
    assert_int_equal(r.period.num, period);
    assert_int_equal(r.period.den, 1);
    pm_sim_result_free(&r);
    pm_map_destroy(m);
    pm_plan_free(&p);
}

/* src (5 cycles) makes 4 tokens of 1 word for dst (4 cycles, 4 firings),
 * on two cores; latency 10, per-word 1, send 2, recv 3.
 * Block: one transfer of 4 words arrives 5 + 10 + 4 = 19; dst#0 receives
 * 19..22 and runs 22..26, dst#1..3 follow on their core: 26..30, 30..34,
 * 34..38: latency 38.  Core 1 is busy 3 + 4 * 4 = 19 per iteration, core 0
 * 5 + 2 = 7: period 19.
 * Token: four transfers of 1 word, each arriving 5 + 10 + 1 = 16; each dst
 * firing receives 3 and runs 4: 16..23, 23..30, 30..37, 37..44: latency
 * 44; core 1 busy 4 * 7 = 28, core 0 5 + 4 * 2 = 13: period 28. */
static void test_block_transfers(void **st)
{
    (void)st;
    block_case("block", 38, 19);
    block_case("token", 44, 28);
}

/* The block expansion of src -> dst produce=4 delay=2 (dst fires 4 times):
 * tokens 0, 1 of an iteration come from the previous iteration's block,
 * whose first token went to dst#2 of that iteration; so dst#0 follows
 * dst#3 one iteration back, dst#1 follows dst#0, the block of this
 * iteration goes whole (4 words) to dst#2, and dst#3 follows dst#2. */
static void test_block_expansion_wraps(void **st)
{
    (void)st;
    pm_plan p = load_plan("comm transfer=block\nnode src cycles=5\nnode dst cycles=4\n"
                          "edge src -> dst produce=4 delay=2\n");
    const pm_graph *x = p.graph;
    assert_int_equal(x->nedges, 4);
    struct { const char *from, *to; int64_t delay, words; } want[] = {
        { "dst#3", "dst#0", 1, 0 }, { "dst#0", "dst#1", 0, 0 },
        { "src", "dst#2", 0, 4 }, { "dst#2", "dst#3", 0, 0 },
    };
    for (uint32_t e = 0; e < 4; e++) {
        assert_string_equal(pm_graph_node_name(x, x->edges[e].src), want[e].from);
        assert_string_equal(pm_graph_node_name(x, x->edges[e].dst), want[e].to);
        assert_int_equal(x->edges[e].delay, want[e].delay);
        assert_int_equal(x->edges[e].words, want[e].words);
    }
    pm_plan_free(&p);
}

/* ---- (c) capacity lines ------------------------------------------------------ */

static void test_capacity_lines(void **st)
{
    (void)st;
    pm_graph *g = chain(10, 20, 5);
    pm_map *m = NULL;
    pm_diag d;
    const char *ok = "core 0: a\ncore 1: b\ncapacity a -> b 3\n";
    assert_int_equal(pm_map_read_string(ok, strlen(ok), "m", g, &m, &d), PM_OK);
    assert_non_null(m->cap);
    assert_int_equal(m->cap[0], 3);
    char *buf = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&buf, &len);
    assert_int_equal(pm_map_write(m, g, f), PM_OK);
    fclose(f);
    assert_non_null(strstr(buf, "capacity a -> b 3\n"));
    pm_map *again = NULL;
    assert_int_equal(pm_map_read_string(buf, len, "m2", g, &again, &d), PM_OK);
    assert_int_equal(again->cap[0], 3);
    free(buf);
    pm_map_destroy(again);
    pm_map_destroy(m);
    static const struct { const char *text; int rc; uint32_t line, col; } bad[] = {
        { "core 0: a\ncore 1: b\ncapacity a -> b 0\n", PM_ESYNTAX, 3, 17 },
        { "core 0: a b\ncapacity b -> a 2\n", PM_EMAP, 2, 15 },
        { "core 0: a b\ncapacity a -> zz 2\n", PM_ENAME, 2, 15 },
        { "core 0: a b\ncapacity a b 2\n", PM_ESYNTAX, 2, 12 },
        { "core 0: a b\ncapacity a -> b 2\ncapacity a -> b 4\n", PM_EMAP, 3, 15 },
    };
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        pm_diag_clear(&d);
        assert_int_equal(pm_map_read_string(bad[i].text, strlen(bad[i].text), "m", g, &m, &d),
                         bad[i].rc);
        assert_int_equal(d.line, bad[i].line);
        assert_int_equal(d.col, bad[i].col);
    }
    pm_graph_destroy(g);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_chain_keeps_up),
        cmocka_unit_test(test_fractional_interval),
        cmocka_unit_test(test_chain_falls_behind),
        cmocka_unit_test(test_loop_slower_than_input),
        cmocka_unit_test(test_multirate_decimator),
        cmocka_unit_test(test_interval_needs_clock_and_rate),
        cmocka_unit_test(test_model_random),
        cmocka_unit_test(test_jitter_repeatable),
        cmocka_unit_test(test_capacity_lines),
        cmocka_unit_test(test_release_marks),
        cmocka_unit_test(test_block_transfers),
        cmocka_unit_test(test_block_expansion_wraps),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
