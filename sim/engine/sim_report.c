/*
 * sim_report.c - what the simulator tells after a run: the steady period
 * (exact, with cyclicity and transient), resources, the critical chain of
 * the run and, when it stalls, the waiting cycle.
 *
 * Steady state.  With cyclicity c the run is periodic from iteration T on
 * when begin(v,k+c) - begin(v,k) is the same for every k >= T, per node v.
 * Equivalently the per-iteration differences D_k(v) = begin(v,k) -
 * begin(v,k-1) repeat with period c.  The engine keeps two independent
 * 64-bit fingerprints of each D_k (sums over nodes, so order-free) and the
 * last iteration where D_k and D_{k-c} differed, for every c up to cmax:
 * that gives the transient in constant memory.  The candidate is then
 * verified exactly, node by node, on the window of iterations still held,
 * so a fingerprint collision can only make a period go unreported, never
 * make a wrong one.  The period is max_v (begin(v,N-1) - begin(v,N-1-c)) / c.
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "sim_internal.h"

/* ---- deadlock ----------------------------------------------------------- */

static void sim_wait_text(const sim *s, const pm_sim_wait *w, char *buf, size_t len)
{
    const pm_graph *g = s->g;
    const pm_edge *e = &g->edges[w->edge];
    snprintf(buf, len, "core %u waits for %s '%s' -> '%s' (core %u)", w->core,
             w->fifo ? "room on" : "a token of", pm_graph_node_name(g, e->src),
             pm_graph_node_name(g, e->dst), w->waits_for_core);
}

static void sim_deadlock_message(const sim *s, const pm_sim_result *r, pm_diag *diag)
{
    char msg[480] = "";
    size_t used = 0;
    for (uint32_t i = 0; i < r->nwaits && used + 4 < sizeof msg; i++) {
        char one[256];
        sim_wait_text(s, &r->waits[i], one, sizeof one);
        int k = snprintf(msg + used, sizeof msg - used, "%s%s", i ? "; " : "", one);
        if (k < 0)
            break;
        used += (size_t)k;
    }
    pm_diag_set(diag, s->g->file, 0, 0, "deadlock in iteration %llu: %s",
                (unsigned long long)r->waits[0].iteration, msg);
}

int sim_report_deadlock(sim *s, pm_sim_result *r, pm_diag *diag)
{
    uint32_t c = PM_NONE;
    for (uint32_t d = 0; d < s->P; d++)
        if (s->iter[d] < s->R && (c == PM_NONE || s->iter[d] < s->iter[c]))
            c = d;
    uint32_t *seen = malloc((s->P + 1) * sizeof *seen);
    r->waits = calloc(s->P + 1, sizeof *r->waits);
    if (!seen || !r->waits) {
        free(seen);
        return PM_ENOMEM;
    }
    for (uint32_t d = 0; d < s->P; d++)
        seen[d] = PM_NONE;
    uint32_t len = 0;
    while (c != PM_NONE && seen[c] == PM_NONE && s->wait_node[c] != PM_NONE) {
        seen[c] = len;
        uint32_t u = s->wait_node[c], v = s->m->order[s->first[c] + s->pos[c]];
        /* a waiting firing is a real one: its round is at least its lag */
        r->waits[len++] = (pm_sim_wait){ c, v, s->iter[c] - s->m->lag[v], s->wait_edge[c],
                                          s->wait_fifo[c], u, s->m->core_of[u] };
        c = s->m->core_of[u];
    }
    uint32_t from = (c != PM_NONE && seen[c] != PM_NONE) ? seen[c] : 0;
    memmove(r->waits, r->waits + from, (len - from) * sizeof *r->waits);
    r->nwaits = len - from;
    free(seen);
    r->deadlock = true;
    r->iterations = s->completed;
    if (r->nwaits == 0)
        pm_diag_set(diag, s->g->file, 0, 0, "deadlock: no core can go on");
    else
        sim_deadlock_message(s, r, diag);
    return PM_EDEADLOCK;
}

/* ---- steady state ------------------------------------------------------- */

uint64_t sim_window_lo(const sim *s)
{
    /* with lags the last rounds run iterations up to R - 1 */
    uint64_t lo = s->R > s->W ? s->R - s->W : 0;
    return lo > s->valid_lo ? lo : s->valid_lo;
}

