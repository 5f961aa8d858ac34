/*
 * sdf.c - multirate graphs (placeholder: single-rate graphs only, until the
 * balance-equation solver lands).
 */
#include "pacemap/sdf.h"

#include <stdlib.h>

int pm_sdf_repetition(const pm_graph *g, uint64_t **rep, pm_diag *diag)
{
    *rep = NULL;
    if (!pm_graph_is_single_rate(g)) {
        pm_diag_set(diag, g->file, 0, 0, "multirate graphs are not supported yet");
        return PM_EUNSUPPORTED;
    }
    uint64_t *r = malloc(((size_t)g->nnodes + 1) * sizeof *r);
    if (!r)
        return PM_ENOMEM;
    for (uint32_t v = 0; v < g->nnodes; v++)
        r[v] = 1;
    *rep = r;
    return PM_OK;
}
