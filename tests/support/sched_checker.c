/*
 * sched_checker.c - independent checker of pm_schedule results (see the
 * header).  Written from the rules in sched.h, not from the scheduler code.
 */
#include "sched_checker.h"

#include <stdio.h>
#include <stdlib.h>

static char ck_msg[512];

typedef struct ck_iv {
    int64_t a, b;
    const char *what;
} ck_iv;

static int ck_iv_cmp(const void *pa, const void *pb)
{
    const ck_iv *x = pa, *y = pb;
    if (x->a != y->a)
        return x->a < y->a ? -1 : 1;
    return x->b < y->b ? -1 : (x->b > y->b);
}

/* Intervals sorted; each must start at or after the latest end so far. */
static const char *ck_disjoint(ck_iv *iv, size_t n, const char *lane)
{
    qsort(iv, n, sizeof *iv, ck_iv_cmp);
    int64_t reach = INT64_MIN;
    const char *who = "";
    for (size_t i = 0; i < n; i++) {
        if (iv[i].a < reach) {
            snprintf(ck_msg, sizeof ck_msg, "%s: %s [%lld,%lld) overlaps %s", lane, iv[i].what,
                     (long long)iv[i].a, (long long)iv[i].b, who);
            return ck_msg;
        }
        if (iv[i].b >= reach) {
            reach = iv[i].b;
            who = iv[i].what;
        }
    }
    return NULL;
}

static const char *ck_slots(const pm_graph *g, const pm_schedule *s)
{
    for (uint32_t v = 0; v < g->nnodes; v++) {
        const pm_slot *sl = &s->slots[v];
        const pm_node *n = &g->nodes[v];
        const char *name = pm_graph_node_name(g, v);
        if (sl->core >= g->platform.ncores)
            return "a slot names a core that does not exist";
        uint32_t cls = g->platform.core_class[sl->core];
        int64_t t = pm_graph_cycles_on(g, v, cls);
        snprintf(ck_msg, sizeof ck_msg, "node %s on core %u breaks pin/class/duration", name,
                 sl->core);
        if (t < 0 || sl->end - sl->start != t || sl->start < 0)
            return ck_msg;
        if (n->pin_core != PM_NONE && n->pin_core != sl->core)
            return ck_msg;
        if (n->pin_class != PM_NONE && n->pin_class != cls)
            return ck_msg;
    }
    return NULL;
}

static const pm_transfer *ck_find(const pm_schedule *s, uint32_t e)
{
    for (size_t i = 0; i < s->ntransfers; i++)
        if (s->transfers[i].edge == e)
            return &s->transfers[i];
    return NULL;
}

static const char *ck_transfer(const pm_graph *g, const pm_schedule *s, uint32_t e,
                               const pm_transfer *tr)
{
    const pm_edge *ed = &g->edges[e];
    const pm_comm *c = &g->platform.comm;
    const pm_slot *u = &s->slots[ed->src], *v = &s->slots[ed->dst];
    snprintf(ck_msg, sizeof ck_msg, "transfer %s -> %s breaks the transfer rules",
             pm_graph_node_name(g, ed->src), pm_graph_node_name(g, ed->dst));
    if (!tr || tr->src != ed->src || tr->dst != ed->dst || tr->from_core != u->core ||
        tr->to_core != v->core)
        return ck_msg;
    if (tr->send_start < u->end || tr->send_end - tr->send_start != c->send)
        return ck_msg;
    if (tr->wire_start < tr->send_end || tr->cost != c->latency + c->per_word * ed->words ||
        tr->arrival != tr->wire_start + tr->cost)
        return ck_msg;
    if (tr->recv_start < tr->arrival || tr->recv_end - tr->recv_start != c->recv ||
        v->start < tr->recv_end)
        return ck_msg;
    return NULL;
}

