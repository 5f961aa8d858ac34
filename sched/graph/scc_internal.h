/*
 * scc_internal.h - the component finder of scc.c on any CSR adjacency, so
 * that the bound module can run it on small local subgraphs too.
 */
#ifndef PACEMAP_SCC_INTERNAL_H
#define PACEMAP_SCC_INTERNAL_H

#include "pacemap/scc.h"

/* Successors of v are list[off[v] .. off[v+1]): edge ids of g when g is
 * not NULL (target g->edges[e].dst, filtered by keep), else node ids.
 * Nodes below skip_below are left out entirely (their comp is then
 * meaningless and each forms its own component). */
typedef struct scc_csr {
    uint32_t n;
    const uint32_t *off;
    const uint32_t *list;
    const pm_graph *g;
    pm_scc_keep_fn keep;
    void *ctx;
    uint32_t skip_below;
} scc_csr;

int scc_run(const scc_csr *csr, pm_scc *out);

#endif
