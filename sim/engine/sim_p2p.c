/*
 * sim_p2p.c - the point-to-point engine of the simulator.
 *
 * Without a shared bus nothing but data, core order and FIFO room decides
 * a begin time, so self-timed execution is the max-plus recursion of the
 * IPC graph (Sriram & Bhattacharyya 2000): begin(v,k) = max over the
 * predecessors p of v of begin(p, k - delay) + weight.  When the edges
 * with no delay form no cycle the run cannot deadlock, and the recursion
 * is evaluated iteration by iteration in one fixed topological order: no
 * readiness checks, no waiting.  With a zero-delay cycle the causal engine
 * (sim_causal.c) runs instead and reports where it stalls.  Predecessors are
 * listed core order first, then inputs in the graph's order, then FIFO
 * room, and a later one wins only when strictly later: the same tie rule
 * as the causal engine.
 *
 * The pass is bound by memory traffic (docs/performance.md), so its data
 * is compiled for one front-to-back pass per iteration:
 *  - nodes are renumbered into pass order ("slots"); the rings of begin
 *    times and causes are kept by slot during the run and put back in node
 *    order at the end, for the report;
 *  - a predecessor is 8 bytes: its ring offset with the delay folded in
 *    and its weight; one that reads the same source and delay as another
 *    with a larger weight is dropped (it can never set a begin); a
 *    firing's cause is the index of the predecessor that set it, kept only
 *    in the last W iterations (the report reads no others) and turned into
 *    a cause code at the end;
 *  - predecessors with delays read rows that have left the cache: they are
 *    prefetched a block of slots ahead;
 *  - token counts (sim_tokens.c) are taken at the consumer, a block of
 *    slots at a time, so that the pass over the nodes never branches on
 *    whether a node has cross-core inputs.
 * Graphs whose times do not fit these narrow fields, or whose rings are
 * too large to index in 31 bits, run on the causal engine: same results,
 * slower.
 *
 * Maps with lags (map.h) take a plainer pass of their own (p2p_run_lags):
 * one pass per round instead of per iteration, the order of a round taken
 * over the predecessors of the same round, every predecessor kept (one may
 * apply in a round where another from the same source does not), and the
 * token counts taken firing by firing.
 */
#include <stdlib.h>
#include <string.h>

#include "pacemap/order.h"
#include "sim_internal.h"

#define P2P_START UINT32_MAX   /* cause index: nothing, began at time 0 */
#define P2P_HOT static inline __attribute__((always_inline))
#define P2P_BLOCK 256          /* slots swept between two rounds of token counts */
#define P2P_LAST (UINT32_C(1) << 31) /* in p2p_pred.off: the node's last predecessor */
#define P2P_DEDUP_MAX 32       /* nodes with more predecessors keep duplicates */
#define P2P_AHEAD 64           /* slots: how far ahead older rows are fetched */

/* A predecessor as the builder lists it. */
typedef struct p2p_wide {
    uint32_t u, delay, cause;
    uint32_t xslot; /* a cross-core input, or PM_NONE */
    int64_t w;
    int64_t rdelay; /* rounds back (with lags; else = delay); delay is then
                       iterations back, negative for a core predecessor
                       whose lag is smaller (two's complement) */
} p2p_wide;

/* A node's predecessors follow one another; the last has P2P_LAST in off. */
typedef struct p2p_pred {
    uint32_t off; /* ((W - delay) mod W) * n + slot of the source */
    int32_t w;    /* source's end (or free) offset, plus the transfer */
} p2p_pred;

typedef struct p2p_node {
    int32_t recv, end_off;
} p2p_node;

/* The token counter of a cross-core input, and where its push time is. */
typedef struct p2p_tok {
    sim_cursor c;
    uint32_t off;   /* the producer's ring offset, as in its p2p_pred */
    int32_t end;    /* the producer's end offset: its push time */
} p2p_tok;

