/*
 * diag.c - filling and clearing the diagnostic record (diag.h).
 */
#include "pacemap/diag.h"

#include <stdarg.h>
#include <stdio.h>
#include <string.h>

void pm_diag_clear(pm_diag *d)
{
    if (d)
        memset(d, 0, sizeof *d);
}

void pm_diag_set(pm_diag *d, const char *file, uint32_t line, uint32_t col,
                 const char *fmt, ...)
{
    if (!d)
        return;
    snprintf(d->file, sizeof d->file, "%s", file ? file : "");
    d->line = line;
    d->col = col;
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(d->msg, sizeof d->msg, fmt, ap);
    va_end(ap);
}
