/*
 * sim.c - self-timed discrete-event simulator (placeholder until the engine lands).
 */
#include "pacemap/sim.h"

#include <stdlib.h>
#include <string.h>

int pm_sim_run(const pm_graph *g, const pm_map *m, const pm_sim_opts *opts,
               pm_sim_result *out, pm_diag *diag)
{
    (void)g;
    (void)m;
    (void)opts;
    memset(out, 0, sizeof *out);
    pm_diag_set(diag, "", 0, 0, "simulator not available yet");
    return PM_EUNSUPPORTED;
}

void pm_sim_result_free(pm_sim_result *r)
{
    if (!r)
        return;
    free(r->waits);
    free(r->core_busy);
    free(r->utilisation);
    free(r->max_tokens);
    free(r->critical);
    free(r->trace);
    free(r->transfers);
    memset(r, 0, sizeof *r);
}

const char *pm_sim_cause_name(pm_sim_cause c)
{
    static const char *const names[] = { "start", "order", "edge", "bus", "fifo", "bus-busy" };
    return (unsigned)c < sizeof names / sizeof names[0] ? names[c] : "?";
}
