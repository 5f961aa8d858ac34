/*
 * bound_loops.c - the critical loops: every simple cycle made of edges that
 * are tight under the certified potentials, up to a limit.
 *
 * Under potentials x with q*t(u) - p*d + x(v) <= x(u) on every edge, a cycle
 * attains p/q exactly when all its edges are tight (the slacks sum to
 * q*W - p*D and none is positive).  So the critical loops are the simple
 * cycles of the tight subgraph.  They are listed with Johnson's algorithm
 * ("Finding all the elementary circuits of a directed graph", SIAM J.
 * Computing 4(1), 1975), without recursion, on a local copy of the nodes
 * that lie on tight cycles (found by peeling, usually a few nodes).  Each start node s is the smallest node of the cycles found from
 * it, so every loop starts at its smallest node id.  Johnson's bound,
 * O((V + E) per loop), holds because each round starts at the smallest node
 * of a nontrivial part of the nodes >= s, and we stop after max + 1 loops.
 */
#include "bound_internal.h"
#include "../graph/scc_internal.h"

#include <stdlib.h>
#include <string.h>

static bool loops_critical(const howard *h, uint32_t i, int64_t p, int64_t q)
{
    uint32_t c = *hw_cyc(h, i);
    return c != PM_NONE && h->cycles[c].p == p && h->cycles[c].q == q;
}

/* Peel the tight subgraph of the critical parts from its sources (Kahn).
 * Every node of a critical part leads along tight policy edges to a tight
 * cycle, so a node left over (indeg > 0) lies on a tight cycle itself: the
 * leftovers are exactly the nodes of the critical loops, usually a few.
 * indeg and queue are scratch arrays of h->n entries. */
static inline bool loops_tight(const uint64_t *tb, uint32_t k)
{
    return tb[k >> 6] >> (k & 63) & 1;
}

static void loops_peel(const howard *h, int64_t p, int64_t q, const uint64_t *tb,
                       uint32_t *indeg, uint32_t *queue)
{
    uint32_t tail = 0;
    memset(indeg, 0, (size_t)h->n * sizeof *indeg);
    for (uint32_t i = 0; i < h->n; i++)
        for (uint32_t k = h->off[i]; k < h->off[i + 1]; k++)
            indeg[he_dst(h, k)] += loops_tight(tb, k);
    for (uint32_t i = 0; i < h->n; i++)
        if (indeg[i] == 0 && loops_critical(h, i, p, q))
            queue[tail++] = i;
    for (uint32_t head = 0; head < tail; head++) {
        uint32_t i = queue[head];
        for (uint32_t k = h->off[i]; k < h->off[i + 1]; k++)
            if (loops_tight(tb, k) && --indeg[he_dst(h, k)] == 0)
                queue[tail++] = he_dst(h, k);
    }
}

/* The local graph of Johnson's search: the nodes left by loops_peel, in
 * ascending local index (ascending node id inside a part). */
typedef struct loops_local {
    uint32_t n, m;
    uint32_t *glob;   /* Johnson index -> howard local index */
    uint32_t *off;    /* CSR */
    uint32_t *adj;    /* successor (Johnson index) */
    uint32_t *eid;    /* graph edge id */
} loops_local;

static void loops_local_free(loops_local *l)
{
    free(l->glob);
    free(l->off);
    free(l->adj);
    free(l->eid);
    memset(l, 0, sizeof *l);
}

/* Tight edge k whose target is kept (map != PM_NONE). */
static bool loops_keep(const howard *h, const uint32_t *map, const uint64_t *tb, uint32_t k)
{
    return map[he_dst(h, k)] != PM_NONE && loops_tight(tb, k);
}

/* Build the local graph from the kept nodes (left[i] > 0); map[] (h->n
 * entries) is scratch. */
static int loops_local_build(const howard *h, int64_t p, int64_t q, const uint64_t *tb,
                             const uint32_t *left, uint32_t *map, loops_local *l)
{
    memset(l, 0, sizeof *l);
    for (uint32_t i = 0; i < h->n; i++)
        map[i] = left[i] > 0 && loops_critical(h, i, p, q) ? l->n++ : PM_NONE;
    l->glob = malloc(((size_t)l->n + 1) * sizeof *l->glob);
    l->off = calloc((size_t)l->n + 1, sizeof *l->off);
    if (!l->glob || !l->off)
        return PM_ENOMEM;
    for (uint32_t i = 0; i < h->n; i++)
        if (map[i] != PM_NONE) {
            l->glob[map[i]] = i;
            for (uint32_t k = h->off[i]; k < h->off[i + 1]; k++)
                l->off[map[i] + 1] += loops_keep(h, map, tb, k);
        }
    for (uint32_t j = 0; j < l->n; j++)
        l->off[j + 1] += l->off[j];
    l->m = l->off[l->n];
    l->adj = malloc(((size_t)l->m + 1) * sizeof *l->adj);
    l->eid = malloc(((size_t)l->m + 1) * sizeof *l->eid);
    if (!l->adj || !l->eid)
        return PM_ENOMEM;
    for (uint32_t j = 0, at = 0; j < l->n; j++) {
        uint32_t i = l->glob[j];
        for (uint32_t k = h->off[i]; k < h->off[i + 1]; k++)
            if (loops_keep(h, map, tb, k)) {
                l->adj[at] = map[he_dst(h, k)];
                l->eid[at++] = howard_graph_edge(h, i, k);
            }
    }
    return PM_OK;
}

/* Johnson's search state. */
typedef struct johnson {
    const loops_local *l;
    const pm_graph *g;
    const howard *h;
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
        lp->nodes[i] = j->h->order[j->l->glob[j->fv[i]]];
        lp->edges[i] = i + 1 < len ? j->pedge[i] : last_edge;
    }
    bound_loop_sums(j->g, lp);
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
    johnson j = { .l = l, .g = h->g, .h = h, .out = out, .max = max,
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
    uint64_t *tb = howard_tight_bits(h, p, q);
    if (!tb)
        return PM_ENOMEM;
    /* the iteration's scratch arrays are free now */
    loops_peel(h, p, q, tb, h->stack, h->seq);
    loops_local l;
    int rc = loops_local_build(h, p, q, tb, h->stack, h->nxt, &l);
    free(tb);
    if (rc == PM_OK)
        rc = loops_enumerate(&l, h, max, out);
    loops_local_free(&l);
    return rc;
}

void bound_loop_sums(const pm_graph *g, pm_loop *loop)
{
    loop->cycles = 0;
    loop->delays = 0;
    for (uint32_t i = 0; i < loop->len; i++) {
        loop->cycles += pm_graph_min_cycles(g, loop->nodes[i]);
        loop->delays += g->edges[loop->edges[i]].delay;
    }
}
