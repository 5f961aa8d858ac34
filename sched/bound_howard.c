/*
 * bound_howard.c - Howard's policy iteration for the maximum cycle ratio,
 * in exact integer arithmetic, and its certificate.
 *
 * Method: Cochet-Terrasson, Cohen, Gaubert, McGettrick & Quadrat,
 * "Numerical computation of spectral elements in max-plus algebra", 1998;
 * Dasdan, "Experimental analysis of the fastest optimum cycle ratio and
 * mean algorithms", ACM TODAES 2004.  A policy picks one out-edge per node;
 * each node then leads to one policy cycle of ratio p/q, and its bias x
 * (scaled by q, so it is an integer) satisfies x(u) = q*t(u) - p*d + x(v)
 * along its policy edge, with x = 0 at the cycle's smallest node.  A node
 * changes its edge only on strict improvement: first a larger ratio, then
 * (equal ratio, hence equal reduced q) a larger bias.  Ratios and biases
 * never decrease and some strictly increase, so the iteration ends; at the
 * end no edge improves, which is exactly the certificate.
 *
 * Magnitudes: sums of node times and of delays are below 2^62, so p and q
 * are below 2^62, |x| < 2^125 and every expression below fits in 128 bits.
 * What it does not do: choose the part order, list loops (bound.c,
 * bound_loops.c).
 */
#include "bound_internal.h"

#include <stdlib.h>
#include <string.h>

#define HOWARD_ONPATH (PM_NONE - 1)

int howard_init(howard *h, const pm_graph *g, const int64_t *t, const uint32_t *comp)
{
    memset(h, 0, sizeof *h);
    size_t n = (size_t)g->nnodes + 1;
    h->g = g;
    h->t = t;
    h->comp = comp;
    h->pol = malloc(n * sizeof *h->pol);
    h->cyc = malloc(n * sizeof *h->cyc);
    h->x = malloc(n * sizeof *h->x);
    h->stack = malloc(n * sizeof *h->stack);
    if (!h->pol || !h->cyc || !h->x || !h->stack) {
        howard_free(h);
        return PM_ENOMEM;
    }
    memset(h->cyc, 0xff, n * sizeof *h->cyc);
    return PM_OK;
}

void howard_free(howard *h)
{
    free(h->pol);
    free(h->cyc);
    free(h->x);
    free(h->stack);
    free(h->cycles);
    memset(h, 0, sizeof *h);
}

/* Exact order of two ratios a.p/a.q and b.p/b.q (q > 0). */
static int howard_cmp(const howard_cycle *a, const howard_cycle *b)
{
    if (a == b)
        return 0;
    bnd_i128 l = (bnd_i128)a->p * b->q, r = (bnd_i128)b->p * a->q;
    return (l > r) - (l < r);
}

/* First policy: the out-edge inside the part with the fewest delays
 * (largest ratio contribution), ties to the heavier successor. */
static void howard_first_policy(howard *h, const uint32_t *nodes, uint32_t len, uint32_t c)
{
    const pm_graph *g = h->g;
    for (uint32_t i = 0; i < len; i++) {
        uint32_t u = nodes[i], best = PM_NONE;
        for (uint32_t k = g->out_off[u]; k < g->out_off[u + 1]; k++) {
            uint32_t e = g->out_edge[k];
            const pm_edge *ed = &g->edges[e];
            if (h->comp[ed->dst] != c)
                continue;
            if (best == PM_NONE || ed->delay < g->edges[best].delay ||
                (ed->delay == g->edges[best].delay &&
                 h->t[ed->dst] > h->t[g->edges[best].dst]))
                best = e;
        }
        h->pol[u] = best; /* never PM_NONE: the part is strongly connected */
    }
}

static int howard_push_cycle(howard *h, int64_t w, int64_t d, uint32_t root)
{
    if (h->ncycles == h->cycles_cap) {
        uint32_t cap = h->cycles_cap ? 2 * h->cycles_cap : 64;
        howard_cycle *p = realloc(h->cycles, cap * sizeof *p);
        if (!p)
            return PM_ENOMEM;
        h->cycles = p;
        h->cycles_cap = cap;
    }
    uint64_t gcd = pm_gcd_u64((uint64_t)w, (uint64_t)d);
    if (gcd == 0)
        gcd = 1;
    h->cycles[h->ncycles++] = (howard_cycle){ w / (int64_t)gcd, d / (int64_t)gcd, root };
    return PM_OK;
}

static inline uint32_t howard_next(const howard *h, uint32_t u)
{
    return h->g->edges[h->pol[u]].dst;
}

static inline bnd_i128 howard_step(const howard *h, uint32_t u, uint32_t e,
                                   const howard_cycle *c)
{
    return (bnd_i128)c->q * h->t[u] - (bnd_i128)c->p * h->g->edges[e].delay +
           h->x[h->g->edges[e].dst];
}

