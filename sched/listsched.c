/*
 * listsched.c - the list scheduler: decides which core runs each node and
 * in what order (a pm_map), then times that map with pm_sched_from_map.
 *
 * Default mode: upward-rank priorities with average costs, earliest-finish
 * core with insertion into remembered idle gaps (Topcuoglu, Hariri & Wu,
 * IEEE TPDS 2002), plus the loop rule (strongly connected parts that fit the
 * target period stay on one core).  Greedy mode: Graham's plain list
 * scheduling (1969).  Timing rules live in schedtime.c; this file only uses
 * estimates of them to choose.
 */
#include "sched_internal.h"

#include <stdlib.h>
#include <string.h>

typedef struct ls_ctx {
    const pm_graph *g;
    uint32_t P;
    double *rank;
    sched_lane *lanes;
    sched_lane bus;
    pm_slot *slot;
    uint32_t *seq;       /* placement order of each node */
    uint32_t nplaced;
    uint32_t *deps;
    uint32_t *cluster;   /* loop part kept on one core, or PM_NONE */
    uint32_t *cl_core;   /* core of each such part once chosen, or PM_NONE */
    bool *cl_class_ok;   /* part x class: every member may run there */
    int64_t *arr;        /* per in-edge of the node being placed: remote arrival */
    uint32_t *mark;      /* per core: node id + 1 when a producer of it sits there */
    bool overflow;
} ls_ctx;

static int64_t ls_max(int64_t a, int64_t b)
{
    return a > b ? a : b;
}

/* Mean execution time of v over the cores that may run it. */
static double ls_avg_cycles(const pm_graph *g, uint32_t v)
{
    const pm_platform *p = &g->platform;
    const pm_node *n = &g->nodes[v];
    if (n->pin_core != PM_NONE)
        return (double)pm_graph_cycles_on(g, v, p->core_class[n->pin_core]);
    double sum = 0, cnt = 0;
    for (uint32_t c = 0; c < p->nclasses; c++) {
        int64_t t = pm_graph_cycles_on(g, v, c);
        if (t < 0 || (n->pin_class != PM_NONE && n->pin_class != c))
            continue;
        sum += (double)t * p->class_count[c];
        cnt += p->class_count[c];
    }
    return cnt > 0 ? sum / cnt : 0;
}

/* Upward rank over zero-delay edges, in reverse topological order. */
static void ls_ranks(ls_ctx *x, const uint32_t *topo)
{
    const pm_graph *g = x->g;
    const pm_comm *cm = &g->platform.comm;
    double share = 1.0 - 1.0 / (double)x->P;
    bool ovf = false;
    for (uint32_t k = g->nnodes; k-- > 0;) {
        uint32_t v = topo[k];
        double best = 0;
        for (uint32_t i = g->out_off[v]; i < g->out_off[v + 1]; i++) {
            uint32_t e = g->out_edge[i];
            if (g->edges[e].delay != 0)
                continue;
            double c = share * (double)(cm->send + cm->recv + sched_edge_cost(g, e, &ovf));
            double r = c + x->rank[g->edges[e].dst];
            if (r > best)
                best = r;
        }
        x->rank[v] = ls_avg_cycles(g, v) + best;
    }
}

/* Ready nodes: larger rank first, then smaller id. */
static bool ls_less(const void *ctx, uint32_t a, uint32_t b)
{
    const ls_ctx *x = ctx;
    if (x->rank[a] != x->rank[b])
        return x->rank[a] > x->rank[b];
    return a < b;
}

/* Where the data of producer edge e would arrive on a remote core, if the
 * transfer were committed now (send in the producer's free time, bus). */
static int64_t ls_remote_arrival(ls_ctx *x, uint32_t e)
{
    const pm_graph *g = x->g;
    const pm_edge *ed = &g->edges[e];
    const pm_slot *u = &x->slot[ed->src];
    int64_t send = g->platform.comm.send, cost = sched_edge_cost(g, e, &x->overflow);
    int64_t se = sched_lane_fit_occ(&x->lanes[u->core], u->end, send) + send;
    if (g->platform.interconnect == PM_BUS && cost > 0)
        se = sched_lane_fit(&x->bus, se, cost);
    return sched_add(se, cost, &x->overflow);
}

