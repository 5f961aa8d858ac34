/*
 * map.h - a mapping of a graph onto cores: which core runs each node and in
 * what order.  The scheduler makes one, a user can write one by hand
 * (`.map` files, docs/format.md), and the simulator and the real-core
 * runner execute it.
 *
 * Ownership: a pm_map owns its arrays; pm_map_destroy(NULL) is a no-op.
 * A map refers to nodes by index into the graph it was made for.
 */
#ifndef PACEMAP_MAP_H
#define PACEMAP_MAP_H

#include <stdbool.h>
#include <stdint.h>

#include "pacemap/error.h"
#include "pacemap/graph.h"

typedef struct pm_map {
    uint32_t ncores;
    uint32_t nnodes;
    uint32_t *core_of; /* nnodes entries: the core of each node */
    uint32_t *off;     /* ncores + 1 entries: core c runs order[off[c] .. off[c+1]) */
    uint32_t *order;   /* nnodes entries: node ids grouped by core, in run order */
    uint32_t *lag;     /* nnodes entries: how many iterations the node runs behind
                          its core's round (software pipelining): round r of the
                          core runs the node's iteration r - lag, none while that
                          is negative.  0 for every node unless set. */
    uint32_t *cap;     /* NULL, or one entry per edge of the graph the map was read
                          for: the edge's capacity in tokens (0 = unbounded), from
                          the map file's `capacity FROM -> TO N` lines; malloc'd,
                          freed by pm_map_destroy */
} pm_map;

/* Largest lag a map may give a node (keeps round arithmetic far from
 * overflow; a pipeline this deep is never useful). */
#define PM_MAP_MAX_LAG (1u << 20)

/* A map with `ncores` cores built from per-core node lists: lists[c] holds
 * counts[c] node ids in run order; every lag 0.  Does not validate against
 * a graph (see pm_map_check).  PM_ENOMEM. */
int pm_map_create(uint32_t ncores, uint32_t nnodes, const uint32_t *const *lists,
                  const uint32_t *counts, pm_map **out);
void pm_map_destroy(pm_map *m);

/* True when some node of m has a lag other than 0.  O(nnodes). */
bool pm_map_has_lags(const pm_map *m);

/* Check that `m` fits `g`: every node exactly once, cores within the
 * platform, pins and classes respected, lags at most PM_MAP_MAX_LAG, and
 * every edge u -> v with d delays keeps d + lag[v] - lag[u] >= 0.  On
 * failure returns PM_EMAP and describes the first problem in `diag` (the
 * edge's position for a lag problem, else none). */
int pm_map_check(const pm_map *m, const pm_graph *g, pm_diag *diag);

/* A loop of waits that carries no token, which stalls self-timed execution
 * of single-rate map m of g for ever: data edges u -> v with
 * delay + lag[v] - lag[u] = 0 and the order within a core's round.
 * `loop` has room for g->nnodes ids; on a deadlock returns PM_EDEADLOCK and
 * fills loop[0..*len) with the nodes in wait order (each waits for the next,
 * the last for the first), else PM_OK with *len = 0.  m must fit g
 * (pm_map_check).  PM_EINVAL, PM_ENOMEM.  O(V + E) (mapdead.c). */
int pm_map_deadlock_loop(const pm_graph *g, const pm_map *m, uint32_t *loop, uint32_t *len);

/* Where the `.map` file at path lists node `name` on core `core`: 1-based
 * line and column of the name.  PM_EIO when the file cannot be read,
 * PM_ENAME when no `core N:` line lists it (*line, *col then 0). */
int pm_map_file_locate(const char *path, uint32_t core, const char *name, uint32_t *line,
                       uint32_t *col);

/* Read a `.map` file for graph g (docs/format.md); errors carry FILE:LINE:COL.
 * The result is checked with pm_map_check.  Capacity lines set m->cap (an
 * array of g's nedges; NULL without such lines): one line names a pair of
 * nodes and applies to every edge between them in that direction; they
 * need a single-rate g (PM_EUNSUPPORTED at the line otherwise). */
int pm_map_read_file(const char *path, const pm_graph *g, pm_map **out, pm_diag *diag);
int pm_map_read_string(const char *text, size_t len, const char *name,
                       const pm_graph *g, pm_map **out, pm_diag *diag);

/* ---- maps of a multirate graph's expansion (sdf.h), in mapexpand.c ---- */

/*
 * Turn map m of g's nodes into a map of the expanded graph (ids as in
 * pm_sdf_expand): every firing of a node runs on the node's core, firings of
 * one node in firing order.  On each core the firings follow the map's node
 * order, each node's firings together where the tokens allow; a node's
 * firings are interleaved with those of the nodes after it on the same core
 * only when a loop needs it.  Rule: an entry of a core's list may start
 * only after the entry before it has started; among the entries that may
 * run, the earliest in the list fires first.  The per-core orders are the
 * projection of one admissible sequential schedule of an iteration, so
 * self-timed execution of the result cannot deadlock.  Lags: every firing
 * of a node gets the node's lag (whole iterations), and the order is that
 * of one round of the retimed graph, where an edge u -> v holds delay +
 * (lag[v] - lag[u]) * produce * rep[u] tokens.  For a single-rate
 * graph the result equals m.
 * Errors: PM_EMAP when m does not list every node of g exactly once, or
 * when an edge's retimed token count is negative;
 * PM_EDEADLOCK when the map's order cannot complete an iteration (diag says
 * where each core waits); PM_EINVAL when rep does not balance g; PM_ELIMIT
 * past PM_SDF_MAX_FIRINGS; PM_ENOMEM.
 * Complexity: O((sum of q + E) log V) for graphs whose firings batch well.
 */
int pm_map_expand(const pm_graph *g, const uint64_t *rep, const pm_map *m,
                  pm_map **out, pm_diag *diag);

/*
 * The map of g's nodes that a map xm of the expanded graph implies: node v
 * goes to the core of its firing 0 and takes that firing's lag, and the
 * nodes on a core are ordered by where their firing 0 runs.  Meant for maps that keep a node's firings
 * together: pm_map_collapse of the result of pm_map_expand(m) is
 * m.  To map a multirate graph, pm_plan_map (pacemap/plan.h) places each
 * node by the cycles its firings ran on each core instead.
 * Errors: PM_EMAP when xm does not list every firing exactly once (sum of
 * rep entries); PM_ENOMEM.  O(sum of q * log V).
 */
int pm_map_collapse(const pm_graph *g, const uint64_t *rep, const pm_map *xm,
                    pm_map **out, pm_diag *diag);

/* Write `m` in `.map` form to a stdio stream; with m->cap, one capacity
 * line per pair of nodes that has a capacity (the largest of its edges'). */
#include <stdio.h>
int pm_map_write(const pm_map *m, const pm_graph *g, FILE *out);

#endif
