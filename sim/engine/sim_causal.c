/*
 * sim_causal.c - the simulator's causal engine: the one for a bus, and for
 * maps the compiled pass (sim_p2p.c) cannot run, which may deadlock.
 *
 * Cores fire whatever is ready, sleep on wake-up lists, and the bus grants
 * the oldest request once nothing can fire any more (why that is exact:
 * the comment above sim_prefetch).  Here: the queue of bus requests not
 * granted yet (per core, with a winner tree over the cores), whether a
 * firing is ready, its commit (times, causes, bus requests, token counts,
 * trace), the lag limit and the grant.  Not here: the arrays and rings
 * (sim_prep.c), the iteration bookkeeping and records both engines share
 * (sim.c), the report (sim_report.c).  Nothing here prints.
 */
#include <stdlib.h>

#include "sim_internal.h"

#define SIM_LAG 8 /* causal engine: iterations a core may run ahead of the slowest */
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

int sim_bq_init(sim_bq *b, uint32_t cores)
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

void sim_bq_free(sim_bq *b, uint32_t cores)
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

/* ---- cores ready to fire ----------------------------------------------- */

static void sim_runnable(sim *s, uint32_t c)
{
    if (s->queued[c])
        return;
    s->queued[c] = true;
    s->runq[(s->runq_head + s->runq_len++) % s->P] = c;
}

static int sim_core_advanced(sim *s, uint32_t c, pm_diag *diag)
{
    uint64_t it = s->iter[c];
    if (it < s->R && it > s->max_iter) {
        s->max_iter = it; /* a round: no iteration it begins before round it */
        int rc = sim_ring_fit(s, diag);
        if (rc)
            return rc;
        sim_slot_reset(s, it);
    }
    /* iteration i has fully begun once every core d is past round
     * i + (the largest lag on d) */
    uint64_t lo = s->N;
    for (uint32_t d = 0; d < s->P; d++) {
        uint64_t l = s->iter[d] > s->core_lag[d] ? s->iter[d] - s->core_lag[d] : 0;
        if (l < lo)
            lo = l;
    }
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

/* The core moves to its next position; 1 when it starts a new round. */
static inline int sim_next_pos(sim *s, uint32_t c)
{
    if (++s->pos[c] == s->cnt[c]) {
        s->pos[c] = 0;
        s->iter[c]++;
        return 1;
    }
    return PM_OK;
}

/* With lags, (v,k) with k >= N runs in the last rounds: it takes its
 * core's time and sends its tokens (later firings of the run may need
 * them), but counts for nothing reported. */
static int sim_commit_extra(sim *s, uint32_t c, uint32_t v, uint64_t k, int64_t x)
{
    s->done[v]++;
    s->firings++;
    s->free[c] = x + s->nd[v].free_off;
    int rc = s->nx ? sim_outputs(s, c, v, k, x + s->nd[v].end_off) : PM_OK;
    if (rc)
        return rc;
    sim_wake(s, v);
    return sim_next_pos(s, c);
}

static int sim_commit(sim *s, uint32_t c, uint32_t v, uint64_t k, int64_t x, uint32_t cause)
{
    size_t slot = (size_t)(k & s->mask) * s->n + v;
    s->xr[slot] = x;
    s->cr[slot] = cause;
    if (__builtin_expect(k >= s->N, 0))
        return sim_commit_extra(s, c, v, k, x);
    sim_note_begin(s, v, k, x);
    if (s->pace)
        sim_pace_note(s, v, k, x);
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
    return sim_next_pos(s, c); /* 1: the core moved to a new round */
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

/* Round *k of core c reaches v: turn *k into v's iteration and return 0,
 * or, in a round before v's lag, pass v by in no time (returns 2, or 1
 * when that ends the core's round). */
static int sim_lagged_round(sim *s, uint32_t c, uint32_t v, uint64_t *k)
{
    uint32_t lag = s->m->lag[v];
    if (*k >= lag) {
        *k -= lag;
        return 0;
    }
    return sim_next_pos(s, c) ? 1 : 2;
}

static int sim_run_core(sim *s, uint32_t c, pm_diag *diag)
{
    s->wait_node[c] = PM_NONE;
    for (uint32_t a = 1; a <= SIM_PREFETCH; a++)
        sim_prefetch(s, c, a);
    while (s->iter[c] < s->R) {
        /* completed trails rounds by up to lag_max: allow for it */
        if (s->iter[c] >= s->completed + SIM_LAG + s->lag_max && !s->relax[c]) {
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
        int rc;
        if (__builtin_expect(s->lags, 0) && (rc = sim_lagged_round(s, c, v, &k)) != 0) {
            if (rc == 1 && (rc = sim_core_advanced(s, c, diag)) != 0)
                return rc;
            continue; /* v had no iteration in this round */
        }
        if (s->pace) {
            int64_t rel = sim_pace_release(s, v, k);
            if (rel > x)
                x = rel, cause = PM_CAUSE_RELEASE;
        }
        if (!sim_ready(s, c, v, k, &x, &cause))
            return PM_OK;
        rc = sim_commit(s, c, v, k, x, cause);
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

int sim_loop_causal(sim *s, pm_diag *diag)
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
