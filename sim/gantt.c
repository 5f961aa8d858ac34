/*
 * gantt.c - Gantt chart writers (placeholder until the writers land).
 */
#include "pacemap/gantt.h"
#include "pacemap/error.h"

int pm_gantt_write_svg(const pm_gantt *chart, FILE *out)
{
    (void)chart;
    (void)out;
    return PM_EUNSUPPORTED;
}

int pm_gantt_write_text(const pm_gantt *chart, FILE *out, int width)
{
    (void)chart;
    (void)out;
    (void)width;
    return PM_EUNSUPPORTED;
}
