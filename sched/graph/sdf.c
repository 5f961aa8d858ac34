/*
 * sdf.c - repetition vector and one-iteration check of multirate graphs
 * (Lee & Messerschmitt, "Static scheduling of synchronous data flow programs
 * for digital signal processing", IEEE Trans. Computers 1987), and the
 * helpers expand.c shares (sdf_internal.h).
 *
 * Repetition vector: a breadth-first spanning forest of the underlying
 * undirected graph gives every node its firing count relative to its part's
 * root as a reduced fraction; every edge is then checked against those
 * fractions, and a mismatch names the cycle the edge closes in the forest.
 * A part's smallest integer vector is its fractions times the lcm L of their
 * denominators, with no further reduction: in any integer solution
 * q[v] / q[root] = num/den reduced, so den divides q[root], so L divides
 * q[root], and q[root] = L is therefore the smallest.
 *
 * This file does not expand graphs (expand.c) nor compute bounds.
 */
#include "pacemap/sdf.h"
#include "sdf_internal.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* ---- 128-bit helpers and diagnostics text -------------------------------- */

bool sdf_mul128(pm_u128 a, pm_u128 b, pm_u128 *out)
{
    if (a && b > ~(pm_u128)0 / a)
        return false;
    *out = a * b;
    return true;
}

pm_i128 sdf_floordiv(pm_i128 a, pm_i128 b)
{
    pm_i128 q = a / b;
    if (a % b != 0 && a < 0)
        q--;
    return q;
}

void sdf_text_add(sdf_text *t, const char *s)
{
    if (t->full)
        return;
    size_t n = strlen(s);
    size_t room = sizeof t->buf - 4 - t->len; /* keep room for "..." */
    if (n > room) {
        memcpy(t->buf + t->len, "...", 4);
        t->len += 3;
        t->full = true;
        return;
    }
    memcpy(t->buf + t->len, s, n + 1);
    t->len += n;
}

void sdf_text_u128(sdf_text *t, pm_u128 v)
{
    char digits[48];
    size_t i = sizeof digits - 1;
    digits[i] = '\0';
    do {
        digits[--i] = (char)('0' + (int)(v % 10));
        v /= 10;
    } while (v);
    sdf_text_add(t, digits + i);
}

/* ---- adjacency and token counts ------------------------------------------ */

/* Counting sort of edge ids by source (by_src) or destination. */
static int sdf_csr(const pm_graph *g, bool by_src, uint32_t **off_out, uint32_t **list_out)
{
    uint32_t *off = calloc((size_t)g->nnodes + 2, sizeof *off);
    uint32_t *list = malloc(((size_t)g->nedges + 1) * sizeof *list);
    if (!off || !list) {
        free(off);
        free(list);
        return PM_ENOMEM;
    }
    for (uint32_t e = 0; e < g->nedges; e++)
        off[(by_src ? g->edges[e].src : g->edges[e].dst) + 2]++;
    for (uint32_t v = 0; v < g->nnodes; v++)
        off[v + 2] += off[v + 1];
    for (uint32_t e = 0; e < g->nedges; e++)
        list[off[(by_src ? g->edges[e].src : g->edges[e].dst) + 1]++] = e;
    *off_out = off;
    *list_out = list;
    return PM_OK;
}

int sdf_adj_build(const pm_graph *g, sdf_adj *a)
{
    memset(a, 0, sizeof *a);
    int rc = sdf_csr(g, true, &a->out_off, &a->out_edge);
    if (rc == PM_OK)
        rc = sdf_csr(g, false, &a->in_off, &a->in_edge);
    if (rc != PM_OK)
        sdf_adj_free(a);
    return rc;
}

void sdf_adj_free(sdf_adj *a)
{
    free(a->out_off);
    free(a->out_edge);
    free(a->in_off);
    free(a->in_edge);
    memset(a, 0, sizeof *a);
}