typedef struct p2p {
    uint32_t n, W;
    size_t wn;          /* ring entries: W * n */
    uint64_t early;     /* iterations in which some delay reaches before 0 */
    uint32_t *step;     /* slot -> node */
    p2p_node *node;
    p2p_pred *pred;
    uint32_t *pdelay;   /* per predecessor: its delay (early iterations) */
    uint32_t *pcause;   /* per predecessor: its cause code */
    p2p_tok *tok;
    uint32_t *txs;      /* per token counter: the edge's xslot */
    uint32_t *tdelay;   /* per token counter: the edge's delays */
    uint32_t *tslot;    /* per token counter: the consumer's slot */
    uint32_t *btend;    /* per block of slots: its counters end here */
    uint32_t *far;      /* ring offsets read from older rows, in slot order */
    uint32_t *bfar;     /* per P2P_AHEAD slots: where their entries of far end */
    uint32_t nfar;
    /* with lags (p2p_run_lags): per slot its lag, the rounds back of its
     * core predecessor (its first entry), its first token counter */
    uint32_t *slag, *oback, *tfirst;
    uint32_t npred;
} p2p;

/* ---- building ----------------------------------------------------------- */

static uint32_t p2p_count_preds(const sim *s, uint32_t v)
{
    uint32_t k = 1 + s->nd[v].in_hi - s->nd[v].in_lo;
    if (s->fifo)
        k += s->nd[v].xo_hi - s->nd[v].xo_lo;
    return k;
}

/* v's predecessors: the core's previous entry, inputs, FIFO room.  With
 * lags round r runs (v, r - lag[v]): a predecessor b rounds back is
 * b + lag[u] - lag[v] iterations back (data edges keep their delays). */
static void p2p_list_preds(const sim *s, uint32_t v, p2p_wide *p)
{
    uint32_t c = s->m->core_of[v], back;
    uint32_t prev = sim_prev_on_core(s, c, s->pos_of[v], &back);
    const uint32_t *lag = s->m->lag;
    int64_t it = (int64_t)back + lag[prev] - (int64_t)lag[v];
    *p++ = (p2p_wide){ prev, (uint32_t)it, PM_CAUSE_ORDER, PM_NONE, s->nd[prev].free_off, back };
    for (uint32_t i = s->nd[v].in_lo; i < s->nd[v].in_hi; i++) {
        const sim_in *in = &s->ins[i];
        int64_t cost = in->xslot != PM_NONE ? s->x[in->xslot].cost : 0;
        int64_t rd = (int64_t)in->delay + lag[v] - (int64_t)lag[in->src];
        *p++ = (p2p_wide){ in->src, in->delay, PM_CAUSE_EDGE | in->edge << 3, in->xslot,
                          s->nd[in->src].end_off + cost, rd };
    }
    if (!s->fifo)
        return;
    for (uint32_t i = s->nd[v].xo_lo; i < s->nd[v].xo_hi; i++) {
        const sim_x *xe = &s->x[s->xout[i]];
        int64_t b = xe->cap - xe->delay, rd = b + lag[v] - (int64_t)lag[xe->dst];
        *p++ = (p2p_wide){ xe->dst, (uint32_t)b, PM_CAUSE_FIFO | xe->edge << 3, PM_NONE, 0, rd };
    }
}

/* Kahn's algorithm (pm_order_csr, first in first out) over the
 * predecessors of the same round, turned into successor lists; false on a
 * cycle. */
static bool p2p_order(uint32_t n, const uint32_t *p_off, const p2p_wide *wide, uint32_t *step)
{
    uint32_t *fill = calloc((size_t)n + 1, sizeof *fill);
    uint32_t *succ_off = calloc((size_t)n + 2, sizeof *succ_off);
    uint32_t *succ = malloc(((size_t)p_off[n] + 1) * sizeof *succ);
    uint32_t done = 0;
    if (fill && succ_off && succ) {
        for (uint32_t i = 0; i < p_off[n]; i++)
            if (wide[i].rdelay == 0)
                succ_off[wide[i].u + 1]++;
        for (uint32_t v = 0; v < n; v++)
            succ_off[v + 1] += succ_off[v];
        for (uint32_t v = 0; v < n; v++)
            for (uint32_t i = p_off[v]; i < p_off[v + 1]; i++)
                if (wide[i].rdelay == 0)
                    succ[succ_off[wide[i].u] + fill[wide[i].u]++] = v;
        if (pm_order_csr(n, succ_off, succ, NULL, PM_ORDER_FIFO, step, &done) != PM_OK)
            done = 0;
    }
    free(fill), free(succ_off), free(succ);
    return done == n;
}

