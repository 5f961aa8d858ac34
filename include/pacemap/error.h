/*
 * error.h - the one error convention of pacemap.
 *
 * Every library function that can fail returns an int: PM_OK (0) on success,
 * a negative PM_E* code on failure; results come back through out-parameters.
 * Functions that can point at a place in an input also fill a caller-supplied
 * pm_diag (diag.h).  The library never prints: only the command-line front end writes
 * the diagnostic, as "FILE:LINE:COL: error: message".
 */
#ifndef PACEMAP_ERROR_H
#define PACEMAP_ERROR_H

#include "pacemap/diag.h"

typedef enum pm_err {
    PM_OK = 0,
    PM_ENOMEM = -1,        /* out of memory */
    PM_EIO = -2,           /* a file cannot be opened, read or written */
    PM_ESYNTAX = -3,       /* input text does not follow the grammar */
    PM_ENAME = -4,         /* unknown, duplicate or malformed name */
    PM_ERANGE = -5,        /* a value is out of its range, or arithmetic overflowed */
    PM_ELIMIT = -6,        /* a documented size limit is exceeded */
    PM_EZERODELAY = -7,    /* a loop carries no delay: the graph cannot run */
    PM_EINCONSISTENT = -8, /* multirate rates admit no repetition vector */
    PM_EDEADLOCK = -9,     /* no firing can ever start */
    PM_EPLATFORM = -10,    /* cores, classes or pins do not fit together */
    PM_EMAP = -11,         /* a map does not fit its graph */
    PM_EINVAL = -12,       /* the API was misused (a bug in the caller) */
    PM_EUNSUPPORTED = -13  /* valid input this command cannot handle */
} pm_err;

/* Short, stable English name of an error code; never NULL. */
const char *pm_error_name(int err);

#endif
