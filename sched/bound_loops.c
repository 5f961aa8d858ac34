/*
 * bound_loops.c - the critical loops: every simple cycle made of edges that
 * are tight under the certified potentials, up to a limit.
 *
 * Under potentials x with q*t(u) - p*d + x(v) <= x(u) on every edge, a cycle
 * attains p/q exactly when all its edges are tight (the slacks sum to
 * q*W - p*D and none is positive).  So the critical loops are the simple
 * cycles of the tight subgraph.  They are listed with Johnson's algorithm
 * ("Finding all the elementary circuits of a directed graph", SIAM J.
 * Computing 4(1), 1975), without recursion, on a local copy of the
 * nontrivial strongly connected parts of the tight subgraph (usually a few
 * nodes).  Each start node s is the smallest node of the cycles found from
 * it, so every loop starts at its smallest node id.  Johnson's bound,
 * O((V + E) per loop), holds because each round starts at the smallest node
 * of a nontrivial part of the nodes >= s, and we stop after max + 1 loops.
 */
#include "bound_internal.h"
#include "scc_internal.h"

#include <stdlib.h>
#include <string.h>

typedef struct tight_ctx {
    const howard *h;
    int64_t p, q;
} tight_ctx;

static bool loops_keep_tight(const pm_graph *g, uint32_t e, void *ctx)
{
    (void)g;
    const tight_ctx *c = ctx;
    return howard_tight(c->h, e, c->p, c->q);
}

/* The local graph: nodes of nontrivial tight parts, in ascending id. */
typedef struct loops_local {
    uint32_t n, m;
    uint32_t *glob;   /* local -> global node */
    uint32_t *off;    /* local CSR */
    uint32_t *adj;    /* local successor */
    uint32_t *eid;    /* global edge id */
} loops_local;

static void loops_local_free(loops_local *l)
{
    free(l->glob);
    free(l->off);
    free(l->adj);
    free(l->eid);
    memset(l, 0, sizeof *l);
}

/* Build the local graph; map[] (nnodes entries) is scratch. */
static int loops_local_build(const pm_graph *g, const pm_scc *ts, tight_ctx *tc,
                             uint32_t *map, loops_local *l)
{
    memset(l, 0, sizeof *l);
    for (uint32_t v = 0; v < g->nnodes; v++) {
        bool in = pm_scc_has_cycle(g, ts, ts->comp[v], loops_keep_tight, tc);
        map[v] = in ? l->n++ : PM_NONE;
    }
    l->glob = malloc(((size_t)l->n + 1) * sizeof *l->glob);
    l->off = calloc((size_t)l->n + 1, sizeof *l->off);
    if (!l->glob || !l->off)
        return PM_ENOMEM;
    for (uint32_t v = 0; v < g->nnodes; v++)
        if (map[v] != PM_NONE) {
            l->glob[map[v]] = v;
            for (uint32_t k = g->out_off[v]; k < g->out_off[v + 1]; k++) {
                uint32_t e = g->out_edge[k], w = g->edges[e].dst;
                if (map[w] != PM_NONE && ts->comp[w] == ts->comp[v] &&
                    loops_keep_tight(g, e, tc))
                    l->off[map[v] + 1]++;
            }
        }
    for (uint32_t i = 0; i < l->n; i++)
        l->off[i + 1] += l->off[i];
    l->m = l->off[l->n];
    l->adj = malloc(((size_t)l->m + 1) * sizeof *l->adj);
    l->eid = malloc(((size_t)l->m + 1) * sizeof *l->eid);
    if (!l->adj || !l->eid)
        return PM_ENOMEM;
    for (uint32_t i = 0, pos = 0; i < l->n; i++) {
        uint32_t v = l->glob[i];
        for (uint32_t k = g->out_off[v]; k < g->out_off[v + 1]; k++) {
            uint32_t e = g->out_edge[k], w = g->edges[e].dst;
            if (map[w] != PM_NONE && ts->comp[w] == ts->comp[v] &&
                loops_keep_tight(g, e, tc)) {
                l->adj[pos] = map[w];
                l->eid[pos++] = e;
            }
        }
    }
    return PM_OK;
}

