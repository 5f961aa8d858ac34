/*
 * outfile_probe.c - drives pm_outfile (include/pacemap/outfile.h) for
 * tests/check_outfiles.sh, so the atomic-output rule is tested at the
 * library level even before the commands that write files exist.
 *
 * usage: outfile_probe PATH MODE
 *   commit  write 1000 numbered lines, then pm_outfile_commit
 *   abort   write 1000 numbered lines, then pm_outfile_abort
 *   kill    write 1000 numbered lines, flush, then die by SIGKILL
 * Prints a failed open or commit as "FILE:LINE:COL: error: MSG" and exits 1.
 * A test helper, not part of the library.
 */
#include <signal.h>
#include <stdio.h>
#include <string.h>
#include <unistd.h>

#include "pacemap/outfile.h"

static int probe_fail(const pm_diag *d)
{
    fprintf(stderr, "%s:%u:%u: error: %s\n", d->file, d->line, d->col, d->msg);
    return 1;
}

int main(int argc, char **argv)
{
    if (argc != 3) {
        fputs("usage: outfile_probe PATH commit|abort|kill\n", stderr);
        return 2;
    }
    pm_outfile f;
    pm_diag d;
    pm_diag_clear(&d);
    if (pm_outfile_open(&f, argv[1], &d) != PM_OK)
        return probe_fail(&d);
    for (int i = 1; i <= 1000; i++)
        fprintf(f.fp, "line %d of the probe output\n", i);
    if (strcmp(argv[2], "abort") == 0) {
        pm_outfile_abort(&f);
        return 0;
    }
    if (strcmp(argv[2], "kill") == 0) {
        fflush(f.fp);
        kill(getpid(), SIGKILL);
    }
    if (pm_outfile_commit(&f, &d) != PM_OK)
        return probe_fail(&d);
    return 0;
}
