/*
 * sdf.h - multirate (synchronous dataflow) graphs: repetition vector,
 * consistency, and expansion to the equivalent single-rate graph
 * (Lee & Messerschmitt, IEEE Trans. Computers 1987).
 *
 * Ownership: arrays and graphs returned through out-parameters belong to
 * the caller (free() / pm_graph_destroy()).  Thread-safe.
 */
#ifndef PACEMAP_SDF_H
#define PACEMAP_SDF_H

#include <stdint.h>

#include "pacemap/error.h"
#include "pacemap/graph.h"

/* The smallest positive integer repetition vector of g: *rep gets nnodes
 * entries (firings of each node per iteration; all 1 for a single-rate
 * graph).  Each weakly connected part is solved on its own.
 * PM_EINCONSISTENT (diag names the conflicting edges), PM_ERANGE on
 * overflow, PM_ENOMEM. */
int pm_sdf_repetition(const pm_graph *g, uint64_t **rep, pm_diag *diag);

#endif
