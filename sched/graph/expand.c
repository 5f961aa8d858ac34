/*
 * expand.c - the equivalent single-rate graph of a multirate graph (the
 * precedence graph of one period, Lee & Messerschmitt, IEEE Trans.
 * Computers 1987).  Maps of it built from maps of the original graph are
 * in sched/map/mapexpand.c.
 *
 * Tokens of an edge u -> v (produce p, consume c, d initial tokens) are
 * numbered t = 0, 1, ... in FIFO order, initial tokens first.  In the
 * periodic regime token t is consumed by firing floor(t / c) of v and was
 * produced by firing I = floor((t - d) / p) of u, counting firings across
 * iterations (negative I: an earlier iteration; the initial tokens are the
 * last d tokens the previous iterations left behind).  Consumer firings of
 * iteration 0 take tokens 0 .. q[u]p - 1; producer firing I is firing
 * I mod q[u] of iteration floor(I / q[u]) <= 0, so the expanded edge's delay
 * is -floor(I / q[u]).  Both firing numbers are step functions of t, so the
 * walk goes run by run, not token by token.  docs/multirate.md has a worked
 * example.
 *
 * This file does not check consistency or liveness (sdf.c) and never
 * modifies the original graph.
 */
#include "pacemap/sdf.h"
#include "sdf_internal.h"

#include <assert.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* ---- size guard ------------------------------------------------------------- */

/* Exact number of expanded edges edge pe gives: 1 + the points in (0, T)
 * where the consumer firing changes (multiples of c) or the producer firing
 * changes (t = d mod p), counting points that are both once. */
static pm_u128 expand_edge_runs(const pm_edge *pe, const uint64_t *rep)
{
    pm_u128 p = (pm_u128)pe->produce, c = (pm_u128)pe->consume;
    pm_u128 d = (pm_u128)pe->delay, qu = rep[pe->src], qv = rep[pe->dst];
    pm_u128 T = qu * p, g = pm_rat_gcd(p, c);
    pm_u128 zero = d % p == 0; /* t = 0 is a producer boundary: not inside */
    pm_u128 both = d % g == 0 ? T / (p / g * c) - zero : 0;
    return 1 + (qv - 1) + (qu - zero) - both;
}

static int expand_guard_firings(const pm_graph *g, const uint64_t *rep, pm_diag *diag)
{
    pm_u128 sum = 0;
    uint32_t big = 0;
    for (uint32_t v = 0; v < g->nnodes; v++) {
        sum += rep[v];
        if (rep[v] > rep[big])
            big = v;
    }
    if (sum <= PM_SDF_MAX_FIRINGS)
        return PM_OK;
    sdf_text t = { .len = 0 };
    sdf_text_u128(&t, sum);
    pm_diag_set(diag, g->file, g->nodes[big].line, g->nodes[big].col,
                "the single-rate expansion would have %s firings per iteration (limit %llu);"
                " node '%s' alone fires %llu times", t.buf,
                (unsigned long long)PM_SDF_MAX_FIRINGS, pm_graph_node_name(g, big),
                (unsigned long long)rep[big]);
    return PM_ELIMIT;
}

static int expand_guard_edges(const pm_graph *g, const uint64_t *rep, pm_diag *diag)
{
    pm_u128 sum = 0, most = 0;
    uint32_t big = 0;
    for (uint32_t e = 0; e < g->nedges; e++) {
        pm_u128 n = expand_edge_runs(&g->edges[e], rep);
        sum += n;
        if (n > most)
            most = n, big = e;
    }
    if (sum <= PM_SDF_MAX_EXPANDED_EDGES)
        return PM_OK;
    const pm_edge *pe = &g->edges[big];
    sdf_text t = { .len = 0 };
    sdf_text_u128(&t, sum);
    sdf_text_add(&t, " edges (limit ");
    sdf_text_u128(&t, PM_SDF_MAX_EXPANDED_EDGES);
    sdf_text_add(&t, "); this edge alone gives ");
    sdf_text_u128(&t, most);
    pm_diag_set(diag, g->file, pe->line, pe->col,
                "the single-rate expansion would have %s (%s -> %s)", t.buf,
                pm_graph_node_name(g, pe->src), pm_graph_node_name(g, pe->dst));
    return PM_ELIMIT;
}

/* first[v]: id of v's firing 0 in the expanded graph; first[n] = total. */
static uint32_t *expand_first(const pm_graph *g, const uint64_t *rep)
{
    uint32_t *first = malloc(((size_t)g->nnodes + 1) * sizeof *first);
    if (!first)
        return NULL;
    first[0] = 0;
    for (uint32_t v = 0; v < g->nnodes; v++)
        first[v + 1] = first[v] + (uint32_t)rep[v]; /* guarded: <= PM_SDF_MAX_FIRINGS */
    return first;
}

/* ---- nodes and platform ------------------------------------------------------ */

