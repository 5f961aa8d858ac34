/*
 * mapfile.c - `.map` files (docs/format.md): read them for a graph, write them.
 *
 *   file  := { line }
 *   line  := [ core | capacity ] [ "#" comment ] NEWLINE
 *   core  := "core" INT ":" { NAME [ "@" LAG ] }
 *   capacity := "capacity" NAME "->" NAME INT      (INT >= 1 tokens)
 *
 * LAG (decimal, 0 .. PM_MAP_MAX_LAG) is how many iterations the node runs
 * behind its core's round; a name without it has lag 0.
 * Tokens are separated by spaces or tabs; the colon may touch the number
 * or the first name.  Cores not listed are empty; a core may be listed once.
 * Errors point at the offending token (FILE:LINE:COL).  The structure and
 * its validation live in map.c; scheduling a map lives in schedtime.c.
 */
#include "pacemap/map.h"

#include <errno.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>

typedef struct mf_state {
    const pm_graph *g;
    const char *file;
    pm_diag *diag;
    uint32_t line;
    uint32_t *core_of;   /* per node, PM_NONE until listed */
    uint32_t *lag;       /* per node: its lag, 0 unless written NAME@L */
    uint32_t *line_of;   /* per core: line that listed it, 0 if none */
    uint32_t **lists;
    uint32_t *counts, *caps;
    uint32_t *ecap;      /* per edge: capacity, 0 = none (NULL until a capacity line) */
    uint32_t *cap_line;  /* per edge: the line that gave it */
} mf_state;

/* Cursor over one line. */
typedef struct mf_cur {
    const char *s, *end, *line0;
} mf_cur;

static int mf_error(mf_state *st, const mf_cur *c, const char *at, int rc,
                    const char *fmt, ...) __attribute__((format(printf, 5, 6)));

static int mf_error(mf_state *st, const mf_cur *c, const char *at, int rc,
                    const char *fmt, ...)
{
    char msg[sizeof st->diag->msg];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    pm_diag_set(st->diag, st->file, st->line, (uint32_t)(at - c->line0) + 1, "%s", msg);
    return rc;
}

static void mf_skip_space(mf_cur *c)
{
    while (c->s < c->end && (*c->s == ' ' || *c->s == '\t' || *c->s == '\r'))
        c->s++;
}

static bool mf_at_end(mf_cur *c)
{
    mf_skip_space(c);
    return c->s >= c->end || *c->s == '#';
}

/* Length of the token at the cursor: characters other than blanks, ':', '#'. */
static int mf_token(const mf_cur *c)
{
    int n = 0;
    while (c->s + n < c->end && !strchr(" \t\r:#", c->s[n]) && n < 4096)
        n++;
    return n;
}

/* "core" INT ":" -> *core */
static int mf_header(mf_state *st, mf_cur *c, uint32_t *core)
{
    int n = mf_token(c);
    if (n != 4 || memcmp(c->s, "core", 4) != 0)
        return mf_error(st, c, c->s, PM_ESYNTAX, "expected 'core N:' but found '%.*s'",
                        n ? (n > 40 ? 40 : n) : 1, c->s);
    c->s += n;
    mf_skip_space(c);
    const char *num = c->s;
    n = mf_token(c);
    uint64_t v = 0;
    bool ok = n > 0 && n < 11;
    for (int i = 0; ok && i < n; i++) {
        ok = num[i] >= '0' && num[i] <= '9';
        v = v * 10 + (uint64_t)(num[i] - '0');
    }
    if (!ok && n > 0)
        return mf_error(st, c, num, PM_ESYNTAX, "expected a core number after 'core', found '%.*s'",
                        n < 40 ? n : 40, num);
    if (!ok && c->s < c->end)
        return mf_error(st, c, num, PM_ESYNTAX,
                        "expected a core number after 'core', found '%c'", *c->s);
    if (!ok)
        return mf_error(st, c, num, PM_ESYNTAX,
                        "expected a core number after 'core', found end of line");
    if (v >= st->g->platform.ncores)
        return mf_error(st, c, num, PM_EMAP, "core %llu does not exist (the platform has %u cores)",
                        (unsigned long long)v, st->g->platform.ncores);
    if (st->line_of[v])
        return mf_error(st, c, num, PM_EMAP, "core %u is listed twice (first on line %u)",
                        (uint32_t)v, st->line_of[v]);
    st->line_of[v] = st->line;
    c->s += n;
    mf_skip_space(c);
    if (c->s >= c->end || *c->s != ':')
        return mf_error(st, c, c->s, PM_ESYNTAX, "expected ':' after 'core %u'", (uint32_t)v);
    c->s++;
    *core = (uint32_t)v;
    return PM_OK;
}

