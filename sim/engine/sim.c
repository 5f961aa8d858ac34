/*
 * sim.c - the self-timed simulator (sim.h): preparation, the causal
 * engine, and what both engines share.
 *
 * Two ways to run the same semantics (docs/simulation.md):
 *  - the compiled pass (sim_p2p.c): point-to-point links and no zero-delay
 *    cycle in the IPC graph; the max-plus recursion evaluated iteration by
 *    iteration in one topological order (fastest, cannot deadlock);
 *  - the causal engine (here): a bus, or a map that may deadlock; cores
 *    fire whatever is ready, sleep on wake-up lists, and the bus grants the
 *    oldest request once nothing can fire any more.
 * Shared: sliding rings of begin times and causes, token counts per
 * cross-core edge (sim_tokens.c), fingerprints for the steady state.  The
 * end-of-run analysis (period, chain, deadlock cycle) is in sim_report.c.
 * Nothing here prints.
 */
#include "pacemap/sim.h"

#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>

#include "sim_internal.h"

#define SIM_MEM_LIMIT (UINT64_C(1) << 30) /* bytes of rings before PM_ELIMIT */
#define SIM_LAG 8 /* causal engine: iterations a core may run ahead of the slowest */
#define SIM_RINGS 7 /* arrays that slide with the window of iterations */
#define SIM_PREFETCH 6 /* firings ahead whose data is prefetched */

/* ---- bus requests not granted yet ------------------------------------------ */

/* Which of two requests goes first depends on timing, not predictable:
 * compare the whole key without branches. */
static inline bool sim_ev_less(const sim_ev *a, const sim_ev *b)
{
    bool t_lt = a->time < b->time, t_eq = a->time == b->time;
    bool o_lt = a->order < b->order, o_eq = a->order == b->order;
    return t_lt | (t_eq & (o_lt | (o_eq & (a->iter < b->iter))));
}

static const sim_ev *sim_bq_first(const sim_bq *b, uint32_t c)
{
    return c == PM_NONE || !b->q[c].len ? NULL : &b->q[c].a[b->q[c].head];
}

/* Core c's first request changed: replay its matches up the tree. */
static void sim_bq_fix(sim_bq *b, uint32_t c)
{
    size_t i = b->leaves + c;
    b->tree[i] = b->q[c].len ? c : PM_NONE;
    for (i >>= 1; i; i >>= 1) {
        uint32_t l = b->tree[2 * i], r = b->tree[2 * i + 1];
        const sim_ev *el = sim_bq_first(b, l), *er = sim_bq_first(b, r);
        b->tree[i] = !el || (er && sim_ev_less(er, el)) ? r : l;
    }
}

static int sim_bq_init(sim_bq *b, uint32_t cores)
{
    b->leaves = 1;
    while (b->leaves < cores)
        b->leaves *= 2;
    b->q = calloc(cores + 1, sizeof *b->q);
    b->tree = malloc(2 * (size_t)b->leaves * sizeof *b->tree);
    if (!b->q || !b->tree)
        return PM_ENOMEM;
    for (size_t i = 0; i < 2 * (size_t)b->leaves; i++)
        b->tree[i] = PM_NONE;
    return PM_OK;
}

static void sim_bq_free(sim_bq *b, uint32_t cores)
{
    for (uint32_t c = 0; b->q && c < cores; c++)
        free(b->q[c].a);
    free(b->q), free(b->tree);
}

static int sim_reqs_grow(sim_reqs *q)
{
    uint32_t nc = q->cap ? 2 * q->cap : 16;
    sim_ev *na = malloc(nc * sizeof *na);
    if (!na)
        return PM_ENOMEM;
    for (uint32_t i = 0; i < q->len; i++)
        na[i] = q->a[(q->head + i) & (q->cap - 1)];
    free(q->a);
    q->a = na, q->cap = nc, q->head = 0;
    return PM_OK;
}

static int sim_bq_push(sim_bq *b, uint32_t c, sim_ev e)
{
    sim_reqs *q = &b->q[c];
    if (q->len == q->cap && sim_reqs_grow(q))
        return PM_ENOMEM;
    uint32_t m = q->cap - 1, i = q->len++;
    while (i > 0 && sim_ev_less(&e, &q->a[(q->head + i - 1) & m])) { /* a tie of time */
        q->a[(q->head + i) & m] = q->a[(q->head + i - 1) & m];
        i--;
    }
    q->a[(q->head + i) & m] = e;
    b->len++;
    if (i == 0)
        sim_bq_fix(b, c);
    return PM_OK;
}

static sim_ev sim_bq_pop(sim_bq *b)
{
    uint32_t c = b->tree[1];
    sim_reqs *q = &b->q[c];
    sim_ev e = q->a[q->head];
    q->head = (q->head + 1) & (q->cap - 1);
    q->len--;
    b->len--;
    sim_bq_fix(b, c);
    return e;
}

/* ---- token counts ----------------------------------------------------- */

#define SIM_OCC_LIMIT (UINT32_C(1) << 24) /* waiting times kept per edge */

int sim_occ_grow(sim_occ *o)
{
    uint32_t nc = o->cap ? o->cap * 2 : 4;
    /* one edge's queue is capped, and so are all queues together: many
     * edges piling up at once must not take the machine's memory */
    if (o->cap >= SIM_OCC_LIMIT || (uint64_t)nc * sizeof *o->q > *o->budget)
        return PM_ELIMIT; /* tokens pile up without bound (pm_sim_run names the edge) */
    *o->budget -= (uint64_t)(nc - o->cap) * sizeof *o->q;
    int64_t *nq = malloc(nc * sizeof *nq);
    if (!nq)
        return PM_ENOMEM;
    for (uint32_t i = 0; i < o->len; i++)
        nq[i] = o->q[(o->head + i) & (o->cap - 1)];
    free(o->q);
    o->q = nq;
    o->cap = nc;
    o->head = 0;
    return PM_OK;
}