int sdf_tokens_init(sdf_tokens *s, const pm_graph *g, const sdf_adj *a,
                    const uint64_t *rep)
{
    s->g = g;
    s->adj = a;
    s->rep = rep;
    s->tokens = malloc(((size_t)g->nedges + 1) * sizeof *s->tokens);
    s->fired = calloc((size_t)g->nnodes + 1, sizeof *s->fired);
    if (!s->tokens || !s->fired) {
        sdf_tokens_free(s);
        return PM_ENOMEM;
    }
    for (uint32_t e = 0; e < g->nedges; e++)
        s->tokens[e] = (pm_u128)g->edges[e].delay;
    return PM_OK;
}

void sdf_tokens_free(sdf_tokens *s)
{
    free(s->tokens);
    free(s->fired);
    s->tokens = NULL;
    s->fired = NULL;
}

/* Firings an input edge allows.  Balance forces produce == consume on a
 * self-loop, so a self-loop that holds one firing's tokens holds them for
 * every firing. */
static pm_u128 sdf_edge_allows(const sdf_tokens *s, uint32_t e)
{
    const pm_edge *pe = &s->g->edges[e];
    pm_u128 tok = s->tokens[e], c = (pm_u128)pe->consume;
    if (pe->src != pe->dst)
        return tok / c;
    return tok >= c ? ~(pm_u128)0 : 0;
}

uint64_t sdf_tokens_ready(const sdf_tokens *s, uint32_t v)
{
    pm_u128 k = s->rep[v] - s->fired[v];
    for (uint32_t i = s->adj->in_off[v]; i < s->adj->in_off[v + 1] && k; i++) {
        pm_u128 allow = sdf_edge_allows(s, s->adj->in_edge[i]);
        if (allow < k)
            k = allow;
    }
    return (uint64_t)k;
}

void sdf_tokens_fire(sdf_tokens *s, uint32_t v, uint64_t k)
{
    /* outputs first, so that a self-loop never dips below zero */
    for (uint32_t i = s->adj->out_off[v]; i < s->adj->out_off[v + 1]; i++) {
        uint32_t e = s->adj->out_edge[i];
        s->tokens[e] += (pm_u128)k * (pm_u128)s->g->edges[e].produce;
    }
    for (uint32_t i = s->adj->in_off[v]; i < s->adj->in_off[v + 1]; i++) {
        uint32_t e = s->adj->in_edge[i];
        s->tokens[e] -= (pm_u128)k * (pm_u128)s->g->edges[e].consume;
    }
    s->fired[v] += k;
}

/* ---- validation ------------------------------------------------------------ */

static bool sdf_in_range(int64_t x, int64_t lo)
{
    return x >= lo && x <= PM_MAX_VALUE;
}

/* Rates must be positive, delays and words non-negative, all within 62
 * bits: the arithmetic below relies on it. */
static int sdf_check_edges(const pm_graph *g, pm_diag *diag)
{
    for (uint32_t e = 0; e < g->nedges; e++) {
        const pm_edge *pe = &g->edges[e];
        if (!sdf_in_range(pe->produce, 1) || !sdf_in_range(pe->consume, 1) ||
            !sdf_in_range(pe->delay, 0) || !sdf_in_range(pe->words, 0)) {
            pm_diag_set(diag, g->file, pe->line, pe->col,
                        "edge %s -> %s: rates must be between 1 and 2^62-1, delay "
                        "and words between 0 and 2^62-1",
                        pm_graph_node_name(g, pe->src), pm_graph_node_name(g, pe->dst));
            return PM_ERANGE;
        }
    }
    return PM_OK;
}

int sdf_check_balance(const pm_graph *g, const uint64_t *rep, pm_diag *diag)
{
    int rc = sdf_check_edges(g, diag);
    if (rc != PM_OK)
        return rc;
    for (uint32_t v = 0; v < g->nnodes; v++)
        if (rep[v] == 0 || rep[v] > (uint64_t)PM_MAX_VALUE) {
            pm_diag_set(diag, g->file, 0, 0, "repetition count of '%s' out of range",
                        pm_graph_node_name(g, v));
            return PM_EINVAL;
        }
    for (uint32_t e = 0; e < g->nedges; e++) {
        const pm_edge *pe = &g->edges[e];
        if ((pm_u128)rep[pe->src] * (pm_u128)pe->produce !=
            (pm_u128)rep[pe->dst] * (pm_u128)pe->consume) {
            pm_diag_set(diag, g->file, pe->line, pe->col,
                        "repetition vector does not balance edge %s -> %s",
                        pm_graph_node_name(g, pe->src), pm_graph_node_name(g, pe->dst));
            return PM_EINVAL;
        }
    }
    return PM_OK;
}