/* Johnson's search state. */
typedef struct johnson {
    const loops_local *l;
    const pm_graph *g;
    const int64_t *t;
    uint8_t *blocked;
    uint32_t *bhead;          /* B lists: head per node, pool below */
    uint32_t *bval, *bnext;
    uint32_t bcount, bcap, bfree;
    uint32_t *fv, *fpos;      /* frames: node, next position */
    uint8_t *ffound;
    uint32_t *pedge;          /* global edge from frame i to frame i+1 */
    uint32_t *ustack;
    const uint32_t *comp;     /* local components of nodes >= s */
    uint32_t s;
    pm_bound *out;
    uint32_t max;             /* stop after max + 1 loops */
} johnson;

static int johnson_emit(johnson *j, uint32_t depth, uint32_t last_edge)
{
    pm_bound *b = j->out;
    if (b->ncritical == j->max) {
        b->critical_truncated = true;
        return 1;
    }
    uint32_t len = depth + 1;
    uint32_t *store = malloc(2 * (size_t)len * sizeof *store);
    if (!store)
        return PM_ENOMEM;
    pm_loop *lp = &b->critical[b->ncritical++];
    lp->len = len;
    lp->nodes = store;
    lp->edges = store + len;
    for (uint32_t i = 0; i < len; i++) {
        lp->nodes[i] = j->l->glob[j->fv[i]];
        lp->edges[i] = i + 1 < len ? j->pedge[i] : last_edge;
    }
    bound_loop_sums(j->g, j->t, lp);
    return PM_OK;
}

static void johnson_unblock(johnson *j, uint32_t u)
{
    uint32_t top = 0;
    j->blocked[u] = 0;
    j->ustack[top++] = u;
    while (top) {
        uint32_t x = j->ustack[--top];
        for (uint32_t k = j->bhead[x]; k != PM_NONE;) {
            uint32_t w = j->bval[k], nx = j->bnext[k];
            j->bnext[k] = j->bfree; /* recycle */
            j->bfree = k;
            if (j->blocked[w]) {
                j->blocked[w] = 0;
                j->ustack[top++] = w;
            }
            k = nx;
        }
        j->bhead[x] = PM_NONE;
    }
}

static int johnson_badd(johnson *j, uint32_t w, uint32_t v)
{
    for (uint32_t k = j->bhead[w]; k != PM_NONE; k = j->bnext[k])
        if (j->bval[k] == v)
            return PM_OK;
    uint32_t k = j->bfree;
    if (k != PM_NONE) {
        j->bfree = j->bnext[k];
    } else {
        if (j->bcount == j->bcap) {
            uint32_t cap = j->bcap ? 2 * j->bcap : 256;
            uint32_t *a = realloc(j->bval, cap * sizeof *a);
            if (a)
                j->bval = a;
            uint32_t *c = a ? realloc(j->bnext, cap * sizeof *c) : NULL;
            if (!c)
                return PM_ENOMEM;
            j->bnext = c;
            j->bcap = cap;
        }
        k = j->bcount++;
    }
    j->bval[k] = v;
    j->bnext[k] = j->bhead[w];
    j->bhead[w] = k;
    return PM_OK;
}

static bool johnson_inside(const johnson *j, uint32_t w)
{
    return w >= j->s && j->comp[w] == j->comp[j->s];
}

/* A frame has no edges left: unblock or register in B lists, then pop. */
static int johnson_leave(johnson *j, uint32_t *depth)
{
    uint32_t d = *depth, v = j->fv[d];
    if (j->ffound[d]) {
        johnson_unblock(j, v);
    } else {
        for (uint32_t k = j->l->off[v]; k < j->l->off[v + 1]; k++)
            if (johnson_inside(j, j->l->adj[k])) {
                int rc = johnson_badd(j, j->l->adj[k], v);
                if (rc)
                    return rc;
            }
    }
    if (d > 0 && j->ffound[d])
        j->ffound[d - 1] = 1;
    *depth = d - 1;
    return PM_OK;
}

/* CIRCUIT(s) of Johnson's paper, iteratively.  1 = limit reached. */
static int johnson_circuit(johnson *j)
{
    const loops_local *l = j->l;
    uint32_t depth = 0;
    j->fv[0] = j->s;
    j->fpos[0] = l->off[j->s];
    j->ffound[0] = 0;
    j->blocked[j->s] = 1;
    while (depth != PM_NONE) {
        uint32_t v = j->fv[depth];
        if (j->fpos[depth] == l->off[v + 1]) {
            int rc = johnson_leave(j, &depth);
            if (rc)
                return rc;
            continue;
        }
        uint32_t k = j->fpos[depth]++, w = l->adj[k];
        if (!johnson_inside(j, w))
            continue;
        if (w == j->s) {
            int rc = johnson_emit(j, depth, l->eid[k]);
            if (rc)
                return rc;
            j->ffound[depth] = 1;
        } else if (!j->blocked[w]) {
            j->pedge[depth] = l->eid[k];
            depth++;
            j->fv[depth] = w;
            j->fpos[depth] = l->off[w];
            j->ffound[depth] = 0;
            j->blocked[w] = 1;
        }
    }
    return PM_OK;
}