static bool p2p_fits(int64_t v)
{
    return v >= INT32_MIN && v <= INT32_MAX;
}

/* Compile predecessor `g` of the node in `slot` into entry p; false when
 * it does not fit the narrow form. */
static bool p2p_compile_pred(const sim *s, p2p *w, const uint32_t *slot_of, const p2p_wide *g,
                            uint32_t slot, uint32_t p, uint32_t *t)
{
    int64_t back = s->lags ? (int64_t)(int32_t)g->delay : (int64_t)g->delay;
    if (!p2p_fits(g->w) || g->w < 0 || back >= (int64_t)w->W || -back >= (int64_t)w->W)
        return false;
    w->pred[p] = (p2p_pred){ ((w->W - g->delay) & (w->W - 1)) * w->n + slot_of[g->u], (int32_t)g->w };
    w->pdelay[p] = g->delay;
    w->pcause[p] = g->cause;
    if (!s->lags && g->delay > w->early)
        w->early = g->delay;
    if (g->xslot == PM_NONE)
        return true;
    int64_t cost = s->x[g->xslot].cost;
    if (!p2p_fits(cost))
        return false;
    w->tok[*t] = (p2p_tok){ s->cur[g->xslot], w->pred[p].off, (int32_t)(g->w - cost) };
    w->tdelay[*t] = g->delay;
    w->tslot[*t] = slot;
    w->txs[(*t)++] = g->xslot;
    return true;
}

/* Entry j of [p0, p1) never sets a begin when another entry reads the same
 * source and delay with a larger weight, or the same weight earlier (a
 * later one wins only when strictly later). */
static bool p2p_dominated(const p2p *w, uint32_t p0, uint32_t p1, uint32_t j)
{
    for (uint32_t o = p0; o < p1; o++)
        if (o != j && w->pred[o].off == w->pred[j].off &&
            (w->pred[o].w > w->pred[j].w || (w->pred[o].w == w->pred[j].w && o < j)))
            return true;
    return false;
}

/* Drop the dominated entries of one node's [p0, p1) (a core-order
 * predecessor often shadows a data edge from the same node); the new end. */
static uint32_t p2p_dedup(p2p *w, uint32_t p0, uint32_t p1)
{
    bool dead[P2P_DEDUP_MAX];
    if (p1 - p0 > P2P_DEDUP_MAX)
        return p1;
    for (uint32_t j = p0; j < p1; j++)
        dead[j - p0] = p2p_dominated(w, p0, p1, j);
    uint32_t out = p0;
    for (uint32_t j = p0; j < p1; j++) {
        if (dead[j - p0])
            continue;
        w->pred[out] = w->pred[j];
        w->pdelay[out] = w->pdelay[j];
        w->pcause[out++] = w->pcause[j];
    }
    return out;
}

