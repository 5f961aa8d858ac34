/*
 * scc.h - strongly connected components of a pm_graph, optionally on a
 * subset of its edges.
 *
 * Pearce's space-efficient variant of Tarjan's algorithm (D. J. Pearce, "A
 * space-efficient algorithm for finding strongly connected components",
 * Information Processing Letters 116(1), 2016; R. Tarjan, SIAM J. Computing
 * 1972), written without recursion so that chains of millions of nodes do
 * not overflow the C stack.
 *
 * Ownership: a pm_scc owns its three arrays; free with pm_scc_free().
 * Thread-safe: the graph is only read.
 */
#ifndef PACEMAP_SCC_H
#define PACEMAP_SCC_H

#include <stdbool.h>
#include <stdint.h>

#include "pacemap/graph.h"

/* Keep edge e?  ctx is passed through. */
typedef bool (*pm_scc_keep_fn)(const pm_graph *g, uint32_t e, void *ctx);

typedef struct pm_scc {
    uint32_t ncomp;
    uint32_t *comp;  /* node -> component, numbered in reverse topological
                      * order (component 0 has no edge to another one) */
    uint32_t *order; /* nodes grouped by component, ascending ids inside */
    uint32_t *start; /* component c is order[start[c] .. start[c+1]) */
} pm_scc;

/*
 * Components of finalized graph g using the edges e with keep(g, e, ctx)
 * (keep == NULL: every edge).  PM_ENOMEM on allocation failure (out is
 * then empty).  O(V + E) time, about 16 bytes per node of scratch memory.
 */
int pm_scc_compute(const pm_graph *g, pm_scc_keep_fn keep, void *ctx, pm_scc *out);

/* True when component c holds a cycle of kept edges: two nodes or more, or
 * one node with a kept self-loop.  O(out-degree) for a single node. */
bool pm_scc_has_cycle(const pm_graph *g, const pm_scc *s, uint32_t c,
                      pm_scc_keep_fn keep, void *ctx);

void pm_scc_free(pm_scc *s);

#endif
