/*
 * graph.c - storage of the processing graph and its platform.
 *
 * Nodes and edges live in growable arrays; names in one character buffer
 * with an open-addressing hash table on top, so a million-node scenario is
 * read without a million small allocations.  Adjacency (CSR) is built once
 * by pm_graph_finalize().
 */
#include "pacemap/graph.h"
#include "pacemap/error.h"

#include <stdlib.h>
#include <string.h>

static void *graph_grow(void *ptr, size_t *cap, size_t need, size_t elem)
{
    if (need <= *cap)
        return ptr;
    size_t ncap = *cap ? *cap : 16;
    while (ncap < need)
        ncap *= 2;
    void *p = realloc(ptr, ncap * elem);
    if (p)
        *cap = ncap;
    return p;
}

static uint64_t graph_hash_name(const char *s, size_t len)
{
    uint64_t h = 1469598103934665603ULL; /* FNV-1a */
    for (size_t i = 0; i < len; i++) {
        h ^= (unsigned char)s[i];
        h *= 1099511628211ULL;
    }
    /* FNV's low bits mix poorly (bit 0 is the parity of the bytes' bit 0) and
     * the table uses the low bits: finish with a 64-bit mixer (the
     * finalizer of MurmurHash3) so names like n1, n2, ... spread out. */
    h ^= h >> 33;
    h *= 0xff51afd7ed558ccdULL;
    h ^= h >> 33;
    return h;
}

static void platform_free(pm_platform *p)
{
    for (uint32_t c = 0; c < p->nclasses; c++)
        free(p->class_names[c]);
    free(p->class_names);
    free(p->class_count);
    free(p->core_class);
    free(p->title);
    memset(p, 0, sizeof *p);
}

pm_graph *pm_graph_create(const char *file)
{
    pm_graph *g = calloc(1, sizeof *g);
    if (!g)
        return NULL;
    g->file = strdup(file ? file : "");
    if (!g->file || pm_graph_set_cores(g, 1, NULL, (const uint32_t[]){ 1 }) != PM_OK) {
        pm_graph_destroy(g);
        return NULL;
    }
    g->platform.procs_given = false;
    return g;
}

void pm_graph_destroy(pm_graph *g)
{
    if (!g)
        return;
    free(g->file);
    free(g->nodes);
    free(g->edges);
    free(g->class_cycles);
    free(g->names);
    free(g->hash);
    free(g->out_off);
    free(g->out_edge);
    free(g->in_off);
    free(g->in_edge);
    platform_free(&g->platform);
    free(g);
}

/* Slot i of the name table is hash[2i] (a node, or PM_NONE when empty) and
 * hash[2i+1] (the high 32 bits of its name's hash, its "tag").  A lookup
 * compares tags before it touches the node or its name, so a probe costs one
 * cache line; the home slot is the tag's low bits, so a rehash needs no
 * names. */
static uint32_t graph_tag(const char *s, size_t len)
{
    return (uint32_t)(graph_hash_name(s, len) >> 32);
}

static void graph_slot_put(uint32_t *h, uint32_t cap, uint32_t v, uint32_t tag)
{
    uint32_t i = tag & (cap - 1);
    while (h[2 * i] != PM_NONE)
        i = (i + 1) & (cap - 1);
    h[2 * i] = v;
    h[2 * i + 1] = tag;
}

static int graph_rehash(pm_graph *g, uint32_t cap)
{
    uint32_t *h = malloc((size_t)cap * 2 * sizeof *h);
    if (!h)
        return PM_ENOMEM;
    memset(h, 0xff, (size_t)cap * 2 * sizeof *h);
    for (uint32_t i = 0; i < g->hash_cap; i++)
        if (g->hash[2 * i] != PM_NONE)
            graph_slot_put(h, cap, g->hash[2 * i], g->hash[2 * i + 1]);
    free(g->hash);
    g->hash = h;
    g->hash_cap = cap;
    return PM_OK;
}

static bool graph_name_is(const pm_graph *g, uint32_t v, const char *name, size_t len)
{
    const char *s = g->names + g->nodes[v].name;
    return memcmp(s, name, len) == 0 && s[len] == '\0';
}