static bool p2p_compile(const sim *s, p2p *w, const uint32_t *p_off, const p2p_wide *wide,
                       uint32_t *slot_of)
{
    uint32_t p = 0, t = 0;
    for (uint32_t i = 0; i < w->n; i++)
        slot_of[w->step[i]] = i;
    for (uint32_t i = 0; i < w->n; i++) {
        uint32_t v = w->step[i], p0 = p;
        if (s->lags) {
            w->slag[i] = s->m->lag[v];
            w->oback[i] = (uint32_t)wide[p_off[v]].rdelay;
            w->tfirst[i] = t;
        }
        for (uint32_t j = p_off[v]; j < p_off[v + 1]; j++)
            if (!p2p_compile_pred(s, w, slot_of, &wide[j], i, p++, &t))
                return false;
        if (!s->lags) /* with lags entries apply in different rounds: keep all */
            p = p2p_dedup(w, p0, p);
        for (uint32_t j = p0; j < p; j++)
            if (w->pdelay[j] > 0)
                w->far[w->nfar++] = w->pred[j].off;
        w->pred[p - 1].off |= P2P_LAST;
        if ((i & (P2P_AHEAD - 1)) == P2P_AHEAD - 1 || i == w->n - 1)
            w->bfar[i / P2P_AHEAD] = w->nfar;
        if (!p2p_fits(s->nd[v].recv) || !p2p_fits(s->nd[v].end_off))
            return false;
        w->node[i] = (p2p_node){ (int32_t)s->nd[v].recv, (int32_t)s->nd[v].end_off };
        if ((i & (P2P_BLOCK - 1)) == P2P_BLOCK - 1 || i == w->n - 1)
            w->btend[i / P2P_BLOCK] = t;
    }
    if (s->lags)
        w->tfirst[w->n] = t;
    w->npred = p;
    return true;
}

static int p2p_alloc(const sim *s, p2p *w, size_t np)
{
    size_t n = s->n;
    w->step = malloc((n + 1) * sizeof *w->step);
    w->node = sim_alloc_big((n + 1) * sizeof *w->node);
    w->pred = sim_alloc_big((np + 1) * sizeof *w->pred);
    w->pdelay = malloc((np + 1) * sizeof *w->pdelay);
    w->pcause = malloc((np + 1) * sizeof *w->pcause);
    w->tok = sim_alloc_big(((size_t)s->nx + 1) * sizeof *w->tok);
    w->txs = malloc(((size_t)s->nx + 1) * sizeof *w->txs);
    w->tdelay = malloc(((size_t)s->nx + 1) * sizeof *w->tdelay);
    w->tslot = malloc(((size_t)s->nx + 1) * sizeof *w->tslot);
    w->btend = malloc((n / P2P_BLOCK + 1) * sizeof *w->btend);
    w->far = malloc((np + 1) * sizeof *w->far);
    w->bfar = malloc((n / P2P_AHEAD + 2) * sizeof *w->bfar);
    bool ok = w->step && w->node && w->pred && w->pdelay && w->pcause && w->tok && w->txs &&
              w->tdelay && w->tslot && w->btend && w->far && w->bfar;
    if (ok && s->lags) {
        w->slag = malloc((n + 1) * sizeof *w->slag);
        w->oback = malloc((n + 1) * sizeof *w->oback);
        w->tfirst = malloc((n + 1) * sizeof *w->tfirst);
        ok = w->slag && w->oback && w->tfirst;
    }
    return ok ? PM_OK : PM_ENOMEM;
}

static void p2p_free(p2p *w)
{
    free(w->step), free(w->node), free(w->pred), free(w->pdelay), free(w->pcause);
    free(w->tok), free(w->txs), free(w->tdelay), free(w->tslot), free(w->btend);
    free(w->far), free(w->bfar);
    free(w->slag), free(w->oback), free(w->tfirst);
}

/* PM_OK with the pass built; 1 when it cannot run this map (a zero-delay
 * cycle, or times or rings too wide for its fields). */
static int p2p_build(const sim *s, p2p *w)
{
    uint32_t n = s->n;
    w->n = n, w->W = s->W, w->wn = (size_t)s->W * n;
    if ((uint64_t)s->W * n > P2P_LAST)
        return 1;
    uint32_t *p_off = calloc((size_t)n + 1, sizeof *p_off);
    if (!p_off)
        return PM_ENOMEM;
    uint64_t np = 0;
    for (uint32_t v = 0; v < n; v++) {
        np += p2p_count_preds(s, v);
        p_off[v + 1] = np < UINT32_MAX ? (uint32_t)np : UINT32_MAX;
    }
    int rc = np < UINT32_MAX ? p2p_alloc(s, w, np) : 1;
    p2p_wide *wide = rc ? NULL : malloc((np + 1) * sizeof *wide);
    uint32_t *slot_of = rc ? NULL : malloc(((size_t)n + 1) * sizeof *slot_of);
    if (!rc && (!wide || !slot_of))
        rc = PM_ENOMEM;
    if (!rc) {
        for (uint32_t v = 0; v < n; v++)
            p2p_list_preds(s, v, &wide[p_off[v]]);
        if (!p2p_order(n, p_off, wide, w->step) || !p2p_compile(s, w, p_off, wide, slot_of))
            rc = 1;
    }
    free(p_off), free(wide), free(slot_of);
    return rc;
}