static bool sim_verify(const sim *s, uint32_t c, uint64_t lo)
{
    uint64_t last = s->end - 1;
    for (uint32_t v = 0; v < s->n; v++) {
        int64_t d = *sim_x_at(s, v, last) - *sim_x_at(s, v, last - c);
        for (uint64_t k = lo; k < last; k++)
            if (*sim_x_at(s, v, k) - *sim_x_at(s, v, k - c) != d)
                return false;
    }
    return true;
}

/* max_v (begin(v,hi) - begin(v,lo)), read from `lo_times` when given. */
static int64_t sim_max_advance(const sim *s, uint64_t hi, uint64_t lo, const int64_t *lo_times,
                               bool *uniform)
{
    int64_t best = INT64_MIN;
    *uniform = true;
    for (uint32_t v = 0; v < s->n; v++) {
        int64_t d = *sim_x_at(s, v, hi) - (lo_times ? lo_times[v] : *sim_x_at(s, v, lo));
        if (v && d != best)
            *uniform = false;
        if (d > best)
            best = d;
    }
    return s->n ? best : 0;
}

static int64_t sim_latency_of(const sim *s, uint64_t k)
{
    uint64_t i = k & s->mask;
    return s->lmax[i] - s->lmin[i];
}

/* The breaks for cyclicity c up to the last analysed iteration. */
static bool sim_break_at_end(const sim *s, uint32_t c, uint64_t *b)
{
    uint64_t last = s->end - 1;
    if (s->end == s->N)
        *b = s->last_break[c];
    else if (last >= sim_window_lo(s))
        *b = s->lbr[(last & s->mask) * SIM_LBR + c];
    else
        return false;
    if (*b < c)
        *b = c;
    return true;
}

static bool sim_try_cyclicity(sim *s, pm_sim_result *r, uint32_t c)
{
    uint64_t E = s->end, winlo = sim_window_lo(s), b;
    if (c >= E || E - 1 - c < winlo || !sim_break_at_end(s, c, &b))
        return false;
    uint64_t need = (uint64_t)c * ((uint64_t)s->span + 2);
    if (E - 1 < b || E - 1 - b < need)
        return false;
    uint64_t lo = b > winlo + c ? b : winlo + c;
    if (!sim_verify(s, c, lo))
        return false;
    int64_t adv = sim_max_advance(s, E - 1, E - 1 - c, NULL, &r->uniform);
    if (pm_rat_make(adv, c, &r->period))
        return false;
    r->steady = true;
    r->cyclicity = c;
    r->transient = b - c;
    r->latency_steady = 0;
    for (uint64_t k = E - c; k < E; k++)
        if (sim_latency_of(s, k) > r->latency_steady)
            r->latency_steady = sim_latency_of(s, k);
    return true;
}

/* On a bus the last iterations of a finite run see less contention (no
 * later requests compete): leave out as many iterations as overlap in
 * time, latency / average period, plus two. */
static void sim_set_end(sim *s)
{
    uint64_t N = s->N, H = N / 2;
    s->end = N;
    if (!s->bus || N - 1 <= H)
        return;
    bool uniform;
    int64_t adv = sim_max_advance(s, N - 1, H, s->half, &uniform);
    if (adv <= 0)
        return;
    pm_u128 t = ((pm_u128)s->lat_max * (N - 1 - H) + (uint64_t)adv - 1) /
                          (uint64_t)adv + 2;
    s->end = t >= N / 2 ? N - N / 2 : N - (uint64_t)t;
}

int sim_report_steady(sim *s, pm_sim_result *r)
{
    sim_set_end(s);
    for (uint32_t c = 1; c <= s->cmax; c++)
        if (sim_try_cyclicity(s, r, c))
            return PM_OK;
    uint64_t N = s->N, H = N / 2;
    r->latency_steady = N ? sim_latency_of(s, N - 1) : 0;
    if (N - 1 > H) {
        int64_t adv = sim_max_advance(s, N - 1, H, s->half, &r->uniform);
        return pm_rat_make(adv, (int64_t)(N - 1 - H), &r->period);
    }
    r->uniform = true;
    r->period = pm_rat_int(s->makespan);
    return PM_OK;
}

/* ---- resources ---------------------------------------------------------- */

static int sim_firing_cmp(const void *a, const void *b)
{
    const pm_sim_firing *x = a, *y = b;
    if (x->begin != y->begin)
        return x->begin < y->begin ? -1 : 1;
    if (x->core != y->core)
        return x->core < y->core ? -1 : 1;
    return x->iteration < y->iteration ? -1 : x->iteration > y->iteration;
}

