/*
 * sdf.h - multirate (synchronous dataflow) graphs: repetition vector,
 * consistency, the one-iteration check, and expansion to the equivalent
 * single-rate graph (Lee & Messerschmitt, "Static scheduling of synchronous
 * data flow programs for digital signal processing", IEEE Trans. Computers
 * 1987).
 *
 * An edge u -> v with produce=p consume=c moves p tokens per firing of u and
 * takes c per firing of v; its `delay` counts initial tokens.  One iteration
 * of a multirate graph is one period of its repetition vector q: node v
 * fires q[v] times, and every edge ends the iteration holding as many tokens
 * as it started with.  A node's `cycles` are per firing.
 *
 * Expanded graphs (pm_sdf_expand): node v becomes q[v] firing nodes; their
 * ids are contiguous, v's firing i has id first(v) + i where first(v) is the
 * sum of q[u] over u < v.  Names are `v#i` (i = 0 .. q[v]-1), or plain `v`
 * when q[v] == 1, so a single-rate graph expands to itself.  `#` cannot occur
 * in a scenario name, so firing names never clash with user names.
 * docs/multirate.md explains how tokens become delays.
 *
 * Every function first checks the edges: rates in 1 .. 2^62-1, delay and
 * words in 0 .. 2^62-1, else PM_ERANGE with diag at the edge.  Functions
 * taking `rep` accept any positive vector that balances every edge (a
 * multiple of the smallest one means that many periods).
 *
 * Ownership: arrays and graphs returned through out-parameters belong to
 * the caller (free() / pm_graph_destroy()); on failure they are set to
 * NULL.  Maps of the expansion are made in map.h (pm_map_expand).  The input graph is only read; it need not be
 * finalized.  Thread-safe: no global state.
 */
#ifndef PACEMAP_SDF_H
#define PACEMAP_SDF_H

#include <stdint.h>

#include "pacemap/error.h"
#include "pacemap/graph.h"

/* Size guard of the expansion: firings per iteration (sum of q) and edges of
 * the expanded graph.  About 0.5 GB of memory at both limits. */
#define PM_SDF_MAX_FIRINGS UINT64_C(2000000)
#define PM_SDF_MAX_EXPANDED_EDGES UINT64_C(8000000)
/* Work guard of the one-iteration check: batches of firings simulated. */
#define PM_SDF_MAX_CHECK_STEPS UINT64_C(67108864)

/*
 * The smallest positive integer repetition vector of g: *rep gets nnodes
 * entries (firings of each node per iteration; all 1 for a single-rate
 * graph) satisfying q[src] * produce == q[dst] * consume on every edge.
 * Each weakly connected part is scaled to its own smallest solution.
 * Exact: 128-bit intermediates; every entry is at most PM_MAX_VALUE.
 * Errors: PM_ERANGE when a rate is not positive or an entry would pass 62
 * bits (diag points at the edge); PM_EINCONSISTENT when no vector exists:
 * diag names a cycle of the underlying undirected graph whose rate ratios
 * do not multiply to 1, e.g. `inconsistent rates on the cycle a -> b -> c
 * <- a: ...`, and points at one of its edges; PM_ENOMEM.
 * Complexity: O(V + E) time and memory (a spanning forest, then one check
 * per edge).
 */
int pm_sdf_repetition(const pm_graph *g, uint64_t **rep, pm_diag *diag);

/*
 * Whether one iteration can complete: simulates one period of `rep` (from
 * pm_sdf_repetition) on token counts, starting from the initial tokens
 * (delays), firing any node that has input and has not reached its count
 * (the class-S method of Lee & Messerschmitt 1987; firings of one node are
 * simulated in batches).  PM_OK when every node reaches its count.
 * Errors: PM_EDEADLOCK when it gets stuck: diag names a loop, nodes in data
 * order, whose edges all lack tokens, and points at one of its edges;
 * PM_ELIMIT past PM_SDF_MAX_CHECK_STEPS batches; PM_EINVAL when rep does
 * not balance g; PM_ENOMEM.
 * Complexity: O(V + E) per batch; a batch fires a node as often as its
 * inputs allow, so a feed-forward graph needs at most V batches.
 */
int pm_sdf_check_iteration(const pm_graph *g, const uint64_t *rep, pm_diag *diag);

/*
 * The equivalent single-rate graph of g for repetition vector `rep`.
 * Nodes: see the header comment (ids, names); each firing node copies the
 * original's cycles (per class too), pin, work kind, line and column.
 * Edges: the tokens an original edge carries in one iteration, numbered in
 * FIFO order with the initial tokens first, are cut into runs that share
 * producer firing, consumer firing and delay; each run becomes one edge with
 * words = tokens * words and delay = how many iterations later than its
 * production the run is consumed.  Expanded edges keep the original edge's
 * line and column, appear grouped by original edge in edge order, and have
 * produce = consume = 1.  No order edges are added between firings of a
 * node: a node that keeps state carries a self-loop (docs/format.md), and the
 * self-loop `v -> v delay=1` expands to the chain v#0 -> v#1 -> ... ->
 * v#(q-1) -> v#0 with one delay on the last link.
 * The platform is copied.  *out is finalized.  *origin (may be NULL: then
 * not returned) gets one entry per expanded node: its original node.
 * Call pm_sdf_check_iteration first: a graph that fails it expands to one
 * with a loop without delay.
 * Errors: PM_ELIMIT past PM_SDF_MAX_FIRINGS or PM_SDF_MAX_EXPANDED_EDGES
 * (checked before anything is built; diag names the node or edge that
 * contributes most); PM_ERANGE when an expanded edge's words pass 62 bits;
 * PM_EINVAL when rep does not balance g; PM_ENOMEM.
 * Complexity: O(sum of q + sum over edges of (q[src] + q[dst])).
 */
int pm_sdf_expand(const pm_graph *g, const uint64_t *rep, pm_graph **out,
                  uint32_t **origin, pm_diag *diag);

/*
 * The whole path in one call: repetition vector, one-iteration check and
 * expansion, with the errors of each.  `rep` and `origin` may be NULL when
 * those results are not wanted.  For a single-rate graph *out is a copy.
 */
int pm_sdf_single_rate(const pm_graph *g, pm_graph **out, uint64_t **rep,
                       uint32_t **origin, pm_diag *diag);

#endif
