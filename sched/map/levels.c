/*
 * levels.c - graph facts the scheduler needs: input checks, the zero-delay
 * topological order, strongly connected components (for loops), which
 * cores may run a node, and transfer costs.  No placement happens here.
 */
#include "sched_internal.h"

#include <stdlib.h>
#include <string.h>

bool sched_allowed(const pm_graph *g, uint32_t v, uint32_t c)
{
    return pm_graph_can_run(g, v, c);
}

int64_t sched_edge_cost(const pm_graph *g, uint32_t e, bool *overflow)
{
    const pm_comm *c = &g->platform.comm;
    int64_t words = g->edges[e].words;
    int64_t pw;
    if (c->per_word != 0 && words > PM_MAX_VALUE / c->per_word) {
        *overflow = true;
        pw = PM_MAX_VALUE;
    } else {
        pw = c->per_word * words;
    }
    return sched_add(c->latency, pw, overflow);
}

/* Kahn's algorithm over zero-delay edges, first-in first-out: a fixed order. */
int sched_topo(const pm_graph *g, uint32_t *order, pm_diag *diag)
{
    uint32_t n = g->nnodes, head = 0, k = 0;
    uint32_t *deg = calloc((size_t)n + 1, sizeof *deg);
    if (!deg)
        return PM_ENOMEM;
    for (uint32_t e = 0; e < g->nedges; e++)
        if (g->edges[e].delay == 0)
            deg[g->edges[e].dst]++;
    for (uint32_t v = 0; v < n; v++) /* order[] doubles as the FIFO queue */
        if (deg[v] == 0)
            order[k++] = v;
    while (head < k) {
        uint32_t v = order[head++];
        for (uint32_t i = g->out_off[v]; i < g->out_off[v + 1]; i++) {
            const pm_edge *e = &g->edges[g->out_edge[i]];
            if (e->delay == 0 && --deg[e->dst] == 0)
                order[k++] = e->dst;
        }
    }
    int rc = PM_OK;
    if (k < n) {
        uint32_t v = 0;
        while (deg[v] == 0)
            v++;
        pm_diag_set(diag, g->file, g->nodes[v].line, g->nodes[v].col,
                    "node '%s' lies on a loop without delay, so no iteration can start",
                    pm_graph_node_name(g, v));
        rc = PM_EZERODELAY;
    }
    free(deg);
    return rc;
}

/* Iterative Tarjan state: an explicit call stack of (node, next out-edge). */
typedef struct scc_state {
    uint32_t *index, *low, *stack, *call, *next;
    bool *on;
    uint32_t counter, sp, ncomp;
} scc_state;

static void scc_open(scc_state *s, const pm_graph *g, uint32_t v, uint32_t *csp)
{
    s->index[v] = s->low[v] = s->counter++;
    s->stack[s->sp++] = v;
    s->on[v] = true;
    s->call[(*csp)++] = v;
    s->next[v] = g->out_off[v];
}

/* Pop v's component when v is its root. */
static void scc_close(scc_state *s, uint32_t v, uint32_t *comp)
{
    if (s->low[v] != s->index[v])
        return;
    uint32_t w;
    do {
        w = s->stack[--s->sp];
        s->on[w] = false;
        comp[w] = s->ncomp;
    } while (w != v);
    s->ncomp++;
}

static void scc_from(scc_state *s, const pm_graph *g, uint32_t root, uint32_t *comp)
{
    uint32_t csp = 0;
    scc_open(s, g, root, &csp);
    while (csp > 0) {
        uint32_t v = s->call[csp - 1];
        if (s->next[v] < g->out_off[v + 1]) {
            uint32_t w = g->edges[g->out_edge[s->next[v]++]].dst;
            if (s->index[w] == PM_NONE)
                scc_open(s, g, w, &csp);
            else if (s->on[w] && s->index[w] < s->low[v])
                s->low[v] = s->index[w];
            continue;
        }
        csp--;
        scc_close(s, v, comp);
        if (csp > 0) {
            uint32_t u = s->call[csp - 1];
            if (s->low[v] < s->low[u])
                s->low[u] = s->low[v];
        }
    }
}

static int scc_cyclic(const pm_graph *g, const uint32_t *comp, uint32_t ncomp, bool **cyclic)
{
    uint32_t *size = calloc((size_t)ncomp + 1, sizeof *size);
    *cyclic = calloc((size_t)ncomp + 1, sizeof **cyclic);
    if (!size || !*cyclic) {
        free(size);
        free(*cyclic);
        *cyclic = NULL;
        return PM_ENOMEM;
    }
    for (uint32_t v = 0; v < g->nnodes; v++)
        if (++size[comp[v]] > 1)
            (*cyclic)[comp[v]] = true;
    for (uint32_t e = 0; e < g->nedges; e++)
        if (g->edges[e].src == g->edges[e].dst)
            (*cyclic)[comp[g->edges[e].src]] = true;
    free(size);
    return PM_OK;
}

