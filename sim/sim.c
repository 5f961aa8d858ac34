/*
 * sim.c - the event engine of the self-timed simulator (sim.h).
 *
 * Events are processed in time order from one binary heap, keyed
 * (time, phase, core, edge, iteration): phase 0 a core tries its next
 * firing, phase 1 a bus request is queued, phase 2 the bus is granted.
 * A firing is committed as soon as every time it depends on is known
 * (its begin may lie ahead of the clock; without contention that is
 * exact), so p2p runs are a max-plus recursion driven in time order, and
 * bus grants still see every earlier request.  A core that cannot go on
 * registers on the node it waits for and is woken when that node fires
 * (or its transfer is granted): no polling.  Steady state, critical chain
 * and deadlock reports are in sim_report.c.
 */
#include "pacemap/sim.h"

#include <stdlib.h>
#include <string.h>

#include "sim_internal.h"

#define SIM_MEM_LIMIT (UINT64_C(1) << 30) /* bytes of rings before PM_ELIMIT */

/* ---- heap ------------------------------------------------------------- */

static bool sim_ev_less(const sim_ev *a, const sim_ev *b)
{
    if (a->time != b->time)
        return a->time < b->time;
    if (a->phase != b->phase)
        return a->phase < b->phase;
    if (a->core != b->core)
        return a->core < b->core;
    if (a->xslot != b->xslot)
        return a->xslot < b->xslot;
    return a->iter < b->iter;
}

static int sim_heap_push(sim_heap *h, sim_ev e)
{
    if (h->len == h->cap) {
        size_t nc = h->cap ? h->cap * 2 : 64;
        sim_ev *na = realloc(h->a, nc * sizeof *na);
        if (!na)
            return PM_ENOMEM;
        h->a = na;
        h->cap = nc;
    }
    size_t i = h->len++;
    while (i > 0) {
        size_t p = (i - 1) / 2;
        if (!sim_ev_less(&e, &h->a[p]))
            break;
        h->a[i] = h->a[p];
        i = p;
    }
    h->a[i] = e;
    return PM_OK;
}

static sim_ev sim_heap_pop(sim_heap *h)
{
    sim_ev top = h->a[0];
    sim_ev last = h->a[--h->len];
    size_t i = 0, n = h->len;
    for (;;) {
        size_t l = 2 * i + 1;
        if (l >= n)
            break;
        if (l + 1 < n && sim_ev_less(&h->a[l + 1], &h->a[l]))
            l++;
        if (!sim_ev_less(&h->a[l], &last))
            break;
        h->a[i] = h->a[l];
        i = l;
    }
    if (n)
        h->a[i] = last;
    return top;
}

/* ---- token counts ----------------------------------------------------- */

static int sim_occ_queue(sim_occ *o, int64_t t, bool pop)
{
    if (o->len == o->cap) {
        uint32_t nc = o->cap ? o->cap * 2 : 4;
        int64_t *nq = malloc(nc * sizeof *nq);
        if (!nq)
            return PM_ENOMEM;
        for (uint32_t i = 0; i < o->len; i++)
            nq[i] = o->q[(o->head + i) & (o->cap - 1)];
        free(o->q);
        o->q = nq;
        o->cap = nc;
        o->head = 0;
    }
    o->q[(o->head + o->len++) & (o->cap - 1)] = t;
    o->pops = pop;
    return PM_OK;
}

static int64_t sim_occ_front(const sim_occ *o)
{
    return o->q[o->head];
}

static void sim_occ_drop(sim_occ *o)
{
    o->head = (o->head + 1) & (o->cap - 1);
    o->len--;
}

static void sim_occ_apply_push(sim_occ *o)
{
    if (++o->occ > o->max)
        o->max = o->occ;
}

/* A token pushed at time t.  Pops at the same time go first: a slot
 * freed and refilled in the same cycle is one slot (docs/simulation.md). */
static int sim_occ_push(sim_occ *o, int64_t t)
{
    if (o->len && o->pops) {
        while (o->len && sim_occ_front(o) <= t) {
            o->occ--;
            sim_occ_drop(o);
        }
        if (o->len) {
            sim_occ_apply_push(o);
            return PM_OK;
        }
    }
    return sim_occ_queue(o, t, false);
}