/* ---- preparation ------------------------------------------------------ */

static int sim_node_times(sim *s, const pm_sim_opts *o, pm_diag *diag)
{
    const pm_graph *g = s->g;
    for (uint32_t v = 0; v < s->n; v++) {
        uint32_t c = s->m->core_of[v];
        int64_t t = o->node_cycles ? o->node_cycles[v]
                                   : pm_graph_cycles_on(g, v, g->platform.core_class[c]);
        if (t < 0 || t > PM_MAX_VALUE) {
            pm_diag_set(diag, g->file, 0, 0, "node '%s' has no valid time on core %u",
                        pm_graph_node_name(g, v), c);
            return o->node_cycles ? PM_EINVAL : PM_EMAP;
        }
        s->t[v] = t;
    }
    return PM_OK;
}

static int sim_alloc_nodes(sim *s)
{
    size_t n = s->n, e = s->g->nedges, P = s->P;
    s->t = calloc(n + 1, sizeof *s->t);
    s->recv = calloc(n + 1, sizeof *s->recv);
    s->send = calloc(n + 1, sizeof *s->send);
    s->nd = sim_alloc_big((n + 1) * sizeof *s->nd);
    s->in_off = calloc(n + 1, sizeof *s->in_off);
    s->ins = sim_alloc_big((e + 1) * sizeof *s->ins);
    s->xout_off = calloc(n + 1, sizeof *s->xout_off);
    s->xout = calloc(e + 1, sizeof *s->xout);
    s->xs_of = calloc(e + 1, sizeof *s->xs_of);
    s->x = calloc(e + 1, sizeof *s->x);
    s->occ = calloc(e + 1, sizeof *s->occ);
    s->occ_budget = SIM_MEM_LIMIT;
    for (uint32_t i = 0; s->occ && i <= e; i++)
        s->occ[i].budget = &s->occ_budget;
    s->pos_of = calloc(n + 1, sizeof *s->pos_of);
    s->done = calloc(n + 1, sizeof *s->done);
    s->wait_head = malloc((n + 1) * sizeof *s->wait_head);
    s->half = calloc(n + 1, sizeof *s->half);
    s->pos = calloc(P + 1, sizeof *s->pos);
    s->cnt = calloc(P + 1, sizeof *s->cnt);
    s->first = calloc(P + 1, sizeof *s->first);
    s->iter = calloc(P + 1, sizeof *s->iter);
    s->free = calloc(P + 1, sizeof *s->free);
    s->wait_next = calloc(P + 1, sizeof *s->wait_next);
    s->wait_node = calloc(P + 1, sizeof *s->wait_node);
    s->wait_edge = calloc(P + 1, sizeof *s->wait_edge);
    s->wait_fifo = calloc(P + 1, sizeof *s->wait_fifo);
    s->queued = calloc(P + 1, sizeof *s->queued);
    s->lagged = calloc(P + 1, sizeof *s->lagged);
    s->relax = calloc(P + 1, sizeof *s->relax);
    s->runq = calloc(P + 1, sizeof *s->runq);
    if (!s->t || !s->recv || !s->send || !s->nd || !s->in_off || !s->ins || !s->xout_off ||
        !s->xout || !s->xs_of || !s->x || !s->occ || !s->pos_of || !s->done ||
        !s->wait_head || !s->half || !s->pos || !s->cnt || !s->first || !s->iter ||
        !s->free || !s->wait_next || !s->wait_node || !s->wait_edge || !s->wait_fifo ||
        !s->queued || !s->lagged || !s->relax || !s->runq)
        return PM_ENOMEM;
    memset(s->nd, 0, (n + 1) * sizeof *s->nd);
    memset(s->ins, 0, (e + 1) * sizeof *s->ins);
    for (uint32_t v = 0; v < s->n; v++)
        s->wait_head[v] = PM_NONE;
    return PM_OK;
}

/* Cross-core edges get an xslot; every node gets its input list. */
static int sim_build_edges(sim *s, uint32_t fifo_cap, pm_diag *diag)
{
    const pm_graph *g = s->g;
    const pm_comm *cm = &g->platform.comm;
    const uint32_t *core = s->m->core_of;
    for (uint32_t e = 0; e < g->nedges; e++) {
        const pm_edge *ed = &g->edges[e];
        s->xs_of[e] = PM_NONE;
        if (ed->delay > INT32_MAX) {
            pm_diag_set(diag, g->file, ed->line, ed->col, "too many delays for the simulator");
            return PM_ELIMIT;
        }
        if (ed->delay > s->span)
            s->span = ed->delay;
        if (core[ed->src] == core[ed->dst])
            continue;
        sim_x *x = &s->x[s->nx];
        x->edge = e, x->src = ed->src, x->dst = ed->dst, x->delay = ed->delay;
        __int128 cost = (__int128)cm->latency + (__int128)cm->per_word * ed->words;
        if (cost > PM_MAX_VALUE) {
            pm_diag_set(diag, g->file, ed->line, ed->col,
                        "a transfer on this edge takes more than %lld cycles",
                        (long long)PM_MAX_VALUE);
            return PM_ERANGE;
        }
        x->cost = (int64_t)cost;
        x->cap = fifo_cap ? (ed->delay > fifo_cap ? ed->delay : fifo_cap) : 0;
        if (x->cap > s->span)
            s->span = x->cap;
        s->occ[s->nx].occ = s->occ[s->nx].max = ed->delay;
        s->xs_of[e] = s->nx++;
        s->recv[ed->dst] += cm->recv;
        s->send[ed->src] += cm->send;
        s->xout_off[ed->src + 1]++;
    }
    uint32_t k = 0;
    for (uint32_t v = 0; v < s->n; v++) {
        s->in_off[v] = k;
        for (uint32_t i = g->in_off[v]; i < g->in_off[v + 1]; i++) {
            uint32_t e = g->in_edge[i];
            s->ins[k++] = (sim_in){ g->edges[e].src, e, s->xs_of[e], (uint32_t)g->edges[e].delay, 0 };
        }
    }
    s->in_off[s->n] = k;
    return PM_OK;
}

