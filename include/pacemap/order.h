/*
 * order.h - the order in which the edges without delay let the nodes of an
 * iteration run, and the loop that forbids one.
 *
 * An edge without delay makes its consumer wait for its producer within
 * the same iteration, so every command that runs, schedules or analyses a
 * graph first needs a topological order of those edges (Kahn, "Topological
 * sorting of large networks", CACM 5(11), 1962), and, when there is none,
 * a loop of such edges to name in the error.  This module is the one place
 * both are computed: over a compact adjacency (CSR: offsets and targets)
 * for callers that build their own graph, and over a pm_graph.
 *
 * The reported loop is canonical, so that every command names the same
 * loop at the same place: among the nodes that lie on a loop without
 * delay, take the lowest-numbered one, s; the loop is the shortest loop of
 * edges without delay through s (breadth first from s, edges in the
 * graph's out-edge order, the first that returns to s closes it), listed
 * from s.  It is reported at its edge with the largest index, i.e. the
 * edge whose line completes the loop when the scenario is read top down.
 *
 * Ownership: callers own every array they pass; a pm_zero_loop owns its
 * two arrays (pm_order_zero_loop_free).  The graph is only read, so these
 * functions are thread-safe on a shared finalized graph.
 */
#ifndef PACEMAP_ORDER_H
#define PACEMAP_ORDER_H

#include <stdint.h>

#include "pacemap/error.h"
#include "pacemap/graph.h"

/* Which ready node Kahn's algorithm takes next. */
typedef enum pm_order_rule {
    PM_ORDER_FIFO = 0, /* first ready, first taken: the sources by id, then
                        * each node as its last input is taken */
    PM_ORDER_SMALLEST  /* the ready node with the smallest id */
} pm_order_rule;

/*
 * Topological order of a CSR graph with n nodes: the targets of node v are
 * dst[off[v] .. off[v+1]).  A position k with skip != NULL and skip[k] != 0
 * is not an edge here (the bound passes its delays saturated to a byte, so
 * only edges without delay count).  Writes the sorted nodes to order[0 ..
 * *count); *count < n exactly when the counted edges hold a cycle, and the
 * nodes missing from order[] are then those on or behind a cycle.
 * Errors: PM_ENOMEM (order and *count unspecified).  order has n entries.
 * O(V + E) for PM_ORDER_FIFO, O(V log V + E) for PM_ORDER_SMALLEST; one
 * allocation of 4 bytes per node (8 with PM_ORDER_SMALLEST).
 */
int pm_order_csr(uint32_t n, const uint32_t *off, const uint32_t *dst, const uint8_t *skip,
                 pm_order_rule rule, uint32_t *order, uint32_t *count);

/*
 * Topological order of the edges without delay of finalized graph g, as
 * pm_order_csr (same order, same *count) on g's out-edge adjacency.
 * Errors: PM_ENOMEM.  order has g->nnodes entries.  O(V + E) plus the
 * rule's heap; 5 bytes per edge and 4 per node of scratch memory.
 */
int pm_order_zero_delay(const pm_graph *g, pm_order_rule rule, uint32_t *order,
                        uint32_t *count);

/* A loop of edges without delay: edges[i] runs from nodes[i] to
 * nodes[(i + 1) % len]; at is the edge to report it at. */
typedef struct pm_zero_loop {
    uint32_t len;    /* 0: the graph has no loop without delay */
    uint32_t *nodes; /* nodes[0] is the loop's lowest node */
    uint32_t *edges;
    uint32_t at;     /* the loop's edge with the largest index */
} pm_zero_loop;

/*
 * The canonical loop without delay of finalized graph g (see the top of
 * this header), or len 0 when there is none.  Rates are not looked at: a
 * loop without delay deadlocks whatever its rates.  Errors: PM_ENOMEM (out
 * is then empty).  O(V + E); on a graph with such a loop, a strongly
 * connected components pass (pm_scc_compute) and one breadth-first search.
 */
int pm_order_zero_loop(const pm_graph *g, pm_zero_loop *out);

/* "loop without delay: a -> b -> a (add a delay on one of its edges)" at
 * the line and column of edge l->at, into diag (the middle of a long loop
 * is left out as "..."). l->len must be at least 1. */
void pm_order_zero_loop_diag(const pm_graph *g, const pm_zero_loop *l, pm_diag *diag);

/*
 * PM_OK when finalized graph g has no loop without delay; PM_EZERODELAY
 * with diag set by pm_order_zero_loop_diag when it has one; PM_ENOMEM.
 * What 'check', 'bound', 'dot' and the scheduler report.  O(V + E).
 */
int pm_order_check_zero_delay(const pm_graph *g, pm_diag *diag);

void pm_order_zero_loop_free(pm_zero_loop *l);

#endif
