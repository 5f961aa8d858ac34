/*
 * karp.c - a second, independent computation of the iteration bound, used
 * by the tests to cross-check the policy iteration of bound_howard.c.
 *
 * Oracle: for a fraction p/q, give every edge u -> v the integer weight
 * q*t(u) - p*d(e).  A cycle has positive weight exactly when its ratio
 * exceeds p/q, so the sign of the maximum cycle mean of these weights is
 * the sign of (bound - p/q).  The maximum cycle mean comes from Karp's
 * theorem (R. M. Karp, "A characterization of the minimum cycle mean in a
 * digraph", Discrete Mathematics 23, 1978), with D_k(v) the heaviest walk
 * of exactly k edges ending at v (D_0 = 0 everywhere, as from a super
 * source): mean = max_v min_k (D_n(v) - D_k(v)) / (n - k).  Only its sign is
 * needed, which is max_v min_k sign(D_n(v) - D_k(v)).
 *
 * Search: the bound is a fraction W/D with D at most the sum of delays, so
 * a Stern-Brocot descent with a three-way oracle ends on it exactly; runs
 * in one direction are crossed by galloping and bisection.
 * Shares only the input checks with bound.c; a loop without delay is
 * reported by pacemap/order.h, as everywhere.
 */
#include "bound_internal.h"
#include "pacemap/order.h"

#include <stdlib.h>
#include <string.h>

#define KARP_NEG_INF (-((pm_i128)1 << 126))

typedef struct karp {
    const pm_graph *g;
    const int64_t *t;
    pm_i128 *a, *b;     /* rolling D_k rows */
    pm_i128 *dn;        /* D_n */
    int8_t *sgn;         /* min_k sign(D_n - D_k) per node */
    int64_t maxt, maxd;
} karp;

/* row b = one more edge than row a. */
static void karp_step(const karp *k, pm_i128 p, pm_i128 q, const pm_i128 *a, pm_i128 *b)
{
    const pm_graph *g = k->g;
    for (uint32_t v = 0; v < g->nnodes; v++)
        b[v] = KARP_NEG_INF;
    for (uint32_t e = 0; e < g->nedges; e++) {
        const pm_edge *ed = &g->edges[e];
        if (a[ed->src] == KARP_NEG_INF)
            continue;
        pm_i128 w = a[ed->src] + q * k->t[ed->src] - p * ed->delay;
        if (w > b[ed->dst])
            b[ed->dst] = w;
    }
}

/* Sign of (bound - p/q); 2 when g has no cycle. */
static int karp_oracle(karp *k, pm_i128 p, pm_i128 q)
{
    uint32_t n = k->g->nnodes;
    pm_i128 *a = k->a, *b = k->b, *tmp;
    memset(a, 0, (size_t)n * sizeof *a);
    for (uint32_t i = 0; i < n; i++) {
        karp_step(k, p, q, a, b);
        tmp = a, a = b, b = tmp;
    }
    memcpy(k->dn, a, (size_t)n * sizeof *a);
    memset(a, 0, (size_t)n * sizeof *a);
    for (uint32_t v = 0; v < n; v++)
        k->sgn[v] = 1;
    for (uint32_t i = 0; i < n; i++) {
        for (uint32_t v = 0; v < n; v++) {
            if (a[v] == KARP_NEG_INF || k->dn[v] == KARP_NEG_INF)
                continue;
            int s = (k->dn[v] > a[v]) - (k->dn[v] < a[v]);
            if (s < k->sgn[v])
                k->sgn[v] = (int8_t)s;
        }
        karp_step(k, p, q, a, b);
        tmp = a, a = b, b = tmp;
    }
    int best = 2;
    for (uint32_t v = 0; v < n; v++)
        if (k->dn[v] != KARP_NEG_INF && (best == 2 || k->sgn[v] > best))
            best = k->sgn[v];
    return best;
}

/* The oracle on a checked fraction: PM_ERANGE when weights could overflow. */
static int karp_ask(karp *k, pm_i128 p, pm_i128 q, int *sign)
{
    long double bound = ((long double)q * (long double)k->maxt +
                         (long double)p * (long double)k->maxd) *
                        ((long double)k->g->nnodes + 1);
    if (bound > 0x1p120L)
        return PM_ERANGE;
    *sign = karp_oracle(k, p, q);
    return PM_OK;
}

typedef struct sb_frac {
    pm_i128 p, q;
} sb_frac;

/* Largest k in [1, cap] with sign(bound - (a + k*b)) > 0, knowing it holds
 * for k = 1 (sgn_dir = 1), or the mirror (sgn_dir = -1: k*a + b, sign < 0).
 * *hit is set when some candidate equals the bound exactly. */