/* ---- repetition vector ------------------------------------------------------ */

typedef struct sdf_frac {
    uint64_t num, den; /* reduced, both in 1 .. PM_MAX_VALUE */
} sdf_frac;

/* A breadth-first spanning forest with each node's count relative to its
 * part's root.  queue lists nodes part by part; part_end[k] ends part k. */
typedef struct sdf_forest {
    sdf_frac *frac;
    uint32_t *parent_edge; /* PM_NONE at a root */
    uint32_t *depth;       /* UINT32_MAX: not reached yet */
    uint32_t *queue;
    uint32_t *part_end;
    uint32_t nparts;
} sdf_forest;

static void sdf_forest_free(sdf_forest *f)
{
    free(f->frac);
    free(f->parent_edge);
    free(f->depth);
    free(f->queue);
    free(f->part_end);
}

static int sdf_forest_init(sdf_forest *f, uint32_t n)
{
    memset(f, 0, sizeof *f);
    f->frac = malloc(((size_t)n + 1) * sizeof *f->frac);
    f->parent_edge = malloc(((size_t)n + 1) * sizeof *f->parent_edge);
    f->depth = malloc(((size_t)n + 1) * sizeof *f->depth);
    f->queue = malloc(((size_t)n + 1) * sizeof *f->queue);
    f->part_end = malloc(((size_t)n + 1) * sizeof *f->part_end);
    if (!f->frac || !f->parent_edge || !f->depth || !f->queue || !f->part_end) {
        sdf_forest_free(f);
        return PM_ENOMEM;
    }
    memset(f->depth, 0xff, ((size_t)n + 1) * sizeof *f->depth);
    return PM_OK;
}

/* f * mul / div as a reduced 128-bit fraction (never overflows: the
 * factors are below 2^62). */
static void sdf_scale(sdf_frac f, int64_t mul, int64_t div, pm_u128 *num, pm_u128 *den)
{
    pm_u128 n = (pm_u128)f.num * (pm_u128)mul, d = (pm_u128)f.den * (pm_u128)div;
    pm_u128 k = pm_rat_gcd(n, d);
    *num = n / k;
    *den = d / k;
}

/* Reach `to` from `from` over edge e; forward when from is e's source. */
static int sdf_reach(const pm_graph *g, sdf_forest *f, uint32_t e, uint32_t from,
                     uint32_t to, uint32_t *qlen, pm_diag *diag)
{
    if (f->depth[to] != UINT32_MAX)
        return PM_OK;
    const pm_edge *pe = &g->edges[e];
    bool fwd = pe->src == from;
    pm_u128 n, d;
    sdf_scale(f->frac[from], fwd ? pe->produce : pe->consume,
              fwd ? pe->consume : pe->produce, &n, &d);
    if (n > (pm_u128)PM_MAX_VALUE || d > (pm_u128)PM_MAX_VALUE) {
        pm_diag_set(diag, g->file, pe->line, pe->col,
                    "the rates of edge %s -> %s make a firing count pass 2^62-1 "
                    "per iteration", pm_graph_node_name(g, pe->src),
                    pm_graph_node_name(g, pe->dst));
        return PM_ERANGE;
    }
    f->frac[to] = (sdf_frac){ (uint64_t)n, (uint64_t)d };
    f->parent_edge[to] = e;
    f->depth[to] = f->depth[from] + 1;
    f->queue[(*qlen)++] = to;
    return PM_OK;
}