static int johnson_alloc(johnson *j, uint32_t n)
{
    size_t m = (size_t)n + 1;
    j->blocked = calloc(m, 1);
    j->ffound = calloc(m, 1);
    j->bhead = malloc(m * sizeof *j->bhead);
    j->fv = malloc(m * sizeof *j->fv);
    j->fpos = malloc(m * sizeof *j->fpos);
    j->pedge = malloc(m * sizeof *j->pedge);
    j->ustack = malloc(m * sizeof *j->ustack);
    return j->blocked && j->ffound && j->bhead && j->fv && j->fpos && j->pedge &&
                   j->ustack ? PM_OK : PM_ENOMEM;
}

static void johnson_free(johnson *j)
{
    free(j->blocked);
    free(j->ffound);
    free(j->bhead);
    free(j->bval);
    free(j->bnext);
    free(j->fv);
    free(j->fpos);
    free(j->pedge);
    free(j->ustack);
}

/* One round: components of the local nodes >= s, then CIRCUIT from the
 * smallest node of a nontrivial one.  *s moves past it; 1 = done. */
static int johnson_round(johnson *j, uint32_t *s)
{
    const loops_local *l = j->l;
    scc_csr c = { .n = l->n, .off = l->off, .list = l->adj, .skip_below = *s };
    pm_scc sc;
    int rc = scc_run(&c, &sc);
    if (rc)
        return rc;
    uint32_t start = PM_NONE;
    for (uint32_t v = *s; v < l->n && start == PM_NONE; v++) {
        uint32_t cv = sc.comp[v];
        bool cyc = sc.start[cv + 1] - sc.start[cv] > 1;
        for (uint32_t k = l->off[v]; !cyc && k < l->off[v + 1]; k++)
            cyc = l->adj[k] == v;
        if (cyc)
            start = v;
    }
    if (start != PM_NONE) {
        j->s = start;
        j->comp = sc.comp;
        memset(j->blocked, 0, l->n);
        memset(j->bhead, 0xff, (size_t)l->n * sizeof *j->bhead);
        j->bcount = 0;
        j->bfree = PM_NONE;
        rc = johnson_circuit(j);
        *s = start + 1;
    }
    pm_scc_free(&sc);
    return rc ? rc : start == PM_NONE;
}

static int loops_enumerate(const loops_local *l, const howard *h, uint32_t max,
                           pm_bound *out)
{
    johnson j = { .l = l, .g = h->g, .t = h->t, .out = out, .max = max,
                  .bfree = PM_NONE };
    int rc = johnson_alloc(&j, l->n);
    out->critical = rc ? NULL : calloc((size_t)max + 1, sizeof *out->critical);
    if (!out->critical)
        rc = PM_ENOMEM;
    for (uint32_t s = 0; rc == PM_OK && s < l->n;)
        rc = johnson_round(&j, &s);
    johnson_free(&j);
    return rc < 0 ? rc : PM_OK;
}

int bound_critical_loops(const howard *h, int64_t p, int64_t q, uint32_t max,
                         pm_bound *out)
{
    tight_ctx tc = { h, p, q };
    pm_scc ts;
    int rc = pm_scc_compute(h->g, loops_keep_tight, &tc, &ts);
    if (rc)
        return rc;
    loops_local l;
    /* the policy array is no longer needed: reuse it as the local map */
    rc = loops_local_build(h->g, &ts, &tc, h->pol, &l);
    pm_scc_free(&ts);
    if (rc == PM_OK)
        rc = loops_enumerate(&l, h, max, out);
    loops_local_free(&l);
    return rc;
}

void bound_loop_sums(const pm_graph *g, const int64_t *t, pm_loop *loop)
{
    loop->cycles = 0;
    loop->delays = 0;
    for (uint32_t i = 0; i < loop->len; i++) {
        loop->cycles += t[loop->nodes[i]];
        loop->delays += g->edges[loop->edges[i]].delay;
    }
}