uint32_t pm_graph_find(const pm_graph *g, const char *name, size_t len)
{
    if (!g->hash_cap)
        return PM_NONE;
    uint32_t tag = graph_tag(name, len), mask = g->hash_cap - 1;
    for (uint32_t i = tag & mask; g->hash[2 * i] != PM_NONE; i = (i + 1) & mask)
        if (g->hash[2 * i + 1] == tag && graph_name_is(g, g->hash[2 * i], name, len))
            return g->hash[2 * i];
    return PM_NONE;
}

/* The first slot at or after *slot whose tag matches (its node), or PM_NONE. */
static uint32_t graph_probe_tag(const pm_graph *g, uint32_t *slot, uint32_t tag)
{
    uint32_t i = *slot, mask = g->hash_cap - 1;
    while (g->hash[2 * i] != PM_NONE && g->hash[2 * i + 1] != tag)
        i = (i + 1) & mask;
    *slot = i;
    return g->hash[2 * i];
}

/* One group of at most 64 lookups, in stages: each stage starts the memory
 * loads the next one needs (slot, node, name) for all lookups of the group,
 * so their cache misses overlap instead of queueing one after another. */
static void graph_find_group(const pm_graph *g, const char *const *names, const size_t *lens,
                             size_t n, uint32_t *ids)
{
    uint32_t tag[64], slot[64];
    for (size_t k = 0; k < n; k++) {
        tag[k] = graph_tag(names[k], lens[k]);
        slot[k] = tag[k] & (g->hash_cap - 1);
        __builtin_prefetch(&g->hash[2 * slot[k]]);
    }
    for (size_t k = 0; k < n; k++) {
        ids[k] = graph_probe_tag(g, &slot[k], tag[k]);
        if (ids[k] != PM_NONE)
            __builtin_prefetch(&g->nodes[ids[k]].name);
    }
    for (size_t k = 0; k < n; k++)
        if (ids[k] != PM_NONE)
            __builtin_prefetch(g->names + g->nodes[ids[k]].name);
    for (size_t k = 0; k < n; k++)
        if (ids[k] != PM_NONE && !graph_name_is(g, ids[k], names[k], lens[k]))
            ids[k] = pm_graph_find(g, names[k], lens[k]); /* a tag collision: rare */
}

void pm_graph_find_many(const pm_graph *g, const char *const *names, const size_t *lens,
                        size_t n, uint32_t *ids)
{
    for (size_t b = 0; b < n; b += 64) {
        size_t m = n - b < 64 ? n - b : 64;
        if (!g->hash_cap) {
            memset(ids + b, 0xff, m * sizeof *ids);
            continue;
        }
        graph_find_group(g, names + b, lens + b, m, ids + b);
    }
}

static int graph_store_name(pm_graph *g, const char *name, size_t len, uint32_t *off)
{
    if (g->names_len + len + 1 > UINT32_MAX)
        return PM_ELIMIT;
    char *p = graph_grow(g->names, &g->names_cap, g->names_len + len + 1, 1);
    if (!p)
        return PM_ENOMEM;
    g->names = p;
    memcpy(p + g->names_len, name, len);
    p[g->names_len + len] = '\0';
    *off = (uint32_t)g->names_len;
    g->names_len += len + 1;
    return PM_OK;
}

int pm_graph_add_node(pm_graph *g, const char *name, size_t len, int64_t cycles,
                      uint32_t *id)
{
    if (g->finalized || cycles < 0 || len == 0)
        return PM_EINVAL;
    if (pm_graph_find(g, name, len) != PM_NONE)
        return PM_ENAME;
    if (g->nnodes >= PM_GRAPH_MAX_NODES)
        return PM_ELIMIT;
    if ((uint64_t)(g->nnodes + 1) * 2 > g->hash_cap) {
        int rc = graph_rehash(g, g->hash_cap ? g->hash_cap * 2 : 64);
        if (rc)
            return rc;
    }
    size_t cap = g->nodes_cap;
    pm_node *n = graph_grow(g->nodes, &cap, (size_t)g->nnodes + 1, sizeof *n);
    if (!n)
        return PM_ENOMEM;
    g->nodes = n;
    g->nodes_cap = (uint32_t)(cap > UINT32_MAX ? UINT32_MAX : cap);
    pm_node *v = &g->nodes[g->nnodes];
    memset(v, 0, sizeof *v);
    int rc = graph_store_name(g, name, len, &v->name);
    if (rc)
        return rc;
    v->cycles = cycles;
    v->class_cycles = PM_NONE;
    v->pin_core = PM_NONE;
    v->pin_class = PM_NONE;
    v->work = PM_WORK_SPIN;
    graph_slot_put(g->hash, g->hash_cap, g->nnodes, graph_tag(name, len));
    if (id)
        *id = g->nnodes;
    g->nnodes++;
    return PM_OK;
}

