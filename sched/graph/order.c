/*
 * order.c - Kahn's topological order of the edges without delay, and the
 * canonical loop without delay when there is no such order (see
 * pacemap/order.h for the rule and the references).
 *
 * Kahn's algorithm is written once, over a compact adjacency; the graph
 * form gathers the targets and "has a delay" flags of the out-edges into
 * that adjacency first, one sequential pass, so that the sort itself never
 * reads a whole pm_edge.  The loop finder runs only when the sort leaves
 * nodes over, which is an input error, so it may take a components pass.
 */
#include "pacemap/order.h"
#include "pacemap/scc.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* ---- a min-heap of node ids (PM_ORDER_SMALLEST) ------------------------- */

static void order_heap_push(uint32_t *h, uint32_t *len, uint32_t v)
{
    uint32_t i = (*len)++;
    while (i > 0 && h[(i - 1) / 2] > v) {
        h[i] = h[(i - 1) / 2];
        i = (i - 1) / 2;
    }
    h[i] = v;
}

static uint32_t order_heap_pop(uint32_t *h, uint32_t *len)
{
    uint32_t top = h[0], v = h[--(*len)], i = 0;
    for (;;) {
        uint32_t c = 2 * i + 1;
        if (c >= *len)
            break;
        if (c + 1 < *len && h[c + 1] < h[c])
            c++;
        if (h[c] >= v)
            break;
        h[i] = h[c];
        i = c;
    }
    if (*len > 0)
        h[i] = v;
    return top;
}

/* ---- Kahn's algorithm --------------------------------------------------- */

/* In-degrees over the counted positions. */
static void order_indegrees(uint32_t n, const uint32_t *off, const uint32_t *dst,
                            const uint8_t *skip, uint32_t *indeg)
{
    if (skip) {
        for (uint32_t k = 0; k < off[n]; k++)
            indeg[dst[k]] += skip[k] == 0;
    } else {
        for (uint32_t k = 0; k < off[n]; k++)
            indeg[dst[k]]++;
    }
}

/* First in, first out: order[] doubles as the queue. */
static uint32_t order_fifo(uint32_t n, const uint32_t *off, const uint32_t *dst,
                           const uint8_t *skip, uint32_t *indeg, uint32_t *order)
{
    uint32_t head = 0, tail = 0;
    for (uint32_t v = 0; v < n; v++)
        if (indeg[v] == 0)
            order[tail++] = v;
    while (head < tail) {
        uint32_t u = order[head++];
        for (uint32_t k = off[u]; k < off[u + 1]; k++)
            if ((!skip || skip[k] == 0) && --indeg[dst[k]] == 0)
                order[tail++] = dst[k];
    }
    return tail;
}

/* Smallest ready id first, from a heap. */
static uint32_t order_smallest(uint32_t n, const uint32_t *off, const uint32_t *dst,
                               const uint8_t *skip, uint32_t *indeg, uint32_t *heap,
                               uint32_t *order)
{
    uint32_t len = 0, done = 0;
    for (uint32_t v = 0; v < n; v++)
        if (indeg[v] == 0)
            heap[len++] = v; /* ascending ids already form a heap */
    while (len > 0) {
        uint32_t u = order_heap_pop(heap, &len);
        order[done++] = u;
        for (uint32_t k = off[u]; k < off[u + 1]; k++)
            if ((!skip || skip[k] == 0) && --indeg[dst[k]] == 0)
                order_heap_push(heap, &len, dst[k]);
    }
    return done;
}

int pm_order_csr(uint32_t n, const uint32_t *off, const uint32_t *dst, const uint8_t *skip,
                 pm_order_rule rule, uint32_t *order, uint32_t *count)
{
    size_t words = rule == PM_ORDER_SMALLEST ? 2 * ((size_t)n + 1) : (size_t)n + 1;
    uint32_t *indeg = calloc(words, sizeof *indeg);
    if (!indeg)
        return PM_ENOMEM;
    order_indegrees(n, off, dst, skip, indeg);
    if (rule == PM_ORDER_SMALLEST)
        *count = order_smallest(n, off, dst, skip, indeg, indeg + n + 1, order);
    else
        *count = order_fifo(n, off, dst, skip, indeg, order);
    free(indeg);
    return PM_OK;
}

int pm_order_zero_delay(const pm_graph *g, pm_order_rule rule, uint32_t *order,
                        uint32_t *count)
{
    uint32_t *dst = malloc(((size_t)g->nedges + 1) * sizeof *dst);
    uint8_t *skip = malloc((size_t)g->nedges + 1);
    int rc = dst && skip ? PM_OK : PM_ENOMEM;
    for (uint32_t k = 0; rc == PM_OK && k < g->nedges; k++) {
        const pm_edge *e = &g->edges[g->out_edge[k]];
        dst[k] = e->dst;
        skip[k] = e->delay != 0;
    }
    if (rc == PM_OK)
        rc = pm_order_csr(g->nnodes, g->out_off, dst, skip, rule, order, count);
    free(dst);
    free(skip);
    return rc;
}

/* ---- the canonical loop without delay ----------------------------------- */

static bool order_keep_zero(const pm_graph *g, uint32_t e, void *ctx)
{
    (void)ctx;
    return g->edges[e].delay == 0;
}

/* The lowest node that lies on a loop without delay (components of the
 * edges without delay that hold a cycle), or PM_NONE. */
