/*
 * fitbuf.h - paced runs of a plan's map and the buffers they need
 * (docs/simulation.md, "Paced runs" and "Buffers"): the interval I of a
 * scenario, the pace of each simulated node (a multirate scenario's firings
 * get their firing number), the most tokens each scenario edge holds under
 * pacing (a multirate edge summed over its firings), and the smallest
 * capacities that still keep a paced run up.
 *
 * Ownership: pm_fitbuf_pace_init fills a caller's pm_sim_pace with arrays
 * freed by pm_fitbuf_pace_free (safe on a zeroed one).  Plans, maps and
 * results are only read.  Thread-safe: no global state.
 */
#ifndef PACEMAP_FITBUF_H
#define PACEMAP_FITBUF_H

#include <stdbool.h>
#include <stdint.h>

#include "pacemap/error.h"
#include "pacemap/plan.h"
#include "pacemap/rational.h"
#include "pacemap/sim.h"

#define PM_FITBUF_WORD_BYTES 4 /* bytes per word when the scenario gives none */

/* I = clock / rate cycles, reduced.  PM_EPLATFORM with a one-line message in
 * diag (the scenario file, no position) when clock or rate is missing. */
int pm_fitbuf_interval(const pm_graph *g, pm_rat *out, pm_diag *diag);

/* The pace of p->graph's nodes: q and firing number from the expansion,
 * inputs and sinks judged on the scenario's own edges (self-loops aside).
 * PM_ENOMEM. */
int pm_fitbuf_pace_init(const pm_plan *p, pm_rat interval, int64_t jitter, uint64_t seed,
                        pm_sim_pace *out);
void pm_fitbuf_pace_free(pm_sim_pace *pc);

/* Bytes one word of edge data takes: the scenario's word-bytes, else 4. */
int64_t pm_fitbuf_word_bytes(const pm_graph *g);

/*
 * Most tokens each edge of p->source holds at once in run r of map m
 * (tokens[e] for the source's nedges; -1 for an edge within one core).
 * Single rate: r->max_tokens.  Multirate: counted from r's trace, which
 * must hold every iteration (record >= iterations): token runs of the
 * expansion pushed at their producer firing's end, popped at their consumer
 * firing's begin, pops first on a tie, the edge's delays there at time 0.
 * PM_EINVAL when the trace is short; PM_ENOMEM.
 */
int pm_fitbuf_tokens(const pm_plan *p, const pm_map *m, const pm_sim_result *r,
                     int64_t *tokens);

/* A paced run of m keeps up: it ends without deadlock and without overrun,
 * and the unpaced period with the same capacities is at most I.  *keeps
 * set on PM_OK; the errors of pm_sim_run but PM_EDEADLOCK. */
int pm_fitbuf_keeps_up(const pm_graph *g, const pm_map *m, const pm_sim_opts *paced,
                       bool *keeps, pm_diag *diag);

/*
 * Smallest capacities (cap[e] for g's nedges; 0 on same-core edges) with
 * which the paced run `paced` (its pace and iterations; its edge_cap and
 * fifo_cap are ignored) of map m of single-rate g keeps up.  Starts from
 * the most tokens of the unbounded paced run (raised until it keeps up),
 * then per edge in edge order the least capacity that keeps up with the
 * others held, by bisection.  Times only grow as a capacity shrinks (a
 * max-plus system is monotone), so each result is locally minimal: one token
 * less on any edge gives an overrun, a deadlock or a slower period.
 * PM_EUNSUPPORTED when the unbounded run does not keep up (diag says so);
 * the errors of pm_sim_run.  O(E log T) paced runs.
 */
int pm_fitbuf_fit(const pm_graph *g, const pm_map *m, const pm_sim_opts *paced, uint32_t *cap,
                  pm_diag *diag);

#endif
