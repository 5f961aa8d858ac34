/*
 * cmd_sweep_table.c - the sweep's one table, written as aligned text or as
 * CSV from the same list of columns: each column has a header for each
 * form and one function that writes its cell for either form.
 *
 * Text cells are short and rounded for reading (two decimals); CSV cells
 * give each number in the shortest form that reads back to the same double
 * (and each rational exactly as num/den beside it), so a spreadsheet sees
 * what the program computed.  What it does not do: the rest of the report
 * (cmd_sweep.c) or JSON (cmd_sweep_out.c).
 */
#include "cli.h"
#include "cmd_sweep_internal.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

enum { ST_TEXT = 1, ST_CSV = 2, ST_BOTH = 3, ST_CLASS = 4 };

typedef struct st_col {
    const char *text;     /* text header (NULL: built by the cell function) */
    const char *csv;      /* CSV header field(s) */
    int width;            /* text width; 0: the last column, as long as it is */
    unsigned where;       /* ST_TEXT, ST_CSV, ST_CLASS (only when one class's count
                             is swept) */
    void (*cell)(const sw_report *r, const pm_sweep_point *p, bool csv, char *buf, size_t n);
} st_col;

void sw_shortest(char *buf, size_t n, double x)
{
    if (!isfinite(x)) {
        snprintf(buf, n, "%s", "");
        return;
    }
    if (fabs(x) < 1e15 && x == floor(x)) {
        snprintf(buf, n, "%lld", (long long)x); /* "90", not "9e+01" */
        return;
    }
    for (int prec = 1; prec <= 17; prec++) {
        snprintf(buf, n, "%.*g", prec, x);
        if (strtod(buf, NULL) == x)
            return;
    }
}

/* Text: "30", "22.5"; CSV: shortest double, then num/den. */
static void st_rat(bool csv, char *buf, size_t n, pm_rat r)
{
    if (!csv) {
        sw_rat_text(buf, n, r);
        return;
    }
    char d[40];
    sw_shortest(d, sizeof d, pm_rat_to_double(r));
    snprintf(buf, n, "%s,%lld/%lld", d, (long long)r.num, (long long)r.den);
}

static void st_procs(const sw_report *r, const pm_sweep_point *p, bool csv, char *buf,
                     size_t n)
{
    (void)r, (void)csv;
    snprintf(buf, n, "%u", p->procs);
}

static void st_count(const sw_report *r, const pm_sweep_point *p, bool csv, char *buf,
                     size_t n)
{
    (void)r, (void)csv;
    snprintf(buf, n, "%u", p->count);
}

static void st_period(const sw_report *r, const pm_sweep_point *p, bool csv, char *buf,
                      size_t n)
{
    (void)r;
    st_rat(csv, buf, n, p->period);
    if (!csv && !p->steady)
        strncat(buf, "~", n - strlen(buf) - 1);
}

static void st_lower(const sw_report *r, const pm_sweep_point *p, bool csv, char *buf,
                     size_t n)
{
    (void)r;
    st_rat(csv, buf, n, p->floors.lower_bound);
}

static void st_floor(const sw_report *r, const pm_sweep_point *p, bool csv, char *buf,
                     size_t n)
{
    (void)r;
    st_rat(csv, buf, n, p->floors.map_floor);
}

static void st_loop(const sw_report *r, const pm_sweep_point *p, bool csv, char *buf,
                    size_t n)
{
    (void)r;
    if (p->floors.has_loop)
        st_rat(csv, buf, n, p->floors.loop);
    else
        snprintf(buf, n, "%s", csv ? "," : "-");
}

/* "optimal" when the steady period equals the proven map floor, else how
 * far above it (exact, pm_bound_gap). */
static void st_gap(const sw_report *r, const pm_sweep_point *p, bool csv, char *buf, size_t n)
{
    (void)r;
    bool opt = false;
    pm_rat pct;
    if (pm_bound_gap(p->period, p->floors.map_floor, &opt, &pct) != PM_OK)
        snprintf(buf, n, "%s", csv ? "" : "-");
    else if (csv)
        sw_shortest(buf, n, pm_rat_to_double(pct));
    else if (opt && p->steady)
        snprintf(buf, n, "optimal");
    else
        snprintf(buf, n, "+%.3g%%", pm_rat_to_double(pct));
}

static void st_speedup(const sw_report *r, const pm_sweep_point *p, bool csv, char *buf,
                       size_t n)
{
    (void)r;
    if (csv)
        sw_shortest(buf, n, p->speedup);
    else if (isfinite(p->speedup))
        snprintf(buf, n, "%.2f", p->speedup);
    else
        snprintf(buf, n, "-"); /* a zero period has no speedup */
}