/* When v's inputs would be ready on core c (receives estimated, not kept). */
static int64_t ls_ready_on(ls_ctx *x, uint32_t v, uint32_t c, int64_t r_remote)
{
    const pm_graph *g = x->g;
    int64_t recv = g->platform.comm.recv;
    if (recv == 0 && x->mark[c] != v + 1)
        return r_remote;
    int64_t r = 0;
    for (uint32_t i = g->in_off[v], k = 0; i < g->in_off[v + 1]; i++, k++) {
        const pm_edge *e = &g->edges[g->in_edge[i]];
        if (e->delay != 0)
            continue;
        if (x->slot[e->src].core == c)
            r = ls_max(r, x->slot[e->src].end);
        else if (recv == 0)
            r = ls_max(r, x->arr[k]);
        else
            r = ls_max(r, sched_lane_fit_occ(&x->lanes[c], x->arr[k], recv) + recv);
    }
    return r;
}

/* Whether v may go to core c (pins, classes, its loop part). */
static bool ls_may_use(const ls_ctx *x, uint32_t v, uint32_t c)
{
    if (!sched_allowed(x->g, v, c))
        return false;
    uint32_t k = x->cluster[v];
    if (k == PM_NONE)
        return true;
    if (x->cl_core[k] != PM_NONE)
        return x->cl_core[k] == c;
    return x->cl_class_ok[(size_t)k * x->g->platform.nclasses + x->g->platform.core_class[c]];
}

/* Estimate arrivals of v's producers; returns the latest (all remote). */
static int64_t ls_arrivals(ls_ctx *x, uint32_t v)
{
    const pm_graph *g = x->g;
    int64_t r = 0;
    for (uint32_t i = g->in_off[v], k = 0; i < g->in_off[v + 1]; i++, k++) {
        uint32_t e = g->in_edge[i];
        if (g->edges[e].delay != 0)
            continue;
        x->arr[k] = ls_remote_arrival(x, e);
        r = ls_max(r, x->arr[k]);
        x->mark[x->slot[g->edges[e].src].core] = v + 1;
    }
    return r;
}

/* Earliest-finish core for v; ties to the smaller core index. */
static uint32_t ls_pick_core(ls_ctx *x, uint32_t v)
{
    const pm_graph *g = x->g;
    int64_t r_remote = ls_arrivals(x, v), best_end = 0;
    uint32_t best = PM_NONE;
    for (uint32_t c = 0; c < x->P; c++) {
        if (!ls_may_use(x, v, c))
            continue;
        int64_t w = pm_graph_cycles_on(g, v, g->platform.core_class[c]);
        int64_t s = sched_lane_fit(&x->lanes[c], ls_ready_on(x, v, c, r_remote), w);
        int64_t end = sched_add(s, w, &x->overflow);
        if (best == PM_NONE || end < best_end) {
            best = c;
            best_end = end;
        }
    }
    return best;
}

/* Commit v on core c: the transfers it needs, then v itself. */
static void ls_commit(ls_ctx *x, uint32_t v, uint32_t c)
{
    const pm_graph *g = x->g;
    const pm_comm *cm = &g->platform.comm;
    int64_t r = 0;
    for (uint32_t i = g->in_off[v]; i < g->in_off[v + 1]; i++) {
        uint32_t e = g->in_edge[i];
        const pm_slot *u = &x->slot[g->edges[e].src];
        if (g->edges[e].delay != 0)
            continue;
        if (u->core == c) {
            r = ls_max(r, u->end);
            continue;
        }
        int64_t cost = sched_edge_cost(g, e, &x->overflow);
        int64_t ss = sched_lane_fit_occ(&x->lanes[u->core], u->end, cm->send);
        sched_lane_reserve(&x->lanes[u->core], ss, cm->send);
        int64_t ws = ss + cm->send;
        if (g->platform.interconnect == PM_BUS && cost > 0) {
            ws = sched_lane_fit(&x->bus, ws, cost);
            sched_lane_reserve(&x->bus, ws, cost);
        }
        int64_t rs = sched_lane_fit_occ(&x->lanes[c], sched_add(ws, cost, &x->overflow), cm->recv);
        sched_lane_reserve(&x->lanes[c], rs, cm->recv);
        r = ls_max(r, sched_add(rs, cm->recv, &x->overflow));
    }
    int64_t w = pm_graph_cycles_on(g, v, g->platform.core_class[c]);
    int64_t s = sched_lane_fit(&x->lanes[c], r, w);
    sched_lane_reserve(&x->lanes[c], s, w);
    x->slot[v] = (pm_slot){c, s, sched_add(s, w, &x->overflow)};
    x->seq[v] = x->nplaced++;
    if (x->cluster[v] != PM_NONE)
        x->cl_core[x->cluster[v]] = c;
}