/* Whether core c may run v; the message says why not. */
static int mf_node_fits(mf_state *st, const mf_cur *c, const char *at, uint32_t v,
                        uint32_t core)
{
    const pm_graph *g = st->g;
    const pm_node *n = &g->nodes[v];
    const char *name = pm_graph_node_name(g, v);
    uint32_t cls = g->platform.core_class[core];
    if (n->pin_core != PM_NONE && n->pin_core != core)
        return mf_error(st, c, at, PM_EMAP, "node '%s' is pinned to core %u, not core %u",
                        name, n->pin_core, core);
    if (n->pin_class != PM_NONE && n->pin_class != cls)
        return mf_error(st, c, at, PM_EMAP, "node '%s' is pinned to class %s; core %u is %s",
                        name, g->platform.class_names[n->pin_class], core,
                        g->platform.class_names[cls]);
    if (pm_graph_cycles_on(g, v, cls) < 0)
        return mf_error(st, c, at, PM_EMAP, "node '%s' has no cycles for class %s (core %u)",
                        name, g->platform.class_names[cls], core);
    return PM_OK;
}

static int mf_append(mf_state *st, uint32_t core, uint32_t v)
{
    if (st->counts[core] == st->caps[core]) {
        uint32_t cap = st->caps[core] ? 2 * st->caps[core] : 8;
        uint32_t *p = realloc(st->lists[core], (size_t)cap * sizeof *p);
        if (!p)
            return PM_ENOMEM;
        st->lists[core] = p;
        st->caps[core] = cap;
    }
    st->lists[core][st->counts[core]++] = v;
    st->core_of[v] = core;
    return PM_OK;
}

/* The lag after "NAME@", `n` characters at `at`, into st->lag[v]. */
static int mf_lag(mf_state *st, const mf_cur *c, const char *at, int n, uint32_t v)
{
    uint64_t lag = 0;
    bool ok = n > 0;
    for (int i = 0; ok && i < n; i++) {
        ok = at[i] >= '0' && at[i] <= '9';
        if (lag <= PM_MAP_MAX_LAG) /* stop growing: the check below refuses it */
            lag = lag * 10 + (uint64_t)(at[i] - '0');
    }
    if (n == 0)
        return mf_error(st, c, at, PM_ESYNTAX,
                        "expected a lag (a whole number of iterations) after '@'");
    if (!ok)
        return mf_error(st, c, at, PM_ESYNTAX,
                        "expected a lag (a whole number of iterations) after '@', found '%.*s'",
                        n > 40 ? 40 : n, at);
    if (lag > PM_MAP_MAX_LAG)
        return mf_error(st, c, at, PM_EMAP, "lag %.*s is larger than the most a map may give (%u)",
                        n > 40 ? 40 : n, at, PM_MAP_MAX_LAG);
    st->lag[v] = (uint32_t)lag;
    return PM_OK;
}