static int sdf_grow_part(const pm_graph *g, const sdf_adj *a, sdf_forest *f,
                         uint32_t root, uint32_t *qlen, pm_diag *diag)
{
    uint32_t head = *qlen;
    f->frac[root] = (sdf_frac){ 1, 1 };
    f->parent_edge[root] = PM_NONE;
    f->depth[root] = 0;
    f->queue[(*qlen)++] = root;
    for (; head < *qlen; head++) {
        uint32_t u = f->queue[head];
        int rc = PM_OK;
        for (uint32_t i = a->out_off[u]; rc == PM_OK && i < a->out_off[u + 1]; i++)
            rc = sdf_reach(g, f, a->out_edge[i], u, g->edges[a->out_edge[i]].dst, qlen, diag);
        for (uint32_t i = a->in_off[u]; rc == PM_OK && i < a->in_off[u + 1]; i++)
            rc = sdf_reach(g, f, a->in_edge[i], u, g->edges[a->in_edge[i]].src, qlen, diag);
        if (rc != PM_OK)
            return rc;
    }
    f->part_end[f->nparts++] = *qlen;
    return PM_OK;
}

static uint32_t sdf_parent(const pm_graph *g, const sdf_forest *f, uint32_t v)
{
    const pm_edge *pe = &g->edges[f->parent_edge[v]];
    return pe->src == v ? pe->dst : pe->src;
}

static void sdf_step_text(const pm_graph *g, sdf_text *t, uint32_t e, uint32_t from,
                          uint32_t to)
{
    sdf_text_add(t, g->edges[e].src == from && g->edges[e].dst == to ? " -> " : " <- ");
    sdf_text_add(t, pm_graph_node_name(g, to));
}

/* The cycle edge e closes in the forest, from e's source: over e, up the
 * tree from e's destination to the common ancestor, down to the source. */
static int sdf_cycle_text(const pm_graph *g, const sdf_forest *f, uint32_t e, sdf_text *t)
{
    uint32_t u = g->edges[e].src, v = g->edges[e].dst;
    uint32_t *down = malloc(((size_t)f->depth[u] + 1) * sizeof *down);
    if (!down)
        return PM_ENOMEM;
    uint32_t ndown = 0, x = u, y = v;
    while (f->depth[x] > f->depth[y])
        down[ndown++] = x, x = sdf_parent(g, f, x);
    sdf_text_add(t, pm_graph_node_name(g, u));
    sdf_step_text(g, t, e, u, v);
    while (f->depth[y] > f->depth[x]) {
        sdf_step_text(g, t, f->parent_edge[y], y, sdf_parent(g, f, y));
        y = sdf_parent(g, f, y);
    }
    while (x != y) {
        down[ndown++] = x, x = sdf_parent(g, f, x);
        sdf_step_text(g, t, f->parent_edge[y], y, sdf_parent(g, f, y));
        y = sdf_parent(g, f, y);
    }
    while (ndown--)
        sdf_step_text(g, t, f->parent_edge[down[ndown]], x, down[ndown]), x = down[ndown];
    free(down);
    return PM_OK;
}

/* Product of the count ratios the rates ask for around the cycle closed by
 * edge e (1 on a consistent cycle); false when it does not fit 128 bits. */
static bool sdf_cycle_product(const pm_graph *g, const sdf_forest *f, uint32_t e,
                              pm_u128 *num, pm_u128 *den)
{
    const pm_edge *pe = &g->edges[e];
    sdf_frac fu = f->frac[pe->src], fv = f->frac[pe->dst];
    pm_u128 n1, d1;
    sdf_scale(fu, pe->produce, pe->consume, &n1, &d1);
    pm_u128 g1 = pm_rat_gcd(n1, fv.num), g2 = pm_rat_gcd(d1, fv.den);
    return sdf_mul128(n1 / g1, fv.den / g2, num) && sdf_mul128(d1 / g2, fv.num / g1, den);
}

/* The edges of the cycle e closes, in the order sdf_cycle_text walks them:
 * e, up the tree from e's destination, down to e's source.  *out has room
 * for depth[src] + depth[dst] + 1 edges. */