/* Fill the cross-core out lists (counting sort by node) and the packed
 * per-node records. */
static int sim_build_xlists(sim *s)
{
    for (uint32_t v = 0; v < s->n; v++)
        s->xout_off[v + 1] += s->xout_off[v];
    uint32_t *fo = calloc(s->n + 1, sizeof *fo);
    if (!fo)
        return PM_ENOMEM;
    for (uint32_t i = 0; i < s->nx; i++) {
        uint32_t u = s->x[i].src;
        s->xout[s->xout_off[u] + fo[u]++] = i;
    }
    free(fo);
    for (uint32_t v = 0; v < s->n; v++)
        s->nd[v] = (sim_nd){ s->recv[v], s->recv[v] + s->t[v], s->recv[v] + s->t[v] + s->send[v],
                             0, s->in_off[v], s->in_off[v + 1], s->xout_off[v],
                             s->xout_off[v + 1] };
    for (uint32_t i = 0; i < s->in_off[s->n]; i++)
        s->ins[i].w = s->nd[s->ins[i].src].end_off;
    s->fo = sim_alloc_big(((size_t)s->nx + 1) * sizeof *s->fo);
    uint32_t most = 0;
    for (uint32_t v = 0; v < s->n; v++)
        if (s->in_off[v + 1] - s->in_off[v] > most)
            most = s->in_off[v + 1] - s->in_off[v];
    s->take = malloc(((size_t)most + 1) * sizeof *s->take);
    if (!s->fo || !s->take)
        return PM_ENOMEM;
    for (uint32_t i = 0; i < s->nx; i++) {
        const sim_x *x = &s->x[s->xout[i]];
        s->fo[i] = (sim_fo){ x->dst, x->edge, (uint32_t)(x->cap - x->delay), s->xout[i], x->cost };
    }
    return PM_OK;
}

static void sim_build_cores(sim *s)
{
    const pm_map *m = s->m;
    for (uint32_t c = 0; c < s->P; c++) {
        s->first[c] = m->off[c];
        s->cnt[c] = m->off[c + 1] - m->off[c];
        for (uint32_t i = 0; i < s->cnt[c]; i++)
            s->pos_of[m->order[m->off[c] + i]] = i;
        s->iter[c] = s->cnt[c] ? 0 : s->N;
        s->wait_node[c] = PM_NONE;
    }
}

/* Times stay below N * (all work and transfer time of one iteration),
 * doubled for bus waits; refuse runs where that could pass 2^62. */
static int sim_check_range(const sim *s, pm_diag *diag)
{
    unsigned __int128 per = 1;
    for (uint32_t v = 0; v < s->n; v++)
        per += (unsigned __int128)(s->t[v] + s->recv[v] + s->send[v]);
    for (uint32_t i = 0; i < s->nx; i++)
        per += (unsigned __int128)s->x[i].cost;
    if (per * 2 * ((unsigned __int128)s->N + 1) > (unsigned __int128)PM_MAX_VALUE) {
        pm_diag_set(diag, s->g->file, 0, 0, "times of %llu iterations would overflow",
                    (unsigned long long)s->N);
        return PM_ERANGE;
    }
    return PM_OK;
}

/* ---- rings ------------------------------------------------------------ */

static uint64_t sim_ring_bytes(const sim *s, uint64_t W)
{
    /* saturates: a window of 2^62 iterations must not wrap to a small size */
    /* the same sizes sim_ring_alloc asks for, per slot of the window */
    uint64_t n = s->n ? s->n : 1, nx = s->bus && s->nx ? s->nx : 1;
    uint64_t per = n * 12 + nx * sizeof(sim_grant) + 24 + SIM_LBR * sizeof(uint64_t);
    unsigned __int128 b = (unsigned __int128)W * per;
    return b > UINT64_MAX ? UINT64_MAX : (uint64_t)b;
}

/* Copy ring `old` (W_old slots of `width` bytes-per-slot items) into the
 * new layout for iterations [lo, hi). */
static void sim_ring_move(void *dst, const void *src, size_t item, size_t width,
                          uint64_t lo, uint64_t hi, uint64_t omask, uint64_t nmask,
                          size_t idx)
{
    for (uint64_t k = lo; k < hi; k++)
        memcpy((char *)dst + ((k & nmask) * width + idx) * item,
               (const char *)src + ((k & omask) * width + idx) * item, item);
}

/* Rings are read at scattered places; large ones ask for huge pages so
 * that those reads do not also miss the address translation cache (a
 * hint: where the system gives none, ordinary pages serve). */
void *sim_alloc_big(size_t bytes)
{
    const size_t huge = (size_t)2 << 20;
    if (bytes < 2 * huge)
        return malloc(bytes ? bytes : 1);
    void *p = aligned_alloc(huge, (bytes + huge - 1) / huge * huge);
#ifdef MADV_HUGEPAGE
    if (p)
        (void)madvise(p, (bytes + huge - 1) / huge * huge, MADV_HUGEPAGE);
#endif
    return p;
}