static int order_lowest_on_loop(const pm_graph *g, pm_scc *s, uint32_t *low)
{
    *low = PM_NONE;
    int rc = pm_scc_compute(g, order_keep_zero, NULL, s);
    for (uint32_t c = 0; rc == PM_OK && c < s->ncomp; c++) {
        uint32_t first = s->order[s->start[c]]; /* ascending inside a part */
        if (first < *low && pm_scc_has_cycle(g, s, c, order_keep_zero, NULL))
            *low = first;
    }
    return rc;
}

/* Breadth first from s over edges without delay inside s's component;
 * the first edge back to s closes the shortest loop.  parent[] (edge into
 * each reached node) and queue[] are scratch of g->nnodes entries. */
static uint32_t order_bfs_close(const pm_graph *g, const pm_scc *sc, uint32_t s,
                                uint32_t *parent, uint32_t *queue)
{
    uint32_t head = 0, tail = 0;
    memset(parent, 0xff, (size_t)g->nnodes * sizeof *parent);
    queue[tail++] = s;
    while (head < tail) {
        uint32_t u = queue[head++];
        for (uint32_t k = g->out_off[u]; k < g->out_off[u + 1]; k++) {
            uint32_t e = g->out_edge[k], w = g->edges[e].dst;
            if (g->edges[e].delay != 0 || sc->comp[w] != sc->comp[s])
                continue;
            if (w == s)
                return e;
            if (parent[w] == PM_NONE) {
                parent[w] = e;
                queue[tail++] = w;
            }
        }
    }
    return PM_NONE; /* not reached: s lies on a loop of its component */
}

/* Follow parent[] back from the closing edge to s; out gets the loop in
 * order from s. */
static void order_fill_loop(const pm_graph *g, uint32_t s, uint32_t last,
                            const uint32_t *parent, pm_zero_loop *out)
{
    uint32_t len = 0;
    for (uint32_t e = last;; e = parent[g->edges[e].src]) {
        out->edges[len++] = e;
        if (g->edges[e].src == s)
            break;
    }
    out->len = len;
    out->at = last;
    for (uint32_t i = 0; i < len / 2; i++) {
        uint32_t tmp = out->edges[i];
        out->edges[i] = out->edges[len - 1 - i];
        out->edges[len - 1 - i] = tmp;
    }
    for (uint32_t i = 0; i < len; i++) {
        out->nodes[i] = g->edges[out->edges[i]].src;
        out->at = out->edges[i] > out->at ? out->edges[i] : out->at;
    }
}

static int order_find_loop(const pm_graph *g, pm_zero_loop *out)
{
    pm_scc sc;
    uint32_t s;
    int rc = order_lowest_on_loop(g, &sc, &s);
    size_t n = (size_t)g->nnodes + 1;
    uint32_t *parent = malloc(n * sizeof *parent), *queue = malloc(n * sizeof *queue);
    out->nodes = malloc(n * sizeof *out->nodes);
    out->edges = malloc(n * sizeof *out->edges);
    if (rc == PM_OK && (!parent || !queue || !out->nodes || !out->edges))
        rc = PM_ENOMEM;
    if (rc == PM_OK && s != PM_NONE) {
        uint32_t last = order_bfs_close(g, &sc, s, parent, queue);
        if (last != PM_NONE)
            order_fill_loop(g, s, last, parent, out);
    }
    free(parent);
    free(queue);
    pm_scc_free(&sc);
    return rc;
}

int pm_order_zero_loop(const pm_graph *g, pm_zero_loop *out)
{
    memset(out, 0, sizeof *out);
    uint32_t *order = malloc(((size_t)g->nnodes + 1) * sizeof *order), count = 0;
    int rc = order ? pm_order_zero_delay(g, PM_ORDER_FIFO, order, &count) : PM_ENOMEM;
    free(order);
    if (rc == PM_OK && count < g->nnodes)
        rc = order_find_loop(g, out);
    if (rc != PM_OK || out->len == 0)
        pm_order_zero_loop_free(out);
    return rc;
}

void pm_order_zero_loop_diag(const pm_graph *g, const pm_zero_loop *l, pm_diag *diag)
{
    char names[400];
    size_t at = 0;
    bool elided = false;
    for (uint32_t i = 0; i <= l->len; i++) {
        const char *name = pm_graph_node_name(g, l->nodes[i % l->len]);
        if (i < l->len && (elided || at + strlen(name) + 32 >= sizeof names)) {
            elided = true; /* too long: leave out the middle */
            continue;
        }
        int n = snprintf(names + at, sizeof names - at, "%s%s%s", i ? " -> " : "",
                         elided ? "... -> " : "", name);
        if (n > 0)
            at += (size_t)n < sizeof names - at ? (size_t)n : sizeof names - at - 1;
    }
    const pm_edge *ed = &g->edges[l->at];
    pm_diag_set(diag, g->file, ed->line, ed->col,
                "loop without delay: %s (add a delay on one of its edges)", names);
}

int pm_order_check_zero_delay(const pm_graph *g, pm_diag *diag)
{
    pm_zero_loop l;
    int rc = pm_order_zero_loop(g, &l);
    if (rc == PM_OK && l.len > 0) {
        pm_order_zero_loop_diag(g, &l, diag);
        rc = PM_EZERODELAY;
    }
    pm_order_zero_loop_free(&l);
    return rc;
}

void pm_order_zero_loop_free(pm_zero_loop *l)
{
    if (!l)
        return;
    free(l->nodes);
    free(l->edges);
    memset(l, 0, sizeof *l);
}
