/*
 * mapper_internal.h - what the mapper's files share (mapper.c: entry and
 * search; mapper_lags.c: orders, lags and the exact evaluation of an
 * assignment; mapper_exact.c: the branch and bound).  Not public.
 */
#ifndef PACEMAP_MAPPER_INTERNAL_H
#define PACEMAP_MAPPER_INTERNAL_H

#include "pacemap/mapper.h"
#include "pacemap/scc.h"

#include <time.h>

/* What the search knows about g, computed once. */
typedef struct mp_ctx {
    const pm_graph *g;
    uint32_t n, P;
    int64_t *t;         /* n * P: cycles of v on core c, -1 where it cannot run */
    uint32_t *topo_pos; /* position of each node in the zero-delay order */
    uint32_t *topo;     /* that order */
    pm_scc scc;
    uint8_t *looped;    /* per component: it holds a cycle */
    bool has_loops;
    int64_t send, recv;
    uint32_t *stamp;    /* per edge, for the move deltas */
    uint32_t stamp_now;
    uint64_t moves;     /* occupancy moves looked at */
    uint64_t moves_checked; /* moves when the clock was last read */
    uint32_t evals, max_evals;
    struct timespec start, deadline;
    uint32_t budget_ms;
    bool timed_out;
    struct timespec share_end; /* the current descent's share of the time */
    bool share_on, share_over;
    bool cut;                  /* a share ended a descent: machine-dependent */
} mp_ctx;

/* Ordering key of an evaluated map: smaller is better. */
typedef struct mp_key {
    pm_rat period;
    int64_t latency; /* end of iteration 0 in the periodic schedule */
    int64_t tokens;  /* retimed delays on cross-core edges */
} mp_key;

int mp_key_cmp(const mp_key *a, const mp_key *b);

/* Transfer time of an edge (latency + per_word * words), saturated. */
int64_t mp_cost(const pm_graph *g, uint32_t e);

/* Occupancy of every core under assign into occ (P entries). */
void mp_occupancy(const mp_ctx *c, const uint32_t *assign, int64_t *occ);

/* The map of assign (orders, lags), its key; *out the caller's.  Counts an
 * evaluation.  PM_EDEADLOCK is not returned: the strict lags are used. */
int mp_evaluate(mp_ctx *c, const uint32_t *assign, pm_map **out, mp_key *key, pm_diag *diag);

/* The period a candidate map m of single-rate g is judged by: the IPC
 * cycle ratio (exact) with point-to-point links; with a bus, where that
 * ratio is only a floor, the simulator's period of a short run. */
int mp_judge_period(const pm_graph *g, const pm_map *m, pm_rat *period, pm_diag *diag);

/* True once the time budget has passed (and remembers it). */
bool mp_out_of_time(mp_ctx *c);

#endif
