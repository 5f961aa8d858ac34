/*
 * vcd.c - Value Change Dump of a simulated run (vcd.h).
 *
 * The recorded firings become value changes: core variables and node wires
 * are set at a node's start and cleared at its end (a clear and a set at
 * the same time resolve to the set), io variables mark receive and send
 * phases, edge variables add +1 at the producer's end and -1 at the
 * consumer's begin.
 * Changes are sorted by (time, variable, kind) and only values that differ
 * from the last written one are emitted, so timestamps strictly increase;
 * times are kept in cycles and scaled to the $timescale unit on output.
 */
#include "pacemap/vcd.h"
#include "pacemap/units.h"

#include <ctype.h>
#include <stdlib.h>
#include <string.h>

typedef struct vcd_ch {
    int64_t time;
    uint32_t var;
    uint32_t kind;  /* 0 clear to value, 1 set to value, 2 add value */
    int64_t value;
} vcd_ch;

typedef struct vcd {
    vcd_ch *ch;
    size_t n, cap;
    uint32_t ncores, nx, nvars;
    uint32_t *xvar;   /* edge -> variable, or UINT32_MAX */
    uint32_t rel_var; /* paced runs: the `release` variable, else UINT32_MAX */
    uint32_t wire0;   /* node v's 1-bit "running" wire is variable wire0 + v */
    uint64_t tick_num, tick_den; /* time units per cycle, num/den */
    const char *unit; /* "1 ns", "10 ps", ... */
} vcd;

static int vcd_add(vcd *v, int64_t time, uint32_t var, uint32_t kind, int64_t value)
{
    if (v->n == v->cap) {
        size_t nc = v->cap ? v->cap * 2 : 256;
        vcd_ch *nch = realloc(v->ch, nc * sizeof *nch);
        if (!nch)
            return PM_ENOMEM;
        v->ch = nch, v->cap = nc;
    }
    v->ch[v->n++] = (vcd_ch){ time, var, kind, value };
    return PM_OK;
}

static int vcd_cmp(const void *a, const void *b)
{
    const vcd_ch *x = a, *y = b;
    if (x->time != y->time)
        return x->time < y->time ? -1 : 1;
    if (x->var != y->var)
        return x->var < y->var ? -1 : 1;
    return (x->kind > y->kind) - (x->kind < y->kind);
}

/* Identifier code of variable i: base-94 over the printable characters. */
static void vcd_id(uint32_t i, char *buf)
{
    int k = 0;
    do {
        buf[k++] = (char)('!' + i % 94);
        i /= 94;
    } while (i);
    buf[k] = 0;
}

/* The coarsest time unit of the standard (1, 10 or 100 s, ms, us, ns, ps,
 * fs) in which one cycle of the clock is a whole number of units; when none
 * is, 1 fs and times rounded to it.  Without a clock a cycle is one unit of
 * 1 ns, as the file's comment says. */
static void vcd_timescale(vcd *v, uint64_t clock_hz)
{
    static const char *const scaled[6][3] = {
        { "100 s", "10 s", "1 s" },     { "100 ms", "10 ms", "1 ms" },
        { "100 us", "10 us", "1 us" },  { "100 ns", "10 ns", "1 ns" },
        { "100 ps", "10 ps", "1 ps" },  { "100 fs", "10 fs", "1 fs" } };
    v->tick_num = 1, v->tick_den = 1, v->unit = "1 ns";
    if (!clock_hz)
        return;
    uint64_t per_s = 1; /* units of 1 x 10^-3k s in a second */
    for (int k = 0; k < 6; k++, per_s *= 1000)
        for (int m = 0; m < 3; m++) {
            static const uint64_t mult[] = { 100, 10, 1 };
            pm_u128 unit_hz = (pm_u128)clock_hz * mult[m];
            if (unit_hz <= per_s && per_s % (uint64_t)unit_hz == 0) {
                v->tick_num = per_s / (uint64_t)unit_hz, v->unit = scaled[k][m];
                return;
            }
        }
    v->tick_num = per_s / 1000, v->tick_den = clock_hz, v->unit = "1 fs";
}

/* Cycle count t in time units, rounded to the nearest unit. */
static long long vcd_time(const vcd *v, int64_t t)
{
    pm_u128 x = (pm_u128)(uint64_t)t * v->tick_num;
    x = (x + v->tick_den / 2) / v->tick_den;
    return x > (pm_u128)INT64_MAX ? INT64_MAX : (long long)x;
}

