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
 * (equal ratio, hence equal reduced q) a larger bias, both judged on the
 * values of the previous policy.  Ratios and biases never decrease and
 * some strictly increase, so the iteration ends; at the end no edge
 * improves, which is exactly the certificate, checked again on the graph's
 * own edge list.
 *
 * Magnitudes: sums of node times T and of delays D are below 2^62, so p and
 * q are below 2^62, |x| <= q*T + p*D < 2^125 and every expression fits in
 * 128 bits.  When 4*T*D < 2^63 (nearly always) biases are kept in 64 bits,
 * which halves the memory the passes sweep.
 * What it does not do: choose the part order, list loops (bound.c,
 * bound_loops.c).
 */
#include "bound_internal.h"

#include <stdlib.h>
#include <string.h>

/* ---- building the local arrays ------------------------------------------ */

static int howard_alloc(howard *h, bool small_delays, bool small_times)
{
    size_t n = (size_t)h->n + 1, m = (size_t)h->off[h->n] + 1;
    h->dst = malloc(m * sizeof *h->dst);
    if (small_delays)
        h->d8 = malloc(m);
    else
        h->d64 = malloc(m * sizeof *h->d64);
    if (small_times)
        h->t32 = malloc(n * sizeof *h->t32);
    else
        h->t = malloc(n * sizeof *h->t);
    return h->dst && (h->d8 || h->d64) && (h->t || h->t32) ? PM_OK : PM_ENOMEM;
}

/* Count, then copy, the edges whose ends share a part.  dst[k] is the
 * target of g->out_edge[k]. */
static void howard_fill(howard *h, const uint32_t *comp, const uint32_t *dst)
{
    const pm_graph *g = h->g;
    for (uint32_t i = 0; i < h->n; i++) {
        uint32_t u = h->order[i], c = 0;
        for (uint32_t k = g->out_off[u]; k < g->out_off[u + 1]; k++)
            c += comp[dst[k]] == comp[u];
        h->off[i + 1] = h->off[i] + c;
    }
}

static void howard_copy(howard *h, const uint32_t *comp, const uint32_t *dst,
                        const uint8_t *dly)
{
    const pm_graph *g = h->g;
    for (uint32_t i = 0; i < h->n; i++) {
        uint32_t u = h->order[i], at = h->off[i];
        if (h->t32)
            h->t32[i] = (uint32_t)pm_graph_min_cycles(g, u);
        else
            h->t[i] = pm_graph_min_cycles(g, u);
        for (uint32_t k = g->out_off[u]; k < g->out_off[u + 1]; k++) {
            if (comp[dst[k]] != comp[u])
                continue;
            int64_t d = dly ? dly[k] : g->edges[g->out_edge[k]].delay;
            h->dst[at] = h->map[dst[k]];
            if (h->d8)
                h->d8[at++] = (uint8_t)d;
            else
                h->d64[at++] = d;
        }
    }
}

/* The per-node state of the iteration, allocated once the graph's
 * component array and target list are gone (lower peak memory). */
int howard_alloc_state(howard *h)
{
    size_t n = (size_t)h->n + 1;
    h->st = h->wide ? malloc(n * sizeof(hw_wide)) : malloc(n * sizeof(hw_narrow));
    h->stack = malloc(n * sizeof *h->stack);
    h->seq = malloc(n * sizeof *h->seq);
    h->nxt = malloc(n * sizeof *h->nxt);
    h->dirty = calloc(n / 64 + 1, sizeof *h->dirty);
    h->aff = calloc(n / 64 + 1, sizeof *h->aff);
    h->sw = calloc(n / 64 + 1, sizeof *h->sw);
    h->oncyc = calloc(n / 64 + 1, sizeof *h->oncyc);
    if (!h->st || !h->stack || !h->seq || !h->nxt || !h->dirty || !h->aff || !h->sw ||
        !h->oncyc)
        return PM_ENOMEM;
    for (uint32_t i = 0; i < h->n; i++)
        *hw_cyc(h, i) = PM_NONE;
    return PM_OK;
}