static int sim_transfer_cmp(const void *a, const void *b)
{
    const pm_sim_transfer *x = a, *y = b;
    if (x->grant != y->grant)
        return x->grant < y->grant ? -1 : 1;
    if (x->edge != y->edge)
        return x->edge < y->edge ? -1 : 1;
    return x->iteration < y->iteration ? -1 : x->iteration > y->iteration;
}

static double sim_share(int64_t busy, pm_rat period)
{
    if (period.num <= 0)
        return 0.0;
    return (double)busy * (double)period.den / (double)period.num;
}

int sim_report_resources(sim *s, pm_sim_result *r)
{
    r->ncores = s->P;
    r->nedges = s->g->nedges;
    r->core_busy = calloc(s->P + 1, sizeof *r->core_busy);
    r->utilisation = calloc(s->P + 1, sizeof *r->utilisation);
    r->max_tokens = malloc((s->g->nedges + 1) * sizeof *r->max_tokens);
    if (!r->core_busy || !r->utilisation || !r->max_tokens)
        return PM_ENOMEM;
    for (uint32_t v = 0; v < s->n; v++)
        r->core_busy[s->m->core_of[v]] += s->recv[v] + s->t[v] + s->send[v];
    for (uint32_t c = 0; c < s->P; c++)
        r->utilisation[c] = sim_share(r->core_busy[c], r->period);
    for (uint32_t e = 0; e < s->g->nedges; e++)
        r->max_tokens[e] = -1;
    r->bus = s->bus;
    for (uint32_t i = 0; i < s->nx; i++) {
        r->max_tokens[s->x[i].edge] = s->occ[i].max;
        if (s->bus)
            r->bus_busy += s->x[i].cost;
    }
    r->bus_utilisation = sim_share(r->bus_busy, r->period);
    if (s->ntrace)
        qsort(s->trace, s->ntrace, sizeof *s->trace, sim_firing_cmp);
    if (s->ntr)
        qsort(s->tr, s->ntr, sizeof *s->tr, sim_transfer_cmp);
    r->trace = s->trace, r->ntrace = s->ntrace, s->trace = NULL;
    r->transfers = s->tr, r->ntransfers = s->ntr, s->tr = NULL;
    r->recorded = (uint32_t)(s->record < s->N ? s->record : s->N);
    return PM_OK;
}

/* ---- critical chain ----------------------------------------------------- */

typedef struct sim_walk {
    uint32_t node, xs;   /* a firing (node) or a bus transfer (xs), the other PM_NONE */
    uint64_t k;
} sim_walk;

static int64_t sim_walk_time(const sim *s, sim_walk w)
{
    if (w.node != PM_NONE)
        return *sim_x_at(s, w.node, w.k);
    return s->bg[(size_t)(w.k & s->mask) * s->nx + w.xs].arrival - s->x[w.xs].cost;
}

/* The element that held `w` back; false at a start or outside the window. */
static bool sim_walk_back(const sim *s, const uint32_t *xs_of, sim_walk w, sim_walk *prev,
                          pm_sim_step *step)
{
    step->via_edge = PM_NONE;
    if (w.node == PM_NONE) {
        size_t slot = (size_t)(w.k & s->mask) * s->nx + w.xs;
        const sim_x *x = &s->x[w.xs];
        const sim_grant *gr = &s->bg[slot];
        if (gr->prev_xs == 0) {
            *prev = (sim_walk){ x->src, PM_NONE, w.k };
            step->via = PM_CAUSE_EDGE, step->via_edge = x->edge;
        } else {
            *prev = (sim_walk){ PM_NONE, gr->prev_xs - 1, gr->prev_iter };
            step->via = PM_CAUSE_BUS_BUSY;
        }
        return true;
    }
    uint32_t cause = s->cr[(size_t)(w.k & s->mask) * s->n + w.node];
    uint32_t e = SIM_CAUSE_EDGE(cause);
    /* an ORDER cause carries no edge: index only when there is one */
    const pm_edge *ed = e < s->g->nedges ? &s->g->edges[e] : NULL;
    step->via = SIM_CAUSE(cause);
    if (!ed && SIM_CAUSE(cause) != PM_CAUSE_ORDER)
        return false;
    switch (SIM_CAUSE(cause)) {
    case PM_CAUSE_ORDER: {
        uint32_t back, c = s->m->core_of[w.node];
        uint32_t u = sim_prev_on_core(s, c, s->pos_of[w.node], &back);
        /* in rounds: w runs in round k + lag, u in the round before or
         * the same; none when u had no iteration in that round */
        uint64_t round = w.k + s->m->lag[w.node];
        if (round < (uint64_t)back + s->m->lag[u])
            return false;
        *prev = (sim_walk){ u, PM_NONE, round - back - s->m->lag[u] };
        return true;
    }
    case PM_CAUSE_EDGE:
        *prev = (sim_walk){ ed->src, PM_NONE, w.k - (uint64_t)ed->delay };
        break;
    case PM_CAUSE_BUS:
        *prev = (sim_walk){ PM_NONE, xs_of[e], w.k - (uint64_t)ed->delay };
        break;
    case PM_CAUSE_FIFO:
        *prev = (sim_walk){ ed->dst, PM_NONE,
                            w.k + (uint64_t)ed->delay - (uint64_t)s->x[xs_of[e]].cap };
        break;
    default:
        return false;
    }
    step->via_edge = e;
    return true;
}