static void st_eff(const sw_report *r, const pm_sweep_point *p, bool csv, char *buf,
                   size_t n)
{
    (void)r;
    if (csv)
        sw_shortest(buf, n, p->efficiency);
    else if (isfinite(p->efficiency))
        snprintf(buf, n, "%.1f%%", 100.0 * p->efficiency);
    else
        snprintf(buf, n, "-");
}

static void st_idle(const sw_report *r, const pm_sweep_point *p, bool csv, char *buf,
                    size_t n)
{
    (void)r, (void)csv;
    snprintf(buf, n, "%u", p->idle_cores);
}

/* Text: the kind, and for a mapping its gap to the map floor. */
static void st_limit(const sw_report *r, const pm_sweep_point *p, bool csv, char *buf,
                     size_t n)
{
    const char *kind = pm_sweep_limit_name(p->limit.kind);
    if (csv) {
        int k = snprintf(buf, n, "%s,", kind);
        for (uint32_t i = 0; i < p->limit.nnodes && k > 0 && (size_t)k < n; i++)
            k += snprintf(buf + k, n - (size_t)k, "%s%s", i ? " " : "",
                          pm_graph_node_name(r->g, p->limit.nodes[i]));
        return;
    }
    bool opt = false;
    pm_rat pct;
    if (p->limit.kind == PM_LIMIT_MAPPING &&
        pm_bound_gap(p->period, p->floors.map_floor, &opt, &pct) == PM_OK && !opt)
        snprintf(buf, n, "%s +%.1f %%", kind, pm_rat_to_double(pct));
    else
        snprintf(buf, n, "%s", kind);
}

/* The iteration bound is the same for every P: the text gives it above
 * the table, the CSV in a column. */
static const st_col st_cols[] = {
    {"P", "procs", 4, ST_BOTH, st_procs},
    {NULL, "count", 5, ST_BOTH | ST_CLASS, st_count},
    {"period", "period,period_exact", 11, ST_BOTH, st_period},
    {"lower bound", "lower_bound,lower_bound_exact", 11, ST_BOTH, st_lower},
    {"map floor", "map_floor,map_floor_exact", 10, ST_BOTH, st_floor},
    {NULL, "iteration_bound,iteration_bound_exact", 0, ST_CSV, st_loop},
    {"vs floor", "above_map_floor_pct", 9, ST_BOTH, st_gap},
    {"speedup", "speedup", 7, ST_BOTH, st_speedup},
    {NULL, "efficiency", 12, ST_BOTH, st_eff},
    {"idle", "idle_cores", 4, ST_BOTH, st_idle},
    {"limit", "limit,limit_nodes", 0, ST_BOTH, st_limit},
};
#define ST_NCOLS (sizeof st_cols / sizeof st_cols[0])

/* The headers built from the sweep: the class's name, the base of the
 * efficiency. */
static const char *st_head(const sw_report *r, const st_col *c, char *buf, size_t n)
{
    if (c->text)
        return c->text;
    if (c->cell == st_count)
        snprintf(buf, n, "%.*s", c->width, r->g->platform.class_names[r->s->vary_class]);
    else
        snprintf(buf, n, "eff. vs P=%u", r->s->points[0].procs);
    return buf;
}

static void st_row(const sw_report *r, const pm_sweep_point *p, bool csv, FILE *out)
{
    bool first = true;
    for (size_t i = 0; i < ST_NCOLS; i++) {
        const st_col *c = &st_cols[i];
        if (!(c->where & (csv ? ST_CSV : ST_TEXT)) ||
            ((c->where & ST_CLASS) && r->s->vary_class == PM_NONE))
            continue;
        char cell[1024], head[32];
        if (p)
            c->cell(r, p, csv, cell, sizeof cell);
        else
            snprintf(cell, sizeof cell, "%s", csv ? c->csv : st_head(r, c, head, sizeof head));
        if (csv)
            fprintf(out, "%s%s", first ? "" : ",", cell);
        else if (c->width == 0)
            fprintf(out, "%s%s", first ? "" : "  ", cell);
        else
            fprintf(out, "%s%*s", first ? "" : " ", c->width, cell);
        first = false;
    }
    fputc('\n', out);
}

int sw_write_table(const sw_report *r, FILE *out, bool csv)
{
    st_row(r, NULL, csv, out);
    for (uint32_t i = 0; i < r->s->npoints; i++)
        st_row(r, &r->s->points[i], csv, out);
    return ferror(out) ? PM_EIO : PM_OK;
}

int sw_write_csv(const void *ctx, FILE *out)
{
    return sw_write_table(ctx, out, true);
}