static int sim_ring_alloc(sim *s, uint64_t W, void **p)
{
    size_t n = s->n ? s->n : 1, nx = s->bus && s->nx ? s->nx : 1; /* grants: bus only */
    p[0] = sim_alloc_big(W * n * sizeof(int64_t));
    p[1] = sim_alloc_big(W * n * sizeof(uint32_t));
    p[2] = sim_alloc_big(W * nx * sizeof(sim_grant));
    p[3] = calloc(W, sizeof(uint64_t));
    p[4] = calloc(W, SIM_LBR * sizeof(uint64_t));
    p[5] = malloc(W * sizeof(int64_t));
    p[6] = malloc(W * sizeof(int64_t));
    for (int i = 0; i < SIM_RINGS; i++)
        if (!p[i]) {
            for (int j = 0; j < SIM_RINGS; j++)
                free(p[j]);
            return PM_ENOMEM;
        }
    sim_grant *bg = p[2];
    for (size_t i = 0; i < W * nx; i++)
        bg[i].iter = UINT64_MAX;
    return PM_OK;
}

static void sim_ring_install(sim *s, uint64_t W, void **p)
{
    free(s->xr), free(s->cr), free(s->bg);
    free(s->f1), free(s->lbr), free(s->lmin), free(s->lmax);
    s->xr = p[0], s->cr = p[1], s->bg = p[2];
    s->f1 = p[3], s->lbr = p[4], s->lmin = p[5], s->lmax = p[6];
    s->W = (uint32_t)W;
    s->mask = W - 1;
}

static void sim_ring_copy(sim *s, uint64_t W, void **p)
{
    uint64_t om = s->mask, nm = W - 1;
    for (uint32_t v = 0; v < s->n; v++) {
        uint64_t hi = s->done[v], lo = hi > s->W ? hi - s->W : 0;
        if (lo > s->valid_lo)
            s->valid_lo = lo; /* older times of v were overwritten already */
        sim_ring_move(p[0], s->xr, sizeof(int64_t), s->n, lo, hi, om, nm, v);
        sim_ring_move(p[1], s->cr, sizeof(uint32_t), s->n, lo, hi, om, nm, v);
    }
    sim_grant *bg = p[2];
    for (size_t i = 0; s->bus && i < (size_t)s->W * s->nx; i++) /* each grant knows its iteration */
        if (s->bg[i].iter != UINT64_MAX)
            bg[(s->bg[i].iter & nm) * s->nx + i % s->nx] = s->bg[i];
    /* iteration max_iter is new (reset after the move); older ones live */
    uint64_t hi = s->max_iter, lo = hi > s->W ? hi - s->W : 0;
    sim_ring_move(p[3], s->f1, sizeof(uint64_t), 1, lo, hi, om, nm, 0);
    sim_ring_move(p[4], s->lbr, SIM_LBR * sizeof(uint64_t), 1, lo, hi, om, nm, 0);
    sim_ring_move(p[5], s->lmin, sizeof(int64_t), 1, lo, hi, om, nm, 0);
    sim_ring_move(p[6], s->lmax, sizeof(int64_t), 1, lo, hi, om, nm, 0);
}

/* The cross-core edge with the most tokens waiting (for the message). */
static uint32_t sim_worst_edge(const sim *s)
{
    uint32_t best = PM_NONE;
    int64_t most = -1;
    for (uint32_t i = 0; i < s->nx; i++) {
        int64_t w = (int64_t)s->done[s->x[i].src] + s->x[i].delay - (int64_t)s->done[s->x[i].dst];
        if (w > most)
            most = w, best = s->x[i].edge;
    }
    return best;
}

/* The edge with the most delays (PM_NONE without edges). */
static uint32_t sim_largest_delay(const pm_graph *g)
{
    uint32_t best = PM_NONE;
    for (uint32_t e = 0; e < g->nedges; e++)
        if (best == PM_NONE || g->edges[e].delay > g->edges[best].delay)
            best = e;
    return best;
}

/* Why the window of iterations the run must keep outgrew its memory: cores
 * drifting apart (tokens piling up), or one edge's delays reaching far back. */
static void sim_window_message(const sim *s, pm_diag *diag)
{
    const pm_graph *g = s->g;
    uint64_t drift = s->max_iter - s->completed;
    uint32_t e = sim_worst_edge(s);
    if (e != PM_NONE && drift > (uint64_t)s->span) {
        pm_diag_set(diag, g->file, g->edges[e].line, g->edges[e].col,
                    "tokens pile up on edge '%s' -> '%s' (cores drift %llu iterations "
                    "apart); give a FIFO capacity (--fifo N) or fewer iterations (-n)",
                    pm_graph_node_name(g, g->edges[e].src),
                    pm_graph_node_name(g, g->edges[e].dst), (unsigned long long)drift);
        return;
    }
    e = sim_largest_delay(g);
    pm_diag_set(diag, g->file, e == PM_NONE ? 0 : g->edges[e].line,
                e == PM_NONE ? 0 : g->edges[e].col,
                "too many delays for the simulator: iterations %llu apart must be kept, "
                "more than fit in its memory limit", (unsigned long long)s->span);
}