static int vcd_firing_changes(vcd *v, const pm_graph *g, const pm_sim_firing *f)
{
    uint32_t core = f->core, io = v->ncores + f->core;
    int rc = vcd_add(v, f->start, core, 1, (int64_t)f->node + 1);
    rc = rc ? rc : vcd_add(v, f->end, core, 0, 0);
    rc = rc ? rc : vcd_add(v, f->start, v->wire0 + f->node, 1, 1);
    rc = rc ? rc : vcd_add(v, f->end, v->wire0 + f->node, 0, 0);
    if (!rc && f->start > f->begin)
        rc = vcd_add(v, f->begin, io, 1, 1), rc = rc ? rc : vcd_add(v, f->start, io, 0, 0);
    if (!rc && f->free > f->end)
        rc = vcd_add(v, f->end, io, 1, 2), rc = rc ? rc : vcd_add(v, f->free, io, 0, 0);
    for (uint32_t i = g->out_off[f->node]; i < g->out_off[f->node + 1] && !rc; i++)
        if (v->xvar[g->out_edge[i]] != UINT32_MAX)
            rc = vcd_add(v, f->end, v->xvar[g->out_edge[i]], 2, 1);
    for (uint32_t i = g->in_off[f->node]; i < g->in_off[f->node + 1] && !rc; i++)
        if (v->xvar[g->in_edge[i]] != UINT32_MAX)
            rc = vcd_add(v, f->begin, v->xvar[g->in_edge[i]], 2, -1);
    return rc;
}

/* A paced run's releases: `release` holds the number (from 1) of the last
 * sample that arrived. */
static int vcd_release_changes(vcd *v, const pm_sim_result *r)
{
    v->rel_var = UINT32_MAX;
    if (!r->pace.on || !r->pace.nreleases)
        return PM_OK;
    v->rel_var = v->nvars++;
    int rc = PM_OK;
    const int64_t *t = r->pace.releases;
    for (uint32_t k = 0; k < r->pace.nreleases && !rc; k++)
        if (k + 1 == r->pace.nreleases || t[k + 1] != t[k]) /* one change per time */
            rc = vcd_add(v, t[k], v->rel_var, 1, (int64_t)k + 1);
    return rc;
}

static void vcd_release_header(const vcd *v, FILE *out)
{
    char id[8];
    if (v->rel_var == UINT32_MAX)
        return;
    vcd_id(v->rel_var, id);
    fprintf(out, "$var integer 32 %s release $end\n", id);
}


/* A reference name viewers accept as one identifier: characters other than
 * letters, digits and '_' ('.' would read as a scope, '#' is not allowed)
 * become '_'; the legend keeps the exact names. */
static void vcd_ref(FILE *out, const char *name)
{
    for (const char *c = name; *c; c++)
        fputc(isalnum((unsigned char)*c) || *c == '_' ? *c : '_', out);
}

static void vcd_legend_time(const vcd *v, const pm_graph *g, FILE *out)
{
    uint64_t hz = g->platform.clock_hz;
    char f[PM_UNITS_LEN];
    if (hz)
        pm_units_freq(f, sizeof f, hz);
    if (!hz)
        fprintf(out, "  no clock given: one cycle is shown as %s\n", v->unit);
    else if (v->tick_den == 1)
        fprintf(out, "  clock %s: one cycle is %llu x %s\n", f,
                (unsigned long long)v->tick_num, v->unit);
    else
        fprintf(out, "  clock %s: one cycle is %llu/%llu x %s, times rounded to %s\n",
                f, (unsigned long long)v->tick_num,
                (unsigned long long)v->tick_den, v->unit, v->unit);
}

static void vcd_legend(const vcd *v, const pm_graph *g, FILE *out)
{
    fprintf(out, "$comment\n");
    vcd_legend_time(v, g, out);
    fprintf(out, "  scope coreN: node = number of the running node (0 idle), io = 1 "
                 "receiving,\n  2 sending, one wire per node of the core (1 while it runs)\n"
                 "  scope links: SRC__DST = tokens buffered on a cross-core edge\n"
                 "  node numbers, wires (and names where the wire differs):\n");
    for (uint32_t n = 0; n < g->nnodes; n++) {
        const char *name = pm_graph_node_name(g, n);
        fprintf(out, "  %u ", n + 1);
        vcd_ref(out, name);
        bool same = true;
        for (const char *c = name; *c; c++)
            same = same && (isalnum((unsigned char)*c) || *c == '_');
        fprintf(out, same ? "\n" : " (%s)\n", name);
    }
    fprintf(out, "$end\n");
}

static void vcd_core_scope(const vcd *v, const pm_graph *g, const pm_map *m, uint32_t c,
                           FILE *out)
{
    char id[8];
    fprintf(out, "$scope module core%u $end\n", c);
    vcd_id(c, id);
    fprintf(out, "$var integer 32 %s node $end\n", id);
    vcd_id(v->ncores + c, id);
    fprintf(out, "$var integer 32 %s io $end\n", id);
    for (uint32_t n = 0; n < g->nnodes; n++)
        if (m->core_of[n] == c) {
            vcd_id(v->wire0 + n, id);
            fprintf(out, "$var wire 1 %s ", id);
            vcd_ref(out, pm_graph_node_name(g, n));
            fprintf(out, " $end\n");
        }
    fprintf(out, "$upscope $end\n");
}

