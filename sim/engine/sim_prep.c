/*
 * sim_prep.c - the simulator's preparation: from a graph and a map, the
 * arrays both engines run on, and the rings of iterations.
 *
 * sim_init times every node on its core, gives each cross-core edge an
 * xslot (transfer cost, FIFO room), packs each node's inputs and
 * cross-core outputs for the hot loops, checks that no time can pass 62
 * bits and sizes the rings.  The rings hold the last W iterations (begin
 * times, causes, bus grants, fingerprints); sim_ring_fit doubles W when
 * cores drift apart, up to a memory limit whose message names the edge to
 * blame.  sim_free releases it all.  Not here: running (the engines are
 * sim_p2p.c and sim_causal.c; the entry point is sim.c).  Nothing here
 * prints.
 */
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>

#include "sim_internal.h"

#define SIM_MEM_LIMIT (UINT64_C(1) << 30) /* bytes of rings before PM_ELIMIT */
#define SIM_RINGS 7 /* arrays that slide with the window of iterations */

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
    s->core_lag = calloc(P + 1, sizeof *s->core_lag);
    if (!s->t || !s->recv || !s->send || !s->nd || !s->in_off || !s->ins || !s->xout_off ||
        !s->xout || !s->xs_of || !s->x || !s->occ || !s->pos_of || !s->done ||
        !s->wait_head || !s->half || !s->pos || !s->cnt || !s->first || !s->iter ||
        !s->free || !s->wait_next || !s->wait_node || !s->wait_edge || !s->wait_fifo ||
        !s->queued || !s->lagged || !s->relax || !s->runq || !s->core_lag)
        return PM_ENOMEM;
    memset(s->nd, 0, (n + 1) * sizeof *s->nd);
    memset(s->ins, 0, (e + 1) * sizeof *s->ins);
    for (uint32_t v = 0; v < s->n; v++)
        s->wait_head[v] = PM_NONE;
    return PM_OK;
}

/* With lags the consumer of u -> v begins lag[v] - lag[u] rounds later, so
 * the edge holds d + lag[v] - lag[u] tokens by then: a FIFO gets at least
 * that much room (else the producer would wait for a round not yet run). */
static int64_t sim_lag_cap(const sim *s, const pm_edge *ed, int64_t cap)
{
    int64_t r = ed->delay + (int64_t)s->m->lag[ed->dst] - (int64_t)s->m->lag[ed->src];
    return r > cap ? r : cap;
}

/* How many iterations back from a round the lags make the engines read
 * (at most): an input of v reads iteration r - lag[v] - d, a room
 * condition r - lag[v] - (cap - d), the core's previous firing
 * r - 1 - lag[prev], and a skipped firing keeps its time in the slot of
 * its negative iteration r - lag[v] (sim_p2p.c). */
static void sim_lag_span(sim *s)
{
    const pm_graph *g = s->g;
    int64_t most = 2 * (int64_t)s->lag_max + 1;
    for (uint32_t e = 0; e < g->nedges; e++) {
        uint32_t xs = s->xs_of[e];
        int64_t d = g->edges[e].delay, cap = xs != PM_NONE ? s->x[xs].cap : 0;
        int64_t back = (int64_t)s->lag_max + (cap > d ? cap : d);
        most = back > most ? back : most;
    }
    if (most > s->span)
        s->span = most;
}

/* Cross-core edges get an xslot; every node gets its input list. */
static int sim_build_edges(sim *s, const pm_sim_opts *o, pm_diag *diag)
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
        pm_i128 cost = (pm_i128)cm->latency + (pm_i128)cm->per_word * ed->words;
        if (cost > PM_MAX_VALUE) {
            pm_diag_set(diag, g->file, ed->line, ed->col,
                        "a transfer on this edge takes more than %lld cycles",
                        (long long)PM_MAX_VALUE);
            return PM_ERANGE;
        }
        x->cost = (int64_t)cost;
        int64_t fc = o->edge_cap && o->edge_cap[e] ? o->edge_cap[e] : o->fifo_cap;
        x->cap = fc ? (ed->delay > fc ? ed->delay : fc) : 0;
        if (x->cap && s->lags) /* room for the tokens the lags keep in flight too */
            x->cap = sim_lag_cap(s, ed, x->cap);
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
        /* an unbounded edge among bounded ones never waits for room */
        uint32_t back = x->cap ? (uint32_t)(x->cap - x->delay) : UINT32_MAX;
        s->fo[i] = (sim_fo){ x->dst, x->edge, back, s->xout[i], x->cost };
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
        s->iter[c] = s->cnt[c] ? 0 : s->R;
        s->wait_node[c] = PM_NONE;
        for (uint32_t i = 0; s->lags && i < s->cnt[c]; i++) {
            uint32_t l = m->lag[m->order[m->off[c] + i]];
            s->core_lag[c] = l > s->core_lag[c] ? l : s->core_lag[c];
        }
    }
}

