/*
 * cmd_run_paced.h - `pacemap run --paced` (cmd_run_paced.c): set-up,
 * the simulator's paced prediction, text and JSON.  Only cmd_run.c uses it.
 */
#ifndef PACEMAP_CMD_RUN_PACED_H
#define PACEMAP_CMD_RUN_PACED_H

#include <stdbool.h>

#include "pacemap/json.h"
#include "pacemap/plan.h"
#include "pacemap/runner.h"
#include "pacemap/sim.h"

typedef struct crp_state {
    bool on;
    pm_sim_pace pace;             /* the plan's pace (pm_fitbuf_pace_init), no jitter */
    pm_runner_paced_model model;  /* the simulator's paced prediction */
    bool model_ok;
} crp_state;

/* The interval from the scenario's clock and rate; an exit status (1 with
 * a message when either is missing). */
int crp_init(const pm_plan *scn, crp_state *p);
void crp_free(crp_state *p);
void crp_predict(crp_state *p, const pm_graph *g, const pm_map *m, const double *node_ns,
                 double handoff_ns, double ns_per_cycle);
void crp_text(const crp_state *p, const pm_runner_result *r, double ns_per_cycle);
void crp_json(const crp_state *p, const pm_runner_result *r, pm_json *j);

#endif