static int sb_gallop(karp *k, sb_frac a, sb_frac b, int dir, pm_i128 cap, pm_i128 *kbest,
                     sb_frac *hit, bool *found)
{
    /* gallop (c = 2, 4, 8, ...) until the sign turns or cap is passed,
     * then bisect (lo, hi) */
    pm_i128 lo = 1, hi = 0, step = 2;
    for (;;) {
        pm_i128 c;
        if (hi == 0 && step > cap) {
            hi = cap + 1;
            continue;
        }
        if (hi == 0)
            c = step;
        else if (hi - lo > 1)
            c = lo + (hi - lo) / 2;
        else
            break;
        sb_frac f = dir > 0 ? (sb_frac){ a.p + c * b.p, a.q + c * b.q }
                            : (sb_frac){ c * a.p + b.p, c * a.q + b.q };
        int s, rc = karp_ask(k, f.p, f.q, &s);
        if (rc)
            return rc;
        if (s == 0) {
            *hit = f;
            *found = true;
            return PM_OK;
        }
        if (s == dir)
            lo = c, step = hi == 0 ? 2 * step : step;
        else
            hi = c;
    }
    *kbest = lo;
    return PM_OK;
}

/* Stern-Brocot descent between l < bound < r until a mediant hits it. */
static int sb_search(karp *k, int64_t wmax, int64_t dmax, sb_frac *res)
{
    sb_frac l = { 0, 1 }, r = { 1, 0 };
    for (;;) {
        sb_frac m = { l.p + r.p, l.q + r.q };
        int s, rc = karp_ask(k, m.p, m.q, &s);
        if (rc)
            return rc;
        if (s == 0) {
            *res = m;
            return PM_OK;
        }
        bool found = false;
        pm_i128 kb = 0; /* set by sb_gallop on success */
        /* caps: past them the denominator (or value) exceeds any cycle's */
        pm_i128 cap = s > 0 ? (r.q ? (dmax - l.q) / r.q + 1 : wmax + 1)
                             : (dmax - r.q) / l.q + 1;
        if (cap < 1)
            cap = 1;
        rc = sb_gallop(k, l, r, s, cap, &kb, res, &found);
        if (rc || found)
            return rc;
        if (s > 0) {
            sb_frac nl = { l.p + kb * r.p, l.q + kb * r.q };
            r = (sb_frac){ nl.p + r.p, nl.q + r.q };
            l = nl;
        } else {
            sb_frac nr = { kb * l.p + r.p, kb * l.q + r.q };
            l = (sb_frac){ l.p + nr.p, l.q + nr.q };
            r = nr;
        }
    }
}

static int karp_alloc(karp *k, uint32_t n)
{
    size_t m = (size_t)n + 1;
    k->a = malloc(m * sizeof *k->a);
    k->b = malloc(m * sizeof *k->b);
    k->dn = malloc(m * sizeof *k->dn);
    k->sgn = malloc(m);
    return k->a && k->b && k->dn && k->sgn ? PM_OK : PM_ENOMEM;
}

static void karp_free(karp *k)
{
    free(k->a);
    free(k->b);
    free(k->dn);
    free(k->sgn);
}

int pm_bound_karp(const pm_graph *g, bool *has_loop, pm_rat *bound, pm_diag *diag)
{
    if (!g || !has_loop || !bound || !g->finalized)
        return PM_EINVAL;
    *has_loop = false;
    int64_t *t, total;
    int rc = bound_node_times(g, &t, &total, NULL, NULL, diag);
    if (rc)
        return rc;
    karp k = { .g = g, .t = t };
    int64_t dsum = 0;
    for (uint32_t v = 0; v < g->nnodes; v++)
        k.maxt = t[v] > k.maxt ? t[v] : k.maxt;
    for (uint32_t e = 0; e < g->nedges; e++) {
        k.maxd = g->edges[e].delay > k.maxd ? g->edges[e].delay : k.maxd;
        dsum += g->edges[e].delay;
    }
    rc = pm_order_check_zero_delay(g, diag);
    if (rc == PM_OK)
        rc = karp_alloc(&k, g->nnodes);
    int s = 2;
    if (rc == PM_OK)
        rc = karp_ask(&k, 0, 1, &s);
    if (rc == PM_OK && s != 2) {
        *has_loop = true;
        sb_frac f = { 0, 1 };
        if (s != 0)
            rc = sb_search(&k, total, dsum, &f);
        if (rc == PM_OK && (f.p > INT64_MAX || f.q > INT64_MAX))
            rc = PM_ERANGE;
        if (rc == PM_OK)
            rc = pm_rat_make((int64_t)f.p, (int64_t)f.q, bound);
    }
    karp_free(&k);
    free(t);
    return rc;
}