static int sim_occ_pop(sim_occ *o, int64_t t)
{
    if (o->len && !o->pops) {
        while (o->len && sim_occ_front(o) < t) {
            sim_occ_apply_push(o);
            sim_occ_drop(o);
        }
        if (o->len) {
            o->occ--;
            return PM_OK;
        }
    }
    return sim_occ_queue(o, t, true);
}

static void sim_occ_flush(sim_occ *o)
{
    while (o->len) {
        if (o->pops)
            o->occ--;
        else
            sim_occ_apply_push(o);
        sim_occ_drop(o);
    }
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
    s->in_off = calloc(n + 1, sizeof *s->in_off);
    s->ins = calloc(e + 1, sizeof *s->ins);
    s->xout_off = calloc(n + 1, sizeof *s->xout_off);
    s->xin_off = calloc(n + 1, sizeof *s->xin_off);
    s->xout = calloc(e + 1, sizeof *s->xout);
    s->xin = calloc(e + 1, sizeof *s->xin);
    s->x = calloc(e + 1, sizeof *s->x);
    s->occ = calloc(e + 1, sizeof *s->occ);
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
    if (!s->t || !s->recv || !s->send || !s->in_off || !s->ins || !s->xout_off ||
        !s->xin_off || !s->xout || !s->xin || !s->x || !s->occ || !s->pos_of || !s->done ||
        !s->wait_head || !s->half || !s->pos || !s->cnt || !s->first || !s->iter ||
        !s->free || !s->wait_next || !s->wait_node || !s->wait_edge || !s->wait_fifo ||
        !s->queued)
        return PM_ENOMEM;
    for (uint32_t v = 0; v < s->n; v++)
        s->wait_head[v] = PM_NONE;
    return PM_OK;
}

/* Cross-core edges get an xslot; every node gets its input list. */
static void sim_build_edges(sim *s, uint32_t fifo_cap)
{
    const pm_graph *g = s->g;
    const pm_comm *cm = &g->platform.comm;
    const uint32_t *core = s->m->core_of;
    uint32_t *xs_of = s->xin; /* scratch: xslot of each edge, rebuilt below */
    for (uint32_t e = 0; e < g->nedges; e++) {
        const pm_edge *ed = &g->edges[e];
        xs_of[e] = PM_NONE;
        if (ed->delay > s->span)
            s->span = ed->delay;
        if (core[ed->src] == core[ed->dst])
            continue;
        sim_x *x = &s->x[s->nx];
        x->edge = e, x->src = ed->src, x->dst = ed->dst, x->delay = ed->delay;
        x->cost = cm->latency + cm->per_word * ed->words;
        x->cap = fifo_cap ? (ed->delay > fifo_cap ? ed->delay : fifo_cap) : 0;
        if (x->cap > s->span)
            s->span = x->cap;
        s->occ[s->nx].occ = s->occ[s->nx].max = ed->delay;
        xs_of[e] = s->nx++;
        s->recv[ed->dst] += cm->recv;
        s->send[ed->src] += cm->send;
        s->xout_off[ed->src + 1]++;
        s->xin_off[ed->dst + 1]++;
    }
    uint32_t k = 0;
    for (uint32_t v = 0; v < s->n; v++) {
        s->in_off[v] = k;
        for (uint32_t i = g->in_off[v]; i < g->in_off[v + 1]; i++) {
            uint32_t e = g->in_edge[i];
            sim_in *in = &s->ins[k++];
            in->src = g->edges[e].src, in->edge = e, in->delay = g->edges[e].delay;
            in->xslot = s->bus ? xs_of[e] : PM_NONE;
            in->cost = xs_of[e] == PM_NONE ? 0 : s->x[xs_of[e]].cost;
        }
    }
    s->in_off[s->n] = k;
}

