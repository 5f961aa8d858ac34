/*
 * vcd.c - Value Change Dump of a simulated run (vcd.h).
 *
 * The recorded firings become value changes: core variables are set at a
 * node's start and cleared at its end (a clear and a set at the same time
 * resolve to the set), io variables mark receive and send phases, edge
 * variables add +1 at the producer's end and -1 at the consumer's begin.
 * Changes are sorted by (time, variable, kind) and only values that differ
 * from the last written one are emitted, so timestamps strictly increase.
 */
#include "pacemap/vcd.h"

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

static int vcd_firing_changes(vcd *v, const pm_graph *g, const pm_sim_firing *f)
{
    uint32_t core = f->core, io = v->ncores + f->core;
    int rc = vcd_add(v, f->start, core, 1, (int64_t)f->node + 1);
    rc = rc ? rc : vcd_add(v, f->end, core, 0, 0);
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

static void vcd_header(const vcd *v, const pm_graph *g, FILE *out)
{
    char id[8];
    fprintf(out, "$version pacemap simulate $end\n");
    fprintf(out, "$comment one time unit is one cycle; coreN = node number + 1 "
                 "(0 idle), coreN_io = 1 receiving, 2 sending; SRC__DST = tokens "
                 "buffered $end\n$comment legend:");
    for (uint32_t n = 0; n < g->nnodes; n++)
        fprintf(out, " %u=%s", n + 1, pm_graph_node_name(g, n));
    fprintf(out, " $end\n$timescale 1 ns $end\n$scope module pacemap $end\n");
    for (uint32_t c = 0; c < v->ncores; c++) {
        vcd_id(c, id);
        fprintf(out, "$var integer 32 %s core%u $end\n", id, c);
        vcd_id(v->ncores + c, id);
        fprintf(out, "$var integer 32 %s core%u_io $end\n", id, c);
    }
    for (uint32_t e = 0; e < g->nedges; e++)
        if (v->xvar[e] != UINT32_MAX) {
            vcd_id(v->xvar[e], id);
            fprintf(out, "$var integer 32 %s %s__%s $end\n", id,
                    pm_graph_node_name(g, g->edges[e].src), pm_graph_node_name(g, g->edges[e].dst));
        }
    vcd_release_header(v, out);
    fprintf(out, "$upscope $end\n$enddefinitions $end\n");
}

static void vcd_value(FILE *out, int64_t value, uint32_t var)
{
    char bits[72], id[8];
    int k = 0;
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
        vcd_value(out, cur[k], k);
    fprintf(out, "$end\n");
    while (i < v->n) {
        size_t j = vcd_apply(v, i, cur);
        bool stamped = false;
        for (size_t k = i; k < j; k++) {
            uint32_t var = v->ch[k].var;
            if (cur[var] == last[var])
                continue;
            if (!stamped)
                fprintf(out, "#%lld\n", (long long)v->ch[k].time);
            stamped = true;
            vcd_value(out, cur[var], var);
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
        vcd_header(&v, g, out);
        rc = vcd_body(&v, init, out);
        if (!rc && ferror(out))
            rc = PM_EIO;
    }
    free(init);
    free(v.ch);
    free(v.xvar);
    return rc;
}
