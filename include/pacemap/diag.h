/*
 * diag.h - where and why an input is wrong: the diagnostic record that
 * library functions fill for the caller to print (error.h has the codes).
 *
 * Ownership: a pm_diag is a plain caller-owned struct with no pointers.
 * Thread safety: each call touches only the record it is given.
 */
#ifndef PACEMAP_DIAG_H
#define PACEMAP_DIAG_H

#include <stdint.h>

/*
 * Where and why an input is wrong.  `file` is copied (truncated if longer
 * than the buffer); line and col are 1-based, 0 when they do not apply.
 */
typedef struct pm_diag {
    char file[512];
    uint32_t line;
    uint32_t col;
    char msg[512];
} pm_diag;

/* Fill `d` (may be NULL: then nothing happens).  printf-style message. */
void pm_diag_set(pm_diag *d, const char *file, uint32_t line, uint32_t col,
                 const char *fmt, ...)
    __attribute__((format(printf, 5, 6)));

/* Clear `d` to an empty diagnostic (may be NULL). */
void pm_diag_clear(pm_diag *d);

#endif
