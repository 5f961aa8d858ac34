/*
 * mapexpand.c - maps of a multirate graph's single-rate expansion (sdf.h)
 * made from maps of the graph as written, and back (map.h).
 *
 * Every firing of a node runs on the node's core with the node's lag; the
 * per-core firing orders are built by playing one round's tokens
 * (sdf_tokens) on the graph retimed by the lags, so that self-timed
 * execution of the result cannot deadlock.  The expansion
 * itself is sched/graph/expand.c; where a multirate node is placed is the
 * plan's rule (plan.h).
 */
#include "pacemap/map.h"
#include "pacemap/sdf.h"
#include "../graph/sdf_internal.h"

#include <stdbool.h>
#include <stdlib.h>
#include <string.h>

/* Building per-core firing orders: token counts plus, per core, a min-heap
 * (by list position) of the entries that may fire and might be ready. */
typedef struct mapx_order {
    const pm_graph *g;
    const pm_map *m;
    sdf_tokens tok;
    const uint32_t *first;  /* expanded id of each node's firing 0 */
    uint32_t *pos;          /* node -> position in its core's list */
    uint32_t *started;      /* per core: entries 0 .. started[c] may fire */
    uint32_t *heap;         /* core c's heap lives at heap + m->off[c] */
    uint32_t *heap_len;
    bool *in_heap;
    uint32_t *out;          /* core c's firings at out + out_off[c] */
    uint32_t *out_off;
    uint32_t *out_len;
} mapx_order;

static void mapx_heap_push(mapx_order *o, uint32_t c, uint32_t v)
{
    uint32_t *h = o->heap + o->m->off[c];
    uint32_t i = o->heap_len[c]++;
    while (i > 0 && o->pos[h[(i - 1) / 2]] > o->pos[v]) {
        h[i] = h[(i - 1) / 2];
        i = (i - 1) / 2;
    }
    h[i] = v;
    o->in_heap[v] = true;
}

static uint32_t mapx_heap_pop(mapx_order *o, uint32_t c)
{
    uint32_t *h = o->heap + o->m->off[c];
    uint32_t top = h[0], last = h[--o->heap_len[c]], n = o->heap_len[c], i = 0;
    for (;;) {
        uint32_t k = 2 * i + 1;
        if (k >= n)
            break;
        if (k + 1 < n && o->pos[h[k + 1]] < o->pos[h[k]])
            k++;
        if (o->pos[h[k]] >= o->pos[last])
            break;
        h[i] = h[k];
        i = k;
    }
    h[i] = last;
    o->in_heap[top] = false;
    return top;
}

/* Consider w again: its inputs grew or it may now start. */
static void mapx_offer(mapx_order *o, uint32_t w)
{
    uint32_t c = o->m->core_of[w];
    if (!o->in_heap[w] && o->pos[w] <= o->started[c] && o->tok.fired[w] < o->tok.rep[w])
        mapx_heap_push(o, c, w);
}

static void mapx_try(mapx_order *o, uint32_t c, uint32_t v)
{
    uint64_t k = sdf_tokens_ready(&o->tok, v);
    if (!k)
        return;
    for (uint64_t i = 0; i < k; i++)
        o->out[o->out_off[c] + o->out_len[c]++] = o->first[v] + (uint32_t)(o->tok.fired[v] + i);
    sdf_tokens_fire(&o->tok, v, k);
    const sdf_adj *a = o->tok.adj;
    for (uint32_t i = a->out_off[v]; i < a->out_off[v + 1]; i++)
        mapx_offer(o, o->g->edges[a->out_edge[i]].dst);
    uint32_t count = o->m->off[c + 1] - o->m->off[c];
    if (o->pos[v] == o->started[c] && o->started[c] + 1 < count) {
        o->started[c]++;
        mapx_offer(o, o->m->order[o->m->off[c] + o->started[c]]);
    }
}

static void mapx_run(mapx_order *o)
{
    for (uint32_t c = 0; c < o->m->ncores; c++)
        if (o->m->off[c + 1] > o->m->off[c])
            mapx_offer(o, o->m->order[o->m->off[c]]);
    bool any;
    do {
        any = false;
        for (uint32_t c = 0; c < o->m->ncores; c++)
            while (o->heap_len[c]) {
                any = true;
                uint32_t v = mapx_heap_pop(o, c);
                mapx_try(o, c, v);
            }
    } while (any);
}

/* m must list every node of g exactly once, on the core its core_of says. */
static int mapx_map_fits(const pm_graph *g, const pm_map *m, uint32_t *pos, pm_diag *diag)
{
    int rc = m->nnodes == g->nnodes && m->off[m->ncores] == g->nnodes ? PM_OK : PM_EMAP;
    for (uint32_t v = 0; v < g->nnodes; v++)
        pos[v] = PM_NONE;
    for (uint32_t c = 0; rc == PM_OK && c < m->ncores; c++)
        for (uint32_t k = m->off[c]; rc == PM_OK && k < m->off[c + 1]; k++) {
            uint32_t v = m->order[k];
            if (v >= g->nnodes || pos[v] != PM_NONE || m->core_of[v] != c)
                rc = PM_EMAP;
            else
                pos[v] = k - m->off[c];
        }
    if (rc != PM_OK)
        pm_diag_set(diag, g->file, 0, 0, "the map does not list every node of the graph "
                    "exactly once");
    return rc;
}