static void ls_release(ls_ctx *x, sched_heap *h, uint32_t v)
{
    const pm_graph *g = x->g;
    for (uint32_t i = g->out_off[v]; i < g->out_off[v + 1]; i++) {
        const pm_edge *e = &g->edges[g->out_edge[i]];
        if (e->delay == 0 && --x->deps[e->dst] == 0)
            sched_heap_push(h, e->dst);
    }
}

static int ls_heft(ls_ctx *x)
{
    const pm_graph *g = x->g;
    sched_heap h;
    if (sched_heap_init(&h, g->nnodes, ls_less, x) != PM_OK)
        return PM_ENOMEM;
    for (uint32_t e = 0; e < g->nedges; e++)
        if (g->edges[e].delay == 0)
            x->deps[g->edges[e].dst]++;
    for (uint32_t v = 0; v < g->nnodes; v++)
        if (x->deps[v] == 0)
            sched_heap_push(&h, v);
    int rc = PM_OK;
    while (h.n > 0) {
        uint32_t v = sched_heap_pop(&h);
        uint32_t c = ls_pick_core(x, v);
        if (c == PM_NONE) {
            rc = PM_EPLATFORM; /* unreachable: checked up front */
            break;
        }
        ls_commit(x, v, c);
        ls_release(x, &h, v);
    }
    sched_heap_free(&h);
    return rc;
}

/* ---- the loop rule ------------------------------------------------------ */

static int64_t ls_target(const ls_ctx *x, const pm_sched_opts *o)
{
    if (o && o->target_period > 0)
        return o->target_period;
    int64_t total = 0, largest = 0;
    bool ovf = false;
    for (uint32_t v = 0; v < x->g->nnodes; v++) {
        int64_t t = pm_graph_min_cycles(x->g, v);
        total = sched_add(total, t, &ovf);
        largest = ls_max(largest, t);
    }
    return ls_max((total + x->P - 1) / x->P, largest);
}

/* Fix a part's core from pins and its classes from every member; false when
 * the members' constraints cannot be met on one core. */
static bool ls_part_fits(ls_ctx *x, uint32_t k, const uint32_t *members, uint32_t len)
{
    const pm_platform *p = &x->g->platform;
    bool *ok = &x->cl_class_ok[(size_t)k * p->nclasses], any = false;
    for (uint32_t c = 0; c < p->nclasses; c++)
        ok[c] = p->class_count[c] > 0;
    for (uint32_t i = 0; i < len; i++) {
        const pm_node *n = &x->g->nodes[members[i]];
        if (n->pin_core != PM_NONE) {
            if (x->cl_core[k] != PM_NONE && x->cl_core[k] != n->pin_core)
                return false;
            x->cl_core[k] = n->pin_core;
        }
        for (uint32_t c = 0; c < p->nclasses; c++)
            ok[c] = ok[c] && pm_graph_cycles_on(x->g, members[i], c) >= 0 &&
                    (n->pin_class == PM_NONE || n->pin_class == c);
    }
    for (uint32_t c = 0; c < p->nclasses; c++)
        any = any || ok[c];
    if (x->cl_core[k] != PM_NONE && !ok[p->core_class[x->cl_core[k]]])
        return false;
    return any;
}