/* ---- token counts --------------------------------------------------------- */

P2P_HOT int64_t p2p_at(const int64_t *ring, size_t base, uint32_t off, size_t wn)
{
    size_t j = base + off;
    return ring[j >= wn ? j - wn : j];
}

/* The counters [tb, te) in iteration k, once their consumers have begun.
 * Run in blocks of slots, apart from the begin times, so that neither
 * loop branches on whether a node has cross-core inputs. */
P2P_HOT int p2p_count(sim *s, p2p *w, uint32_t tb, uint32_t te, uint64_t k, size_t base,
                    bool early)
{
    const size_t n = w->n;
    for (uint32_t j = tb; j < te; j++) {
        p2p_tok *t = &w->tok[j];
        uint32_t i = w->tslot[j];
        int64_t x = s->xr[base + i];
        bool initial = early && k < w->tdelay[j]; /* it took an initial token */
        int64_t push = initial ? 0 : p2p_at(s->xr, base, t->off, w->wn) + t->end;
        int rc = sim_tokens_take(s, &t->c, w->txs[j], s->xr + i, n, k, x, initial, push);
        if (rc)
            return rc;
    }
    return PM_OK;
}

/* ---- the pass ------------------------------------------------------------ */

/* Begin of the node whose predecessors start at *pp in iteration k, and
 * the index of the one that set it; *pp moves past them.  `early` while
 * some delay still reaches before iteration 0; `causes` in the iterations
 * whose causes the report reads. */
P2P_HOT int64_t p2p_begin(const sim *s, const p2p *w, const p2p_pred **pp, uint64_t k, size_t base,
                        bool early, bool causes, uint32_t *cause)
{
    const p2p_pred *p = *pp;
    int64_t x = 0;
    *cause = P2P_START;
    if (!early || k >= w->pdelay[p - w->pred]) {
        x = p2p_at(s->xr, base, p->off & ~P2P_LAST, w->wn) + p->w;
        *cause = (uint32_t)(p - w->pred);
    }
    while (!(p->off & P2P_LAST)) {
        p++;
        if (early && k < w->pdelay[p - w->pred])
            continue;
        int64_t a = p2p_at(s->xr, base, p->off & ~P2P_LAST, w->wn) + p->w;
        bool later = a > x; /* data-dependent: keep it free of branches */
        x = later ? a : x;
        if (causes)
            *cause = later ? (uint32_t)(p - w->pred) : *cause;
    }
    *pp = p + 1;
    return x;
}

/* Older rows are out of cache by the time the pass reads them: ask for
 * those the next P2P_AHEAD slots read while passing over block b. */
P2P_HOT void p2p_fetch_ahead(const sim *s, const p2p *w, uint32_t b, size_t base)
{
    uint32_t lo = w->bfar[b], hi = w->bfar[b + 1];
    for (uint32_t j = lo; j < hi; j++)
        __builtin_prefetch(&s->xr[base + w->far[j] >= w->wn ? base + w->far[j] - w->wn
                                                            : base + w->far[j]]);
}