int howard_init(howard *h, const pm_graph *g, const pm_scc *s, const uint32_t *dst,
                const uint8_t *dly, int64_t sum_t, int64_t sum_d)
{
    memset(h, 0, sizeof *h);
    h->g = g;
    h->n = g->nnodes;
    h->order = s->order;
    int64_t maxd = 0, maxt = 0;
    for (uint32_t e = 0; e < g->nedges; e++)
        maxd = g->edges[e].delay > maxd ? g->edges[e].delay : maxd;
    for (uint32_t v = 0; v < g->nnodes; v++) {
        int64_t tv = pm_graph_min_cycles(g, v);
        maxt = tv > maxt ? tv : maxt;
    }
    h->wide = (pm_i128)sum_t * sum_d >= ((pm_i128)1 << 60);
    h->map = malloc(((size_t)h->n + 1) * sizeof *h->map);
    h->off = calloc((size_t)h->n + 1, sizeof *h->off);
    if (!h->map || !h->off) {
        howard_free(h);
        return PM_ENOMEM;
    }
    for (uint32_t i = 0; i < h->n; i++)
        h->map[h->order[i]] = i;
    howard_fill(h, s->comp, dst);
    if (howard_alloc(h, maxd < 256, maxt <= (int64_t)UINT32_MAX) != PM_OK) {
        howard_free(h);
        return PM_ENOMEM;
    }
    howard_copy(h, s->comp, dst, dly);
    free(h->map); /* rebuilt by howard_map() when the loops are read */
    h->map = NULL;
    return PM_OK;
}

void howard_free(howard *h)
{
    free(h->map);
    free(h->off);
    free(h->dst);
    free(h->d8);
    free(h->d64);
    free(h->t);
    free(h->t32);
    free(h->st);
    free(h->stack);
    free(h->seq);
    free(h->nxt);
    free(h->dirty);
    free(h->aff);
    free(h->sw);
    free(h->oncyc);
    free(h->cycles);
    memset(h, 0, sizeof *h);
}

/* ---- policy iteration ---------------------------------------------------- */

/* Exact order of two ratios (q > 0). */
static inline int howard_cmp(const howard_cycle *a, const howard_cycle *b)
{
    pm_i128 l = (pm_i128)a->p * b->q, r = (pm_i128)b->p * a->q;
    return (l > r) - (l < r);
}

static inline uint32_t howard_next(const howard *h, uint32_t i)
{
    return h->nxt[i];
}

static inline void howard_set_pol(howard *h, uint32_t i, uint32_t k)
{
    *hw_pol(h, i) = k;
    h->nxt[i] = he_dst(h, k);
}

/* First policy: the edge with the fewest delays, ties to the heavier
 * successor (a cheap guess at a large ratio). */