/* Make room for iterations [completed - look-back, max_iter]. */
static int sim_ring_fit(sim *s, pm_diag *diag)
{
    uint64_t back = (uint64_t)s->span + 2 > s->cmax + 1 ? (uint64_t)s->span + 2 : s->cmax + 1;
    uint64_t need = s->max_iter - s->completed + back + 1;
    if (s->xr && need <= s->W)
        return PM_OK;
    uint64_t W = s->W ? s->W : 8;
    while (W < need && W < (UINT64_C(1) << 62))
        W *= 2;
    if (sim_ring_bytes(s, W) > SIM_MEM_LIMIT) {
        sim_window_message(s, diag);
        return PM_ELIMIT;
    }
    void *p[SIM_RINGS] = { 0 };
    if (sim_ring_alloc(s, W, p))
        return PM_ENOMEM;
    if (s->xr)
        sim_ring_copy(s, W, p);
    sim_ring_install(s, W, p);
    return PM_OK;
}

/* ---- cores ready to fire ----------------------------------------------- */

static void sim_runnable(sim *s, uint32_t c)
{
    if (s->queued[c])
        return;
    s->queued[c] = true;
    s->runq[(s->runq_head + s->runq_len++) % s->P] = c;
}

/* ---- iteration bookkeeping -------------------------------------------- */

void sim_slot_reset(sim *s, uint64_t k)
{
    uint64_t i = k & s->mask;
    s->f1[i] = 0;
    s->lmin[i] = INT64_MAX;
    s->lmax[i] = INT64_MIN;
}

/* Iteration k has fully begun: compare its fingerprint with the c before. */
void sim_iteration_done(sim *s, uint64_t k)
{
    uint64_t i = k & s->mask;
    int64_t lat = s->lmax[i] - s->lmin[i];
    if (lat > s->lat_max)
        s->lat_max = lat;
    if (k == 0)
        return;
    for (uint32_t c = 1; c <= s->cmax && c < k; c++) {
        uint64_t j = (k - c) & s->mask;
        if (s->f1[i] != s->f1[j])
            s->last_break[c] = k;
    }
    if (s->bus) /* the end of a bus run is disturbed: keep the past breaks */
        memcpy(&s->lbr[i * SIM_LBR], s->last_break, sizeof s->last_break);
}

static int sim_core_advanced(sim *s, uint32_t c, pm_diag *diag)
{
    uint64_t it = s->iter[c];
    if (it < s->N && it > s->max_iter) {
        s->max_iter = it;
        int rc = sim_ring_fit(s, diag);
        if (rc)
            return rc;
        sim_slot_reset(s, it);
    }
    uint64_t lo = s->N;
    for (uint32_t d = 0; d < s->P; d++)
        if (s->iter[d] < lo)
            lo = s->iter[d];
    if (s->completed == lo)
        return PM_OK;
    while (s->completed < lo)
        sim_iteration_done(s, s->completed++);
    for (uint32_t d = 0; d < s->P; d++)
        if (s->lagged[d])
            s->lagged[d] = false, s->nlagged--, sim_runnable(s, d);
    return PM_OK;
}

/* ---- firing ------------------------------------------------------------ */

static void sim_wait(sim *s, uint32_t c, uint32_t node, uint32_t edge, bool fifo)
{
    s->wait_node[c] = node;
    s->wait_edge[c] = edge;
    s->wait_fifo[c] = fifo;
    s->wait_next[c] = s->wait_head[node];
    s->wait_head[node] = c;
}

/* Cores waiting for `node` (its firing or its bus transfer) may go on. */
static void sim_wake(sim *s, uint32_t node)
{
    uint32_t c = s->wait_head[node];
    s->wait_head[node] = PM_NONE;
    while (c != PM_NONE) {
        uint32_t next = s->wait_next[c];
        s->wait_node[c] = PM_NONE;
        sim_runnable(s, c);
        c = next;
    }
}

/* Earliest begin of (v,k) from its inputs and output room; false (after
 * registering the wait) when something it needs is not known yet. */
static bool sim_ready(sim *s, uint32_t c, uint32_t v, uint64_t k, int64_t *x, uint32_t *cause)
{
    const sim_nd *nd = &s->nd[v];
    s->ntake = 0;
    for (uint32_t i = nd->in_lo; i < nd->in_hi; i++) {
        const sim_in *in = &s->ins[i];
        bool cross = in->xslot != PM_NONE;
        if (k < in->delay) {
            if (cross)
                s->take[s->ntake++] = (sim_take){ in->xslot, true, 0 };
            continue;
        }
        uint64_t j = k - in->delay;
        if (cross) /* for counting its tokens once (v,k) begins */
            __builtin_prefetch(&s->cur[in->xslot], 1);
        bool bus = s->bus && cross;
        const sim_grant *gr = bus ? &s->bg[(size_t)(j & s->mask) * s->nx + in->xslot] : NULL;
        if (bus ? gr->iter != j : s->done[in->src] <= j) {
            sim_wait(s, c, in->src, in->edge, false);
            return false;
        }
        int64_t a;
        if (bus) {
            a = gr->arrival;
            s->take[s->ntake++] = (sim_take){ in->xslot, false, gr->request };
        } else {
            int64_t end = *sim_x_at(s, in->src, j) + in->w;
            a = end + (cross ? s->x[in->xslot].cost : 0);
            if (cross)
                s->take[s->ntake++] = (sim_take){ in->xslot, false, end };
        }
        if (a > *x)
            *x = a, *cause = (bus ? PM_CAUSE_BUS : PM_CAUSE_EDGE) | in->edge << 3;
    }
    if (!s->fifo)
        return true;
    for (uint32_t i = nd->xo_lo; i < nd->xo_hi; i++) {
        const sim_fo *f = &s->fo[i];
        if (k < f->back)
            continue;
        if (s->done[f->dst] <= k - f->back) {
            sim_wait(s, c, f->dst, f->edge, true);
            return false;
        }
        int64_t a = *sim_x_at(s, f->dst, k - f->back);
        if (a > *x)
            *x = a, *cause = PM_CAUSE_FIFO | f->edge << 3;
    }
    return true;
}