static const char *ck_edges(const pm_graph *g, const pm_schedule *s)
{
    size_t cross = 0;
    for (uint32_t e = 0; e < g->nedges; e++) {
        const pm_edge *ed = &g->edges[e];
        const pm_slot *u = &s->slots[ed->src], *v = &s->slots[ed->dst];
        if (ed->delay != 0)
            continue;
        if (u->core == v->core) {
            if (v->start < u->end) {
                snprintf(ck_msg, sizeof ck_msg, "%s starts before its producer %s ends",
                         pm_graph_node_name(g, ed->dst), pm_graph_node_name(g, ed->src));
                return ck_msg;
            }
            continue;
        }
        cross++;
        const char *m = ck_transfer(g, s, e, ck_find(s, e));
        if (m)
            return m;
    }
    return cross == s->ntransfers ? NULL : "transfers listed for edges that need none";
}

static const char *ck_cores(const pm_graph *g, const pm_schedule *s)
{
    size_t cap = (size_t)g->nnodes + 2 * s->ntransfers + 1;
    ck_iv *iv = malloc(cap * sizeof *iv);
    const char *m = NULL;
    const pm_comm *c = &g->platform.comm;
    for (uint32_t core = 0; !m && core < g->platform.ncores; core++) {
        size_t n = 0;
        int64_t busy = 0;
        for (uint32_t v = 0; v < g->nnodes; v++)
            if (s->slots[v].core == core) {
                iv[n++] = (ck_iv){s->slots[v].start, s->slots[v].end, pm_graph_node_name(g, v)};
                busy += s->slots[v].end - s->slots[v].start;
            }
        for (size_t i = 0; i < s->ntransfers; i++) {
            const pm_transfer *t = &s->transfers[i];
            if (t->from_core == core && c->send > 0)
                iv[n++] = (ck_iv){t->send_start, t->send_end, "a send"};
            if (t->to_core == core && c->recv > 0)
                iv[n++] = (ck_iv){t->recv_start, t->recv_end, "a receive"};
            busy += (t->from_core == core ? c->send : 0) + (t->to_core == core ? c->recv : 0);
        }
        m = ck_disjoint(iv, n, "a core");
        if (!m && busy != s->busy[core])
            m = "busy cycles of a core are wrong";
    }
    if (!m && g->platform.interconnect == PM_BUS) {
        size_t n = 0;
        for (size_t i = 0; i < s->ntransfers; i++)
            if (s->transfers[i].cost > 0)
                iv[n++] = (ck_iv){s->transfers[i].wire_start, s->transfers[i].arrival, "transfer"};
        m = ck_disjoint(iv, n, "the bus");
    }
    free(iv);
    return m;
}

const char *sched_checker_verify(const pm_graph *g, const pm_schedule *s)
{
    if (s->nnodes != g->nnodes || s->ncores != g->platform.ncores)
        return "schedule size does not match the graph";
    const char *m = ck_slots(g, s);
    if (!m)
        m = ck_edges(g, s);
    if (!m)
        m = ck_cores(g, s);
    if (m)
        return m;
    int64_t mk = 0;
    for (uint32_t v = 0; v < g->nnodes; v++)
        mk = s->slots[v].end > mk ? s->slots[v].end : mk;
    return mk == s->makespan ? NULL : "makespan is not the last end";
}

int64_t sched_checker_critical_path(const pm_graph *g)
{
    /* Longest path by repeated relaxation over the zero-delay DAG: simple
     * and independent of any topological order (V passes at most). */
    int64_t *f = calloc((size_t)g->nnodes + 1, sizeof *f), best = 0;
    for (uint32_t v = 0; v < g->nnodes; v++)
        f[v] = pm_graph_min_cycles(g, v);
    for (bool changed = true; changed;) {
        changed = false;
        for (uint32_t e = 0; e < g->nedges; e++) {
            const pm_edge *ed = &g->edges[e];
            int64_t cand = f[ed->src] + pm_graph_min_cycles(g, ed->dst);
            if (ed->delay == 0 && cand > f[ed->dst]) {
                f[ed->dst] = cand;
                changed = true;
            }
        }
    }
    for (uint32_t v = 0; v < g->nnodes; v++)
        best = f[v] > best ? f[v] : best;
    free(f);
    return best;
}