/* The names after "core N:", each maybe with "@LAG". */
static int mf_names(mf_state *st, mf_cur *c, uint32_t core)
{
    while (!mf_at_end(c)) {
        const char *at = c->s;
        int tok = mf_token(c);
        const char *sign = memchr(at, '@', (size_t)tok);
        int n = sign ? (int)(sign - at) : tok;
        if (tok == 0 || n == 0)
            return mf_error(st, c, at, PM_ESYNTAX, "expected a node name, found '%c'", *at);
        uint32_t v = pm_graph_find(st->g, at, (size_t)n);
        if (v == PM_NONE)
            return mf_error(st, c, at, PM_ENAME, "unknown node '%.*s'", n > 80 ? 80 : n, at);
        if (st->core_of[v] != PM_NONE)
            return mf_error(st, c, at, PM_EMAP, "node '%.*s' appears twice (already on core %u)",
                            n, at, st->core_of[v]);
        int rc = mf_node_fits(st, c, at, v, core);
        if (rc == PM_OK && sign)
            rc = mf_lag(st, c, sign + 1, tok - n - 1, v);
        if (rc == PM_OK)
            rc = mf_append(st, core, v);
        if (rc != PM_OK)
            return rc;
        c->s += tok;
    }
    return PM_OK;
}

/* A node name at the cursor (the scenario's name characters). */
static int mf_name(mf_state *st, mf_cur *c, uint32_t *v)
{
    mf_skip_space(c);
    const char *at = c->s;
    int n = 0;
    while (at + n < c->end && (strchr("_.", at[n]) || (at[n] >= '0' && at[n] <= '9') ||
                               ((at[n] | 32) >= 'a' && (at[n] | 32) <= 'z')))
        n++;
    if (n == 0)
        return mf_error(st, c, at, PM_ESYNTAX, "expected a node name in a capacity line");
    *v = pm_graph_find(st->g, at, (size_t)n);
    if (*v == PM_NONE)
        return mf_error(st, c, at, PM_ENAME, "unknown node '%.*s'", n > 80 ? 80 : n, at);
    c->s += n;
    return PM_OK;
}

/* The capacity N after the names, 1 .. 2^31 - 1 tokens. */
static int mf_cap_value(mf_state *st, mf_cur *c, uint32_t *cap)
{
    mf_skip_space(c);
    const char *at = c->s;
    int n = mf_token(c);
    uint64_t v = 0;
    bool ok = n > 0 && n < 11;
    for (int i = 0; ok && i < n; i++) {
        ok = at[i] >= '0' && at[i] <= '9';
        v = v * 10 + (uint64_t)(at[i] - '0');
    }
    if (!ok || v == 0 || v > INT32_MAX)
        return mf_error(st, c, at, PM_ESYNTAX,
                        "expected a capacity of 1 to %d tokens, found '%.*s'", INT32_MAX,
                        n ? (n > 40 ? 40 : n) : 1, n ? at : " ");
    c->s += n;
    if (!mf_at_end(c))
        return mf_error(st, c, c->s, PM_ESYNTAX, "expected end of line after the capacity");
    *cap = (uint32_t)v;
    return PM_OK;
}

/* Set the capacity of every edge u -> v; a pair given twice is an error. */
static int mf_cap_store(mf_state *st, mf_cur *c, const char *at, uint32_t u, uint32_t v,
                        uint32_t cap)
{
    const pm_graph *g = st->g;
    bool any = false;
    for (uint32_t e = 0; e < g->nedges; e++) {
        if (g->edges[e].src != u || g->edges[e].dst != v)
            continue;
        if (st->cap_line[e])
            return mf_error(st, c, at, PM_EMAP, "capacity of '%s' -> '%s' given twice (first "
                            "on line %u)", pm_graph_node_name(g, u), pm_graph_node_name(g, v),
                            st->cap_line[e]);
        st->ecap[e] = cap, st->cap_line[e] = st->line, any = true;
    }
    if (!any)
        return mf_error(st, c, at, PM_EMAP, "no edge '%s' -> '%s' in the scenario",
                        pm_graph_node_name(g, u), pm_graph_node_name(g, v));
    return PM_OK;
}

