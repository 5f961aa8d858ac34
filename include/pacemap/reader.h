/*
 * reader.h - the scenario reader: `.pace` text into a pm_graph.
 *
 * The reader checks the whole format: syntax, names, values and limits
 * (docs/format.md).  On failure it returns a negative PM_E* code, fills
 * `diag` with the file, line, column and a one-line message, and returns no
 * graph.  On success *out is a finalized graph the caller destroys.
 * Thread-safe (no global state).
 */
#ifndef PACEMAP_READER_H
#define PACEMAP_READER_H

#include <stddef.h>

#include "pacemap/error.h"
#include "pacemap/graph.h"

#define PM_READER_MAX_LINE 65536          /* bytes in one line */
#define PM_READER_MAX_NAME 256            /* bytes in one name */

/* Read the file at `path`. */
int pm_reader_read_file(const char *path, pm_graph **out, pm_diag *diag);

/* Read text[0..len) as if it came from a file called `name`. */
int pm_reader_read_string(const char *text, size_t len, const char *name,
                            pm_graph **out, pm_diag *diag);

#endif