int sched_scc(const pm_graph *g, uint32_t *comp, uint32_t *ncomp, bool **cyclic)
{
    size_t n = (size_t)g->nnodes + 1;
    scc_state s = {0};
    s.index = malloc(n * sizeof *s.index);
    s.low = malloc(n * sizeof *s.low);
    s.stack = malloc(n * sizeof *s.stack);
    s.call = malloc(n * sizeof *s.call);
    s.next = malloc(n * sizeof *s.next);
    s.on = calloc(n, sizeof *s.on);
    int rc = PM_ENOMEM;
    if (s.index && s.low && s.stack && s.call && s.next && s.on) {
        for (uint32_t v = 0; v < g->nnodes; v++)
            s.index[v] = PM_NONE;
        for (uint32_t v = 0; v < g->nnodes; v++)
            if (s.index[v] == PM_NONE)
                scc_from(&s, g, v, comp);
        *ncomp = s.ncomp;
        rc = scc_cyclic(g, comp, s.ncomp, cyclic);
    }
    free(s.index);
    free(s.low);
    free(s.stack);
    free(s.call);
    free(s.next);
    free(s.on);
    return rc;
}

/* Every node must have a core that may run it. */
static int check_runnable(const pm_graph *g, pm_diag *diag)
{
    const pm_platform *p = &g->platform;
    for (uint32_t v = 0; v < g->nnodes; v++) {
        const pm_node *n = &g->nodes[v];
        const char *name = pm_graph_node_name(g, v);
        if (n->pin_core != PM_NONE && n->pin_core >= p->ncores) {
            pm_diag_set(diag, g->file, n->line, n->col,
                        "node '%s' is pinned to core %u but there are %u cores", name,
                        n->pin_core, p->ncores);
            return PM_EPLATFORM;
        }
        bool any = false;
        for (uint32_t c = 0; c < p->nclasses && !any; c++)
            any = p->class_count[c] > 0 && pm_graph_cycles_on(g, v, c) >= 0 &&
                  (n->pin_class == PM_NONE || n->pin_class == c) &&
                  (n->pin_core == PM_NONE || p->core_class[n->pin_core] == c);
        if (!any) {
            pm_diag_set(diag, g->file, n->line, n->col,
                        "no core of the platform may run node '%s' (pins and classes)",
                        name);
            return PM_EPLATFORM;
        }
    }
    return PM_OK;
}

int sched_check_graph(const pm_graph *g, uint32_t *order, pm_diag *diag)
{
    if (!g || !g->finalized || g->platform.ncores == 0) {
        pm_diag_set(diag, g ? g->file : "", 0, 0, "the graph is not finalized or has no core");
        return PM_EINVAL;
    }
    if (!pm_graph_is_single_rate(g)) {
        pm_diag_set(diag, g->file, 0, 0,
                    "the scheduler handles single-rate graphs only; expand multirate first");
        return PM_EUNSUPPORTED;
    }
    int rc = check_runnable(g, diag);
    if (rc != PM_OK)
        return rc;
    uint32_t *own = order ? NULL : malloc(((size_t)g->nnodes + 1) * sizeof *own);
    if (!order && !own)
        return PM_ENOMEM;
    rc = sched_topo(g, order ? order : own, diag);
    free(own);
    return rc;
}

/* One direction of the compact adjacency, by a counting sort over the
 * edges in index order (the graph's own adjacency order): one sequential
 * pass over the edge array instead of a gather through it. */
static int adj_side(const pm_graph *g, bool in, uint32_t **off, uint32_t **other,
                    uint32_t **edge, int64_t **cost, bool *overflow)
{
    size_t m = 0;
    *off = calloc((size_t)g->nnodes + 2, sizeof **off);
    if (!*off)
        return PM_ENOMEM;
    for (uint32_t e = 0; e < g->nedges; e++) {
        const pm_edge *ed = &g->edges[e];
        if (ed->delay == 0) {
            (*off)[(in ? ed->dst : ed->src) + 2]++;
            m++;
        }
    }
    *other = malloc((m + 1) * sizeof **other);
    *edge = malloc((m + 1) * sizeof **edge);
    *cost = malloc((m + 1) * sizeof **cost);
    if (!*other || !*edge || !*cost)
        return PM_ENOMEM;
    for (uint32_t v = 0; v < g->nnodes; v++)
        (*off)[v + 2] += (*off)[v + 1];
    for (uint32_t e = 0; e < g->nedges; e++) { /* off[v + 1] is v's fill point */
        const pm_edge *ed = &g->edges[e];
        if (ed->delay != 0)
            continue;
        uint32_t k = (*off)[(in ? ed->dst : ed->src) + 1]++;
        (*other)[k] = in ? ed->src : ed->dst;
        (*edge)[k] = e;
        (*cost)[k] = sched_edge_cost(g, e, overflow);
    }
    return PM_OK;
}

int sched_adj_build(const pm_graph *g, sched_adj *a, bool *overflow)
{
    memset(a, 0, sizeof *a);
    int rc = adj_side(g, true, &a->in_off, &a->in_src, &a->in_edge, &a->in_cost, overflow);
    if (rc == PM_OK)
        rc = adj_side(g, false, &a->out_off, &a->out_dst, &a->out_edge, &a->out_cost, overflow);
    for (uint32_t v = 0; rc == PM_OK && v < g->nnodes; v++)
        if (a->in_off[v + 1] - a->in_off[v] > a->maxin)
            a->maxin = a->in_off[v + 1] - a->in_off[v];
    if (rc != PM_OK)
        sched_adj_free(a);
    return rc;
}

void sched_adj_free(sched_adj *a)
{
    free(a->in_off);
    free(a->in_src);
    free(a->in_edge);
    free(a->in_cost);
    free(a->out_off);
    free(a->out_dst);
    free(a->out_edge);
    free(a->out_cost);
    memset(a, 0, sizeof *a);
}