static void vcd_header(const vcd *v, const pm_graph *g, const pm_map *m, FILE *out)
{
    char id[8];
    fprintf(out, "$version pacemap simulate $end\n");
    vcd_legend(v, g, out);
    fprintf(out, "$timescale %s $end\n$scope module pacemap $end\n", v->unit);
    for (uint32_t c = 0; c < v->ncores; c++)
        vcd_core_scope(v, g, m, c, out);
    fprintf(out, "$scope module links $end\n");
    for (uint32_t e = 0; e < g->nedges; e++)
        if (v->xvar[e] != UINT32_MAX) {
            vcd_id(v->xvar[e], id);
            fprintf(out, "$var integer 32 %s ", id);
            vcd_ref(out, pm_graph_node_name(g, g->edges[e].src));
            fputs("__", out);
            vcd_ref(out, pm_graph_node_name(g, g->edges[e].dst));
            fprintf(out, " $end\n");
        }
    fprintf(out, "$upscope $end\n");
    vcd_release_header(v, out);
    fprintf(out, "$upscope $end\n$enddefinitions $end\n");
}

static void vcd_value(const vcd *v, FILE *out, int64_t value, uint32_t var)
{
    char bits[72], id[8];
    int k = 0;
    if (var >= v->wire0) { /* a 1-bit wire: scalar change */
        vcd_id(var, id);
        fprintf(out, "%c%s\n", value ? '1' : '0', id);
        return;
    }
    uint64_t u = (uint64_t)value & 0xffffffffu; /* 32-bit two's complement */
    do {
        bits[k++] = (char)('0' + (u & 1));
        u >>= 1;
    } while (u);
    fputc('b', out);
    while (k > 0)
        fputc(bits[--k], out);
    vcd_id(var, id);
    fprintf(out, " %s\n", id);
}

/* Apply the changes at time t starting at index i into cur; returns the
 * index after them. */
static size_t vcd_apply(const vcd *v, size_t i, int64_t *cur)
{
    int64_t t = v->ch[i].time;
    for (; i < v->n && v->ch[i].time == t; i++)
        cur[v->ch[i].var] = v->ch[i].kind == 2 ? cur[v->ch[i].var] + v->ch[i].value
                                               : v->ch[i].value;
    return i;
}

/* Values at time 0 in the $dumpvars block, then one block per later time
 * with the values that changed. */
static int vcd_body(const vcd *v, int64_t *cur, FILE *out)
{
    int64_t *last = malloc((v->nvars + 1) * sizeof *last);
    if (!last)
        return PM_ENOMEM;
    size_t i = 0;
    if (v->n && v->ch[0].time <= 0)
        i = vcd_apply(v, 0, cur);
    memcpy(last, cur, v->nvars * sizeof *last);
    fprintf(out, "#0\n$dumpvars\n");
    for (uint32_t k = 0; k < v->nvars; k++)
        vcd_value(v, out, cur[k], k);
    fprintf(out, "$end\n");
    while (i < v->n) {
        size_t j = vcd_apply(v, i, cur);
        bool stamped = false;
        for (size_t k = i; k < j; k++) {
            uint32_t var = v->ch[k].var;
            if (cur[var] == last[var])
                continue;
            if (!stamped)
                fprintf(out, "#%lld\n", vcd_time(v, v->ch[k].time));
            stamped = true;
            vcd_value(v, out, cur[var], var);
            last[var] = cur[var];
        }
        i = j;
    }
    free(last);
    return PM_OK;
}

static int vcd_build(vcd *v, const pm_graph *g, const pm_map *m, const pm_sim_result *r,
                     int64_t **init)
{
    v->ncores = m->ncores;
    v->xvar = malloc((g->nedges + 1) * sizeof *v->xvar);
    if (!v->xvar)
        return PM_ENOMEM;
    v->nvars = 2 * m->ncores;
    for (uint32_t e = 0; e < g->nedges; e++)
        v->xvar[e] = m->core_of[g->edges[e].src] != m->core_of[g->edges[e].dst] ? v->nvars++
                                                                                 : UINT32_MAX;
    v->wire0 = v->nvars;
    v->nvars += g->nnodes;
    vcd_timescale(v, g->platform.clock_hz);
    int rc = vcd_release_changes(v, r);
    if (rc)
        return rc;
    *init = calloc(v->nvars + 1, sizeof **init);
    if (!*init)
        return PM_ENOMEM;
    for (uint32_t e = 0; e < g->nedges; e++)
        if (v->xvar[e] != UINT32_MAX)
            (*init)[v->xvar[e]] = g->edges[e].delay;
    for (size_t i = 0; i < r->ntrace && !rc; i++)
        rc = vcd_firing_changes(v, g, &r->trace[i]);
    if (!rc && v->n)
        qsort(v->ch, v->n, sizeof *v->ch, vcd_cmp);
    return rc;
}

int pm_vcd_write(const pm_graph *g, const pm_map *m, const pm_sim_result *r, FILE *out)
{
    vcd v;
    memset(&v, 0, sizeof v);
    int64_t *init = NULL;
    int rc = vcd_build(&v, g, m, r, &init);
    if (!rc) {
        vcd_header(&v, g, m, out);
        rc = vcd_body(&v, init, out);
        if (!rc && ferror(out))
            rc = PM_EIO;
    }
    free(init);
    free(v.ch);
    free(v.xvar);
    return rc;
}
