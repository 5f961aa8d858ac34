/*
 * error.c - names of error codes and the diagnostic record.
 */
#include "pacemap/error.h"

#include <stdarg.h>
#include <stdio.h>
#include <string.h>

const char *pm_strerror(int err)
{
    switch (err) {
    case PM_OK: return "success";
    case PM_ENOMEM: return "out of memory";
    case PM_EIO: return "input/output error";
    case PM_ESYNTAX: return "syntax error";
    case PM_ENAME: return "bad name";
    case PM_ERANGE: return "value out of range";
    case PM_ELIMIT: return "size limit exceeded";
    case PM_EZERODELAY: return "loop without delay";
    case PM_EINCONSISTENT: return "inconsistent rates";
    case PM_EDEADLOCK: return "deadlock";
    case PM_EPLATFORM: return "platform mismatch";
    case PM_EMAP: return "bad map";
    case PM_EINVAL: return "invalid argument";
    case PM_EUNSUPPORTED: return "unsupported";
    default: return "unknown error";
    }
}

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