/* a (len of *cap items of `size` used) with room for one more; NULL when
 * out of memory (a is then untouched). */
static void *sim_record_room(void *a, size_t len, size_t *cap, size_t size)
{
    if (len < *cap)
        return a;
    size_t nc = *cap ? *cap * 2 : 64;
    void *na = realloc(a, nc * size);
    if (na)
        *cap = nc;
    return na;
}

int sim_record_firing(sim *s, uint32_t c, uint32_t v, uint64_t k, int64_t x)
{
    pm_sim_firing *nt = sim_record_room(s->trace, s->ntrace, &s->trace_cap, sizeof *nt);
    if (!nt)
        return PM_ENOMEM;
    s->trace = nt;
    int64_t st = x + s->recv[v];
    s->trace[s->ntrace++] = (pm_sim_firing){ v, c, k, x, st, st + s->t[v],
                                             st + s->t[v] + s->send[v] };
    return PM_OK;
}

int sim_record_transfer(sim *s, uint32_t xs, uint64_t k, int64_t req, int64_t gr)
{
    pm_sim_transfer *nt = sim_record_room(s->tr, s->ntr, &s->tr_cap, sizeof *nt);
    if (!nt)
        return PM_ENOMEM;
    s->tr = nt;
    pm_sim_transfer *t = &s->tr[s->ntr++];
    memset(t, 0, sizeof *t); /* no stray padding bytes in results */
    t->edge = s->x[xs].edge;
    t->iteration = k;
    t->request = req;
    t->grant = gr;
    t->arrival = gr + s->x[xs].cost;
    return PM_OK;
}

/* Tokens leave (v,k) at `end`: queue its bus requests. */
static int sim_outputs(sim *s, uint32_t c, uint32_t v, uint64_t k, int64_t end)
{
    const sim_nd *nd = &s->nd[v];
    int rc = PM_OK;
    for (uint32_t i = nd->xo_lo; i < nd->xo_hi && !rc; i++) {
        const sim_fo *f = &s->fo[i];
        if (s->bus)
            rc = sim_bq_push(&s->pend, c, (sim_ev){ end, (uint64_t)c << 32 | f->xslot, k, f->cost,
                                                   v, 0 });
        else if (k < s->record)
            rc = sim_record_transfer(s, f->xslot, k, end, end);
    }
    return rc;
}

/* (v,k) began at x and took a token from each cross-core input: count the
 * push of that token (sim_tokens.c). */
static int sim_count_tokens(sim *s, uint32_t v, uint64_t k, int64_t x)
{
    for (uint32_t i = 0; i < s->ntake; i++) {
        const sim_take *tk = &s->take[i];
        int rc = sim_tokens_take(s, &s->cur[tk->xslot], tk->xslot, s->xr + v, s->n, k, x,
                                 tk->initial, tk->push);
        if (rc)
            return rc;
    }
    return PM_OK;
}

static inline void sim_note_begin(sim *s, uint32_t v, uint64_t k, int64_t x)
{
    sim_nd *nd = &s->nd[v];
    int64_t st = x + nd->recv, en = x + nd->end_off;
    uint64_t i = k & s->mask;
    if (k > 0)
        s->f1[i] += sim_mix((uint64_t)(x - nd->last_x), v);
    nd->last_x = x;
    if (st < s->lmin[i])
        s->lmin[i] = st;
    if (en > s->lmax[i])
        s->lmax[i] = en;
    if (k == s->N / 2)
        s->half[v] = x;
}

static int sim_commit(sim *s, uint32_t c, uint32_t v, uint64_t k, int64_t x, uint32_t cause)
{
    size_t slot = (size_t)(k & s->mask) * s->n + v;
    s->xr[slot] = x;
    s->cr[slot] = cause;
    sim_note_begin(s, v, k, x);
    s->done[v]++;
    s->firings++;
    int64_t end = x + s->nd[v].end_off;
    s->free[c] = x + s->nd[v].free_off;
    if (s->free[c] > s->makespan)
        s->makespan = s->free[c];
    int rc = s->nx ? sim_outputs(s, c, v, k, end) : PM_OK;
    if (!rc && s->nx)
        rc = sim_count_tokens(s, v, k, x);
    if (!rc && k < s->record)
        rc = sim_record_firing(s, c, v, k, x);
    if (rc)
        return rc;
    sim_wake(s, v);
    if (++s->pos[c] == s->cnt[c]) {
        s->pos[c] = 0;
        s->iter[c]++;
        return 1; /* the core moved to a new iteration */
    }
    return PM_OK;
}

/* The causal engine, for a bus and for maps the compiled pass cannot run.  A
 * firing whose inputs are all known has fixed times (max-plus), so cores
 * fire in any order, each as far as it can: until it waits for a node (it
 * then sits on that node's wake-up list), or until it is SIM_LAG
 * iterations ahead of the slowest core (this bounds the rings).  Only the
 * bus needs time order, and only when it grants: the oldest request is
 * granted once no core can fire any more.  Then every core that waits
 * does so, through data or room, for a transfer still queued (granted
 * later) or for a core held by the lag limit; a held core whose free time
 * is not after the grant is let go first, since it might still ask for the
 * bus earlier.  Everything else can only ask later, so the grant is final.
 * With nothing to fire and nothing to grant the run is over, or
 * deadlocked: the core at the lowest iteration is never held by the lag
 * limit and waits for data or room only. */