/* Mark each loop part whose work fits the target as kept on one core. */
static int ls_loop_parts(ls_ctx *x, const pm_sched_opts *o)
{
    const pm_graph *g = x->g;
    uint32_t ncomp = 0, *comp = malloc(((size_t)g->nnodes + 1) * sizeof *comp);
    uint32_t *start = NULL, *members = NULL;
    bool *cyclic = NULL;
    int rc = comp ? sched_scc(g, comp, &ncomp, &cyclic) : PM_ENOMEM;
    if (rc == PM_OK) {
        start = calloc((size_t)ncomp + 2, sizeof *start);
        members = malloc(((size_t)g->nnodes + 1) * sizeof *members);
        x->cl_core = malloc(((size_t)ncomp + 1) * sizeof *x->cl_core);
        x->cl_class_ok = calloc(((size_t)ncomp + 1) * g->platform.nclasses, 1);
        rc = start && members && x->cl_core && x->cl_class_ok ? PM_OK : PM_ENOMEM;
    }
    if (rc == PM_OK) {
        for (uint32_t v = 0; v < g->nnodes; v++)
            start[comp[v] + 1]++;
        for (uint32_t k = 0; k < ncomp; k++)
            start[k + 1] += start[k];
        for (uint32_t v = 0; v < g->nnodes; v++) /* counting sort, ids ascending */
            members[start[comp[v]]++] = v;
        for (uint32_t k = ncomp; k > 0; k--)
            start[k] = start[k - 1];
        start[0] = 0;
        int64_t target = ls_target(x, o);
        for (uint32_t k = 0; k < ncomp; k++) {
            x->cl_core[k] = PM_NONE;
            uint32_t len = start[k + 1] - start[k];
            int64_t work = 0;
            bool ovf = false;
            for (uint32_t i = start[k]; i < start[k + 1]; i++)
                work = sched_add(work, pm_graph_min_cycles(g, members[i]), &ovf);
            bool keep = cyclic[k] && len > 1 && work <= target &&
                        ls_part_fits(x, k, members + start[k], len);
            if (!keep)
                x->cl_core[k] = PM_NONE;
            for (uint32_t i = start[k]; keep && i < start[k + 1]; i++)
                x->cluster[members[i]] = k;
        }
    }
    free(comp);
    free(start);
    free(members);
    free(cyclic);
    return rc;
}

/* ---- Graham's greedy mode ----------------------------------------------- */

typedef struct gr_state {
    uint32_t *ready;   /* ready nodes sorted by list position */
    uint32_t nready;
    const uint32_t *pos;
    int64_t *core_until;
} gr_state;

/* Running nodes by end time, then id. */
static bool gr_less(const void *ctx, uint32_t a, uint32_t b)
{
    const ls_ctx *x = ctx;
    if (x->slot[a].end != x->slot[b].end)
        return x->slot[a].end < x->slot[b].end;
    return a < b;
}

static void gr_add_ready(gr_state *s, uint32_t v)
{
    uint32_t i = s->nready++;
    while (i > 0 && s->pos[s->ready[i - 1]] > s->pos[v]) {
        s->ready[i] = s->ready[i - 1];
        i--;
    }
    s->ready[i] = v;
}

/* Every idle core, lowest index first, takes the first ready node it may run. */
static void gr_assign(ls_ctx *x, gr_state *s, sched_heap *run, int64_t t)
{
    for (uint32_t c = 0; c < x->P && s->nready > 0; c++) {
        if (s->core_until[c] > t)
            continue;
        for (uint32_t i = 0; i < s->nready; i++) {
            uint32_t v = s->ready[i];
            if (!sched_allowed(x->g, v, c))
                continue;
            memmove(&s->ready[i], &s->ready[i + 1], (s->nready - i - 1) * sizeof *s->ready);
            s->nready--;
            int64_t w = pm_graph_cycles_on(x->g, v, x->g->platform.core_class[c]);
            x->slot[v] = (pm_slot){c, t, sched_add(t, w, &x->overflow)};
            x->seq[v] = x->nplaced++;
            s->core_until[c] = x->slot[v].end;
            sched_heap_push(run, v);
            break;
        }
    }
}

static void gr_finish_until(ls_ctx *x, gr_state *s, sched_heap *run, int64_t t)
{
    const pm_graph *g = x->g;
    while (run->n > 0 && x->slot[run->v[0]].end <= t) {
        uint32_t u = sched_heap_pop(run);
        for (uint32_t i = g->out_off[u]; i < g->out_off[u + 1]; i++) {
            const pm_edge *e = &g->edges[g->out_edge[i]];
            if (e->delay == 0 && --x->deps[e->dst] == 0)
                gr_add_ready(s, e->dst);
        }
    }
}