/* The policy cycle on stack[from..top): record it and set its biases. */
static int howard_close_cycle(howard *h, uint32_t from, uint32_t top)
{
    int64_t w = 0, d = 0;
    uint32_t root = h->stack[from], at = from;
    for (uint32_t i = from; i < top; i++) {
        uint32_t u = h->stack[i];
        w += h->t[u];
        d += h->g->edges[h->pol[u]].delay;
        if (u < root) {
            root = u;
            at = i;
        }
    }
    int rc = howard_push_cycle(h, w, d, root);
    if (rc)
        return rc;
    uint32_t k = h->ncycles - 1, len = top - from;
    h->x[root] = 0;
    h->cyc[root] = k;
    /* walk backwards from the node before the root */
    for (uint32_t j = 1; j < len; j++) {
        uint32_t u = h->stack[from + (at + len - from - j) % len];
        h->x[u] = howard_step(h, u, h->pol[u], &h->cycles[k]);
        h->cyc[u] = k;
    }
    return PM_OK;
}

/* Value determination: ratios and biases of every node of the part. */
static int howard_values(howard *h, const uint32_t *nodes, uint32_t len)
{
    for (uint32_t i = 0; i < len; i++)
        h->cyc[nodes[i]] = PM_NONE;
    for (uint32_t i = 0; i < len; i++) {
        uint32_t top = 0, v = nodes[i];
        while (h->cyc[v] == PM_NONE) {
            h->cyc[v] = HOWARD_ONPATH;
            h->stack[top++] = v;
            v = howard_next(h, v);
        }
        if (h->cyc[v] == HOWARD_ONPATH) {
            uint32_t from = top;
            while (h->stack[from - 1] != v)
                from--;
            int rc = howard_close_cycle(h, from - 1, top);
            if (rc)
                return rc;
            top = from - 1;
        }
        while (top) {
            uint32_t u = h->stack[--top];
            uint32_t k = h->cyc[howard_next(h, u)];
            h->cyc[u] = k;
            h->x[u] = howard_step(h, u, h->pol[u], &h->cycles[k]);
        }
    }
    return PM_OK;
}

/* Policy improvement; true when some node changed its edge. */
static bool howard_improve(howard *h, const uint32_t *nodes, uint32_t len, uint32_t c)
{
    const pm_graph *g = h->g;
    bool changed = false;
    for (uint32_t i = 0; i < len; i++) {
        uint32_t u = nodes[i], best = h->pol[u];
        const howard_cycle *bc = &h->cycles[h->cyc[u]];
        bnd_i128 bx = h->x[u];
        for (uint32_t k = g->out_off[u]; k < g->out_off[u + 1]; k++) {
            uint32_t e = g->out_edge[k], v = g->edges[e].dst;
            if (h->comp[v] != c)
                continue;
            const howard_cycle *vc = &h->cycles[h->cyc[v]];
            int r = howard_cmp(vc, bc);
            if (r < 0)
                continue;
            bnd_i128 vx = howard_step(h, u, e, vc);
            if (r > 0 || vx > bx) {
                best = e;
                bc = vc;
                bx = vx;
            }
        }
        if (best != h->pol[u]) {
            h->pol[u] = best;
            changed = true;
        }
    }
    return changed;
}

int howard_solve_part(howard *h, const uint32_t *nodes, uint32_t len, uint32_t comp_id)
{
    uint32_t base = h->ncycles;
    howard_first_policy(h, nodes, len, comp_id);
    for (;;) {
        h->ncycles = base;
        int rc = howard_values(h, nodes, len);
        if (rc)
            return rc;
        if (!howard_improve(h, nodes, len, comp_id))
            break;
    }
    /* converged: one ratio for the whole part; keep the cycle reached from
     * the part's first node as its worst loop */
    h->ncycles = base + 1;
    for (uint32_t i = 0; i < len; i++)
        h->cyc[nodes[i]] = base;
    return PM_OK;
}

int howard_certify(const howard *h)
{
    const pm_graph *g = h->g;
    for (uint32_t e = 0; e < g->nedges; e++) {
        uint32_t u = g->edges[e].src, v = g->edges[e].dst;
        if (h->comp[u] != h->comp[v] || h->cyc[u] == PM_NONE)
            continue;
        if (h->cyc[v] != h->cyc[u])
            return PM_EINVAL;
        if (howard_step(h, u, e, &h->cycles[h->cyc[u]]) > h->x[u])
            return PM_EINVAL;
    }
    return PM_OK;
}

bool howard_tight(const howard *h, uint32_t e, int64_t p, int64_t q)
{
    const pm_edge *ed = &h->g->edges[e];
    uint32_t k = h->cyc[ed->src];
    if (k == PM_NONE || h->cyc[ed->dst] != k || h->comp[ed->src] != h->comp[ed->dst])
        return false;
    const howard_cycle *c = &h->cycles[k];
    return c->p == p && c->q == q && howard_step(h, ed->src, e, c) == h->x[ed->src];
}

void howard_policy_loop(const howard *h, uint32_t root, uint32_t *store, pm_loop *loop)
{
    uint32_t len = 0, v = root;
    do {
        store[len++] = v;
        v = howard_next(h, v);
    } while (v != root);
    loop->len = len;
    loop->nodes = store;
    loop->edges = store + len;
    for (uint32_t i = 0; i < len; i++)
        loop->edges[i] = h->pol[store[i]];
}
