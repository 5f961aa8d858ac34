/*
 * outfile.c - write to a temporary file, rename into place on success.
 */
#include "pacemap/outfile.h"

#include <errno.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#define OUTFILE_BUF ((size_t)1 << 20)

static void outfile_free(pm_outfile *f)
{
    free(f->path);
    free(f->tmp_path);
    free(f->buf); /* only once the stream is closed */
    f->path = f->tmp_path = f->buf = NULL;
    f->fp = NULL;
}

int pm_outfile_open(pm_outfile *f, const char *path, pm_diag *diag)
{
    memset(f, 0, sizeof *f);
    size_t n = strlen(path);
    f->path = strdup(path);
    f->tmp_path = malloc(n + 16);
    if (!f->path || !f->tmp_path) {
        outfile_free(f);
        return PM_ENOMEM;
    }
    snprintf(f->tmp_path, n + 16, "%s.tmp.XXXXXX", path);
    int fd = mkstemp(f->tmp_path);
    if (fd < 0) {
        pm_diag_set(diag, path, 0, 0, "cannot write: %s", strerror(errno));
        outfile_free(f);
        return PM_EIO;
    }
    /* mkstemp makes 0600 files; an output should get the usual mode */
    mode_t um = umask(0);
    umask(um);
    (void)fchmod(fd, 0666 & ~um);
    f->fp = fdopen(fd, "w");
    if (!f->fp) {
        close(fd);
        unlink(f->tmp_path);
        pm_diag_set(diag, path, 0, 0, "cannot write: %s", strerror(errno));
        outfile_free(f);
        return PM_EIO;
    }
    /* maps and charts of a million nodes run to tens of megabytes: a large
     * buffer saves most write calls (without one, the default stays) */
    f->buf = malloc(OUTFILE_BUF);
    if (f->buf)
        setvbuf(f->fp, f->buf, _IOFBF, OUTFILE_BUF);
    return PM_OK;
}

int pm_outfile_commit(pm_outfile *f, pm_diag *diag)
{
    int bad = ferror(f->fp);
    bad |= fflush(f->fp) != 0;
    bad |= fsync(fileno(f->fp)) != 0 && errno != EINVAL;
    bad |= fclose(f->fp) != 0;
    if (!bad && rename(f->tmp_path, f->path) != 0)
        bad = 1;
    if (bad) {
        pm_diag_set(diag, f->path, 0, 0, "cannot write: %s", strerror(errno));
        unlink(f->tmp_path);
    }
    outfile_free(f);
    return bad ? PM_EIO : PM_OK;
}

void pm_outfile_abort(pm_outfile *f)
{
    if (f->fp) {
        fclose(f->fp);
        unlink(f->tmp_path);
    }
    outfile_free(f);
}
