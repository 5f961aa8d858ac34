/*
 * cmd_run_paced.c - the paced part of `pacemap run --paced`: the interval
 * of the scenario for the runner, the simulator's paced prediction with the
 * run's measured node times, and the report of both (text and JSON).  The
 * gating itself is the runner's (sim/runner/runner_paced.c); this file
 * calls and prints.  Only cmd_run.c uses it.
 */
#include "cmd_run_paced.h"

#include <stdio.h>

#include "cli.h"
#include "pacemap/fitbuf.h"

int crp_init(const pm_plan *scn, crp_state *p)
{
    pm_diag d;
    pm_diag_clear(&d);
    pm_rat iv;
    int rc = pm_fitbuf_interval(scn->source, &iv, &d);
    if (rc) {
        cli_error(&d);
        return cli_exit_for(rc);
    }
    if (pm_fitbuf_pace_init(scn, iv, 0, 1, &p->pace) != PM_OK) {
        pm_diag_set(&d, scn->source->file, 0, 0, "out of memory");
        cli_error(&d);
        return CLI_EXIT_INPUT;
    }
    p->on = true;
    return CLI_EXIT_OK;
}

void crp_free(crp_state *p)
{
    pm_fitbuf_pace_free(&p->pace);
}

void crp_predict(crp_state *p, const pm_graph *g, const pm_map *m, const double *node_ns,
                 double handoff_ns, double ns_per_cycle)
{
    p->model_ok = pm_runner_predict_paced(g, m, node_ns, handoff_ns, &p->pace, ns_per_cycle,
                                          &p->model, NULL) == PM_OK;
}

void crp_text(const crp_state *p, const pm_runner_result *r, double ns_per_cycle)
{
    if (!p->on || !r->paced)
        return;
    printf("paced              a sample every %.6g cycles = %.0f ns\n",
           pm_rat_to_double(p->pace.interval), pm_rat_to_double(p->pace.interval) * ns_per_cycle);
    printf("paced latency      %12.0f ns  median; p99 %.0f ns (release to last sink end)\n",
           r->paced_latency_ns_median, r->paced_latency_ns_p99);
    printf("                   %12s     min %.0f ns, max %.0f ns\n", "",
           r->paced_latency_ns_min, r->paced_latency_ns_max);
    printf("overruns           %12llu     measured\n", (unsigned long long)r->overruns);
    if (p->model_ok) {
        printf("paced model        %12.0f ns  max latency; p99 %.0f ns (simulator, in-run times)\n",
               p->model.latency_ns_max, p->model.latency_ns_p99);
        printf("                   %12s     min %.0f ns, %llu overruns in 1000 iterations\n", "",
               p->model.latency_ns_min, (unsigned long long)p->model.overruns);
    } else
        printf("paced model        not available (the simulator could not run the map)\n");
}

void crp_json(const crp_state *p, const pm_runner_result *r, pm_json *j)
{
    if (!p->on || !r->paced)
        return;
    pm_json_key(j, "paced");
    pm_json_object_begin(j);
    pm_json_key(j, "interval"); pm_json_rat(j, p->pace.interval);
    pm_json_key(j, "latency_ns");
    pm_json_object_begin(j);
    pm_json_key(j, "min"); pm_json_double(j, r->paced_latency_ns_min);
    pm_json_key(j, "median"); pm_json_double(j, r->paced_latency_ns_median);
    pm_json_key(j, "p99"); pm_json_double(j, r->paced_latency_ns_p99);
    pm_json_key(j, "max"); pm_json_double(j, r->paced_latency_ns_max);
    pm_json_object_end(j);
    pm_json_key(j, "overruns"); pm_json_uint(j, r->overruns);
    pm_json_key(j, "predicted");
    if (p->model_ok) {
        pm_json_object_begin(j);
        pm_json_key(j, "latency_ns_min"); pm_json_double(j, p->model.latency_ns_min);
        pm_json_key(j, "latency_ns_p99"); pm_json_double(j, p->model.latency_ns_p99);
        pm_json_key(j, "latency_ns_max"); pm_json_double(j, p->model.latency_ns_max);
        pm_json_key(j, "overruns"); pm_json_uint(j, p->model.overruns);
        pm_json_object_end(j);
    } else {
        pm_json_null(j);
    }
    pm_json_object_end(j);
}