/* Times stay below N * (all work and transfer time of one iteration),
 * doubled for bus waits; refuse runs where that could pass 2^62. */
static int sim_check_range(const sim *s, pm_diag *diag)
{
    pm_u128 per = 1;
    for (uint32_t v = 0; v < s->n; v++)
        per += (pm_u128)(s->t[v] + s->recv[v] + s->send[v]);
    for (uint32_t i = 0; i < s->nx; i++)
        per += (pm_u128)s->x[i].cost;
    if (per * 2 * ((pm_u128)s->R + 1) > (pm_u128)PM_MAX_VALUE) {
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
    pm_u128 b = (pm_u128)W * per;
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
    if (s->lag_max && (e == PM_NONE || (uint64_t)s->lag_max >= (uint64_t)g->edges[e].delay)) {
        pm_diag_set(diag, g->file, 0, 0,
                    "lags too deep for the simulator: with a lag of %u, iterations %llu apart "
                    "must be kept, more than fit in its memory limit", s->lag_max,
                    (unsigned long long)s->span + s->lag_max);
        return;
    }
    pm_diag_set(diag, g->file, e == PM_NONE ? 0 : g->edges[e].line,
                e == PM_NONE ? 0 : g->edges[e].col,
                "too many delays for the simulator: iterations %llu apart must be kept, "
                "more than fit in its memory limit", (unsigned long long)s->span);
}

/* Make room for iterations [completed - look-back, max_iter]. */
int sim_ring_fit(sim *s, pm_diag *diag)
{
    uint64_t back = (uint64_t)s->span + 2 > s->cmax + 1 ? (uint64_t)s->span + 2 : s->cmax + 1;
    back += s->lag_max; /* iterations wait lag_max rounds before they count as done */
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

/* ---- the whole preparation, and its release ----------------------------- */

int sim_init(sim *s, const pm_graph *g, const pm_map *m, const pm_sim_opts *o,
             pm_diag *diag)
{
    s->g = g, s->m = m, s->n = g->nnodes, s->P = m->ncores;
    s->N = o->iterations ? o->iterations : PM_SIM_DEFAULT_ITERATIONS;
    s->bus = g->platform.interconnect == PM_BUS;
    for (uint32_t e = 0; o->edge_cap && e < g->nedges; e++)
        s->caps |= o->edge_cap[e] > 0;
    s->fifo = o->fifo_cap > 0 || s->caps;
    s->record = o->record;
    for (uint32_t v = 0; v < s->n; v++)
        s->lag_max = m->lag[v] > s->lag_max ? m->lag[v] : s->lag_max;
    s->lags = s->lag_max > 0;
    s->R = s->N + s->lag_max;
    uint32_t cm = o->max_cyclicity ? o->max_cyclicity : (uint32_t)((UINT32_C(1) << 21) / (s->n + 1));
    s->cmax = cm > PM_SIM_MAX_CYCLICITY ? PM_SIM_MAX_CYCLICITY : cm < 4 ? 4 : cm;
    if (o->max_cyclicity && o->max_cyclicity < s->cmax)
        s->cmax = o->max_cyclicity;
    int rc = sim_alloc_nodes(s);
    if (!rc)
        rc = sim_node_times(s, o, diag);
    if (rc)
        return rc;
    rc = sim_build_edges(s, o, diag);
    if (!rc && s->lags)
        sim_lag_span(s);
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
    if (!rc && o->pace)
        rc = sim_pace_init(s, o, diag);
    if (!rc)
        rc = sim_ring_fit(s, diag);
    if (!rc)
        sim_slot_reset(s, 0);
    return rc;
}

void sim_free(sim *s)
{
    void *ps[] = { s->t, s->recv, s->send, s->nd, s->in_off, s->ins, s->xout_off, s->xout,
                   s->xs_of, s->pos_of, s->done, s->wait_head, s->x, s->pos,
                   s->cnt, s->first, s->iter, s->free, s->wait_next, s->wait_node,
                   s->wait_edge, s->wait_fifo, s->queued, s->lagged, s->relax, s->runq, s->core_lag, s->xr, s->cr, s->bg, s->f1, s->lbr, s->lmin, s->lmax, s->half,
                   s->trace, s->tr, s->cur, s->fo, s->take };
    for (size_t i = 0; i < sizeof ps / sizeof ps[0]; i++)
        free(ps[i]);
    sim_bq_free(&s->pend, s->P);
    sim_pace_free(s);
    if (s->occ)
        for (uint32_t i = 0; i < s->nx; i++)
            free(s->occ[i].q);
    free(s->occ);
}
