/*
 * error.c - names of error codes (the diagnostic record is in diag.c).
 */
#include "pacemap/error.h"

const char *pm_error_name(int err)
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