/* Where each unfinished core waits: its first entry short of its count. */
static int mapx_report_stuck(const mapx_order *o, pm_diag *diag)
{
    sdf_text t = { .len = 0 };
    char part[64];
    for (uint32_t c = 0; c < o->m->ncores; c++)
        for (uint32_t k = o->m->off[c]; k < o->m->off[c + 1]; k++) {
            uint32_t v = o->m->order[k];
            if (o->tok.fired[v] == o->tok.rep[v])
                continue;
            snprintf(part, sizeof part, "%score %u waits at '", t.len ? "; " : "", c);
            sdf_text_add(&t, part);
            sdf_text_add(&t, pm_graph_node_name(o->g, v));
            snprintf(part, sizeof part, "' (%llu of %llu firings done)",
                     (unsigned long long)o->tok.fired[v], (unsigned long long)o->tok.rep[v]);
            sdf_text_add(&t, part);
            break;
        }
    pm_diag_set(diag, o->g->file, 0, 0, "with this map's order one iteration cannot "
                "complete: %s", t.buf);
    return PM_EDEADLOCK;
}

static void mapx_order_free(mapx_order *o)
{
    sdf_tokens_free(&o->tok);
    free(o->pos);
    free(o->started);
    free(o->heap);
    free(o->heap_len);
    free(o->in_heap);
    free(o->out);
    free(o->out_off);
    free(o->out_len);
}

static int mapx_order_init(mapx_order *o, const pm_graph *g, const pm_map *m,
                             const sdf_adj *a, const uint64_t *rep, const uint32_t *first)
{
    size_t n = (size_t)g->nnodes + 1, nc = (size_t)m->ncores + 1;
    memset(o, 0, sizeof *o);
    o->g = g;
    o->m = m;
    o->first = first;
    o->pos = malloc(n * sizeof *o->pos);
    o->started = calloc(nc, sizeof *o->started);
    o->heap = malloc(n * sizeof *o->heap);
    o->heap_len = calloc(nc, sizeof *o->heap_len);
    o->in_heap = calloc(n, sizeof *o->in_heap);
    o->out = malloc(((size_t)first[g->nnodes] + 1) * sizeof *o->out);
    o->out_off = calloc(nc, sizeof *o->out_off);
    o->out_len = calloc(nc, sizeof *o->out_len);
    if (!o->pos || !o->started || !o->heap || !o->heap_len || !o->in_heap || !o->out ||
        !o->out_off || !o->out_len)
        return PM_ENOMEM;
    for (uint32_t c = 0; c < m->ncores; c++) {
        o->out_off[c + 1] = o->out_off[c];
        for (uint32_t k = m->off[c]; k < m->off[c + 1] && m->order[k] < g->nnodes; k++)
            o->out_off[c + 1] += (uint32_t)rep[m->order[k]];
    }
    return sdf_tokens_init(&o->tok, g, a, rep);
}

/* A lag of L iterations on node v moves L iterations of tokens: an edge
 * u -> v whose producer makes p tokens a firing holds, in round terms,
 * delay + (lag[v] - lag[u]) * p * rep[u] tokens at the start of a round
 * (one iteration of u puts p * rep[u] tokens on it).  Playing one round
 * from these counts orders the firings as the lagged cores run them.
 * PM_EMAP when a count is negative: the consumer would wait on a later
 * round of its producer. */
static int mapx_retime(mapx_order *o, const uint64_t *rep, pm_diag *diag)
{
    const pm_graph *g = o->g;
    for (uint32_t e = 0; e < g->nedges; e++) {
        const pm_edge *ed = &g->edges[e];
        pm_i128 shift = (pm_i128)o->m->lag[ed->dst] - (pm_i128)o->m->lag[ed->src];
        pm_i128 tok = (pm_i128)ed->delay + shift * (pm_i128)ed->produce * (pm_i128)rep[ed->src];
        if (tok < 0) {
            pm_diag_set(diag, g->file, ed->line, 0, "edge '%s' -> '%s' has %lld delays, fewer "
                        "than the lag of '%s' minus that of '%s' asks for",
                        pm_graph_node_name(g, ed->src), pm_graph_node_name(g, ed->dst),
                        (long long)ed->delay, pm_graph_node_name(g, ed->dst),
                        pm_graph_node_name(g, ed->src));
            return PM_EMAP;
        }
        o->tok.tokens[e] = (pm_u128)tok;
    }
    return PM_OK;
}

/* Every firing of a node carries the node's lag. */
static void mapx_copy_lags(const pm_graph *g, const pm_map *m, const uint32_t *first,
                           pm_map *xm)
{
    for (uint32_t v = 0; v < g->nnodes; v++)
        for (uint32_t f = first[v]; f < first[v + 1]; f++)
            xm->lag[f] = m->lag[v];
}