P2P_HOT int p2p_iteration(sim *s, p2p *w, uint64_t k, bool early, bool causes)
{
    const size_t n = w->n, base = (size_t)(k & s->mask) * n;
    const size_t prev = (size_t)((k - 1) & s->mask) * n;
    int64_t *row = s->xr + base;
    uint32_t *crow = s->cr + base;
    const p2p_pred *p = w->pred;
    uint64_t fp = 0;
    int64_t lmin = INT64_MAX, lmax = INT64_MIN;
    uint32_t tb = 0;
    for (uint32_t i = 0; i < n; i++) {
        if ((i & (P2P_AHEAD - 1)) == 0 && i + P2P_AHEAD < n)
            p2p_fetch_ahead(s, w, i / P2P_AHEAD, base);
        const p2p_node nd = w->node[i];
        uint32_t cause;
        int64_t x = p2p_begin(s, w, &p, k, base, early, causes, &cause);
        row[i] = x;
        if (causes)
            crow[i] = cause;
        if (!early || k > 0)
            fp += sim_mix((uint64_t)(x - s->xr[prev + i]), i);
        lmin = x + nd.recv < lmin ? x + nd.recv : lmin;
        lmax = x + nd.end_off > lmax ? x + nd.end_off : lmax;
        if ((i & (P2P_BLOCK - 1)) == P2P_BLOCK - 1 || i == n - 1) {
            uint32_t te = w->btend[i / P2P_BLOCK];
            int rc = p2p_count(s, w, tb, te, k, base, early);
            if (rc)
                return rc;
            tb = te;
        }
    }
    uint64_t slot = k & s->mask;
    s->f1[slot] = fp;
    s->lmin[slot] = lmin;
    s->lmax[slot] = lmax;
    return PM_OK;
}

/* The three kinds of iteration, each compiled on its own. */
static int p2p_iteration_early(sim *s, p2p *w, uint64_t k)
{
    return p2p_iteration(s, w, k, true, true);
}

static int p2p_iteration_plain(sim *s, p2p *w, uint64_t k)
{
    return p2p_iteration(s, w, k, false, false);
}

static int p2p_iteration_window(sim *s, p2p *w, uint64_t k)
{
    return p2p_iteration(s, w, k, false, true);
}

/* Trace records of iteration k, in pass order (the report sorts them). */
static int p2p_record(sim *s, const p2p *w, uint64_t k)
{
    const int64_t *row = s->xr + (size_t)(k & s->mask) * w->n;
    int rc = PM_OK;
    for (uint32_t i = 0; i < w->n && !rc; i++) {
        uint32_t v = w->step[i];
        int64_t end = row[i] + s->nd[v].end_off;
        for (uint32_t j = s->nd[v].xo_lo; j < s->nd[v].xo_hi && !rc; j++)
            rc = sim_record_transfer(s, s->xout[j], k, end, end);
        if (!rc)
            rc = sim_record_firing(s, s->m->core_of[v], v, k, row[i]);
    }
    return rc;
}

/* Put the rings of the last iterations back in node order, with cause codes. */
static int p2p_unslot(sim *s, const p2p *w)
{
    size_t n = w->n;
    int64_t *x = malloc((n + 1) * sizeof *x);
    uint32_t *c = malloc((n + 1) * sizeof *c);
    if (!x || !c) {
        free(x), free(c);
        return PM_ENOMEM;
    }
    for (uint64_t k = s->N > s->W ? s->N - s->W : 0; k < s->N; k++) {
        size_t base = (size_t)(k & s->mask) * n;
        memcpy(x, s->xr + base, n * sizeof *x);
        memcpy(c, s->cr + base, n * sizeof *c);
        for (size_t i = 0; i < n; i++) {
            s->xr[base + w->step[i]] = x[i];
            s->cr[base + w->step[i]] = c[i] == P2P_START ? PM_CAUSE_START : w->pcause[c[i]];
        }
    }
    free(x), free(c);
    return PM_OK;
}

/* A core's firings follow one another, so its last one frees it last. */
static void p2p_makespan(sim *s)
{
    for (uint32_t c = 0; c < s->P; c++) {
        if (!s->cnt[c])
            continue;
        uint32_t v = s->m->order[s->first[c] + s->cnt[c] - 1];
        int64_t f = *sim_x_at(s, v, s->N - 1) + s->nd[v].free_off;
        if (f > s->makespan)
            s->makespan = f;
    }
}