static int gr_run(ls_ctx *x, gr_state *s)
{
    const pm_graph *g = x->g;
    sched_heap run;
    if (sched_heap_init(&run, g->nnodes, gr_less, x) != PM_OK)
        return PM_ENOMEM;
    for (uint32_t e = 0; e < g->nedges; e++)
        if (g->edges[e].delay == 0)
            x->deps[g->edges[e].dst]++;
    for (uint32_t v = 0; v < g->nnodes; v++)
        if (x->deps[v] == 0)
            gr_add_ready(s, v);
    int64_t t = 0;
    int rc = PM_OK;
    for (;;) {
        gr_finish_until(x, s, &run, t);
        gr_assign(x, s, &run, t);
        if (run.n == 0) {
            if (x->nplaced < g->nnodes)
                rc = PM_EPLATFORM; /* unreachable: every node has a core */
            break;
        }
        t = ls_max(t, x->slot[run.v[0]].end);
    }
    sched_heap_free(&run);
    return rc;
}

/* The priority list: given (checked to be a permutation) or by rank. */
static int gr_positions(ls_ctx *x, const pm_sched_opts *o, uint32_t *pos, pm_diag *diag)
{
    uint32_t n = x->g->nnodes;
    for (uint32_t v = 0; v < n; v++)
        pos[v] = PM_NONE;
    if (!o->priority) {
        sched_heap h;
        if (sched_heap_init(&h, n, ls_less, x) != PM_OK)
            return PM_ENOMEM;
        for (uint32_t v = 0; v < n; v++)
            sched_heap_push(&h, v);
        for (uint32_t i = 0; i < n; i++)
            pos[sched_heap_pop(&h)] = i;
        sched_heap_free(&h);
        return PM_OK;
    }
    for (uint32_t i = 0; i < n; i++) {
        uint32_t v = o->priority[i];
        if (v >= n || pos[v] != PM_NONE) {
            pm_diag_set(diag, x->g->file, 0, 0,
                        "the priority list must name every node exactly once");
            return PM_EINVAL;
        }
        pos[v] = i;
    }
    return PM_OK;
}

static int ls_greedy(ls_ctx *x, const pm_sched_opts *o, pm_diag *diag)
{
    size_t n = (size_t)x->g->nnodes + 1;
    gr_state s = {0};
    uint32_t *pos = malloc(n * sizeof *pos);
    s.ready = malloc(n * sizeof *s.ready);
    s.core_until = calloc((size_t)x->P + 1, sizeof *s.core_until);
    int rc = pos && s.ready && s.core_until ? PM_OK : PM_ENOMEM;
    if (rc == PM_OK)
        rc = gr_positions(x, o, pos, diag);
    s.pos = pos;
    if (rc == PM_OK)
        rc = gr_run(x, &s);
    free(pos);
    free(s.ready);
    free(s.core_until);
    return rc;
}

/* ---- the map ------------------------------------------------------------ */

typedef struct ls_key {
    uint32_t core, seq, v;
    int64_t start, end;
} ls_key;

static int ls_key_cmp(const void *pa, const void *pb)
{
    const ls_key *a = pa, *b = pb;
    if (a->core != b->core)
        return a->core < b->core ? -1 : 1;
    if (a->start != b->start)
        return a->start < b->start ? -1 : 1;
    if (a->end != b->end)
        return a->end < b->end ? -1 : 1;
    return a->seq < b->seq ? -1 : (a->seq > b->seq);
}

/* Per core, nodes by (start, end, placement order): a total order that
 * agrees with every zero-delay edge, so the map can be timed. */