static int mapx_map_with(const pm_graph *g, const pm_map *m, const sdf_adj *a,
                           const uint64_t *rep, const uint32_t *first, pm_map **out,
                           pm_diag *diag)
{
    mapx_order o;
    int rc = mapx_order_init(&o, g, m, a, rep, first);
    if (rc == PM_OK)
        rc = mapx_map_fits(g, m, o.pos, diag);
    if (rc == PM_OK)
        rc = mapx_retime(&o, rep, diag);
    if (rc == PM_OK) {
        mapx_run(&o);
        for (uint32_t v = 0; rc == PM_OK && v < g->nnodes; v++)
            if (o.tok.fired[v] < rep[v])
                rc = mapx_report_stuck(&o, diag);
    }
    uint32_t **lists = rc == PM_OK ? malloc(((size_t)m->ncores + 1) * sizeof *lists) : NULL;
    if (rc == PM_OK && !lists)
        rc = PM_ENOMEM;
    for (uint32_t c = 0; rc == PM_OK && c < m->ncores; c++)
        lists[c] = o.out + o.out_off[c];
    if (rc == PM_OK)
        rc = pm_map_create(m->ncores, first[g->nnodes], (const uint32_t *const *)lists,
                           o.out_len, out);
    if (rc == PM_OK)
        mapx_copy_lags(g, m, first, *out);
    free(lists);
    mapx_order_free(&o);
    return rc;
}

int pm_map_expand(const pm_graph *g, const uint64_t *rep, const pm_map *m,
                      pm_map **out, pm_diag *diag)
{
    *out = NULL;
    uint32_t *first;
    int rc = sdf_firing_ids(g, rep, &first, diag);
    if (rc != PM_OK)
        return rc;
    sdf_adj a;
    rc = sdf_adj_build(g, &a);
    if (rc == PM_OK) {
        rc = mapx_map_with(g, m, &a, rep, first, out, diag);
        sdf_adj_free(&a);
    }
    free(first);
    return rc;
}

/* The node whose firings include expanded id f (first[] is increasing). */
static uint32_t mapx_origin_of(const uint32_t *first, uint32_t n, uint32_t f)
{
    uint32_t lo = 0, hi = n; /* first[lo] <= f < first[hi] */
    while (hi - lo > 1) {
        uint32_t mid = lo + (hi - lo) / 2;
        if (first[mid] <= f)
            lo = mid;
        else
            hi = mid;
    }
    return lo;
}

/* Per-core lists of the nodes whose firing 0 xm runs there, in xm's order. */
static int mapx_collapse_with(const pm_graph *g, const pm_map *xm, const uint32_t *first,
                                uint32_t *nodes, uint32_t *counts, pm_map **out)
{
    uint32_t total = first[g->nnodes], k = 0;
    uint32_t **lists = malloc(((size_t)xm->ncores + 1) * sizeof *lists);
    bool *seen = calloc((size_t)total + 1, sizeof *seen);
    int rc = lists && seen ? PM_OK : PM_ENOMEM;
    for (uint32_t c = 0; rc == PM_OK && c < xm->ncores; c++) {
        lists[c] = nodes + k;
        counts[c] = 0;
        for (uint32_t i = xm->off[c]; rc == PM_OK && i < xm->off[c + 1]; i++) {
            uint32_t f = xm->order[i];
            if (f >= total || seen[f]) {
                rc = PM_EMAP;
                break;
            }
            seen[f] = true;
            uint32_t v = mapx_origin_of(first, g->nnodes, f);
            if (first[v] == f)
                nodes[k++] = v, counts[c]++;
        }
    }
    if (rc == PM_OK)
        rc = pm_map_create(xm->ncores, g->nnodes, (const uint32_t *const *)lists, counts, out);
    for (uint32_t v = 0; rc == PM_OK && v < g->nnodes; v++)
        (*out)->lag[v] = xm->lag[first[v]]; /* the lag of its firing 0 */
    free(lists);
    free(seen);
    return rc;
}

int pm_map_collapse(const pm_graph *g, const uint64_t *rep, const pm_map *xm,
                        pm_map **out, pm_diag *diag)
{
    *out = NULL;
    uint32_t *first;
    int rc = sdf_firing_ids(g, rep, &first, diag);
    if (rc != PM_OK)
        return rc;
    uint32_t *nodes = malloc(((size_t)g->nnodes + 1) * sizeof *nodes);
    uint32_t *counts = malloc(((size_t)xm->ncores + 1) * sizeof *counts);
    bool fits = xm->nnodes == first[g->nnodes] && xm->off[xm->ncores] == xm->nnodes;
    rc = !nodes || !counts ? PM_ENOMEM : fits ? PM_OK : PM_EMAP;
    if (rc == PM_OK)
        rc = mapx_collapse_with(g, xm, first, nodes, counts, out);
    if (rc == PM_EMAP)
        pm_diag_set(diag, g->file, 0, 0, "the map of the expanded graph does not list "
                    "every firing exactly once");
    free(first);
    free(nodes);
    free(counts);
    return rc;
}
