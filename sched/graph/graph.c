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
#include <sys/mman.h>

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

/* The name table: open addressing, linear probing, load at most 1/2.  Slot
 * i is hash[4i .. 4i+3]: the node (PM_NONE when empty), a 31-bit tag of the
 * name's hash whose top bit says "longer than 8 bytes", and the name's first
 * 8 bytes, zero-padded.  A name of at most 8 bytes is then recognised from
 * its slot alone, one cache line, without touching the node or the names
 * buffer; longer ones are confirmed against the names buffer.  The home slot
 * is the tag's low bits, so a rehash needs no names. */
#define GRAPH_SLOT 4
#define GRAPH_LONG 0x80000000u

typedef struct graph_key {
    uint32_t tag;
    uint32_t pre[2];
} graph_key;

static uint64_t graph_le64(uint64_t w)
{
#if defined(__BYTE_ORDER__) && __BYTE_ORDER__ == __ORDER_BIG_ENDIAN__
    return __builtin_bswap64(w);
#else
    return w;
#endif
}

/* Up to 8 bytes of s as a little-endian word (a byte loop: no read past
 * the name, and no serial multiply chain as in byte-wise hashes). */
static uint64_t graph_word(const char *s, size_t n)
{
    uint64_t w = 0;
    if (n >= 8) {
        memcpy(&w, s, 8); /* one load; the table's words are little-endian */
        return graph_le64(w);
    }
    for (size_t i = 0; i < n; i++)
        w |= (uint64_t)(unsigned char)s[i] << (8 * i);
    return w;
}

/* The hash folds the name in 8-byte words, each mixed with the steps of
 * MurmurHash3's 64-bit finalizer, then finalizes; the tag is its top half. */
static graph_key graph_key_of(const char *s, size_t len)
{
    uint64_t w = graph_word(s, len);
    uint64_t h = w ^ ((uint64_t)len * 0x9e3779b97f4a7c15ULL);
    for (size_t i = 8; i < len; i += 8) {
        h = (h ^ graph_word(s + i, len - i)) * 0xc4ceb9fe1a85ec53ULL;
        h ^= h >> 29;
    }
    h ^= h >> 33;
    h *= 0xff51afd7ed558ccdULL;
    h ^= h >> 33;
    h *= 0xc4ceb9fe1a85ec53ULL;
    h ^= h >> 33;
    graph_key k = { (uint32_t)(h >> 32) & ~GRAPH_LONG, { (uint32_t)w, (uint32_t)(w >> 32) } };
    if (len > 8)
        k.tag |= GRAPH_LONG;
    return k;
}

static bool graph_slot_is(const uint32_t *slot, const graph_key *k)
{
    return slot[1] == k->tag && slot[2] == k->pre[0] && slot[3] == k->pre[1];
}

static void graph_slot_put(uint32_t *h, uint32_t cap, uint32_t v, const graph_key *k)
{
    uint32_t i = k->tag & (cap - 1);
    while (h[GRAPH_SLOT * i] != PM_NONE)
        i = (i + 1) & (cap - 1);
    uint32_t *slot = h + GRAPH_SLOT * i;
    slot[0] = v;
    slot[1] = k->tag;
    slot[2] = k->pre[0];
    slot[3] = k->pre[1];
}

/* Big tables are looked up at random: on 2 MiB pages (where the system
 * grants them on request) their lookups miss the TLB far less often. */
static void *graph_alloc_table(size_t bytes)
{
    const size_t huge = (size_t)2 << 20;
    if (bytes < huge)
        return malloc(bytes);
    size_t size = (bytes + huge - 1) / huge * huge;
    void *p = aligned_alloc(huge, size);
#ifdef MADV_HUGEPAGE
    if (p)
        madvise(p, size, MADV_HUGEPAGE);
#endif
    return p;
}

