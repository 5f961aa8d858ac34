/*
 * scc.c - strongly connected components without recursion.
 *
 * Pearce (IPL 2016), algorithm PEA_FIND_SCC2: one array rindex[] serves as
 * the DFS number while a node is open and as its component number once it
 * is closed; component numbers count down from V and stay above every
 * open DFS number, so no "on stack" flag is needed.  The DFS call stack is
 * explicit (node, next out-edge position) and the root flag is one bit per
 * node.  Components are then regrouped with a counting sort.
 */
#include "scc_internal.h"
#include "pacemap/error.h"

#include <stdlib.h>
#include <string.h>

typedef struct scc_frame {
    uint32_t v;
    uint32_t pos; /* next out-edge position in g->out_edge */
} scc_frame;

typedef struct scc_state {
    const scc_csr *csr;
    uint32_t *rindex;
    uint8_t *notroot;  /* bit per node: a successor reached lower */
    scc_frame *call;
    uint32_t ncall;
    uint32_t *stack;   /* nodes of open, non-root components */
    uint32_t nstack;
    uint32_t index;
    uint32_t c;        /* next component number, counting down */
} scc_state;

static bool scc_bit(const uint8_t *b, uint32_t v) { return b[v >> 3] >> (v & 7) & 1; }
static void scc_set(uint8_t *b, uint32_t v) { b[v >> 3] = (uint8_t)(b[v >> 3] | 1u << (v & 7)); }

static void scc_open(scc_state *s, uint32_t v)
{
    s->rindex[v] = s->index++;
    s->call[s->ncall++] = (scc_frame){ v, s->csr->off[v] };
}

/* v has no more edges: close it as a root or keep it on the stack. */
static void scc_finish(scc_state *s, uint32_t v)
{
    if (scc_bit(s->notroot, v)) {
        s->stack[s->nstack++] = v;
        return;
    }
    s->index--;
    while (s->nstack && s->rindex[v] <= s->rindex[s->stack[s->nstack - 1]]) {
        uint32_t w = s->stack[--s->nstack];
        s->rindex[w] = s->c;
        s->index--;
    }
    s->rindex[v] = s->c--;
}

static void scc_lower(scc_state *s, uint32_t v, uint32_t w)
{
    if (s->rindex[w] < s->rindex[v]) {
        s->rindex[v] = s->rindex[w];
        scc_set(s->notroot, v);
    }
}

static void scc_visit(scc_state *s, uint32_t root)
{
    const scc_csr *c = s->csr;
    scc_open(s, root);
    while (s->ncall) {
        scc_frame *f = &s->call[s->ncall - 1];
        uint32_t v = f->v;
        if (f->pos == c->off[v + 1]) {
            s->ncall--;
            scc_finish(s, v);
            if (s->ncall)
                scc_lower(s, s->call[s->ncall - 1].v, v);
            continue;
        }
        uint32_t e = c->list[f->pos++];
        if (c->keep && !c->keep(c->g, e, c->ctx))
            continue;
        uint32_t w = c->g ? c->g->edges[e].dst : e;
        if (c->skip_below && w < c->skip_below)
            continue;
        if (s->rindex[w] == 0)
            scc_open(s, w);
        else
            scc_lower(s, v, w);
    }
}

/* Counting sort of nodes by component into order/start. */
static int scc_group(uint32_t n, pm_scc *out)
{
    out->start = calloc((size_t)out->ncomp + 1, sizeof *out->start);
    out->order = malloc(((size_t)n + 1) * sizeof *out->order);
    if (!out->start || !out->order)
        return PM_ENOMEM;
    for (uint32_t v = 0; v < n; v++)
        out->start[out->comp[v] + 1]++;
    for (uint32_t c = 0; c < out->ncomp; c++)
        out->start[c + 1] += out->start[c];
    for (uint32_t v = 0; v < n; v++)
        out->order[out->start[out->comp[v]]++] = v;
    for (uint32_t c = out->ncomp; c > 0; c--)
        out->start[c] = out->start[c - 1];
    out->start[0] = 0;
    return PM_OK;
}

int scc_run(const scc_csr *csr, pm_scc *out)
{
    memset(out, 0, sizeof *out);
    uint32_t n = csr->n;
    scc_state s = { .csr = csr, .index = 1, .c = n };
    s.rindex = calloc((size_t)n + 1, sizeof *s.rindex);
    s.notroot = calloc((size_t)n / 8 + 1, 1);
    s.call = malloc(((size_t)n + 1) * sizeof *s.call);
    s.stack = malloc(((size_t)n + 1) * sizeof *s.stack);
    int rc = s.rindex && s.notroot && s.call && s.stack ? PM_OK : PM_ENOMEM;
    for (uint32_t v = csr->skip_below; rc == PM_OK && v < n; v++)
        if (s.rindex[v] == 0)
            scc_visit(&s, v);
    for (uint32_t v = 0; v < csr->skip_below && v < n; v++)
        s.rindex[v] = s.c--; /* left out: each alone */
    free(s.notroot);
    free(s.call);
    free(s.stack);
    if (rc != PM_OK) {
        free(s.rindex);
        return rc;
    }
    /* component numbers run from V down to 1 (never 0, which means "not
     * visited"); renumber from 0 in closing order */
    for (uint32_t v = 0; v < n; v++)
        s.rindex[v] = n - s.rindex[v];
    out->comp = s.rindex;
    out->ncomp = n - s.c;
    rc = scc_group(n, out);
    if (rc != PM_OK)
        pm_scc_free(out);
    return rc;
}

/* The successors of every node in out-edge order, gathered in one pass:
 * the search then reads 4 bytes per edge in order instead of a whole edge
 * record at random.  NULL when memory is short (the caller falls back). */
static uint32_t *scc_targets(const pm_graph *g)
{
    uint32_t m = g->out_off[g->nnodes];
    uint32_t *t = malloc(((size_t)m + 1) * sizeof *t);
    if (!t)
        return NULL;
    for (uint32_t i = 0; i < m; i++) {
        if (i + 16 < m)
            __builtin_prefetch(&g->edges[g->out_edge[i + 16]].dst);
        t[i] = g->edges[g->out_edge[i]].dst;
    }
    return t;
}

int pm_scc_compute(const pm_graph *g, pm_scc_keep_fn keep, void *ctx, pm_scc *out)
{
    scc_csr c = { .n = g->nnodes, .off = g->out_off, .list = g->out_edge, .g = g,
                  .keep = keep, .ctx = ctx };
    uint32_t *t = keep ? NULL : scc_targets(g);
    if (t) {
        c.list = t;
        c.g = NULL;
    }
    int rc = scc_run(&c, out);
    free(t);
    return rc;
}

bool pm_scc_has_cycle(const pm_graph *g, const pm_scc *s, uint32_t c,
                      pm_scc_keep_fn keep, void *ctx)
{
    if (s->start[c + 1] - s->start[c] > 1)
        return true;
    uint32_t v = s->order[s->start[c]];
    for (uint32_t i = g->out_off[v]; i < g->out_off[v + 1]; i++) {
        uint32_t e = g->out_edge[i];
        if (g->edges[e].dst == v && (!keep || keep(g, e, ctx)))
            return true;
    }
    return false;
}

void pm_scc_free(pm_scc *s)
{
    if (!s)
        return;
    free(s->comp);
    free(s->order);
    free(s->start);
    memset(s, 0, sizeof *s);
}