static pm_sim_step sim_step_of(const sim *s, sim_walk w)
{
    pm_sim_step st = { w.node, PM_NONE, w.k, 0, PM_CAUSE_START, PM_NONE };
    if (w.node == PM_NONE) {
        st.edge = s->x[w.xs].edge;
        st.core = s->m->core_of[s->x[w.xs].src];
    } else {
        st.core = s->m->core_of[w.node];
    }
    return st;
}

/* Start from the last firing to end; walk back along what held each
 * element back until an element repeats (node or transfer edge). */
static int sim_chain_walk(sim *s, pm_sim_result *r, uint32_t *mark, const uint32_t *xs_of,
                          pm_sim_step *steps, sim_walk *walk)
{
    uint64_t last = s->end - 1, winlo = sim_window_lo(s);
    uint32_t v0 = 0;
    for (uint32_t v = 1; v < s->n; v++)
        if (*sim_x_at(s, v, last) + s->recv[v] + s->t[v] >
            *sim_x_at(s, v0, last) + s->recv[v0] + s->t[v0])
            v0 = v;
    sim_walk w = { v0, PM_NONE, last };
    uint32_t len = 0;
    steps[0] = sim_step_of(s, w);
    for (;;) {
        uint32_t *m = w.node != PM_NONE ? &mark[w.node] : &mark[s->n + w.xs];
        walk[len] = w;
        if (*m != PM_NONE) {
            uint32_t from = *m;
            r->critical_cycles = sim_walk_time(s, walk[from]) - sim_walk_time(s, w);
            r->critical_delays = walk[from].k > w.k ? walk[from].k - w.k : 0;
            steps[from].via = PM_CAUSE_START, steps[from].via_edge = PM_NONE;
            memmove(steps, steps + from, (len + 1 - from) * sizeof *steps);
            return (int)(len + 1 - from);
        }
        *m = len;
        sim_walk p;
        pm_sim_step st;
        /* with lags a firing may follow one of iteration N or later on its
         * core (the last rounds): those ran too, up to round R - 1 */
        if (!sim_walk_back(s, xs_of, w, &p, &st) || p.k < winlo || p.k >= s->R)
            return (int)(len + 1);
        pm_sim_step ps = sim_step_of(s, p);
        ps.via = st.via, ps.via_edge = st.via_edge;
        steps[++len] = ps;
        w = p;
    }
}

int sim_report_chain(sim *s, pm_sim_result *r)
{
    if (s->n == 0 || s->N == 0)
        return PM_OK;
    size_t cap = (size_t)s->n + s->nx + 2;
    uint32_t *mark = malloc(cap * sizeof *mark);
    uint32_t *xs_of = malloc((s->g->nedges + 1) * sizeof *xs_of);
    pm_sim_step *steps = malloc(cap * sizeof *steps);
    sim_walk *walk = malloc(cap * sizeof *walk);
    int rc = PM_ENOMEM;
    if (mark && xs_of && steps && walk) {
        for (size_t i = 0; i < cap; i++)
            mark[i] = PM_NONE;
        for (uint32_t i = 0; i < s->nx; i++)
            xs_of[s->x[i].edge] = i;
        int len = sim_chain_walk(s, r, mark, xs_of, steps, walk);
        r->critical = steps, steps = NULL;
        r->ncritical = (uint32_t)len;
        pm_i128 lhs = (pm_i128)r->critical_cycles * r->period.den;
        pm_i128 rhs = (pm_i128)r->critical_delays * r->period.num;
        r->critical_matches = r->critical_delays > 0 && lhs == rhs;
        rc = PM_OK;
    }
    free(mark), free(xs_of), free(steps), free(walk);
    return rc;
}