/* capacity := "capacity" NAME "->" NAME INT */
static int mf_capacity(mf_state *st, mf_cur *c)
{
    const pm_graph *g = st->g;
    const char *at = c->s;
    if (!pm_graph_is_single_rate(g))
        return mf_error(st, c, at, PM_EUNSUPPORTED,
                        "capacity lines need a single-rate scenario");
    if (!st->ecap) {
        st->ecap = calloc((size_t)g->nedges + 1, sizeof *st->ecap);
        st->cap_line = calloc((size_t)g->nedges + 1, sizeof *st->cap_line);
        if (!st->ecap || !st->cap_line)
            return PM_ENOMEM;
    }
    c->s += 8;
    uint32_t u = 0, v = 0, cap = 0;
    int rc = mf_name(st, c, &u);
    if (rc)
        return rc;
    mf_skip_space(c);
    if (c->end - c->s < 2 || memcmp(c->s, "->", 2) != 0)
        return mf_error(st, c, c->s, PM_ESYNTAX, "expected '->' in a capacity line");
    c->s += 2;
    mf_skip_space(c);
    const char *pair = c->s;
    rc = mf_name(st, c, &v);
    if (!rc)
        rc = mf_cap_value(st, c, &cap);
    return rc ? rc : mf_cap_store(st, c, pair, u, v, cap);
}

static int mf_line(mf_state *st, const char *s, const char *end)
{
    mf_cur c = {s, end, s};
    if (mf_at_end(&c))
        return PM_OK;
    if (end - c.s > 8 && memcmp(c.s, "capacity", 8) == 0 &&
        (c.s[8] == ' ' || c.s[8] == '\t'))
        return mf_capacity(st, &c);
    uint32_t core = 0;
    int rc = mf_header(st, &c, &core);
    return rc == PM_OK ? mf_names(st, &c, core) : rc;
}

static int mf_parse(mf_state *st, const char *text, size_t len)
{
    const char *p = text, *end = text + len;
    int rc = PM_OK;
    while (rc == PM_OK && p < end) {
        const char *nl = memchr(p, '\n', (size_t)(end - p));
        const char *le = nl ? nl : end;
        st->line++;
        const char *nul = memchr(p, '\0', (size_t)(le - p));
        if (nul) {
            mf_cur c = {p, le, p};
            return mf_error(st, &c, nul, PM_ESYNTAX, "binary file: NUL byte");
        }
        rc = mf_line(st, p, le);
        p = nl ? nl + 1 : end;
    }
    for (uint32_t v = 0; rc == PM_OK && v < st->g->nnodes; v++) {
        if (st->core_of[v] == PM_NONE) {
            pm_diag_set(st->diag, st->file, st->line ? st->line : 1, 1,
                        "node '%s' is missing from the map (every node must appear once)",
                        pm_graph_node_name(st->g, v));
            rc = PM_EMAP;
        }
    }
    return rc;
}

static void mf_free(mf_state *st, uint32_t ncores)
{
    for (uint32_t c = 0; st->lists && c < ncores; c++)
        free(st->lists[c]);
    free(st->lists);
    free(st->counts);
    free(st->caps);
    free(st->core_of);
    free(st->lag);
    free(st->line_of);
    free(st->ecap);
    free(st->cap_line);
}