int pm_graph_set_class_cycles(pm_graph *g, uint32_t v, const int64_t *row)
{
    if (g->finalized || v >= g->nnodes)
        return PM_EINVAL;
    uint32_t k = g->platform.nclasses;
    if (g->nclass_cycles + k > UINT32_MAX)
        return PM_ELIMIT;
    int64_t *p = graph_grow(g->class_cycles, &g->class_cycles_cap,
                            g->nclass_cycles + k, sizeof *p);
    if (!p)
        return PM_ENOMEM;
    g->class_cycles = p;
    memcpy(p + g->nclass_cycles, row, k * sizeof *p);
    g->nodes[v].class_cycles = (uint32_t)g->nclass_cycles;
    g->nodes[v].cycles = -1;
    g->nclass_cycles += k;
    return PM_OK;
}

pm_edge pm_edge_default(uint32_t src, uint32_t dst)
{
    pm_edge e = { .src = src, .dst = dst, .words = 1, .produce = 1, .consume = 1 };
    return e;
}

int pm_graph_add_edge(pm_graph *g, const pm_edge *e, uint32_t *id)
{
    if (g->finalized || e->src >= g->nnodes || e->dst >= g->nnodes)
        return PM_EINVAL;
    if (g->nedges >= PM_GRAPH_MAX_EDGES)
        return PM_ELIMIT;
    size_t cap = g->edges_cap;
    pm_edge *p = graph_grow(g->edges, &cap, (size_t)g->nedges + 1, sizeof *p);
    if (!p)
        return PM_ENOMEM;
    g->edges = p;
    g->edges_cap = (uint32_t)(cap > UINT32_MAX ? UINT32_MAX : cap);
    p[g->nedges] = *e;
    if (id)
        *id = g->nedges;
    g->nedges++;
    return PM_OK;
}

int pm_graph_set_cores(pm_graph *g, uint32_t nclasses, const char *const *names,
                       const uint32_t *counts)
{
    if (nclasses == 0 || g->nclass_cycles)
        return PM_EINVAL;
    pm_platform np = g->platform;
    np.class_names = calloc(nclasses, sizeof *np.class_names);
    np.class_count = calloc(nclasses, sizeof *np.class_count);
    uint64_t total = 0;
    for (uint32_t c = 0; c < nclasses; c++)
        total += counts[c];
    np.core_class = total && total <= UINT32_MAX ? calloc(total, sizeof *np.core_class) : NULL;
    int rc = np.class_names && np.class_count && np.core_class ? PM_OK : PM_ENOMEM;
    if (total == 0 || total > UINT32_MAX)
        rc = PM_ERANGE;
    np.nclasses = nclasses;
    for (uint32_t c = 0, core = 0; rc == PM_OK && c < nclasses; c++) {
        np.class_names[c] = strdup(names ? names[c] : "core");
        np.class_count[c] = counts[c];
        if (!np.class_names[c])
            rc = PM_ENOMEM;
        for (uint32_t k = 0; k < counts[c]; k++)
            np.core_class[core++] = c;
    }
    if (rc != PM_OK) {
        np.title = NULL;
        platform_free(&np);
        return rc;
    }
    np.ncores = (uint32_t)total;
    np.classes_named = names != NULL;
    np.procs_given = true;
    /* keep title, comm, clock: only the cores change */
    for (uint32_t c = 0; c < g->platform.nclasses; c++)
        free(g->platform.class_names[c]);
    free(g->platform.class_names);
    free(g->platform.class_count);
    free(g->platform.core_class);
    g->platform = np;
    return PM_OK;
}

