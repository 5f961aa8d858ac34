/*
 * outfile.h - output files that appear whole or not at all.
 *
 * pm_outfile_open() writes into a temporary file beside the target;
 * pm_outfile_commit() flushes, syncs and renames it into place; on any
 * error pm_outfile_abort() removes the temporary file, so an error never
 * leaves a partial or empty file and an existing file stays untouched.
 * Not thread-safe per handle.
 */
#ifndef PACEMAP_OUTFILE_H
#define PACEMAP_OUTFILE_H

#include <stdio.h>

#include "pacemap/error.h"

typedef struct pm_outfile {
    FILE *fp;        /* write here */
    char *path;      /* final path (owned) */
    char *tmp_path;  /* temporary path (owned) */
    char *buf;       /* the stream's buffer (owned; NULL: the default one) */
} pm_outfile;

/* Open a temporary file for `path`.  PM_EIO with `diag` naming the path
 * when the folder cannot be written. */
int pm_outfile_open(pm_outfile *f, const char *path, pm_diag *diag);

/* Close and rename into place; PM_EIO (and the temporary file removed) if
 * any write failed. Frees the handle's memory either way. */
int pm_outfile_commit(pm_outfile *f, pm_diag *diag);

/* Close and remove the temporary file; frees the handle's memory. */
void pm_outfile_abort(pm_outfile *f);

#endif
