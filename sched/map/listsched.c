/*
 * listsched.c - the list scheduler: decides which core runs each node and
 * in what order (a pm_map), then times that map with pm_sched_from_map.
 *
 * Default mode: upward-rank priorities with average costs, earliest-finish
 * core with insertion into remembered idle gaps (Topcuoglu, Hariri & Wu,
 * IEEE TPDS 2002), plus the loop rule (loops, or whole strongly connected
 * parts, whose work fits the period floor stay on one core).  Greedy mode:
 * Graham's plain list scheduling (1969).  Timing rules live in
 * schedtime.c; the scheduler only uses estimates of them to choose.
 *
 * Here: the entry point, the priorities (upward ranks), the map built from
 * the placements (per core by start time) and, where timing the map would
 * give the same times, the schedule straight from the placements.  Not
 * here: the placement loops of both modes (listsched_place.c), the loop
 * rule and why it holds (listsched_loops.c).
 */
#include "sched_internal.h"

#include <stdlib.h>
#include <string.h>

/* ---- priorities --------------------------------------------------------- */

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
        for (uint32_t i = x->a.out_off[v]; i < x->a.out_off[v + 1]; i++) {
            double c = share * (double)sched_add(cm->send + cm->recv, x->a.out_cost[i], &ovf);
            double r = c + x->rank[x->a.out_dst[i]];
            if (r > best)
                best = r;
        }
        x->rank[v] = ls_avg_cycles(g, v) + best;
    }
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
/* Placement order is nearly start order on each core: insertion sort,
 * falling back to qsort when the input turns out to be far from sorted. */
static void ls_sort_core(ls_key *k, size_t len)
{
    size_t moves = 0, budget = 4 * len + 64;
    for (size_t i = 1; i < len; i++) {
        ls_key t = k[i];
        size_t j = i;
        while (j > 0 && ls_key_cmp(&k[j - 1], &t) > 0) {
            k[j] = k[j - 1];
            j--;
            if (++moves > budget) {
                k[j] = t;
                qsort(k, len, sizeof *k, ls_key_cmp);
                return;
            }
        }
        k[j] = t;
    }
}

/* Counting sort by core in placement order, then each core by time. */
static void ls_sort_keys(const ls_ctx *x, ls_key *k, uint32_t *at, const uint32_t *counts)
{
    uint32_t n = x->g->nnodes;
    for (uint32_t c = 0, sum = 0; c < x->P; sum += counts[c], c++)
        at[c] = sum;
    for (uint32_t i = 0; i < n; i++) {
        uint32_t v = x->byseq[i];
        const pm_slot *sl = &x->slot[v];
        k[at[sl->core]++] = (ls_key){sl->core, i, v, sl->start, sl->end};
    }
    for (uint32_t c = 0, sum = 0; c < x->P; sum += counts[c], c++)
        ls_sort_core(k + sum, counts[c]);
}

static int ls_make_map(ls_ctx *x, pm_map **out)
{
    uint32_t n = x->g->nnodes, P = x->P;
    ls_key *k = malloc(((size_t)n + 1) * sizeof *k);
    uint32_t *flat = malloc(((size_t)n + 1) * sizeof *flat);
    uint32_t *counts = calloc((size_t)P + 1, sizeof *counts);
    uint32_t *at = calloc((size_t)P + 1, sizeof *at);
    const uint32_t **lists = calloc((size_t)P + 1, sizeof *lists);
    x->byseq = malloc(((size_t)n + 1) * sizeof *x->byseq);
    int rc = PM_ENOMEM;
    if (k && flat && counts && at && lists && x->byseq) {
        for (uint32_t v = 0; v < n; v++) {
            x->byseq[x->seq[v]] = v;
            counts[x->slot[v].core]++;
        }
        ls_sort_keys(x, k, at, counts);
        for (uint32_t v = 0; v < n; v++)
            flat[v] = k[v].v;
        for (uint32_t c = 0, sum = 0; c < P; sum += counts[c], c++)
            lists[c] = flat + sum;
        rc = pm_map_create(P, n, lists, counts, out);
    }
    free(k);
    free(flat);
    free(counts);
    free(at);
    free(lists);
    return rc;
}

/* ---- the schedule --------------------------------------------------------- */

/* Without send/receive occupancy and without a bus, timing the map gives
 * exactly the times the insertion scheduler found: a node that did not
 * start as soon as its data were ready starts at the end of the node
 * before it on its core, which is the map rule.  (Greedy mode ignores
 * transfer times while choosing, so it is always re-timed.)  Skipping the
 * second pass saves a third of the time on large graphs; the tests check
 * the identity on random graphs through map round trips. */
static bool ls_direct_ok(const pm_graph *g, const pm_sched_opts *o)
{
    const pm_platform *p = &g->platform;
    return !o->greedy && p->comm.send == 0 && p->comm.recv == 0 && p->interconnect == PM_P2P;
}