uint32_t pm_graph_find_class(const pm_graph *g, const char *name, size_t len)
{
    for (uint32_t c = 0; c < g->platform.nclasses; c++) {
        const char *s = g->platform.class_names[c];
        if (strncmp(s, name, len) == 0 && s[len] == '\0')
            return c;
    }
    return PM_NONE;
}

/* Counting sort of edge ids by `key` (src or dst) into off/list. */
static int graph_build_csr(const pm_graph *g, bool by_src, uint32_t **off_out,
                           uint32_t **list_out)
{
    uint32_t *off = calloc((size_t)g->nnodes + 1, sizeof *off);
    uint32_t *list = malloc(((size_t)g->nedges + 1) * sizeof *list);
    if (!off || !list) {
        free(off);
        free(list);
        return PM_ENOMEM;
    }
    for (uint32_t e = 0; e < g->nedges; e++)
        off[(by_src ? g->edges[e].src : g->edges[e].dst) + 1]++;
    for (uint32_t v = 0; v < g->nnodes; v++)
        off[v + 1] += off[v];
    for (uint32_t e = 0; e < g->nedges; e++) {
        uint32_t v = by_src ? g->edges[e].src : g->edges[e].dst;
        list[off[v]++] = e;
    }
    for (uint32_t v = g->nnodes; v > 0; v--)
        off[v] = off[v - 1];
    off[0] = 0;
    *off_out = off;
    *list_out = list;
    return PM_OK;
}

int pm_graph_finalize(pm_graph *g)
{
    if (g->finalized)
        return PM_OK;
    int rc = graph_build_csr(g, true, &g->out_off, &g->out_edge);
    if (rc == PM_OK)
        rc = graph_build_csr(g, false, &g->in_off, &g->in_edge);
    if (rc == PM_OK)
        g->finalized = true;
    return rc;
}

const char *pm_graph_node_name(const pm_graph *g, uint32_t v)
{
    return g->names + g->nodes[v].name;
}

int64_t pm_graph_cycles_on(const pm_graph *g, uint32_t v, uint32_t c)
{
    const pm_node *n = &g->nodes[v];
    if (n->class_cycles == PM_NONE)
        return n->cycles;
    return g->class_cycles[n->class_cycles + c];
}

int64_t pm_graph_min_cycles(const pm_graph *g, uint32_t v)
{
    const pm_node *n = &g->nodes[v];
    if (n->class_cycles == PM_NONE)
        return n->cycles;
    int64_t best = PM_CANNOT_RUN;
    for (uint32_t c = 0; c < g->platform.nclasses; c++) {
        int64_t t = g->class_cycles[n->class_cycles + c];
        if (t >= 0 && (best < 0 || t < best))
            best = t;
    }
    return best;
}

bool pm_graph_is_single_rate(const pm_graph *g)
{
    for (uint32_t e = 0; e < g->nedges; e++)
        if (g->edges[e].produce != 1 || g->edges[e].consume != 1)
            return false;
    return true;
}

int pm_graph_set_procs_override(pm_graph *g, uint32_t procs, pm_diag *diag)
{
    pm_platform *p = &g->platform;
    if (p->classes_named || procs == 0) {
        pm_diag_set(diag, g->file, 0, 0, "the core count of core classes cannot be overridden");
        return PM_EPLATFORM;
    }
    for (uint32_t v = 0; v < g->nnodes; v++) {
        const pm_node *n = &g->nodes[v];
        if (n->pin_core != PM_NONE && n->pin_core >= procs) {
            pm_diag_set(diag, g->file, n->line, n->col,
                        "node '%s' is pinned to core %u, but there are only %u cores",
                        pm_graph_node_name(g, v), n->pin_core, procs);
            return PM_EPLATFORM;
        }
    }
    uint32_t *cc = calloc(procs, sizeof *cc);
    if (!cc)
        return PM_ENOMEM;
    free(p->core_class);
    p->core_class = cc;
    p->class_count[0] = procs;
    p->ncores = procs;
    return PM_OK;
}