static void howard_first_policy(howard *h, uint32_t a, uint32_t b)
{
    for (uint32_t i = a; i < b; i++) {
        uint32_t best = h->off[i];
        for (uint32_t k = h->off[i] + 1; k < h->off[i + 1]; k++) {
            int64_t dk = he_delay(h, k), db = he_delay(h, best);
            if (dk < db || (dk == db && ht(h, he_dst(h, k)) > ht(h, he_dst(h, best))))
                best = k;
        }
        howard_set_pol(h, i, best); /* a part with a loop: every node has an edge */
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
    uint64_t gcd = (uint64_t)pm_rat_gcd((uint64_t)w, (uint64_t)d);
    h->cycles[h->ncycles++] = (howard_cycle){ w / (int64_t)gcd, d / (int64_t)gcd, root, 0 };
    return PM_OK;
}

/* q*t(i) - p*d(k) + x(dst k): the bias i gets through local edge k. */
static inline pm_i128 howard_step(const howard *h, uint32_t i, uint32_t k,
                                   const howard_cycle *c)
{
    return (pm_i128)c->q * ht(h, i) - (pm_i128)c->p * he_delay(h, k) + hw_x(h, he_dst(h, k));
}

static inline bool bit_get(const uint64_t *b, uint32_t i)
{
    return b[i >> 6] >> (i & 63) & 1;
}

static inline void bit_set(uint64_t *b, uint32_t i)
{
    b[i >> 6] |= UINT64_C(1) << (i & 63);
}

static inline void bit_clear(uint64_t *b, uint32_t i)
{
    b[i >> 6] &= ~(UINT64_C(1) << (i & 63));
}

/* Clear the bits of [a, b) (and maybe some of neighbouring parts, which
 * are either solved or not started and do not read them). */
static void bits_clear_range(uint64_t *b, uint32_t lo, uint32_t hi)
{
    for (uint32_t w = lo >> 6; w <= (hi - 1) >> 6; w++)
        b[w] = 0;
}

/* Set node i's cycle entry and bias, and mark it dirty when its ratio or
 * bias differs from before (cycle entries of a part are never reused
 * while it is solved, so the old entry is still there). */
static inline void howard_assign(howard *h, uint32_t i, uint32_t k, pm_i128 x)
{
    uint32_t o = *hw_cyc(h, i);
    bool same = o != PM_NONE && h->cycles[o].p == h->cycles[k].p &&
                h->cycles[o].q == h->cycles[k].q && hw_x(h, i) == x;
    if (!same)
        bit_set(h->dirty, i);
    *hw_cyc(h, i) = k;
    hw_set_x(h, i, x);
}

static inline bool howard_is_dirty(const howard *h, uint32_t i)
{
    return bit_get(h->dirty, i);
}

/* The policy cycle nodes[0..len) in policy order: record it and set its
 * biases, backwards from its smallest node. */
static int howard_close_cycle(howard *h, const uint32_t *nodes, uint32_t len)
{
    int64_t w = 0, d = 0;
    uint32_t at = 0;
    for (uint32_t j = 0; j < len; j++) {
        uint32_t i = nodes[j];
        w += ht(h, i);
        d += he_delay(h, *hw_pol(h, i));
        if (h->order[i] < h->order[nodes[at]])
            at = j;
    }
    int rc = howard_push_cycle(h, w, d, nodes[at]);
    if (rc)
        return rc;
    uint32_t k = h->ncycles - 1;
    howard_assign(h, nodes[at], k, 0);
    bit_set(h->oncyc, nodes[at]);
    for (uint32_t j = 1; j < len; j++) {
        uint32_t i = nodes[(at + len - j) % len];
        howard_assign(h, i, k, howard_step(h, i, *hw_pol(h, i), &h->cycles[k]));
        bit_set(h->oncyc, i);
    }
    return PM_OK;
}

/*
 * Value determination, incremental.  R = seq[a..b) lists the part's nodes
 * so that each comes after its policy successor (policy cycles before the
 * trees that lead to them).  After an improvement only the nodes whose
 * policy path meets a switched node ("affected", bit in h->aff) can change:
 * one sweep along R finds them (a node is affected when it switched, when
 * its successor is, or when its old policy cycle lost a node).  They are
 * peeled like Kahn's topological sort among themselves - the accesses are
 * independent, so the memory system overlaps them - what stays forms the
 * new cycles, and R is rebuilt as [unaffected, in old order] [new cycles]
 * [affected trees, successor first].  The first pass treats every node as
 * affected.
 */
static void howard_mark_affected(howard *h, uint32_t a, uint32_t b, bool first)
{
    bits_clear_range(h->aff, a, b);
    if (first) {
        for (uint32_t i = a; i < b; i++)
            bit_set(h->aff, i);
        return;
    }
    for (uint32_t i = a; i < b; i++) /* cycles that lost a node */
        if (bit_get(h->sw, i) && bit_get(h->oncyc, i))
            h->cycles[*hw_cyc(h, i)].broken = 1;
    for (uint32_t j = a; j < b; j++) {
        uint32_t u = h->seq[j];
        bool aff = bit_get(h->oncyc, u) ? h->cycles[*hw_cyc(h, u)].broken
                                         : bit_get(h->sw, u) || bit_get(h->aff, h->nxt[u]);
        if (aff)
            bit_set(h->aff, u);
    }
}

/* Peel the affected nodes from their sources; the queue grows downwards
 * from seq[b - 1].  Returns the lowest queue position. */
static uint32_t howard_peel(howard *h, uint32_t a, uint32_t b)
{
    uint32_t *indeg = h->stack, qt = b;
    for (uint32_t i = a; i < b; i++)
        if (bit_get(h->aff, i))
            indeg[i] = 0;
    for (uint32_t i = a; i < b; i++)
        if (bit_get(h->aff, i) && bit_get(h->aff, h->nxt[i]))
            indeg[h->nxt[i]]++;
    for (uint32_t i = a; i < b; i++)
        if (bit_get(h->aff, i) && indeg[i] == 0)
            h->seq[--qt] = i;
    for (uint32_t head = b; head > qt;) {
        uint32_t v = h->nxt[h->seq[--head]];
        if (head >= qt + 8)
            __builtin_prefetch(&h->nxt[h->seq[head - 8]]);
        if (bit_get(h->aff, v) && --indeg[v] == 0)
            h->seq[--qt] = v;
    }
    return qt;
}

static int howard_values(howard *h, uint32_t a, uint32_t b, bool first)
{
    bits_clear_range(h->dirty, a, b);
    howard_mark_affected(h, a, b, first);
    uint32_t w = a;
    if (!first)
        for (uint32_t j = a; j < b; j++) /* unaffected first, in old order */
            if (!bit_get(h->aff, h->seq[j]))
                h->seq[w++] = h->seq[j];
    for (uint32_t i = a; i < b; i++)
        if (bit_get(h->aff, i))
            bit_clear(h->oncyc, i);
    uint32_t qt = howard_peel(h, a, b);
    for (uint32_t i = a; i < b; i++) {
        if (!bit_get(h->aff, i) || h->stack[i] == 0)
            continue;
        uint32_t from = w, v = i;
        do { /* a new cycle: its nodes go right after the unaffected ones */
            h->seq[w++] = v;
            h->stack[v] = 0;
            v = h->nxt[v];
        } while (v != i);
        int rc = howard_close_cycle(h, h->seq + from, w - from);
        if (rc)
            return rc;
    }
    for (uint32_t j = qt; j < b; j++) {
        uint32_t u = h->seq[j];
        if (j + 16 < b) { /* overlap the misses of the coming nodes */
            uint32_t f = h->seq[j + 16];
            __builtin_prefetch(&h->nxt[f]);
            __builtin_prefetch(h->wide ? (void *)&((hw_wide *)h->st)[f]
                                       : (void *)&((hw_narrow *)h->st)[f]);
        }
        if (j + 8 < b) { /* its successor's state, once nxt is near */
            uint32_t f = h->nxt[h->seq[j + 8]];
            __builtin_prefetch(h->wide ? (void *)&((hw_wide *)h->st)[f]
                                       : (void *)&((hw_narrow *)h->st)[f]);
        }
        uint32_t k = *hw_cyc(h, h->nxt[u]);
        howard_assign(h, u, k, howard_step(h, u, *hw_pol(h, u), &h->cycles[k]));
    }
    bits_clear_range(h->sw, a, b);
    return PM_OK;
}

/* Best edge of node i under the current values (strict improvement only).
 * Inlined with a constant `wide` so each width gets its own loop. */
static inline __attribute__((always_inline)) uint32_t
howard_best(const howard *h, uint32_t i, bool wide)
{
    const howard_cycle *cy = h->cycles;
    uint32_t bc = wide ? ((hw_wide *)h->st)[i].cyc : ((hw_narrow *)h->st)[i].cyc;
    uint32_t best = wide ? ((hw_wide *)h->st)[i].pol : ((hw_narrow *)h->st)[i].pol;
    pm_i128 bx = wide ? ((hw_wide *)h->st)[i].x : ((hw_narrow *)h->st)[i].x;
    int64_t ti = ht(h, i);
    for (uint32_t k = h->off[i]; k < h->off[i + 1]; k++) {
        uint32_t v = h->dst[k];
        if (!wide && k + 16 < h->off[h->n]) /* overlap the cache misses */
            __builtin_prefetch(&((hw_narrow *)h->st)[h->dst[k + 16]]);
        int64_t d = he_delay(h, k);
        uint32_t vc = wide ? ((hw_wide *)h->st)[v].cyc : ((hw_narrow *)h->st)[v].cyc;
        int r = vc == bc ? 0 : howard_cmp(&cy[vc], &cy[bc]);
        if (r < 0)
            continue;
        pm_i128 vx = wide ? ((hw_wide *)h->st)[v].x : ((hw_narrow *)h->st)[v].x;
        pm_i128 val;
        if (wide)
            val = (pm_i128)cy[vc].q * ti - (pm_i128)cy[vc].p * d + vx;
        else /* fits: 4*T*D < 2^63 */
            val = cy[vc].q * ti - cy[vc].p * d + (int64_t)vx;
        if (r > 0 || val > bx) {
            best = k;
            bc = vc;
            bx = val;
        }
    }
    return best;
}

/* Policy improvement; true when some node changed its edge.  Every node is
 * judged on the values of the previous policy (the order does not
 * matter, which the termination argument needs). */
static bool howard_improve(howard *h, uint32_t a, uint32_t b)
{
    bool changed = false;
    for (uint32_t i = a; i < b; i++) {
        /* no value around i moved: it still has no strict improvement */
        bool look = howard_is_dirty(h, i);
        for (uint32_t k = h->off[i]; !look && k < h->off[i + 1]; k++)
            look = howard_is_dirty(h, h->dst[k]);
        if (!look)
            continue;
        uint32_t best = h->wide ? howard_best(h, i, true) : howard_best(h, i, false);
        if (best != *hw_pol(h, i)) {
            howard_set_pol(h, i, best);
            bit_set(h->sw, i);
            changed = true;
        }
    }
    return changed;
}

int howard_solve_part(howard *h, uint32_t a, uint32_t b)
{
    uint32_t base = h->ncycles;
    howard_first_policy(h, a, b);
    for (bool first = true;; first = false) {
        int rc = howard_values(h, a, b, first);
        if (rc)
            return rc;
        if (!howard_improve(h, a, b))
            break;
    }
    /* converged: one ratio for the whole part; keep the cycle reached from
     * the part's first node as its worst loop */
    h->cycles[base] = h->cycles[*hw_cyc(h, a)];
    h->cycles[base].broken = 0;
    h->ncycles = base + 1;
    for (uint32_t i = a; i < b; i++)
        *hw_cyc(h, i) = base;
    return PM_OK;
}

/* ---- the certificate and what it gives ----------------------------------- */

int howard_certify(const howard *h)
{
    for (uint32_t i = 0; i < h->n; i++) {
        uint32_t cu = *hw_cyc(h, i);
        pm_i128 xi = hw_x(h, i);
        for (uint32_t k = h->off[i]; k < h->off[i + 1]; k++) {
            if (!h->wide && k + 16 < h->off[h->n])
                __builtin_prefetch(&((hw_narrow *)h->st)[h->dst[k + 16]]);
            /* an edge inside a part: both ends carry the part's entry */
            if (cu == PM_NONE || *hw_cyc(h, he_dst(h, k)) != cu)
                return PM_EINVAL;
            if (howard_step(h, i, k, &h->cycles[cu]) > xi)
                return PM_EINVAL;
        }
    }
    return PM_OK;
}

int howard_map(howard *h)
{
    if (!h->map)
        h->map = malloc(((size_t)h->n + 1) * sizeof *h->map);
    if (!h->map)
        return PM_ENOMEM;
    for (uint32_t i = 0; i < h->n; i++)
        h->map[h->order[i]] = i;
    return PM_OK;
}

uint64_t *howard_tight_bits(const howard *h, int64_t p, int64_t q)
{
    uint32_t m = h->off[h->n];
    uint64_t *bits = calloc((size_t)m / 64 + 1, sizeof *bits);
    if (!bits)
        return NULL;
    for (uint32_t i = 0; i < h->n; i++) {
        uint32_t c = *hw_cyc(h, i);
        if (c == PM_NONE || h->cycles[c].p != p || h->cycles[c].q != q)
            continue;
        pm_i128 xi = hw_x(h, i);
        for (uint32_t k = h->off[i]; k < h->off[i + 1]; k++) {
            if (!h->wide && k + 16 < m)
                __builtin_prefetch(&((hw_narrow *)h->st)[h->dst[k + 16]]);
            if (howard_step(h, i, k, &h->cycles[c]) == xi)
                bits[k >> 6] |= UINT64_C(1) << (k & 63);
        }
    }
    return bits;
}

uint32_t howard_policy_len(const howard *h, uint32_t root)
{
    uint32_t len = 0, v = root;
    do {
        len++;
        v = howard_next(h, v);
    } while (v != root);
    return len;
}

/* The graph edge behind local edge position k of local node i: the same
 * rank among the node's out-edges that stay inside its part. */
uint32_t howard_graph_edge(const howard *h, uint32_t i, uint32_t k)
{
    const pm_graph *g = h->g;
    uint32_t u = h->order[i], rank = k - h->off[i], cu = *hw_cyc(h, i);
    for (uint32_t j = g->out_off[u];; j++) {
        uint32_t e = g->out_edge[j];
        if (*hw_cyc(h, h->map[g->edges[e].dst]) == cu && rank-- == 0)
            return e;
    }
}

void howard_policy_loop(const howard *h, uint32_t root, uint32_t *store, pm_loop *loop)
{
    uint32_t len = howard_policy_len(h, root), v = root;
    loop->len = len;
    loop->nodes = store;
    loop->edges = store + len;
    for (uint32_t j = 0; j < len; j++) {
        loop->nodes[j] = h->order[v];
        loop->edges[j] = howard_graph_edge(h, v, *hw_pol(h, v));
        v = howard_next(h, v);
    }
}
