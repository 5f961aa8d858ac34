/*
 * reader.c - the scenario reader's driver: files and strings into lines,
 * lines into the parser (reader_stmt.c), then the whole-file checks.
 *
 * A file is read in 1 MiB pieces into one buffer that is reused, so the
 * reader's memory does not grow with the file and nothing of its text is
 * kept once a line is parsed (node names are copied into the graph).  Lines
 * end with LF or CR LF; the last line may lack its ending.  This file does
 * not know the grammar: see reader_stmt.c and lexer.c.
 */
#include "reader_internal.h"

#include "pacemap/reader.h"

#include <errno.h>
#include <fcntl.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#define READER_CHUNK (1u << 20) /* must exceed PM_READER_MAX_LINE + 2 */

static const reader_limits reader_default_limits = { PM_GRAPH_MAX_NODES, PM_GRAPH_MAX_EDGES };

static int reader_init(reader_state *st, const char *name, const reader_limits *lim,
                       pm_diag *diag)
{
    memset(st, 0, sizeof *st);
    st->diag = diag;
    st->file = name ? name : "";
    st->lim = *lim;
    st->g = pm_graph_create(st->file);
    if (st->g) /* one DMA-like transfer per producer firing unless `comm transfer=token` */
        st->g->platform.block_transfers = true;
    /* a full batch plus one more line of the longest chain */
    size_t refs = READER_BATCH + READER_MAX_CHAIN;
    st->ref_text = malloc(refs * sizeof *st->ref_text);
    st->ref_len = malloc(refs * sizeof *st->ref_len);
    st->ref_col = malloc(refs * sizeof *st->ref_col);
    st->ref_id = malloc(refs * sizeof *st->ref_id);
    st->elines = malloc((READER_BATCH + 1) * sizeof *st->elines);
    st->nlines = malloc((READER_BATCH + 1) * sizeof *st->nlines);
    st->rows = malloc((READER_BATCH + 1) * READER_MAX_CLASSES * sizeof *st->rows);
    if (st->g && st->ref_text && st->ref_len && st->ref_col && st->ref_id && st->elines &&
        st->nlines && st->rows)
        return PM_OK;
    pm_diag_set(diag, st->file, 0, 0, "out of memory");
    return st->rc = PM_ENOMEM;
}

/* Free the reader's scratch; hand over the graph on success, else free it. */
static int reader_done(reader_state *st, pm_graph **out)
{
    free(st->ref_text);
    free(st->ref_len);
    free(st->ref_col);
    free(st->ref_id);
    free(st->elines);
    free(st->nlines);
    free(st->rows);
    free(st->pins);
    free(st->class_col);
    if (st->rc == PM_OK) {
        *out = st->g;
        return PM_OK;
    }
    pm_graph_destroy(st->g);
    return st->rc;
}

/* An error stopped a line while earlier lines wait for their lookup: an
 * error there (an unknown or duplicate name) comes first in the file, so it
 * is the one reported. */
static void reader_flush_before_error(reader_state *st)
{
    pm_diag saved;
    int rc = st->rc;
    if (st->diag)
        saved = *st->diag;
    st->rc = PM_OK;
    if (reader_flush(st) != PM_OK)
        return;
    st->rc = rc;
    if (st->diag)
        *st->diag = saved;
}

/* Parse the whole lines of buf[0..len); *used = bytes consumed.  Unless
 * `eof`, a last line without its LF is left for the next piece. */
static int reader_feed(reader_state *st, const char *buf, size_t len, bool eof, size_t *used)
{
    size_t pos = 0;
    /* editors on some systems start files with a UTF-8 byte-order mark */
    if (st->lineno == 0 && len >= 3 && memcmp(buf, "\xEF\xBB\xBF", 3) == 0)
        pos = 3;
    while (pos < len && st->rc == PM_OK) {
        const char *nl = memchr(buf + pos, '\n', len - pos);
        size_t end = nl ? (size_t)(nl - buf) : len;
        if (!nl && !eof && len - pos <= PM_READER_MAX_LINE + 1)
            break;
        if (st->lineno < UINT32_MAX)
            st->lineno++;
        size_t n = end - pos;
        if (nl && n && buf[end - 1] == '\r')
            n--;
        if (n > PM_READER_MAX_LINE)
            return reader_fail(st, PM_ELIMIT, PM_READER_MAX_LINE + 1,
                               "line too long: more than %d bytes", PM_READER_MAX_LINE);
        st->line = buf + pos;
        st->line_len = n;
        st->pos = 0;
        if (reader_parse_line(st) && (st->nelines || st->nnlines))
            reader_flush_before_error(st);
        pos = nl ? end + 1 : len;
    }
    *used = pos;
    if (st->rc == PM_OK)
        reader_flush(st); /* the pending names point into buf */
    return st->rc;
}

