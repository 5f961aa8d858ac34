/*
 * cmd_simulate_paced.h - the paced part of `pacemap simulate` (--paced,
 * --jitter, --seed, --fit-buffers, --emit-map): the paced run next to the
 * unpaced one, buffers, fitted capacities, and their text and JSON.  Only
 * cmd_simulate.c uses it.
 */
#ifndef PACEMAP_CMD_SIMULATE_PACED_H
#define PACEMAP_CMD_SIMULATE_PACED_H

#include <stdbool.h>
#include <stdint.h>

#include "pacemap/bound.h"
#include "pacemap/json.h"
#include "pacemap/plan.h"
#include "pacemap/sim.h"

typedef struct sp_args {
    bool on, fit;
    uint32_t jitter, seed;
    const char *emit_map;
} sp_args;

typedef struct sp_state {
    bool on;
    pm_rat interval;
    pm_sim_pace pace;
    pm_sim_result r;       /* the paced run */
    int64_t *tokens;       /* per scenario edge, under pacing; -1 within a core */
    uint32_t *fit;         /* --fit-buffers: per graph edge, 0 within a core */
    bool keeps_up;
    pm_rat period;         /* the unpaced period */
    uint64_t iterations;
} sp_state;

/* Run the paced simulation of m (opts: iterations, FIFO, capacities of the
 * unpaced run), judge keeping up against the unpaced result u, fit buffers
 * when asked.  An error is reported (cli_error) and its code returned. */
int sp_run(const pm_plan *scn, const pm_map *m, const pm_sim_opts *opts,
           const pm_sim_result *u, const sp_args *a, sp_state *st);
/* Write m with the fitted capacities to a->emit_map (whole or not at all). */
int sp_emit_map(const pm_plan *scn, pm_map *m, const sp_args *a, const sp_state *st);
void sp_text(const pm_plan *scn, const pm_map *m, const pm_bound *b, bool has_bound,
             const pm_sim_result *u, const sp_state *st);
void sp_json(pm_json *j, const pm_plan *scn, const pm_map *m, const sp_state *st);
void sp_free(sp_state *st);

#endif
