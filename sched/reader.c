/*
 * reader.c - scenario reader (placeholder until the full reader lands).
 */
#include "pacemap/reader.h"

int pm_scenario_read_file(const char *path, pm_graph **out, pm_diag *diag)
{
    *out = NULL;
    pm_diag_set(diag, path, 0, 0, "scenario reader not available yet");
    return PM_EUNSUPPORTED;
}

int pm_scenario_read_string(const char *text, size_t len, const char *name,
                            pm_graph **out, pm_diag *diag)
{
    (void)text;
    (void)len;
    *out = NULL;
    pm_diag_set(diag, name, 0, 0, "scenario reader not available yet");
    return PM_EUNSUPPORTED;
}