static int expand_platform(const pm_graph *g, pm_graph *x)
{
    const pm_platform *p = &g->platform;
    int rc = pm_graph_set_cores(x, p->nclasses,
                                p->classes_named ? (const char *const *)p->class_names : NULL,
                                p->class_count);
    if (rc != PM_OK)
        return rc;
    x->platform.classes_named = p->classes_named;
    x->platform.procs_given = p->procs_given;
    x->platform.comm = p->comm;
    x->platform.interconnect = p->interconnect;
    x->platform.clock_hz = p->clock_hz;
    x->platform.rate_hz = p->rate_hz;
    x->platform.word_bytes = p->word_bytes;
    x->platform.block_transfers = p->block_transfers;
    if (p->title && !(x->platform.title = strdup(p->title)))
        return PM_ENOMEM;
    return PM_OK;
}

/* Add one firing node of v named name[0..len), copying v's attributes. */
static int expand_node_copy(const pm_graph *g, uint32_t v, pm_graph *x, const char *name,
                            size_t len)
{
    const pm_node *n = &g->nodes[v];
    uint32_t id;
    int rc = pm_graph_add_node(x, name, len, n->cycles < 0 ? 0 : n->cycles, &id);
    if (rc == PM_OK && n->class_cycles != PM_NONE)
        rc = pm_graph_set_class_cycles(x, id, g->class_cycles + n->class_cycles);
    if (rc != PM_OK)
        return rc;
    pm_node *y = &x->nodes[id];
    y->line = n->line;
    y->col = n->col;
    y->pin_core = n->pin_core;
    y->pin_class = n->pin_class;
    y->work = n->work;
    y->work_param = n->work_param;
    return PM_OK;
}

static int expand_nodes(const pm_graph *g, const uint64_t *rep, pm_graph *x,
                        uint32_t *origin)
{
    size_t longest = 0;
    for (uint32_t v = 0; v < g->nnodes; v++) {
        size_t len = strlen(pm_graph_node_name(g, v));
        longest = len > longest ? len : longest;
    }
    char *buf = malloc(longest + 32);
    if (!buf)
        return PM_ENOMEM;
    int rc = PM_OK;
    for (uint32_t v = 0, id = 0; rc == PM_OK && v < g->nnodes; v++) {
        const char *name = pm_graph_node_name(g, v);
        for (uint64_t i = 0; rc == PM_OK && i < rep[v]; i++, id++) {
            int len = rep[v] == 1 ? snprintf(buf, longest + 32, "%s", name)
                                  : snprintf(buf, longest + 32, "%s#%llu", name,
                                             (unsigned long long)i);
            rc = expand_node_copy(g, v, x, buf, (size_t)len);
            if (origin)
                origin[id] = v;
        }
    }
    free(buf);
    return rc;
}

/* ---- edges -------------------------------------------------------------------- */

/* One edge of the expansion: from firing i of `src` to firing j of the
 * edge's consumer, `delay` iterations before it, carrying `len` tokens. */
static int expand_add_run(const pm_graph *g, const pm_edge *pe, pm_graph *x,
                          const uint32_t *first, uint32_t src, pm_i128 i, pm_i128 j,
                          pm_i128 delay, pm_i128 len, pm_diag *diag)
{
    pm_i128 words = len * (pm_i128)pe->words;
    if (words > PM_MAX_VALUE) {
        pm_diag_set(diag, g->file, pe->line, pe->col,
                    "edge %s -> %s: one firing pair would exchange more than 2^62-1 words",
                    pm_graph_node_name(g, pe->src), pm_graph_node_name(g, pe->dst));
        return PM_ERANGE;
    }
    pm_edge ne = pm_graph_edge_default(first[src] + (uint32_t)i, first[pe->dst] + (uint32_t)j);
    ne.line = pe->line;
    ne.col = pe->col;
    ne.delay = (int64_t)delay;
    ne.words = (int64_t)words;
    return pm_graph_add_edge(x, &ne, NULL);
}

/* Transfers as blocks: producer firing I sends its p tokens as one
 * transfer to the consumer firing that takes the first of them (an edge of
 * p * words words), and each later consumer firing of the block follows
 * the one before it on the consumer's core (an edge of no words between
 * consecutive firings of the consumer: the previous iteration's last firing
 * when the run starts the window).  A run starting at token t belongs to
 * an earlier run's block unless t is the block's first token d + I * p.
 * Every firing of a node runs on one core in firing order, so those edges
 * add no cost and the block arrives whole before its first reader. */
static int expand_add_block(const pm_graph *g, const pm_edge *pe, pm_graph *x,
                            const uint32_t *first, const uint64_t *rep, pm_i128 t, pm_i128 I,
                            pm_i128 j, pm_i128 delay, pm_diag *diag)
{
    pm_i128 p = pe->produce;
    if (t == pe->delay + I * p) /* the block's first token: the transfer */
        return expand_add_run(g, pe, x, first, pe->src, I + delay * (pm_i128)rep[pe->src], j,
                              delay, p, diag);
    pm_edge order = *pe;
    order.words = 0;
    if (t > 0)
        return expand_add_run(g, &order, x, first, pe->dst, j - 1, j, 0, 0, diag);
    return expand_add_run(g, &order, x, first, pe->dst, (pm_i128)rep[pe->dst] - 1, j, 1, 0, diag);
}