static uint32_t sdf_cycle_edges(const pm_graph *g, const sdf_forest *f, uint32_t e,
                                uint32_t *out)
{
    uint32_t x = g->edges[e].src, y = g->edges[e].dst, n = 0, ndown = 0;
    uint32_t *down = out + f->depth[x] + f->depth[y] + 1; /* filled backwards */
    out[n++] = e;
    while (f->depth[x] > f->depth[y])
        *--down = f->parent_edge[x], ndown++, x = sdf_parent(g, f, x);
    while (f->depth[y] > f->depth[x])
        out[n++] = f->parent_edge[y], y = sdf_parent(g, f, y);
    while (x != y) {
        *--down = f->parent_edge[x], ndown++, x = sdf_parent(g, f, x);
        out[n++] = f->parent_edge[y], y = sdf_parent(g, f, y);
    }
    memmove(out + n, down, ndown * sizeof *out);
    return n + ndown;
}

/* How often edge e's rates other than 1 occur among all rates of g: the
 * rarer, the likelier that one of them is the one mistyped. */
static uint64_t sdf_rate_commonness(const pm_graph *g, uint32_t e)
{
    int64_t p = g->edges[e].produce, c = g->edges[e].consume;
    uint64_t count = 0;
    for (uint32_t i = 0; i < g->nedges; i++) {
        const pm_edge *x = &g->edges[i];
        count += (uint64_t)((p != 1 && (x->produce == p || x->consume == p)) +
                            (c != 1 && (x->produce == c || x->consume == c)));
    }
    return count;
}

/* Could changing one rate of edge e alone balance a cycle whose ratio is
 * n/d?  Its produce/consume ratio must be scaled by d/n or n/d (the
 * direction it is walked decides which; either is accepted). */
static bool sdf_one_change_fixes(const pm_edge *pe, pm_u128 n, pm_u128 d)
{
    pm_u128 p = (pm_u128)pe->produce, c = (pm_u128)pe->consume;
    return (p * d) % n == 0 || (c * n) % d == 0 || (c * d) % n == 0 || (p * n) % d == 0;
}

/* The edge of the cycle to point at: among those whose one rate could be
 * changed to balance the cycle, a multirate edge before a 1:1 edge, then
 * the rarest rates in the scenario, then the largest rate, then the first
 * walked. */
static uint32_t sdf_pick_culprit(const pm_graph *g, const uint32_t *cyc, uint32_t len,
                                 pm_u128 n, pm_u128 d)
{
    uint32_t best = cyc[0];
    uint64_t best_key[3] = { UINT64_MAX, UINT64_MAX, UINT64_MAX };
    for (uint32_t i = 0; i < len; i++) {
        const pm_edge *pe = &g->edges[cyc[i]];
        if (!sdf_one_change_fixes(pe, n, d))
            continue;
        int64_t big = pe->produce > pe->consume ? pe->produce : pe->consume;
        uint64_t key[3] = { pe->produce == 1 && pe->consume == 1,
                            sdf_rate_commonness(g, cyc[i]), (uint64_t)(PM_MAX_VALUE - big) };
        int k = 0;
        while (k < 2 && key[k] == best_key[k])
            k++;
        if (key[k] < best_key[k]) {
            best = cyc[i];
            memcpy(best_key, key, sizeof key);
        }
    }
    return best;
}

/* "; its edges: a -> b 2:1 (line 5), ..." */
static void sdf_edges_text(const pm_graph *g, const uint32_t *cyc, uint32_t len, sdf_text *t)
{
    char part[96];
    sdf_text_add(t, "; its edges:");
    for (uint32_t i = 0; i < len; i++) {
        const pm_edge *pe = &g->edges[cyc[i]];
        sdf_text_add(t, i ? ", " : " ");
        sdf_text_add(t, pm_graph_node_name(g, pe->src));
        sdf_text_add(t, " -> ");
        sdf_text_add(t, pm_graph_node_name(g, pe->dst));
        snprintf(part, sizeof part, " %lld:%lld (line %u)", (long long)pe->produce,
                 (long long)pe->consume, pe->line);
        sdf_text_add(t, part);
    }
}