/* Ask for the data of the firing `ahead` positions later on core c. */
static void sim_prefetch(const sim *s, uint32_t c, uint32_t ahead)
{
    uint32_t p = s->pos[c] + ahead;
    if (p >= s->cnt[c])
        p -= s->cnt[c];
    if (p >= s->cnt[c])
        return;
    uint32_t v = s->m->order[s->first[c] + p];
    const sim_nd *nd = &s->nd[v];
    __builtin_prefetch(nd);
    __builtin_prefetch(&s->ins[nd->in_lo]);
    if (nd->in_hi > nd->in_lo)
        __builtin_prefetch(&s->ins[nd->in_hi - 1]);
    __builtin_prefetch(&s->fo[nd->xo_lo]);
    __builtin_prefetch(&s->done[v], 1);
    __builtin_prefetch(sim_x_at(s, v, s->iter[c]), 1);
}

static int sim_run_core(sim *s, uint32_t c, pm_diag *diag)
{
    s->wait_node[c] = PM_NONE;
    for (uint32_t a = 1; a <= SIM_PREFETCH; a++)
        sim_prefetch(s, c, a);
    while (s->iter[c] < s->N) {
        if (s->iter[c] >= s->completed + SIM_LAG && !s->relax[c]) {
            s->lagged[c] = true;
            s->nlagged++;
            return PM_OK;
        }
        s->relax[c] = false;
        sim_prefetch(s, c, SIM_PREFETCH);
        uint32_t v = s->m->order[s->first[c] + s->pos[c]];
        uint64_t k = s->iter[c];
        int64_t x = s->free[c];
        uint32_t cause = (k || s->pos[c]) ? PM_CAUSE_ORDER : PM_CAUSE_START;
        if (!sim_ready(s, c, v, k, &x, &cause))
            return PM_OK;
        int rc = sim_commit(s, c, v, k, x, cause);
        if (rc == 1)
            rc = sim_core_advanced(s, c, diag);
        if (rc)
            return rc;
    }
    return PM_OK;
}

/* Let held cores that are free by time g fire once more; true if any. */
static bool sim_release_lagged(sim *s, int64_t g)
{
    bool any = false;
    for (uint32_t c = 0; c < s->P; c++)
        if (s->lagged[c] && s->free[c] <= g) {
            s->lagged[c] = false;
            s->nlagged--;
            s->relax[c] = true;
            sim_runnable(s, c);
            any = true;
        }
    return any;
}

/* ---- bus ---------------------------------------------------------------- */

/* Grant the oldest request (the head of the queue) at g. */
static int sim_bus_grant(sim *s, int64_t g)
{
    sim_ev r = sim_bq_pop(&s->pend);
    uint32_t xs = (uint32_t)r.order;
    size_t slot = (size_t)(r.iter & s->mask) * s->nx + xs;
    s->bg[slot] = (sim_grant){ g + r.cost, r.time, r.iter, s->bus_last_iter,
                               s->bus_free > r.time ? s->bus_last : 0, 0 };
    s->bus_free = g + r.cost;
    s->bus_last = xs + 1;
    s->bus_last_iter = r.iter;
    int rc = r.iter < s->record ? sim_record_transfer(s, xs, r.iter, r.time, g) : PM_OK;
    sim_wake(s, r.src);
    return rc;
}

/* ---- main loop ---------------------------------------------------------- */

static int sim_loop_causal(sim *s, pm_diag *diag)
{
    for (uint32_t c = 0; c < s->P; c++)
        sim_runnable(s, c);
    for (;;) {
        while (s->runq_len) {
            uint32_t c = s->runq[s->runq_head];
            s->runq_head = (s->runq_head + 1) % s->P;
            s->runq_len--;
            s->queued[c] = false;
            int rc = sim_run_core(s, c, diag);
            if (rc)
                return rc;
        }
        if (!s->pend.len)
            return PM_OK; /* finished, or deadlocked (sim_collect tells) */
        int64_t t = sim_bq_first(&s->pend, s->pend.tree[1])->time;
        int64_t g = t > s->bus_free ? t : s->bus_free;
        if (s->nlagged && sim_release_lagged(s, g))
            continue;
        int rc = sim_bus_grant(s, g);
        if (rc)
            return rc;
    }
}

static int sim_loop(sim *s, pm_diag *diag)
{
    if (!s->bus) {
        int rc = sim_loop_p2p(s, diag);
        if (rc != 1)
            return rc;
    }
    return sim_loop_causal(s, diag);
}

static int sim_init(sim *s, const pm_graph *g, const pm_map *m, const pm_sim_opts *o,
                    pm_diag *diag)
{
    s->g = g, s->m = m, s->n = g->nnodes, s->P = m->ncores;
    s->N = o->iterations ? o->iterations : PM_SIM_DEFAULT_ITERATIONS;
    s->bus = g->platform.interconnect == PM_BUS;
    s->fifo = o->fifo_cap > 0;
    s->record = o->record;
    uint32_t cm = o->max_cyclicity ? o->max_cyclicity : (uint32_t)((UINT32_C(1) << 21) / (s->n + 1));
    s->cmax = cm > PM_SIM_MAX_CYCLICITY ? PM_SIM_MAX_CYCLICITY : cm < 4 ? 4 : cm;
    if (o->max_cyclicity && o->max_cyclicity < s->cmax)
        s->cmax = o->max_cyclicity;
    int rc = sim_alloc_nodes(s);
    if (!rc)
        rc = sim_node_times(s, o, diag);
    if (rc)
        return rc;
    rc = sim_build_edges(s, o->fifo_cap, diag);
    if (!rc)
        rc = sim_build_xlists(s);
    if (rc)
        return rc;
    sim_build_cores(s);
    rc = sim_tokens_init(s);
    if (!rc && s->bus)
        rc = sim_bq_init(&s->pend, s->P);
    if (rc)
        return rc;
    rc = sim_check_range(s, diag);
    if (!rc)
        rc = sim_ring_fit(s, diag);
    if (!rc)
        sim_slot_reset(s, 0);
    return rc;
}

