/*
 * map.c - core assignment and per-core order of a graph's nodes.
 *
 * Reading and writing `.map` files lives in mapfile.c; this file holds the
 * structure and its validation against a graph.
 */
#include "pacemap/map.h"

#include <stdlib.h>
#include <string.h>

void pm_map_destroy(pm_map *m)
{
    if (!m)
        return;
    free(m->core_of);
    free(m->off);
    free(m->order);
    free(m->lag);
    free(m->cap);
    free(m);
}

bool pm_map_has_lags(const pm_map *m)
{
    for (uint32_t v = 0; v < m->nnodes; v++)
        if (m->lag[v] != 0)
            return true;
    return false;
}

int pm_map_create(uint32_t ncores, uint32_t nnodes, const uint32_t *const *lists,
                  const uint32_t *counts, pm_map **out)
{
    *out = NULL;
    pm_map *m = calloc(1, sizeof *m);
    if (!m)
        return PM_ENOMEM;
    m->ncores = ncores;
    m->nnodes = nnodes;
    m->core_of = malloc(((size_t)nnodes + 1) * sizeof *m->core_of);
    m->off = calloc((size_t)ncores + 1, sizeof *m->off);
    uint64_t total = 0;
    for (uint32_t c = 0; c < ncores; c++)
        total += counts[c];
    m->order = malloc((size_t)(total + 1) * sizeof *m->order);
    m->lag = calloc((size_t)nnodes + 1, sizeof *m->lag);
    if (!m->core_of || !m->off || !m->order || !m->lag) {
        pm_map_destroy(m);
        return PM_ENOMEM;
    }
    for (uint32_t v = 0; v < nnodes; v++)
        m->core_of[v] = PM_NONE;
    uint32_t k = 0;
    for (uint32_t c = 0; c < ncores; c++) {
        m->off[c] = k;
        for (uint32_t i = 0; i < counts[c]; i++) {
            uint32_t v = lists[c][i];
            m->order[k++] = v;
            if (v < nnodes)
                m->core_of[v] = c;
        }
    }
    m->off[ncores] = k;
    *out = m;
    return PM_OK;
}

/* Whether core c of g's platform may run node v (pins and classes). */
static int map_check_node(const pm_map *m, const pm_graph *g, uint32_t v, uint32_t c,
                          pm_diag *diag)
{
    const pm_node *n = &g->nodes[v];
    const char *name = pm_graph_node_name(g, v);
    uint32_t cls = g->platform.core_class[c];
    if (n->pin_core != PM_NONE && n->pin_core != c) {
        pm_diag_set(diag, g->file, n->line, n->col,
                    "node '%s' is pinned to core %u but the map puts it on core %u", name,
                    n->pin_core, c);
        return PM_EMAP;
    }
    if (n->pin_class != PM_NONE && n->pin_class != cls) {
        pm_diag_set(diag, g->file, n->line, n->col,
                    "node '%s' is pinned to class %s but the map puts it on core %u (%s)",
                    name, g->platform.class_names[n->pin_class], c,
                    g->platform.class_names[cls]);
        return PM_EMAP;
    }
    if (pm_graph_cycles_on(g, v, cls) < 0) {
        pm_diag_set(diag, g->file, n->line, n->col,
                    "node '%s' has no cycles for class %s, so core %u cannot run it", name,
                    g->platform.class_names[cls], c);
        return PM_EMAP;
    }
    if (m->lag[v] > PM_MAP_MAX_LAG) {
        pm_diag_set(diag, g->file, n->line, n->col,
                    "node '%s' has lag %u; the most a map may give is %u", name, m->lag[v],
                    PM_MAP_MAX_LAG);
        return PM_EMAP;
    }
    return PM_OK;
}

/* Lags retime every edge u -> v to d + lag[v] - lag[u] delays in round
 * terms; a negative count would have v use a token made in a later round. */
static int map_check_lags(const pm_map *m, const pm_graph *g, pm_diag *diag)
{
    for (uint32_t e = 0; e < g->nedges; e++) {
        const pm_edge *ed = &g->edges[e];
        int64_t r = ed->delay + (int64_t)m->lag[ed->dst] - (int64_t)m->lag[ed->src];
        if (r >= 0)
            continue;
        pm_diag_set(diag, g->file, ed->line, ed->col,
                    "edge '%s' -> '%s' has %lld delays, but the lags (%u on '%s', %u on "
                    "'%s') need at least %lld: it would read a token of a later round",
                    pm_graph_node_name(g, ed->src), pm_graph_node_name(g, ed->dst),
                    (long long)ed->delay, m->lag[ed->src], pm_graph_node_name(g, ed->src),
                    m->lag[ed->dst], pm_graph_node_name(g, ed->dst),
                    (long long)ed->delay - r);
        return PM_EMAP;
    }
    return PM_OK;
}

int pm_map_check(const pm_map *m, const pm_graph *g, pm_diag *diag)
{
    if (m->nnodes != g->nnodes || m->ncores > g->platform.ncores) {
        pm_diag_set(diag, g->file, 0, 0, "the map has %u cores and %u nodes, the graph %u and %u",
                    m->ncores, m->nnodes, g->platform.ncores, g->nnodes);
        return PM_EMAP;
    }
    uint32_t *seen = calloc((size_t)g->nnodes + 1, sizeof *seen);
    if (!seen)
        return PM_ENOMEM;
    int rc = PM_OK;
    for (uint32_t c = 0; rc == PM_OK && c < m->ncores; c++) {
        for (uint32_t i = m->off[c]; rc == PM_OK && i < m->off[c + 1]; i++) {
            uint32_t v = m->order[i];
            if (v >= g->nnodes) {
                pm_diag_set(diag, g->file, 0, 0, "the map names node %u, which does not exist", v);
                rc = PM_EMAP;
            } else if (seen[v]++) {
                pm_diag_set(diag, g->file, 0, 0, "node '%s' appears twice in the map",
                            pm_graph_node_name(g, v));
                rc = PM_EMAP;
            } else {
                rc = map_check_node(m, g, v, c, diag);
            }
        }
    }
    for (uint32_t v = 0; rc == PM_OK && v < g->nnodes; v++) {
        if (!seen[v]) {
            pm_diag_set(diag, g->file, 0, 0, "node '%s' is missing from the map",
                        pm_graph_node_name(g, v));
            rc = PM_EMAP;
        }
    }
    free(seen);
    if (rc == PM_OK && pm_map_has_lags(m))
        rc = map_check_lags(m, g, diag);
    return rc;
}