static int p2p_run(sim *s, p2p *w)
{
    int rc = PM_OK;
    for (uint64_t k = 0; rc == PM_OK && k < s->N; k++) {
        s->max_iter = k;
        sim_slot_reset(s, k);
        if (k < w->early)
            rc = p2p_iteration_early(s, w, k);
        else if (k + s->W < s->N)
            rc = p2p_iteration_plain(s, w, k); /* its causes are never read */
        else
            rc = p2p_iteration_window(s, w, k);
        if (!rc && k < s->record)
            rc = p2p_record(s, w, k);
        if (!rc && k == s->N / 2)
            for (uint32_t i = 0; i < w->n; i++)
                s->half[w->step[i]] = s->xr[(size_t)(k & s->mask) * w->n + i];
        if (!rc)
            sim_iteration_done(s, s->completed++);
    }
    for (uint32_t j = 0; j < s->nx; j++)
        s->cur[w->txs[j]] = w->tok[j].c;
    if (!rc)
        rc = p2p_unslot(s, w);
    return rc;
}

/* ---- the pass with lags --------------------------------------------------
 *
 * Round r runs (v, r - lag[v]) for every v, in an order where each entry
 * follows those of the same round it needs; times stay in the rows of each
 * node's own iteration.  What the causal engine does, firing by firing:
 *  - in a round before its lag v does not fire and takes no time: its
 *    entry (in the row of its negative iteration) holds the free time of
 *    the core's previous entry minus v's own free offset, so that the
 *    next entry reads that free time through it;
 *  - a core's first entry of round 0 begins at 0 (start), any other entry
 *    at least at its predecessor's free time (order), then when a later
 *    input or FIFO room allows;
 *  - iterations N and later (the last rounds) fire but are neither
 *    counted, recorded nor part of the makespan. */

/* Begin of slot i in round r (its iteration k >= 0) and the entry that set
 * it; *pp moves past its entries. */
static int64_t p2p_lag_begin(const sim *s, const p2p *w, uint32_t i, const p2p_pred **pp,
                             uint64_t r, uint64_t k, size_t base, uint32_t *cause)
{
    const p2p_pred *p = *pp;
    int64_t x = 0;
    *cause = P2P_START;
    for (bool first = true;; first = false, p++) {
        uint32_t idx = (uint32_t)(p - w->pred);
        bool ok = first ? r >= w->oback[i] : k >= w->pdelay[idx];
        int64_t a = ok ? p2p_at(s->xr, base, p->off & ~P2P_LAST, w->wn) + p->w : 0;
        if (ok && (first || a > x)) {
            x = a;
            *cause = idx;
        }
        if (p->off & P2P_LAST)
            break;
    }
    *pp = p + 1;
    return x;
}

/* A slot before its lag: pass the core's free time on (see above). */
static void p2p_lag_skip(sim *s, const p2p *w, uint32_t i, const p2p_pred **pp, uint64_t r,
                         size_t base)
{
    const p2p_pred *p = *pp;
    int64_t fr = r >= w->oback[i] ? p2p_at(s->xr, base, p->off & ~P2P_LAST, w->wn) + p->w : 0;
    s->xr[base + i] = fr - s->nd[w->step[i]].free_off;
    s->cr[base + i] = P2P_START;
    while (!(p->off & P2P_LAST))
        p++;
    *pp = p + 1;
}

/* Fingerprint, latency, half-way times, makespan, token counts and
 * records of firing (slot i, iteration k < N) that began at x. */
static int p2p_lag_note(sim *s, p2p *w, uint32_t i, uint64_t k, size_t base, int64_t x)
{
    uint32_t v = w->step[i];
    uint64_t slot = k & s->mask;
    if (k > 0)
        s->f1[slot] += sim_mix((uint64_t)(x - s->xr[(size_t)((k - 1) & s->mask) * w->n + i]), i);
    int64_t st = x + w->node[i].recv, en = x + w->node[i].end_off;
    s->lmin[slot] = st < s->lmin[slot] ? st : s->lmin[slot];
    s->lmax[slot] = en > s->lmax[slot] ? en : s->lmax[slot];
    if (k == s->N / 2)
        s->half[v] = x;
    int64_t fr = x + s->nd[v].free_off;
    s->makespan = fr > s->makespan ? fr : s->makespan;
    int rc = PM_OK;
    for (uint32_t j = w->tfirst[i]; j < w->tfirst[i + 1] && !rc; j++) {
        p2p_tok *t = &w->tok[j];
        bool initial = k < w->tdelay[j];
        int64_t push = initial ? 0 : p2p_at(s->xr, base, t->off, w->wn) + t->end;
        rc = sim_tokens_take(s, &t->c, w->txs[j], s->xr + i, w->n, k, x, initial, push);
    }
    if (rc || k >= s->record)
        return rc;
    for (uint32_t j = s->nd[v].xo_lo; j < s->nd[v].xo_hi && !rc; j++)
        rc = sim_record_transfer(s, s->xout[j], k, en, en);
    return rc ? rc : sim_record_firing(s, s->m->core_of[v], v, k, x);
}