/* The error names the cycle, its ratio and its edges with their rates, and
 * points at the edge whose rates most likely went wrong. */
static int sdf_report_inconsistent(const pm_graph *g, const sdf_forest *f, uint32_t e,
                                   pm_diag *diag)
{
    sdf_text t = { .len = 0 };
    uint32_t *cyc = malloc(((size_t)f->depth[g->edges[e].src] + f->depth[g->edges[e].dst] + 2) *
                           sizeof *cyc);
    int rc = cyc ? sdf_cycle_text(g, f, e, &t) : PM_ENOMEM;
    if (rc != PM_OK) {
        free(cyc);
        return rc;
    }
    uint32_t len = sdf_cycle_edges(g, f, e, cyc), at = e;
    pm_u128 n, d;
    if (sdf_cycle_product(g, f, e, &n, &d)) {
        const char *first = pm_graph_node_name(g, g->edges[e].src);
        sdf_text_add(&t, ": going around it, the rates ask '");
        sdf_text_add(&t, first);
        sdf_text_add(&t, "' to fire ");
        sdf_text_u128(&t, n);
        sdf_text_add(&t, "/");
        sdf_text_u128(&t, d);
        sdf_text_add(&t, " times as often as itself");
        at = sdf_pick_culprit(g, cyc, len, n, d);
    } else {
        sdf_text_add(&t, ": no firing counts balance every edge on it");
    }
    sdf_edges_text(g, cyc, len, &t);
    free(cyc);
    const pm_edge *pe = &g->edges[at];
    pm_diag_set(diag, g->file, pe->line, pe->col, "inconsistent rates on the cycle %s",
                t.buf);
    return PM_EINCONSISTENT;
}

/* Every edge must agree with the forest's fractions. */
static int sdf_check_consistent(const pm_graph *g, const sdf_forest *f, pm_diag *diag)
{
    for (uint32_t e = 0; e < g->nedges; e++) {
        const pm_edge *pe = &g->edges[e];
        pm_u128 n, d;
        sdf_scale(f->frac[pe->src], pe->produce, pe->consume, &n, &d);
        if (n != f->frac[pe->dst].num || d != f->frac[pe->dst].den)
            return sdf_report_inconsistent(g, f, e, diag);
    }
    return PM_OK;
}

/* Scale part [begin, end) of the queue to its smallest integer vector. */
static int sdf_integer_part(const pm_graph *g, const sdf_forest *f, uint32_t begin,
                            uint32_t end, uint64_t *rep, pm_diag *diag)
{
    pm_u128 lcm = 1;
    for (uint32_t i = begin; i < end; i++) {
        uint64_t den = f->frac[f->queue[i]].den;
        lcm = lcm / pm_rat_gcd(lcm, den) * den;
        if (lcm > (pm_u128)PM_MAX_VALUE) {
            uint32_t root = f->queue[begin];
            pm_diag_set(diag, g->file, g->nodes[root].line, g->nodes[root].col,
                        "node '%s' would fire more than 2^62-1 times per iteration",
                        pm_graph_node_name(g, root));
            return PM_ERANGE;
        }
    }
    for (uint32_t i = begin; i < end; i++) {
        uint32_t v = f->queue[i];
        pm_u128 q = (pm_u128)f->frac[v].num * (lcm / f->frac[v].den);
        if (q > (pm_u128)PM_MAX_VALUE) {
            pm_diag_set(diag, g->file, g->nodes[v].line, g->nodes[v].col,
                        "node '%s' would fire more than 2^62-1 times per iteration",
                        pm_graph_node_name(g, v));
            return PM_ERANGE;
        }
        rep[v] = (uint64_t)q;
    }
    return PM_OK;
}