int pm_map_read_string(const char *text, size_t len, const char *name,
                       const pm_graph *g, pm_map **out, pm_diag *diag)
{
    *out = NULL;
    uint32_t P = g->platform.ncores;
    mf_state st = {.g = g, .file = name ? name : "", .diag = diag};
    st.core_of = malloc(((size_t)g->nnodes + 1) * sizeof *st.core_of);
    st.lag = calloc((size_t)g->nnodes + 1, sizeof *st.lag);
    st.line_of = calloc((size_t)P + 1, sizeof *st.line_of);
    st.lists = calloc((size_t)P + 1, sizeof *st.lists);
    st.counts = calloc((size_t)P + 1, sizeof *st.counts);
    st.caps = calloc((size_t)P + 1, sizeof *st.caps);
    int rc = PM_ENOMEM;
    if (st.core_of && st.lag && st.line_of && st.lists && st.counts && st.caps) {
        for (uint32_t v = 0; v < g->nnodes; v++)
            st.core_of[v] = PM_NONE;
        rc = mf_parse(&st, text, len);
    }
    if (rc == PM_OK)
        rc = pm_map_create(P, g->nnodes, (const uint32_t *const *)st.lists, st.counts, out);
    if (rc == PM_OK)
        memcpy((*out)->lag, st.lag, (size_t)g->nnodes * sizeof *st.lag);
    if (rc == PM_OK && st.ecap)
        (*out)->cap = st.ecap, st.ecap = NULL;
    if (rc == PM_OK && (rc = pm_map_check(*out, g, diag)) != PM_OK) {
        pm_map_destroy(*out);
        *out = NULL;
    }
    mf_free(&st, P);
    return rc;
}

#define MF_MAX_BYTES ((size_t)1 << 30)

int pm_map_read_file(const char *path, const pm_graph *g, pm_map **out, pm_diag *diag)
{
    *out = NULL;
    FILE *f = fopen(path, "rb");
    if (!f) {
        pm_diag_set(diag, path, 0, 0, "cannot open file: %s", strerror(errno));
        return PM_EIO;
    }
    int read_errno = 0;
    size_t cap = 4096, len = 0;
    char *buf = malloc(cap);
    int rc = buf ? PM_OK : PM_ENOMEM;
    while (rc == PM_OK) {
        if (len == cap) {
            char *nb = cap < MF_MAX_BYTES ? realloc(buf, cap * 2) : NULL;
            if (!nb) {
                rc = cap < MF_MAX_BYTES ? PM_ENOMEM : PM_ELIMIT;
                break;
            }
            buf = nb;
            cap *= 2;
        }
        size_t got = fread(buf + len, 1, cap - len, f);
        len += got;
        if (got == 0) {
            read_errno = ferror(f) ? errno : 0;
            break;
        }
    }
    if (rc == PM_OK && ferror(f))
        rc = PM_EIO;
    fclose(f);
    if (rc == PM_OK)
        rc = pm_map_read_string(buf, len, path, g, out, diag);
    else
        pm_diag_set(diag, path, 0, 0, "cannot read file: %s",
                    read_errno ? strerror(read_errno) : pm_error_name(rc));
    free(buf);
    return rc;
}

/* One line per pair of nodes, at its first edge: the largest capacity of
 * the pair's edges (the reader gives a line's capacity to all of them). */
static void mf_write_caps(const pm_map *m, const pm_graph *g, FILE *out)
{
    for (uint32_t e = 0; m->cap && e < g->nedges; e++) {
        const pm_edge *ed = &g->edges[e];
        uint32_t most = 0;
        bool first = true;
        for (uint32_t f = 0; f < g->nedges; f++)
            if (g->edges[f].src == ed->src && g->edges[f].dst == ed->dst) {
                first &= f >= e;
                most = m->cap[f] > most ? m->cap[f] : most;
            }
        if (first && most)
            fprintf(out, "capacity %s -> %s %u\n", pm_graph_node_name(g, ed->src),
                    pm_graph_node_name(g, ed->dst), most);
    }
}

int pm_map_write(const pm_map *m, const pm_graph *g, FILE *out)
{
    fputs("# core: nodes in execution order\n", out);
    for (uint32_t c = 0; c < m->ncores; c++) {
        fprintf(out, "core %u:", c);
        for (uint32_t i = m->off[c]; i < m->off[c + 1]; i++)
        {
            uint32_t v = m->order[i];
            fprintf(out, " %s", pm_graph_node_name(g, v));
            if (m->lag[v]) /* lag 0 is the plain name: maps without lags read as before */
                fprintf(out, "@%u", m->lag[v]);
        }
        fputc('\n', out);
    }
    mf_write_caps(m, g, out);
    return ferror(out) ? PM_EIO : PM_OK;
}