static int expand_edge(const pm_graph *g, uint32_t e, const uint64_t *rep,
                       const uint32_t *first, pm_graph *x, pm_diag *diag)
{
    const pm_edge *pe = &g->edges[e];
    pm_i128 p = pe->produce, c = pe->consume, d = pe->delay;
    pm_i128 qu = (pm_i128)rep[pe->src];
    pm_i128 T = qu * p; /* tokens per iteration */
    int rc = PM_OK;
    for (pm_i128 t = 0; rc == PM_OK && t < T;) {
        pm_i128 j = t / c;                      /* consumer firing, iteration 0 */
        pm_i128 I = sdf_floordiv(t - d, p);     /* producer firing, any iteration */
        pm_i128 next = (j + 1) * c;
        if (d + (I + 1) * p < next)
            next = d + (I + 1) * p;
        if (T < next)
            next = T;
        pm_i128 iter = sdf_floordiv(I, qu);     /* <= 0 */
        if (g->platform.block_transfers)
            rc = expand_add_block(g, pe, x, first, rep, t, I, j, -iter, diag);
        else
            rc = expand_add_run(g, pe, x, first, pe->src, I - iter * qu, j, -iter, next - t,
                                diag);
        t = next;
    }
    return rc;
}

static int expand_build(const pm_graph *g, const uint64_t *rep, pm_graph *x,
                        uint32_t *origin, pm_diag *diag)
{
    uint32_t *first = expand_first(g, rep);
    if (!first)
        return PM_ENOMEM;
    int rc = expand_platform(g, x);
    if (rc == PM_OK)
        rc = expand_nodes(g, rep, x, origin);
    for (uint32_t e = 0; rc == PM_OK && e < g->nedges; e++) {
        uint32_t before = x->nedges;
        rc = expand_edge(g, e, rep, first, x, diag);
        assert(rc != PM_OK || x->nedges - before == expand_edge_runs(&g->edges[e], rep));
        (void)before;
    }
    if (rc == PM_OK)
        rc = pm_graph_finalize(x);
    free(first);
    return rc;
}

int pm_sdf_expand(const pm_graph *g, const uint64_t *rep, pm_graph **out,
                  uint32_t **origin, pm_diag *diag)
{
    *out = NULL;
    if (origin)
        *origin = NULL;
    int rc = sdf_check_balance(g, rep, diag);
    if (rc == PM_OK)
        rc = expand_guard_firings(g, rep, diag);
    if (rc == PM_OK)
        rc = expand_guard_edges(g, rep, diag);
    if (rc != PM_OK)
        return rc;
    uint64_t total = 0;
    for (uint32_t v = 0; v < g->nnodes; v++)
        total += rep[v];
    pm_graph *x = pm_graph_create(g->file);
    uint32_t *org = origin ? malloc(((size_t)total + 1) * sizeof *org) : NULL;
    rc = x && (org || !origin) ? expand_build(g, rep, x, org, diag) : PM_ENOMEM;
    if (rc != PM_OK) {
        pm_graph_destroy(x);
        free(org);
        return rc;
    }
    *out = x;
    if (origin)
        *origin = org;
    return PM_OK;
}

/* ---- firing ids, for maps of the expansion (sched/map/mapexpand.c) ---- */

/* What the map functions check first: rep balances g, the firings fit the
 * guard; then the first firing id of every node (*first, owned). */
int sdf_firing_ids(const pm_graph *g, const uint64_t *rep, uint32_t **first, pm_diag *diag)
{
    *first = NULL;
    int rc = sdf_check_balance(g, rep, diag);
    if (rc == PM_OK)
        rc = expand_guard_firings(g, rep, diag);
    if (rc != PM_OK)
        return rc;
    *first = expand_first(g, rep);
    return *first ? PM_OK : PM_ENOMEM;
}

/* ---- the whole path ----------------------------------------------------------- */

int pm_sdf_single_rate(const pm_graph *g, pm_graph **out, uint64_t **rep,
                       uint32_t **origin, pm_diag *diag)
{
    *out = NULL;
    if (rep)
        *rep = NULL;
    if (origin)
        *origin = NULL;
    uint64_t *r;
    int rc = pm_sdf_repetition(g, &r, diag);
    if (rc != PM_OK)
        return rc;
    rc = pm_sdf_check_iteration(g, r, diag);
    if (rc == PM_OK)
        rc = pm_sdf_expand(g, r, out, origin, diag);
    if (rc == PM_OK && rep)
        *rep = r;
    else
        free(r);
    return rc;
}