static int graph_rehash(pm_graph *g, uint32_t cap)
{
    size_t bytes = (size_t)cap * GRAPH_SLOT * sizeof(uint32_t);
    uint32_t *h = graph_alloc_table(bytes);
    if (!h)
        return PM_ENOMEM;
    memset(h, 0xff, bytes);
    for (uint32_t i = 0; i < g->hash_cap; i++) {
        const uint32_t *old = g->hash + GRAPH_SLOT * i;
        graph_key k = { old[1], { old[2], old[3] } };
        if (old[0] != PM_NONE)
            graph_slot_put(h, cap, old[0], &k);
    }
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

/* From slot *at on: the first node whose slot matches k (and, for a long
 * name, whose name is `name` when confirm is set), or PM_NONE. */
static uint32_t graph_probe(const pm_graph *g, uint32_t *at, const graph_key *k,
                            const char *name, size_t len, bool confirm)
{
    uint32_t mask = g->hash_cap - 1;
    for (uint32_t i = *at;; i = (i + 1) & mask) {
        const uint32_t *slot = g->hash + GRAPH_SLOT * i;
        *at = i;
        if (slot[0] == PM_NONE)
            return PM_NONE;
        if (graph_slot_is(slot, k) &&
            (!(k->tag & GRAPH_LONG) || !confirm || graph_name_is(g, slot[0], name, len)))
            return slot[0];
    }
}

uint32_t pm_graph_find(const pm_graph *g, const char *name, size_t len)
{
    if (!g->hash_cap)
        return PM_NONE;
    graph_key k = graph_key_of(name, len);
    uint32_t at = k.tag & (g->hash_cap - 1);
    return graph_probe(g, &at, &k, name, len, true);
}

/* One group of at most 64 lookups, in stages: each stage starts the memory
 * loads the next one needs for all lookups of the group (the slot; for long
 * names the node and its name), so their cache misses overlap instead of
 * queueing one after another. */
static void graph_find_group(const pm_graph *g, const char *const *names, const size_t *lens,
                             size_t n, uint32_t *ids)
{
    graph_key key[64];
    uint32_t at[64];
    for (size_t k = 0; k < n; k++) {
        key[k] = graph_key_of(names[k], lens[k]);
        at[k] = key[k].tag & (g->hash_cap - 1);
        __builtin_prefetch(g->hash + GRAPH_SLOT * at[k]);
    }
    bool longs = false;
    for (size_t k = 0; k < n; k++) {
        ids[k] = graph_probe(g, &at[k], &key[k], names[k], lens[k], false);
        if (ids[k] != PM_NONE && (key[k].tag & GRAPH_LONG)) {
            __builtin_prefetch(&g->nodes[ids[k]].name);
            longs = true;
        }
    }
    if (!longs)
        return;
    for (size_t k = 0; k < n; k++)
        if (ids[k] != PM_NONE && (key[k].tag & GRAPH_LONG))
            __builtin_prefetch(g->names + g->nodes[ids[k]].name);
    for (size_t k = 0; k < n; k++)
        if (ids[k] != PM_NONE && (key[k].tag & GRAPH_LONG) &&
            !graph_name_is(g, ids[k], names[k], lens[k]))
            ids[k] = pm_graph_find(g, names[k], lens[k]); /* same tag, other name: rare */
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
    graph_key k = graph_key_of(name, len);
    graph_slot_put(g->hash, g->hash_cap, g->nnodes, &k);
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

pm_edge pm_graph_edge_default(uint32_t src, uint32_t dst)
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

static uint32_t *graph_alloc_zeroed(size_t n)
{
    uint32_t *p = graph_alloc_table(n * sizeof *p);
    if (p)
        memset(p, 0, n * sizeof *p);
    return p;
}

/* Prefix sums: off[v + 1] holds v's count on entry, v's first slot after. */
static void graph_prefix(uint32_t *off, uint32_t n)
{
    for (uint32_t v = 0; v < n; v++)
        off[v + 1] += off[v];
}

/* Counting sort of edge ids by source and by destination at once: each
 * pass reads the edge records once for both lists (they are the largest
 * array of a big graph, so reading them is what costs). */
static int graph_build_csr(pm_graph *g)
{
    uint32_t n = g->nnodes, m = g->nedges;
    uint32_t *oo = graph_alloc_zeroed((size_t)n + 1), *io = graph_alloc_zeroed((size_t)n + 1);
    uint32_t *ol = graph_alloc_table(((size_t)m + 1) * sizeof *ol);
    uint32_t *il = graph_alloc_table(((size_t)m + 1) * sizeof *il);
    if (!oo || !io || !ol || !il) {
        free(oo);
        free(io);
        free(ol);
        free(il);
        return PM_ENOMEM;
    }
    for (uint32_t e = 0; e < m; e++) {
        oo[g->edges[e].src + 1]++;
        io[g->edges[e].dst + 1]++;
    }
    graph_prefix(oo, n);
    graph_prefix(io, n);
    for (uint32_t e = 0; e < m; e++) {
        ol[oo[g->edges[e].src]++] = e;
        il[io[g->edges[e].dst]++] = e;
    }
    memmove(oo + 1, oo, (size_t)n * sizeof *oo); /* back to each first slot */
    memmove(io + 1, io, (size_t)n * sizeof *io);
    oo[0] = io[0] = 0;
    g->out_off = oo;
    g->out_edge = ol;
    g->in_off = io;
    g->in_edge = il;
    return PM_OK;
}

int pm_graph_finalize(pm_graph *g)
{
    if (g->finalized)
        return PM_OK;
    int rc = graph_build_csr(g);
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

/* The class a pin fixes for v, or PM_NONE when v may use any class. */
static uint32_t graph_pinned_class(const pm_graph *g, const pm_node *n)
{
    if (n->pin_core != PM_NONE && n->pin_core < g->platform.ncores)
        return g->platform.core_class[n->pin_core];
    return n->pin_class;
}

int64_t pm_graph_min_cycles(const pm_graph *g, uint32_t v)
{
    const pm_node *n = &g->nodes[v];
    if (n->class_cycles == PM_NONE)
        return n->cycles;
    /* A pinned node runs on its pin's class on every map, so only that
     * class's time is a floor; the fastest other class would be optimistic. */
    uint32_t pin = graph_pinned_class(g, n);
    int64_t best = PM_CANNOT_RUN;
    for (uint32_t c = 0; c < g->platform.nclasses; c++) {
        if (pin != PM_NONE && c != pin)
            continue;
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

bool pm_graph_can_run(const pm_graph *g, uint32_t v, uint32_t c)
{
    const pm_node *n = &g->nodes[v];
    uint32_t cls = g->platform.core_class[c];
    if (n->pin_core != PM_NONE && n->pin_core != c)
        return false;
    if (n->pin_class != PM_NONE && n->pin_class != cls)
        return false;
    return pm_graph_cycles_on(g, v, cls) >= 0;
}