static int ls_make_map(const ls_ctx *x, pm_map **out)
{
    uint32_t n = x->g->nnodes, P = x->P;
    ls_key *k = malloc(((size_t)n + 1) * sizeof *k);
    uint32_t *flat = malloc(((size_t)n + 1) * sizeof *flat);
    uint32_t *counts = calloc((size_t)P + 1, sizeof *counts);
    const uint32_t **lists = calloc((size_t)P + 1, sizeof *lists);
    int rc = PM_ENOMEM;
    if (k && flat && counts && lists) {
        for (uint32_t v = 0; v < n; v++) {
            k[v] = (ls_key){x->slot[v].core, x->seq[v], v, x->slot[v].start, x->slot[v].end};
            counts[x->slot[v].core]++;
        }
        qsort(k, n, sizeof *k, ls_key_cmp);
        for (uint32_t v = 0; v < n; v++)
            flat[v] = k[v].v;
        for (uint32_t c = 0, at = 0; c < P; at += counts[c], c++)
            lists[c] = flat + at;
        rc = pm_map_create(P, n, lists, counts, out);
    }
    free(k);
    free(flat);
    free(counts);
    free(lists);
    return rc;
}

/* ---- entry point -------------------------------------------------------- */

static void ls_free(ls_ctx *x)
{
    free(x->rank);
    free(x->lanes);
    free(x->slot);
    free(x->seq);
    free(x->deps);
    free(x->cluster);
    free(x->cl_core);
    free(x->cl_class_ok);
    free(x->arr);
    free(x->mark);
}

static int ls_alloc(ls_ctx *x, const pm_graph *g)
{
    size_t n = (size_t)g->nnodes + 1, p = (size_t)g->platform.ncores + 1;
    uint32_t maxin = 0;
    for (uint32_t v = 0; v < g->nnodes; v++)
        if (g->in_off[v + 1] - g->in_off[v] > maxin)
            maxin = g->in_off[v + 1] - g->in_off[v];
    x->g = g;
    x->P = g->platform.ncores;
    x->rank = malloc(n * sizeof *x->rank);
    x->lanes = calloc(p, sizeof *x->lanes);
    x->slot = calloc(n, sizeof *x->slot);
    x->seq = calloc(n, sizeof *x->seq);
    x->deps = calloc(n, sizeof *x->deps);
    x->cluster = malloc(n * sizeof *x->cluster);
    x->arr = malloc(((size_t)maxin + 1) * sizeof *x->arr);
    x->mark = calloc(p, sizeof *x->mark);
    if (!x->rank || !x->lanes || !x->slot || !x->seq || !x->deps || !x->cluster ||
        !x->arr || !x->mark)
        return PM_ENOMEM;
    for (uint32_t v = 0; v < g->nnodes; v++)
        x->cluster[v] = PM_NONE;
    return PM_OK;
}

static int ls_decide(ls_ctx *x, const pm_sched_opts *o, pm_diag *diag)
{
    uint32_t *topo = malloc(((size_t)x->g->nnodes + 1) * sizeof *topo);
    if (!topo)
        return PM_ENOMEM;
    int rc = sched_topo(x->g, topo, diag);
    if (rc == PM_OK)
        ls_ranks(x, topo);
    free(topo);
    if (rc == PM_OK && !o->greedy && !o->loop_blind)
        rc = ls_loop_parts(x, o);
    if (rc == PM_OK)
        rc = o->greedy ? ls_greedy(x, o, diag) : ls_heft(x);
    if (rc == PM_OK && x->overflow) {
        pm_diag_set(diag, x->g->file, 0, 0, "schedule times exceed 62 bits");
        rc = PM_ERANGE;
    }
    return rc;
}

int pm_sched_list(const pm_graph *g, const pm_sched_opts *opts, pm_schedule **out,
                  pm_map **map, pm_diag *diag)
{
    static const pm_sched_opts defaults = {0};
    const pm_sched_opts *o = opts ? opts : &defaults;
    if (out)
        *out = NULL;
    if (map)
        *map = NULL;
    int rc = sched_check_graph(g, diag);
    if (rc != PM_OK)
        return rc;
    ls_ctx x = {0};
    pm_map *m = NULL;
    rc = ls_alloc(&x, g);
    if (rc == PM_OK)
        rc = ls_decide(&x, o, diag);
    if (rc == PM_OK)
        rc = ls_make_map(&x, &m);
    ls_free(&x);
    if (rc == PM_OK && out)
        rc = pm_sched_from_map(g, m, out, diag);
    if (rc == PM_OK && map)
        *map = m;
    else
        pm_map_destroy(m);
    return rc;
}