/* Fill the cross-core in/out lists (counting sort by node). */
static int sim_build_xlists(sim *s)
{
    for (uint32_t v = 0; v < s->n; v++) {
        s->xout_off[v + 1] += s->xout_off[v];
        s->xin_off[v + 1] += s->xin_off[v];
    }
    uint32_t *fo = calloc(s->n + 1, sizeof *fo), *fi = calloc(s->n + 1, sizeof *fi);
    if (!fo || !fi) {
        free(fo);
        free(fi);
        return PM_ENOMEM;
    }
    for (uint32_t i = 0; i < s->nx; i++) {
        uint32_t u = s->x[i].src, v = s->x[i].dst;
        s->xout[s->xout_off[u] + fo[u]++] = i;
        s->xin[s->xin_off[v] + fi[v]++] = i;
    }
    free(fo);
    free(fi);
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
    return W * ((uint64_t)s->n * 12 + (uint64_t)s->nx * 28 + 32);
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

static int sim_ring_alloc(sim *s, uint64_t W, void **p)
{
    size_t n = s->n ? s->n : 1, nx = s->nx ? s->nx : 1;
    p[0] = malloc(W * n * sizeof(int64_t));
    p[1] = malloc(W * n * sizeof(uint32_t));
    p[2] = malloc(W * nx * sizeof(int64_t));
    p[3] = malloc(W * nx * sizeof(int64_t));
    p[4] = malloc(W * nx * sizeof(uint32_t));
    p[5] = malloc(W * nx * sizeof(uint64_t));
    p[6] = calloc(W, sizeof(uint64_t));
    p[7] = calloc(W, sizeof(uint64_t));
    p[8] = malloc(W * sizeof(int64_t));
    p[9] = malloc(W * sizeof(int64_t));
    for (int i = 0; i < 10; i++)
        if (!p[i]) {
            for (int j = 0; j < 10; j++)
                free(p[j]);
            return PM_ENOMEM;
        }
    return PM_OK;
}

static void sim_ring_install(sim *s, uint64_t W, void **p)
{
    free(s->xr), free(s->cr), free(s->ar), free(s->gr), free(s->br), free(s->bi);
    free(s->f1), free(s->f2), free(s->lmin), free(s->lmax);
    s->xr = p[0], s->cr = p[1], s->ar = p[2], s->gr = p[3], s->br = p[4], s->bi = p[5];
    s->f1 = p[6], s->f2 = p[7], s->lmin = p[8], s->lmax = p[9];
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
    for (uint32_t i = 0; i < s->nx; i++) {
        uint64_t hi = s->granted[i], lo = hi > s->W ? hi - s->W : 0;
        sim_ring_move(p[2], s->ar, sizeof(int64_t), s->nx, lo, hi, om, nm, i);
        sim_ring_move(p[3], s->gr, sizeof(int64_t), s->nx, lo, hi, om, nm, i);
        sim_ring_move(p[4], s->br, sizeof(uint32_t), s->nx, lo, hi, om, nm, i);
        sim_ring_move(p[5], s->bi, sizeof(uint64_t), s->nx, lo, hi, om, nm, i);
    }
    /* iteration max_iter is new (reset after the move); older ones live */
    uint64_t hi = s->max_iter, lo = hi > s->W ? hi - s->W : 0;
    sim_ring_move(p[6], s->f1, sizeof(uint64_t), 1, lo, hi, om, nm, 0);
    sim_ring_move(p[7], s->f2, sizeof(uint64_t), 1, lo, hi, om, nm, 0);
    sim_ring_move(p[8], s->lmin, sizeof(int64_t), 1, lo, hi, om, nm, 0);
    sim_ring_move(p[9], s->lmax, sizeof(int64_t), 1, lo, hi, om, nm, 0);
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

/* Make room for iterations [completed - look-back, max_iter]. */
static int sim_ring_fit(sim *s, pm_diag *diag)
{
    uint64_t back = (uint64_t)s->span + 2 > s->cmax + 1 ? (uint64_t)s->span + 2 : s->cmax + 1;
    uint64_t need = s->max_iter - s->completed + back + 1;
    if (s->xr && need <= s->W)
        return PM_OK;
    uint64_t W = s->W ? s->W : 8;
    while (W < need)
        W *= 2;
    if (sim_ring_bytes(s, W) > SIM_MEM_LIMIT) {
        uint32_t e = sim_worst_edge(s);
        const pm_graph *g = s->g;
        pm_diag_set(diag, g->file, e == PM_NONE ? 0 : g->edges[e].line,
                    e == PM_NONE ? 0 : g->edges[e].col,
                    "tokens pile up on edge '%s' -> '%s' (cores drift %llu iterations "
                    "apart); give a FIFO capacity or fewer iterations",
                    e == PM_NONE ? "?" : pm_graph_node_name(g, g->edges[e].src),
                    e == PM_NONE ? "?" : pm_graph_node_name(g, g->edges[e].dst),
                    (unsigned long long)(s->max_iter - s->completed));
        return PM_ELIMIT;
    }
    void *p[10] = { 0 };
    if (sim_ring_alloc(s, W, p))
        return PM_ENOMEM;
    if (s->xr)
        sim_ring_copy(s, W, p);
    sim_ring_install(s, W, p);
    return PM_OK;
}

/* ---- iteration bookkeeping -------------------------------------------- */

static uint64_t sim_mix(uint64_t z)
{
    z += UINT64_C(0x9e3779b97f4a7c15);
    z = (z ^ (z >> 30)) * UINT64_C(0xbf58476d1ce4e5b9);
    z = (z ^ (z >> 27)) * UINT64_C(0x94d049bb133111eb);
    return z ^ (z >> 31);
}

static void sim_slot_reset(sim *s, uint64_t k)
{
    uint64_t i = k & s->mask;
    s->f1[i] = s->f2[i] = 0;
    s->lmin[i] = INT64_MAX;
    s->lmax[i] = INT64_MIN;
}

/* Iteration k has fully begun: compare its fingerprint with the c before. */
static void sim_iteration_done(sim *s, uint64_t k)
{
    uint64_t i = k & s->mask;
    int64_t lat = s->lmax[i] - s->lmin[i];
    if (lat > s->lat_max)
        s->lat_max = lat;
    if (k == 0)
        return;
    for (uint32_t c = 1; c <= s->cmax && c < k; c++) {
        uint64_t j = (k - c) & s->mask;
        if (s->f1[i] != s->f1[j] || s->f2[i] != s->f2[j])
            s->last_break[c] = k;
    }
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
    while (s->completed < lo)
        sim_iteration_done(s, s->completed++);
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

static int sim_wake(sim *s, uint32_t node)
{
    uint32_t c = s->wait_head[node];
    s->wait_head[node] = PM_NONE;
    while (c != PM_NONE) {
        uint32_t next = s->wait_next[c];
        s->wait_node[c] = PM_NONE;
        if (!s->queued[c]) {
            s->queued[c] = true;
            sim_ev e = { s->now, 0, c, 0, 0, 0 };
            if (sim_heap_push(&s->ev, e))
                return PM_ENOMEM;
        }
        c = next;
    }
    return PM_OK;
}

/* Earliest begin of (v,k) from its inputs and output room; false (after
 * registering the wait) when something it needs is not known yet. */
static bool sim_ready(sim *s, uint32_t c, uint32_t v, uint64_t k, int64_t *x, uint32_t *cause)
{
    for (uint32_t i = s->in_off[v]; i < s->in_off[v + 1]; i++) {
        const sim_in *in = &s->ins[i];
        if ((int64_t)k < in->delay)
            continue;
        uint64_t j = k - (uint64_t)in->delay;
        if (s->done[in->src] <= j || (in->xslot != PM_NONE && s->granted[in->xslot] <= j)) {
            sim_wait(s, c, in->src, in->edge, false);
            return false;
        }
        int64_t a = in->xslot != PM_NONE
                        ? s->ar[(size_t)(j & s->mask) * s->nx + in->xslot]
                        : *sim_x_at(s, in->src, j) + s->recv[in->src] + s->t[in->src] + in->cost;
        if (a > *x)
            *x = a, *cause = (in->xslot != PM_NONE ? PM_CAUSE_BUS : PM_CAUSE_EDGE) | in->edge << 3;
    }
    if (!s->fifo)
        return true;
    for (uint32_t i = s->xout_off[v]; i < s->xout_off[v + 1]; i++) {
        const sim_x *xe = &s->x[s->xout[i]];
        int64_t jj = (int64_t)k + xe->delay - xe->cap;
        if (jj < 0)
            continue;
        if (s->done[xe->dst] <= (uint64_t)jj) {
            sim_wait(s, c, xe->dst, xe->edge, true);
            return false;
        }
        int64_t a = *sim_x_at(s, xe->dst, (uint64_t)jj);
        if (a > *x)
            *x = a, *cause = PM_CAUSE_FIFO | xe->edge << 3;
    }
    return true;
}

static int sim_record_firing(sim *s, uint32_t c, uint32_t v, uint64_t k, int64_t x)
{
    if (s->ntrace == s->trace_cap) {
        size_t nc = s->trace_cap ? s->trace_cap * 2 : 64;
        pm_sim_firing *nt = realloc(s->trace, nc * sizeof *nt);
        if (!nt)
            return PM_ENOMEM;
        s->trace = nt, s->trace_cap = nc;
    }
    int64_t st = x + s->recv[v];
    s->trace[s->ntrace++] = (pm_sim_firing){ v, c, k, x, st, st + s->t[v],
                                             st + s->t[v] + s->send[v] };
    return PM_OK;
}

static int sim_record_transfer(sim *s, uint32_t xs, uint64_t k, int64_t req, int64_t gr)
{
    if (s->ntr == s->tr_cap) {
        size_t nc = s->tr_cap ? s->tr_cap * 2 : 64;
        pm_sim_transfer *nt = realloc(s->tr, nc * sizeof *nt);
        if (!nt)
            return PM_ENOMEM;
        s->tr = nt, s->tr_cap = nc;
    }
    pm_sim_transfer *t = &s->tr[s->ntr++];
    memset(t, 0, sizeof *t); /* no stray padding bytes in results */
    t->edge = s->x[xs].edge;
    t->iteration = k;
    t->request = req;
    t->grant = gr;
    t->arrival = gr + s->x[xs].cost;
    return PM_OK;
}

/* Tokens leave (v,k) at `end`: count them, queue bus requests. */
static int sim_outputs(sim *s, uint32_t c, uint32_t v, uint64_t k, int64_t end)
{
    int rc = PM_OK;
    for (uint32_t i = s->xout_off[v]; i < s->xout_off[v + 1] && !rc; i++) {
        uint32_t xs = s->xout[i];
        rc = sim_occ_push(&s->occ[xs], end);
        if (!rc && s->bus)
            rc = sim_heap_push(&s->ev, (sim_ev){ end, 1, c, xs, 0, k });
        else if (!rc && k < s->record)
            rc = sim_record_transfer(s, xs, k, end, end);
    }
    for (uint32_t i = s->xin_off[v]; i < s->xin_off[v + 1] && !rc; i++)
        rc = sim_occ_pop(&s->occ[s->xin[i]], *sim_x_at(s, v, k));
    return rc;
}

static void sim_note_begin(sim *s, uint32_t v, uint64_t k, int64_t x)
{
    int64_t st = x + s->recv[v], en = st + s->t[v];
    uint64_t i = k & s->mask;
    if (k > 0) {
        uint64_t d = (uint64_t)(x - *sim_x_at(s, v, k - 1));
        s->f1[i] += sim_mix(d ^ ((uint64_t)v << 40));
        s->f2[i] += sim_mix(d * UINT64_C(0xff51afd7ed558ccd) + v);
    }
    if (st < s->lmin[i])
        s->lmin[i] = st;
    if (en > s->lmax[i])
        s->lmax[i] = en;
    if (k == s->N / 2)
        s->half[v] = x;
}

static int sim_commit(sim *s, uint32_t c, uint32_t v, uint64_t k, int64_t x, uint32_t cause)
{
    *sim_x_at(s, v, k) = x;
    s->cr[(size_t)(k & s->mask) * s->n + v] = cause;
    sim_note_begin(s, v, k, x);
    s->done[v]++;
    s->firings++;
    int64_t end = x + s->recv[v] + s->t[v];
    s->free[c] = end + s->send[v];
    if (s->free[c] > s->makespan)
        s->makespan = s->free[c];
    int rc = sim_outputs(s, c, v, k, end);
    if (!rc && k < s->record)
        rc = sim_record_firing(s, c, v, k, x);
    if (!rc)
        rc = sim_wake(s, v);
    if (rc)
        return rc;
    if (++s->pos[c] == s->cnt[c]) {
        s->pos[c] = 0;
        s->iter[c]++;
        return 1; /* the core moved to a new iteration */
    }
    return PM_OK;
}

/* Fire core c's next firings for as long as it is the earliest event. */
static int sim_try(sim *s, uint32_t c, pm_diag *diag)
{
    for (;;) {
        if (s->iter[c] >= s->N)
            return PM_OK;
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
        sim_ev next = { s->free[c], 0, c, 0, 0, 0 };
        if (s->ev.len && !sim_ev_less(&next, &s->ev.a[0])) {
            s->queued[c] = true;
            return sim_heap_push(&s->ev, next);
        }
        if (next.time > s->now)
            s->now = next.time;
    }
}

/* ---- bus ---------------------------------------------------------------- */

static int sim_bus_grant(sim *s)
{
    sim_ev r = sim_heap_pop(&s->pend);
    uint32_t xs = r.xslot;
    size_t slot = (size_t)(r.iter & s->mask) * s->nx + xs;
    s->gr[slot] = s->now;
    s->ar[slot] = s->now + s->x[xs].cost;
    s->br[slot] = s->bus_free > r.time ? s->bus_last : 0;
    s->bi[slot] = s->bus_last_iter;
    s->bus_free = s->ar[slot];
    s->bus_last = xs + 1;
    s->bus_last_iter = r.iter;
    s->granted[xs]++;
    int rc = r.iter < s->record ? sim_record_transfer(s, xs, r.iter, r.time, s->now) : 0;
    if (!rc && s->pend.len) {
        s->grant_queued = true;
        rc = sim_heap_push(&s->ev, (sim_ev){ s->bus_free, 2, 0, 0, 0, 0 });
    }
    return rc ? rc : sim_wake(s, s->x[xs].src);
}

static int sim_bus_request(sim *s, sim_ev e)
{
    int rc = sim_heap_push(&s->pend, e);
    if (rc || s->grant_queued)
        return rc;
    s->grant_queued = true;
    int64_t at = s->bus_free > e.time ? s->bus_free : e.time;
    return sim_heap_push(&s->ev, (sim_ev){ at, 2, 0, 0, 0, 0 });
}

/* ---- main loop ---------------------------------------------------------- */

static int sim_loop(sim *s, pm_diag *diag)
{
    for (uint32_t c = 0; c < s->P; c++) {
        s->queued[c] = true;
        if (sim_heap_push(&s->ev, (sim_ev){ 0, 0, c, 0, 0, 0 }))
            return PM_ENOMEM;
    }
    int rc = PM_OK;
    while (s->ev.len && !rc) {
        sim_ev e = sim_heap_pop(&s->ev);
        s->now = e.time;
        if (e.phase == 0) {
            s->queued[e.core] = false;
            rc = sim_try(s, e.core, diag);
        } else if (e.phase == 1) {
            rc = sim_bus_request(s, e);
        } else {
            s->grant_queued = false;
            rc = sim_bus_grant(s);
        }
    }
    return rc;
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
    sim_build_edges(s, o->fifo_cap);
    if (sim_build_xlists(s))
        return PM_ENOMEM;
    sim_build_cores(s);
    s->granted = calloc(s->nx + 1, sizeof *s->granted);
    if (!s->granted)
        return PM_ENOMEM;
    rc = sim_check_range(s, diag);
    if (!rc)
        rc = sim_ring_fit(s, diag);
    if (!rc)
        sim_slot_reset(s, 0);
    return rc;
}

static void sim_free(sim *s)
{
    void *ps[] = { s->t, s->recv, s->send, s->in_off, s->ins, s->xout_off, s->xout,
                   s->xin_off, s->xin, s->pos_of, s->done, s->wait_head, s->x, s->pos,
                   s->cnt, s->first, s->iter, s->free, s->wait_next, s->wait_node,
                   s->wait_edge, s->wait_fifo, s->queued, s->xr, s->cr, s->ar, s->gr,
                   s->br, s->bi, s->granted, s->f1, s->f2, s->lmin, s->lmax, s->half,
                   s->ev.a, s->pend.a, s->trace, s->tr };
    for (size_t i = 0; i < sizeof ps / sizeof ps[0]; i++)
        free(ps[i]);
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
    for (uint32_t i = 0; i < s->nx; i++)
        sim_occ_flush(&s->occ[i]);
    r->firings = s->firings;
    r->makespan = s->makespan;
    r->latency_max = s->lat_max;
    for (uint32_t c = 0; c < s->P; c++)
        if (s->iter[c] < s->N)
            return sim_report_deadlock(s, r, diag);
    r->iterations = s->N;
    int rc = sim_report_steady(s, r);
    if (!rc)
        rc = sim_report_resources(s, r);
    if (!rc)
        rc = sim_report_chain(s, r);
    return rc;
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