static int sdf_solve(const pm_graph *g, const sdf_adj *a, sdf_forest *f, uint64_t *rep,
                     pm_diag *diag)
{
    uint32_t qlen = 0;
    for (uint32_t v = 0; v < g->nnodes; v++) {
        if (f->depth[v] != UINT32_MAX)
            continue;
        int rc = sdf_grow_part(g, a, f, v, &qlen, diag);
        if (rc != PM_OK)
            return rc;
    }
    int rc = sdf_check_consistent(g, f, diag);
    for (uint32_t k = 0, begin = 0; rc == PM_OK && k < f->nparts; k++) {
        rc = sdf_integer_part(g, f, begin, f->part_end[k], rep, diag);
        begin = f->part_end[k];
    }
    return rc;
}

/* When every edge consumes what it produces, every fraction of the forest
 * is 1/1, every edge is consistent and each part's vector is all ones: the
 * forest (random walks over a large graph) need not be built. */
static bool sdf_rates_balanced(const pm_graph *g)
{
    for (uint32_t e = 0; e < g->nedges; e++)
        if (g->edges[e].produce != g->edges[e].consume)
            return false;
    return true;
}

int pm_sdf_repetition(const pm_graph *g, uint64_t **rep, pm_diag *diag)
{
    *rep = NULL;
    int rc = sdf_check_edges(g, diag);
    if (rc != PM_OK)
        return rc;
    uint64_t *r = malloc(((size_t)g->nnodes + 1) * sizeof *r);
    sdf_adj a;
    sdf_forest f;
    if (!r)
        return PM_ENOMEM;
    if (sdf_rates_balanced(g)) {
        for (uint32_t v = 0; v < g->nnodes; v++)
            r[v] = 1;
        *rep = r;
        return PM_OK;
    }
    rc = sdf_adj_build(g, &a);
    if (rc == PM_OK) {
        rc = sdf_forest_init(&f, g->nnodes);
        if (rc == PM_OK) {
            rc = sdf_solve(g, &a, &f, r, diag);
            sdf_forest_free(&f);
        }
        sdf_adj_free(&a);
    }
    if (rc != PM_OK)
        free(r);
    else
        *rep = r;
    return rc;
}

/* ---- one-iteration check ---------------------------------------------------- */

/* An input edge of v that lacks tokens; v is stuck short of its count. */
static uint32_t sdf_blocking_edge(const sdf_tokens *s, uint32_t v)
{
    for (uint32_t i = s->adj->in_off[v]; i < s->adj->in_off[v + 1]; i++) {
        uint32_t e = s->adj->in_edge[i];
        if (s->tokens[e] < (pm_u128)s->g->edges[e].consume)
            return e;
    }
    return PM_NONE;
}

/* Follow blocking edges backwards from a stuck node until a node repeats.
 * A blocking edge's source is stuck too: had it finished its count, the
 * edge would hold at least `consume` tokens.  Fills loop[] with the loop's
 * edges in data order and returns its length. */
static uint32_t sdf_stuck_loop(const sdf_tokens *s, uint32_t start, uint32_t *step,
                               uint32_t *walk)
{
    uint32_t n = 0, v = start;
    while (step[v] == PM_NONE) {
        step[v] = n;
        uint32_t e = sdf_blocking_edge(s, v);
        if (e == PM_NONE)
            return 0; /* cannot happen: v would be ready */
        walk[n++] = e;
        v = s->g->edges[e].src;
    }
    /* walk[step[v] .. n) runs against the data; reverse it in place */
    uint32_t len = n - step[v];
    for (uint32_t i = 0; i < len / 2; i++) {
        uint32_t t = walk[step[v] + i];
        walk[step[v] + i] = walk[n - 1 - i];
        walk[n - 1 - i] = t;
    }
    memmove(walk, walk + step[v], len * sizeof *walk);
    return len;
}

