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

#include <stdint.h>

#include "pacemap/error.h"
#include "pacemap/graph.h"

typedef struct pm_map {
    uint32_t ncores;
    uint32_t nnodes;
    uint32_t *core_of; /* nnodes entries: the core of each node */
    uint32_t *off;     /* ncores + 1 entries: core c runs order[off[c] .. off[c+1]) */
    uint32_t *order;   /* nnodes entries: node ids grouped by core, in run order */
} pm_map;

/* A map with `ncores` cores built from per-core node lists: lists[c] holds
 * counts[c] node ids in run order.  Does not validate against a graph (see
 * pm_map_check).  PM_ENOMEM. */
int pm_map_create(uint32_t ncores, uint32_t nnodes, const uint32_t *const *lists,
                  const uint32_t *counts, pm_map **out);
void pm_map_destroy(pm_map *m);

/* Check that `m` fits `g`: every node exactly once, cores within the
 * platform, pins and classes respected.  On failure returns PM_EMAP and
 * describes the first problem in `diag` (no position). */
int pm_map_check(const pm_map *m, const pm_graph *g, pm_diag *diag);

/* Read a `.map` file for graph g (docs/format.md); errors carry FILE:LINE:COL.
 * The result is checked with pm_map_check. */
int pm_map_read_file(const char *path, const pm_graph *g, pm_map **out, pm_diag *diag);
int pm_map_read_string(const char *text, size_t len, const char *name,
                       const pm_graph *g, pm_map **out, pm_diag *diag);

/* Write `m` in `.map` form to a stdio stream. */
#include <stdio.h>
int pm_map_write(const pm_map *m, const pm_graph *g, FILE *out);

#endif