static int p2p_lag_round(sim *s, p2p *w, uint64_t r)
{
    const p2p_pred *p = w->pred;
    int rc = PM_OK;
    for (uint32_t i = 0; i < w->n && !rc; i++) {
        uint64_t k = r - w->slag[i]; /* wraps below 0: a round before the lag */
        size_t base = (size_t)(k & s->mask) * w->n;
        if (r < w->slag[i]) {
            p2p_lag_skip(s, w, i, &p, r, base);
            continue;
        }
        uint32_t cause;
        int64_t x = p2p_lag_begin(s, w, i, &p, r, k, base, &cause);
        s->xr[base + i] = x;
        s->cr[base + i] = cause;
        if (k < s->N)
            rc = p2p_lag_note(s, w, i, k, base, x);
    }
    return rc;
}

/* Rows back in node order with cause codes, for the report's window. */
static void p2p_lag_unslot(sim *s, const p2p *w, int64_t *x, uint32_t *c)
{
    size_t n = w->n;
    for (uint64_t k = s->R > s->W ? s->R - s->W : 0; k < s->R; k++) {
        size_t base = (size_t)(k & s->mask) * n;
        memcpy(x, s->xr + base, n * sizeof *x);
        memcpy(c, s->cr + base, n * sizeof *c);
        for (size_t i = 0; i < n; i++) {
            s->xr[base + w->step[i]] = x[i];
            s->cr[base + w->step[i]] = c[i] < w->npred ? w->pcause[c[i]] : PM_CAUSE_START;
        }
    }
}

static int p2p_run_lags(sim *s, p2p *w)
{
    int rc = PM_OK;
    for (uint64_t r = 0; rc == PM_OK && r < s->R; r++) {
        s->max_iter = r;
        sim_slot_reset(s, r);
        rc = p2p_lag_round(s, w, r);
        if (!rc && r >= s->lag_max && r - s->lag_max < s->N)
            sim_iteration_done(s, s->completed++);
    }
    for (uint32_t j = 0; j < s->nx; j++)
        s->cur[w->txs[j]] = w->tok[j].c;
    int64_t *x = malloc(((size_t)w->n + 1) * sizeof *x);
    uint32_t *c = malloc(((size_t)w->n + 1) * sizeof *c);
    if (!rc && (!x || !c))
        rc = PM_ENOMEM;
    if (!rc)
        p2p_lag_unslot(s, w, x, c);
    free(x), free(c);
    if (rc)
        return rc;
    s->firings = 0;
    for (uint32_t v = 0; v < s->n; v++) {
        s->done[v] = s->R - s->m->lag[v];
        s->firings += s->done[v];
    }
    return PM_OK;
}

int sim_loop_p2p(sim *s, pm_diag *diag)
{
    (void)diag;
    p2p w = { 0 };
    int rc = p2p_build(s, &w);
    if (!rc)
        rc = s->lags ? p2p_run_lags(s, &w) : p2p_run(s, &w);
    p2p_free(&w);
    if (rc)
        return rc;
    if (!s->lags) {
        p2p_makespan(s);
        s->firings = s->N * s->n;
        for (uint32_t v = 0; v < s->n; v++)
            s->done[v] = s->N;
    }
    for (uint32_t c = 0; c < s->P; c++)
        s->iter[c] = s->R, s->pos[c] = 0;
    return PM_OK;
}