static int sdf_report_deadlock(const sdf_tokens *s, uint32_t stuck, pm_diag *diag)
{
    const pm_graph *g = s->g;
    uint32_t *step = malloc(((size_t)g->nnodes + 1) * sizeof *step);
    uint32_t *walk = malloc(((size_t)g->nnodes + 1) * sizeof *walk);
    if (!step || !walk) {
        free(step);
        free(walk);
        return PM_ENOMEM;
    }
    memset(step, 0xff, ((size_t)g->nnodes + 1) * sizeof *step);
    uint32_t len = sdf_stuck_loop(s, stuck, step, walk);
    uint32_t first = 0; /* start the loop at its smallest node id */
    for (uint32_t i = 1; i < len; i++)
        if (g->edges[walk[i]].src < g->edges[walk[first]].src)
            first = i;
    sdf_text t = { .len = 0 };
    uint32_t v0 = len ? g->edges[walk[first]].src : stuck;
    sdf_text_add(&t, pm_graph_node_name(g, v0));
    for (uint32_t i = 0; i < len; i++)
        sdf_step_text(g, &t, walk[(first + i) % len], g->edges[walk[(first + i) % len]].src,
                      g->edges[walk[(first + i) % len]].dst);
    const pm_edge *pe = len ? &g->edges[walk[(first + len - 1) % len]] : NULL;
    pm_diag_set(diag, g->file, pe ? pe->line : 0, pe ? pe->col : 0,
                "one iteration cannot complete: too few initial tokens (delays) on the "
                "loop %s ('%s' fired %llu of %llu times)", t.buf,
                pm_graph_node_name(g, v0), (unsigned long long)s->fired[v0],
                (unsigned long long)s->rep[v0]);
    free(step);
    free(walk);
    return PM_EDEADLOCK;
}

/* Fire ready nodes in batches until none is ready; a node is revisited only
 * when one of its inputs grew.  *steps counts batches. */
static int sdf_run_ready(sdf_tokens *s, uint32_t *ring, bool *queued, pm_diag *diag)
{
    const pm_graph *g = s->g;
    uint32_t n = g->nnodes, head = 0, count = n;
    uint64_t steps = 0;
    for (uint32_t v = 0; v < n; v++)
        ring[v] = v, queued[v] = true;
    while (count) {
        uint32_t v = ring[head];
        head = head + 1 == n ? 0 : head + 1;
        count--;
        queued[v] = false;
        uint64_t k = sdf_tokens_ready(s, v);
        if (!k)
            continue;
        if (++steps > PM_SDF_MAX_CHECK_STEPS) {
            pm_diag_set(diag, g->file, 0, 0, "the one-iteration check needs more than "
                        "%llu batches of firings", (unsigned long long)PM_SDF_MAX_CHECK_STEPS);
            return PM_ELIMIT;
        }
        sdf_tokens_fire(s, v, k);
        for (uint32_t i = s->adj->out_off[v]; i < s->adj->out_off[v + 1]; i++) {
            uint32_t w = g->edges[s->adj->out_edge[i]].dst;
            if (!queued[w] && s->fired[w] < s->rep[w]) {
                queued[w] = true;
                ring[(head + count++) % n] = w;
            }
        }
    }
    return PM_OK;
}

static int sdf_check_with(const pm_graph *g, const sdf_adj *a, const uint64_t *rep,
                          pm_diag *diag)
{
    sdf_tokens s;
    uint32_t *ring = malloc(((size_t)g->nnodes + 1) * sizeof *ring);
    bool *queued = malloc(((size_t)g->nnodes + 1) * sizeof *queued);
    int rc = ring && queued ? sdf_tokens_init(&s, g, a, rep) : PM_ENOMEM;
    if (rc == PM_OK) {
        rc = sdf_run_ready(&s, ring, queued, diag);
        for (uint32_t v = 0; rc == PM_OK && v < g->nnodes; v++)
            if (s.fired[v] < rep[v])
                rc = sdf_report_deadlock(&s, v, diag);
        sdf_tokens_free(&s);
    }
    free(ring);
    free(queued);
    return rc;
}

int pm_sdf_check_iteration(const pm_graph *g, const uint64_t *rep, pm_diag *diag)
{
    int rc = sdf_check_balance(g, rep, diag);
    if (rc != PM_OK)
        return rc;
    sdf_adj a;
    rc = sdf_adj_build(g, &a);
    if (rc != PM_OK)
        return rc;
    rc = sdf_check_with(g, &a, rep, diag);
    sdf_adj_free(&a);
    return rc;
}
