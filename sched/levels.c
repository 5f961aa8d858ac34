/*
 * levels.c - graph facts the scheduler needs: input checks, the zero-delay
 * topological order, strongly connected components (for loops), which
 * cores may run a node, and transfer costs.  No placement happens here.
 */
#include "sched_internal.h"

#include <stdlib.h>

bool sched_allowed(const pm_graph *g, uint32_t v, uint32_t c)
{
    const pm_node *n = &g->nodes[v];
    uint32_t cls = g->platform.core_class[c];
    if (n->pin_core != PM_NONE && n->pin_core != c)
        return false;
    if (n->pin_class != PM_NONE && n->pin_class != cls)
        return false;
    return pm_graph_cycles_on(g, v, cls) >= 0;
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

/* Kahn's algorithm over zero-delay edges with a min-heap of ready ids, so
 * the order is unique (smallest ready id first). */
static void topo_heap_push(uint32_t *h, uint32_t *n, uint32_t v)
{
    uint32_t i = (*n)++;
    while (i > 0 && h[(i - 1) / 2] > v) {
        h[i] = h[(i - 1) / 2];
        i = (i - 1) / 2;
    }
    h[i] = v;
}

static uint32_t topo_heap_pop(uint32_t *h, uint32_t *n)
{
    uint32_t top = h[0], last = h[--*n], i = 0;
    for (;;) {
        uint32_t c = 2 * i + 1;
        if (c >= *n)
            break;
        if (c + 1 < *n && h[c + 1] < h[c])
            c++;
        if (h[c] >= last)
            break;
        h[i] = h[c];
        i = c;
    }
    if (*n > 0)
        h[i] = last;
    return top;
}

int sched_topo(const pm_graph *g, uint32_t *order, pm_diag *diag)
{
    uint32_t n = g->nnodes, nh = 0, k = 0;
    uint32_t *deg = calloc((size_t)n + 1, sizeof *deg);
    uint32_t *heap = malloc(((size_t)n + 1) * sizeof *heap);
    if (!deg || !heap) {
        free(deg);
        free(heap);
        return PM_ENOMEM;
    }
    for (uint32_t e = 0; e < g->nedges; e++)
        if (g->edges[e].delay == 0)
            deg[g->edges[e].dst]++;
    for (uint32_t v = 0; v < n; v++)
        if (deg[v] == 0)
            topo_heap_push(heap, &nh, v);
    while (nh > 0) {
        uint32_t v = topo_heap_pop(heap, &nh);
        order[k++] = v;
        for (uint32_t i = g->out_off[v]; i < g->out_off[v + 1]; i++) {
            const pm_edge *e = &g->edges[g->out_edge[i]];
            if (e->delay == 0 && --deg[e->dst] == 0)
                topo_heap_push(heap, &nh, e->dst);
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
    free(heap);
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

int sched_check_graph(const pm_graph *g, pm_diag *diag)
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
    uint32_t *order = malloc(((size_t)g->nnodes + 1) * sizeof *order);
    if (!order)
        return PM_ENOMEM;
    rc = sched_topo(g, order, diag);
    free(order);
    return rc;
}
