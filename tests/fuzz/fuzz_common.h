/*
 * fuzz_common.h - checks shared by the libFuzzer targets in tests/fuzz/.
 *
 * A target calls fuzz_check_diag() after every failed read: the contract
 * (reader.h, map.h, error.h) is a negative PM_E* code, no result, and a
 * one-line message.  A broken contract aborts, which libFuzzer reports as a
 * crash and saves the input.  Not part of the library; built only by
 * tests/fuzz/run.sh.
 */
#ifndef PACEMAP_FUZZ_COMMON_H
#define PACEMAP_FUZZ_COMMON_H

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "pacemap/error.h"

/* Largest input a target looks at: keeps every run fast (the readers' own
 * limits are tested by tests/check_bad_inputs.sh, not here). */
#define FUZZ_MAX_INPUT (1u << 16)

static void fuzz_fail(const char *what, const pm_diag *d)
{
    fprintf(stderr, "fuzz: contract broken: %s\n", what);
    if (d)
        fprintf(stderr, "fuzz: diag %s:%u:%u: %s\n", d->file, d->line, d->col, d->msg);
    abort();
}

/* A failed read: a known negative code and a one-line, non-empty message. */
static void fuzz_check_diag(int rc, const void *result, const pm_diag *d)
{
    if (rc >= 0)
        fuzz_fail("error code is not negative", d);
    if (rc < PM_EUNSUPPORTED)
        fuzz_fail("error code is not a PM_E* value", d);
    if (result)
        fuzz_fail("a result was returned with an error", d);
    if (rc == PM_ENOMEM)
        return; /* no message promised; cannot happen under the size cap */
    if (d->msg[0] == '\0')
        fuzz_fail("empty error message", d);
    if (strchr(d->msg, '\n') || strchr(d->file, '\n'))
        fuzz_fail("error message spans more than one line", d);
}

#endif
