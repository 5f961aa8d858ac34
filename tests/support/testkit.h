/*
 * testkit.h - small pieces several tests share: a seeded generator, random
 * maps, the folder of the built test helpers and their ratio answers.
 * Linked into every test binary (tests/support/).
 */
#ifndef PACEMAP_TESTKIT_H
#define PACEMAP_TESTKIT_H

#include <stdbool.h>
#include <stdint.h>
#include <stdio.h>

#include "pacemap/graph.h"
#include "pacemap/map.h"

/* The one random generator of the tests and the bench helpers: the next
 * number in [0, n) (n > 0) of the 64-bit linear congruential sequence in
 * *state (Knuth's MMIX constants; the high bits are used), so a seed gives
 * the same numbers on every machine.  Any value is a valid seed.  Inline so
 * that the helpers in tests/helpers/, which do not link this folder, draw
 * from it too. */
static inline uint32_t tk_rand(uint64_t *state, uint32_t n)
{
    *state = *state * UINT64_C(6364136223846793005) + UINT64_C(1442695040888963407);
    return (uint32_t)((*state >> 33) % n);
}

/* Nodes 0..n-1 (n <= 64) on random cores of `procs` (<= 8); each core's
 * order is increasing node index, or (one case in `shuffle_one_in`) a
 * random shuffle, which may deadlock.  Asserts on failure. */
pm_map *tk_random_map(uint64_t *state, uint32_t n, uint32_t procs, uint32_t shuffle_one_in);

/* A graph "random" on `procs` identical cores, not finalised, with nodes
 * n0..n<n-1> of 0..cycles_below-1 cycles each.  Asserts on failure. */
pm_graph *tk_random_nodes(uint64_t *state, uint32_t n, uint32_t procs, uint32_t cycles_below);

/* n nodes of 0..14 cycles on `procs` identical cores, random costs
 * (latency 0..7, per word, send, receive 0..2) and up to 2n random edges of
 * 1..4 words: forward edges (lower to higher id) carry 0..2 delays, the
 * others 1..3, so every loop has a delay.  Asserts on failure. */
pm_graph *tk_random_sim_graph(uint64_t *state, uint32_t n, uint32_t procs);

/* Raise lags until every edge keeps delay + lag[dst] - lag[src] >= 0 (it
 * settles when every loop has a delay). */
void tk_raise_lags(const pm_graph *g, pm_map *m);

/* GLPK's glpsol as an outside reference: write(f, ctx) writes a model in
 * CPLEX LP form to a temporary file, glpsol solves it (tmlim seconds, 0 =
 * no limit) and *opt gets the objective.  True only when glpsol's status
 * is OPTIMAL or INTEGER OPTIMAL (not NON-OPTIMAL, not a time-out). */
bool tk_glpsol(void (*write)(FILE *f, const void *ctx), const void *ctx, unsigned tmlim,
               double *opt);

/* For tk_glpsol (ctx: a const pm_graph *): the smallest busiest-core
 * occupancy over all maps of a graph on its identical cores, as a 0/1
 * program in CPLEX LP form.  For a graph without loops, with point-to-point
 * links and lags allowed, that is the best self-timed period (mapper.h).
 *   min T  s.t.  sum_c x[v,c] = 1                      (each node once)
 *                s[e,c] >= x[u,c] - x[v,c]  (edge e = u -> v leaves c)
 *                r[e,c] >= x[v,c] - x[u,c]  (edge e enters c)
 *                T >= sum_v t(v) x[v,c] + send sum_e s[e,c] + recv sum_e r[e,c]
 *                x[v,c] = 0 for c > v  (identical cores: relabelling)
 *                P T >= sum_v t(v)    (implied; it only helps the solver)
 * x binary, s and r in [0, 1]; minimising T pushes s and r down to the cut
 * indicators wherever they bind.  Self-loops never cross cores and are
 * left out. */
void tk_write_occupancy_lp(FILE *f, const void *ctx);

/* $PM_HELPERS, or build/tests/helpers. */
const char *tk_helper_dir(void);

/* Read "W D" or "none" from a helper's answer: true with the pair, false
 * for none.  Asserts on malformed input. */
bool tk_read_ratio(FILE *f, long *w, long *d);

/* The whole of file dir/name as a NUL-terminated string (caller frees), or
 * NULL when it cannot be read. */
char *tk_slurp(const char *dir, const char *name);

#endif