/* The pin=N attributes, now that the core count is final. */
static int reader_check_pins(reader_state *st)
{
    const pm_platform *p = &st->g->platform;
    for (size_t i = 0; i < st->npins; i++) {
        const reader_pin *pin = &st->pins[i];
        const char *name = pm_graph_node_name(st->g, pin->node);
        st->lineno = pin->line;
        if (pin->core >= (int64_t)p->ncores)
            return reader_fail(st, PM_EPLATFORM, pin->col,
                               "node '%s' is pinned to core %lld, but the platform has only "
                               "%u core%s", name, (long long)pin->core, p->ncores,
                               p->ncores == 1 ? "" : "s");
        uint32_t c = p->core_class[pin->core];
        if (pm_graph_cycles_on(st->g, pin->node, c) == PM_CANNOT_RUN)
            return reader_fail(st, PM_EPLATFORM, pin->col,
                               "node '%s' is pinned to core %lld of class '%s', but has no "
                               "cycles for it", name, (long long)pin->core, p->class_names[c]);
    }
    return PM_OK;
}

/* Every declared class must be able to run some node. */
static int reader_check_classes(reader_state *st)
{
    const pm_graph *g = st->g;
    const pm_platform *p = &g->platform;
    if (!p->classes_named)
        return PM_OK;
    for (uint32_t c = 0; c < p->nclasses; c++) {
        uint32_t v = 0;
        while (v < g->nnodes && pm_graph_cycles_on(g, v, c) == PM_CANNOT_RUN)
            v++;
        if (v < g->nnodes)
            continue;
        st->lineno = st->seen_procs;
        return reader_fail(st, PM_EPLATFORM, st->class_col[c],
                           "class '%s' can run no node (no node gives cycles for it)",
                           p->class_names[c]);
    }
    return PM_OK;
}

int reader_finish(reader_state *st)
{
    if (st->rc)
        return st->rc;
    if (st->g->nnodes == 0) {
        st->lineno = 0;
        return reader_fail(st, PM_ESYNTAX, 0,
                           "no nodes (a scenario needs at least one 'node' line)");
    }
    if (reader_check_pins(st) || reader_check_classes(st))
        return st->rc;
    int rc = pm_graph_finalize(st->g);
    if (rc) {
        st->lineno = 0;
        return reader_fail(st, rc, 0, "out of memory");
    }
    return PM_OK;
}

int reader_read_string_limited(const char *text, size_t len, const char *name,
                               const reader_limits *lim, pm_graph **out, pm_diag *diag)
{
    reader_state st;
    size_t used;
    *out = NULL;
    pm_diag_clear(diag);
    if (reader_init(&st, name, lim, diag) == PM_OK &&
        reader_feed(&st, text, len, true, &used) == PM_OK)
        reader_finish(&st);
    return reader_done(&st, out);
}

int pm_reader_read_string(const char *text, size_t len, const char *name, pm_graph **out,
                            pm_diag *diag)
{
    return reader_read_string_limited(text, len, name, &reader_default_limits, out, diag);
}

static int reader_io_error(reader_state *st, const char *what, int err)
{
    st->lineno = 0;
    return reader_fail(st, PM_EIO, 0, "cannot %s file: %s", what, strerror(err));
}

/* Read fd piece by piece through one buffer; whole lines go to the parser. */
static int reader_read_fd(reader_state *st, int fd)
{
    char *buf = malloc(READER_CHUNK);
    size_t have = 0, used;
    if (!buf)
        return reader_fail(st, PM_ENOMEM, 0, "out of memory");
    for (;;) {
        ssize_t r = read(fd, buf + have, READER_CHUNK - have);
        if (r < 0 && errno == EINTR)
            continue;
        if (r < 0) {
            reader_io_error(st, "read", errno);
            break;
        }
        have += (size_t)r;
        if (reader_feed(st, buf, have, r == 0, &used) || r == 0)
            break;
        memmove(buf, buf + used, have - used);
        have -= used;
    }
    free(buf);
    return st->rc;
}

int pm_reader_read_file(const char *path, pm_graph **out, pm_diag *diag)
{
    reader_state st;
    struct stat sb;
    *out = NULL;
    pm_diag_clear(diag);
    if (reader_init(&st, path, &reader_default_limits, diag) != PM_OK)
        return reader_done(&st, out);
    int fd = open(path, O_RDONLY | O_CLOEXEC);
    if (fd < 0)
        reader_io_error(&st, "open", errno);
    else if (fstat(fd, &sb) != 0)
        reader_io_error(&st, "read", errno);
    else if (S_ISDIR(sb.st_mode))
        reader_io_error(&st, "read", EISDIR);
    else if (reader_read_fd(&st, fd) == PM_OK)
        reader_finish(&st);
    if (fd >= 0)
        close(fd);
    return reader_done(&st, out);
}