static int ls_direct(ls_ctx *x, pm_schedule **out)
{
    const pm_graph *g = x->g;
    pm_schedule *s = sched_schedule_alloc(g);
    size_t nt = 0;
    for (uint32_t e = 0; s && e < g->nedges; e++)
        nt += g->edges[e].delay == 0 && x->slot[g->edges[e].src].core != x->slot[g->edges[e].dst].core;
    if (s)
        s->transfers = calloc(nt + 1, sizeof *s->transfers);
    if (!s || !s->transfers) {
        pm_sched_destroy(s);
        return PM_ENOMEM;
    }
    for (uint32_t v = 0; v < g->nnodes; v++) {
        s->slots[v] = x->slot[v];
        s->busy[x->slot[v].core] += x->slot[v].end - x->slot[v].start;
        s->makespan = ls_max(s->makespan, x->slot[v].end);
    }
    for (uint32_t e = 0; e < g->nedges; e++) {
        const pm_edge *ed = &g->edges[e];
        const pm_slot *u = &x->slot[ed->src], *w = &x->slot[ed->dst];
        if (ed->delay != 0 || u->core == w->core)
            continue;
        int64_t cost = sched_edge_cost(g, e, &x->overflow), at = u->end + cost;
        s->transfers[s->ntransfers++] = (pm_transfer){e, ed->src, ed->dst, u->core, w->core,
                                                     u->end, u->end, u->end, at, at, at, cost};
    }
    *out = s;
    return PM_OK;
}

/* ---- entry point -------------------------------------------------------- */

static void ls_free(ls_ctx *x)
{
    free(x->rank);
    free(x->lanes);
    free(x->slot);
    free(x->seq);
    free(x->byseq);
    free(x->deps);
    free(x->cluster);
    free(x->cl_core);
    free(x->cl_class_ok);
    free(x->arr);
    free(x->mark);
    free(x->nsent);
    free(x->load);
    free(x->pend);
    free(x->cl_left);
    free(x->via);
    free(x->first);
    sched_adj_free(&x->a);
}

static int ls_alloc(ls_ctx *x, const pm_graph *g)
{
    size_t n = (size_t)g->nnodes + 1, p = (size_t)g->platform.ncores + 1;
    x->g = g;
    if (sched_adj_build(g, &x->a, &x->overflow) != PM_OK)
        return PM_ENOMEM;
    uint32_t maxin = x->a.maxin;
    x->P = g->platform.ncores;
    x->rank = malloc(n * sizeof *x->rank);
    x->lanes = calloc(p, sizeof *x->lanes);
    x->slot = calloc(n, sizeof *x->slot);
    x->seq = calloc(n, sizeof *x->seq);
    x->deps = calloc(n, sizeof *x->deps);
    x->cluster = malloc(n * sizeof *x->cluster);
    x->arr = malloc(((size_t)maxin + 1) * sizeof *x->arr);
    x->mark = calloc(p, sizeof *x->mark);
    x->nsent = calloc(n, sizeof *x->nsent);
    if (!x->rank || !x->lanes || !x->slot || !x->seq || !x->deps || !x->cluster ||
        !x->arr || !x->mark || !x->nsent)
        return PM_ENOMEM;
    for (uint32_t v = 0; v < g->nnodes; v++)
        x->cluster[v] = PM_NONE;
    return PM_OK;
}

/* Without a delayed edge there is no loop (zero-delay loops are refused). */
static bool ls_has_delay(const pm_graph *g)
{
    for (uint32_t e = 0; e < g->nedges; e++)
        if (g->edges[e].delay != 0)
            return true;
    return false;
}

static int ls_decide(ls_ctx *x, const pm_sched_opts *o, const uint32_t *topo, pm_diag *diag)
{
    int rc = PM_OK;
    ls_ranks(x, topo);
    if (rc == PM_OK && !o->greedy && !o->loop_blind && ls_has_delay(x->g))
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
    uint32_t *topo = g && g->finalized ? malloc(((size_t)g->nnodes + 1) * sizeof *topo) : NULL;
    if (g && g->finalized && !topo)
        return PM_ENOMEM;
    int rc = sched_check_graph(g, topo, diag);
    ls_ctx x = {0};
    pm_map *m = NULL;
    if (rc == PM_OK)
        rc = ls_alloc(&x, g);
    if (rc == PM_OK)
        rc = ls_decide(&x, o, topo, diag);
    if (rc == PM_OK)
        rc = ls_make_map(&x, &m);
    free(topo);
    if (rc == PM_OK && out && ls_direct_ok(g, o))
        rc = ls_direct(&x, out);
    else if (rc == PM_OK && out)
        rc = sched_time_map(g, m, &x.a, out, diag);
    ls_free(&x);
    if (rc == PM_OK && map)
        *map = m;
    else
        pm_map_destroy(m);
    return rc;
}