static void sim_free(sim *s)
{
    void *ps[] = { s->t, s->recv, s->send, s->nd, s->in_off, s->ins, s->xout_off, s->xout,
                   s->xs_of, s->pos_of, s->done, s->wait_head, s->x, s->pos,
                   s->cnt, s->first, s->iter, s->free, s->wait_next, s->wait_node,
                   s->wait_edge, s->wait_fifo, s->queued, s->lagged, s->relax, s->runq, s->xr, s->cr, s->bg, s->f1, s->lbr, s->lmin, s->lmax, s->half,
                   s->trace, s->tr, s->cur, s->fo, s->take };
    for (size_t i = 0; i < sizeof ps / sizeof ps[0]; i++)
        free(ps[i]);
    sim_bq_free(&s->pend, s->P);
    if (s->occ)
        for (uint32_t i = 0; i < s->nx; i++)
            free(s->occ[i].q);
    free(s->occ);
}

static int sim_validate(const pm_graph *g, const pm_map *m, const pm_sim_opts *o,
                        pm_diag *diag)
{
    if (!g || !m || !o || !g->finalized) {
        pm_diag_set(diag, "", 0, 0, "simulate: missing or unfinished graph or map");
        return PM_EINVAL;
    }
    if (!pm_graph_is_single_rate(g)) {
        pm_diag_set(diag, g->file, 0, 0,
                    "the simulator runs single-rate graphs; expand multirate edges first");
        return PM_EUNSUPPORTED;
    }
    if (o->record > 0 && (uint64_t)o->record * (g->nnodes + g->nedges) > (UINT64_C(1) << 26)) {
        pm_diag_set(diag, g->file, 0, 0, "too many iterations to record (%u)", o->record);
        return PM_EINVAL;
    }
    return pm_map_check(m, g, diag);
}

uint32_t sim_prev_on_core(const sim *s, uint32_t c, uint32_t pos, uint32_t *back)
{
    *back = pos == 0;
    pos = pos ? pos - 1 : s->cnt[c] - 1;
    return s->m->order[s->first[c] + pos];
}

static int sim_collect(sim *s, pm_sim_result *r, pm_diag *diag)
{
    r->firings = s->firings;
    r->makespan = s->makespan;
    r->latency_max = s->lat_max;
    for (uint32_t c = 0; c < s->P; c++)
        if (s->iter[c] < s->N)
            return sim_report_deadlock(s, r, diag);
    r->iterations = s->N;
    int rc = sim_tokens_tail(s);
    for (uint32_t i = 0; i < s->nx; i++)
        sim_occ_flush(&s->occ[i]);
    if (!rc)
        rc = sim_report_steady(s, r);
    if (!rc)
        rc = sim_report_resources(s, r);
    if (!rc)
        rc = sim_report_chain(s, r);
    return rc;
}

/* Name the edge whose token counts outgrew SIM_OCC_LIMIT. */
static void sim_pile_up_message(const sim *s, pm_diag *diag)
{
    uint32_t best = 0;
    for (uint32_t i = 1; i < s->nx; i++)
        if (s->occ[i].len > s->occ[best].len)
            best = i;
    const pm_graph *g = s->g;
    const pm_edge *e = &g->edges[s->x[best].edge];
    pm_diag_set(diag, g->file, e->line, e->col,
                "tokens pile up without bound on edge '%s' -> '%s'; give a FIFO capacity "
                "(--fifo N) or fewer iterations (-n)", pm_graph_node_name(g, e->src), pm_graph_node_name(g, e->dst));
}

int pm_sim_run(const pm_graph *g, const pm_map *m, const pm_sim_opts *opts,
               pm_sim_result *out, pm_diag *diag)
{
    static const pm_sim_opts defaults = { 0 };
    memset(out, 0, sizeof *out);
    pm_diag_clear(diag);
    const pm_sim_opts *o = opts ? opts : &defaults;
    int rc = sim_validate(g, m, o, diag);
    if (rc)
        return rc;
    sim s;
    memset(&s, 0, sizeof s);
    rc = sim_init(&s, g, m, o, diag);
    if (!rc)
        rc = sim_loop(&s, diag);
    if (rc == PM_ELIMIT && diag && !diag->msg[0] && s.nx)
        sim_pile_up_message(&s, diag);
    if (!rc)
        rc = sim_collect(&s, out, diag);
    sim_free(&s);
    if (rc && rc != PM_EDEADLOCK)
        pm_sim_result_free(out);
    return rc;
}

void pm_sim_result_free(pm_sim_result *r)
{
    if (!r)
        return;
    free(r->waits);
    free(r->core_busy);
    free(r->utilisation);
    free(r->max_tokens);
    free(r->critical);
    free(r->trace);
    free(r->transfers);
    memset(r, 0, sizeof *r);
}

const char *pm_sim_cause_name(pm_sim_cause c)
{
    static const char *const names[] = { "start", "order", "edge", "bus", "fifo", "bus-busy" };
    return (unsigned)c < sizeof names / sizeof names[0] ? names[c] : "?";
}
