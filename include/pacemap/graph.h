/*
 * graph.h - the processing graph and its platform (cores, transfers).
 *
 * A pm_graph holds nodes (actors with execution times), edges (data paths
 * with delays, word counts and multirate rates) and the platform the
 * scenario describes.  The struct is open for reading: analysis, scheduling
 * and simulation walk its arrays directly.  Build it with the pm_graph_add_*
 * functions (the scenario reader does), then call pm_graph_finalize() once
 * to build the adjacency arrays; after that the graph is read-only and may be
 * shared between threads.
 *
 * Ownership: the graph owns every array and string in it; names returned by
 * pm_graph_node_name() live as long as the graph.  pm_graph_destroy(NULL) is
 * a no-op.
 */
#ifndef PACEMAP_GRAPH_H
#define PACEMAP_GRAPH_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#define PM_NONE UINT32_MAX            /* "no index" for node/core/class ids */
#define PM_CANNOT_RUN INT64_C(-1)     /* per-class cycles: class cannot run the node */
#define PM_MAX_VALUE ((INT64_C(1) << 62) - 1) /* largest integer in a scenario */

/* What the real-core runner executes for a node (docs/runner.md). */
typedef enum pm_work_kind {
    PM_WORK_SPIN = 0, /* calibrated busy loop for the node's cycles */
    PM_WORK_FIR,      /* FIR filter, param = taps */
    PM_WORK_BIQUAD,   /* cascade of biquads, param = sections */
    PM_WORK_FFT       /* complex FFT, param = N (a power of two) */
} pm_work_kind;

typedef enum pm_interconnect {
    PM_P2P = 0, /* transfers overlap freely */
    PM_BUS      /* one transfer at a time, oldest request first */
} pm_interconnect;

typedef struct pm_node {
    uint32_t name;        /* offset of the NUL-terminated name in g->names */
    uint32_t line, col;   /* where the scenario declared it (0 if built by code) */
    int64_t cycles;       /* uniform execution time, or -1 when per class */
    uint32_t class_cycles;/* per class: offset into g->class_cycles, else PM_NONE */
    uint32_t pin_core;    /* PM_NONE or a core index */
    uint32_t pin_class;   /* PM_NONE or a class index */
    pm_work_kind work;
    uint32_t work_param;
} pm_node;

typedef struct pm_edge {
    uint32_t src, dst;    /* node indices */
    uint32_t line, col;   /* where the scenario wrote it */
    int64_t delay;        /* initial tokens (delays), >= 0 */
    int64_t words;        /* words moved per token, >= 0 (default 1) */
    int64_t produce;      /* tokens src makes per firing (default 1) */
    int64_t consume;      /* tokens dst takes per firing (default 1) */
} pm_edge;

typedef struct pm_comm {
    int64_t latency;      /* cycles from producer end to arrival */
    int64_t per_word;     /* extra cycles per word moved */
    int64_t send;         /* cycles the producer's core is busy sending */
    int64_t recv;         /* cycles the consumer's core is busy receiving */
} pm_comm;

/* Cores and how data moves between them.  Without a `procs` statement there
 * is one class named "core" with one core (the default of docs/format.md). */
typedef struct pm_platform {
    uint32_t nclasses;
    char **class_names;    /* nclasses names, owned */
    uint32_t *class_count; /* cores of each class */
    uint32_t ncores;
    uint32_t *core_class;  /* class of each core; cores numbered as written */
    bool classes_named;    /* `procs dsp:2 host:1` form (vs `procs 4`) */
    bool procs_given;      /* a `procs` statement was present */
    pm_comm comm;
    pm_interconnect interconnect;
    uint64_t clock_hz;     /* 0 = not given */
    uint64_t rate_hz;      /* 0 = not given; iteration rate the application needs */
    int64_t word_bytes;    /* bytes a word of edge data takes (comm word-bytes=);
                              0 = not given (4) */
    bool block_transfers;  /* comm transfer=block (the reader's default): a multirate
                              producer firing sends its tokens as one transfer
                              (docs/multirate.md); false (transfer=token, and graphs
                              built by pm_graph_create): one transfer per consumer
                              firing it feeds */
    char *title;           /* NULL = not given; owned */
} pm_platform;

typedef struct pm_graph {
    char *file;              /* scenario path for diagnostics (owned, may be "") */
    uint32_t nnodes, nedges;
    pm_node *nodes;
    pm_edge *edges;
    int64_t *class_cycles;   /* per-class cycle rows, nclasses entries each */
    size_t nclass_cycles, class_cycles_cap;
    char *names;             /* NUL-separated node names */
    size_t names_len, names_cap;
    uint32_t nodes_cap, edges_cap;
    /* name -> node hash table (open addressing), internal: hash_cap slots
     * of 4 words each, see graph.c */
    uint32_t *hash;
    uint32_t hash_cap;
    /* adjacency, built by pm_graph_finalize(): out-edges of v are
     * out_edge[out_off[v] .. out_off[v+1]) and likewise for in-edges */
    uint32_t *out_off, *out_edge;
    uint32_t *in_off, *in_edge;
    bool finalized;
    pm_platform platform;
} pm_graph;

/* A new empty graph with the default platform (1 core, p2p, no costs).
 * `file` names the source for diagnostics (may be NULL).  NULL on ENOMEM. */
pm_graph *pm_graph_create(const char *file);
void pm_graph_destroy(pm_graph *g);

/* Add a node named name[0..len) with uniform `cycles` (>= 0).  PM_ENAME if
 * the name exists, PM_ELIMIT past PM_GRAPH_MAX_NODES.  *id may be NULL. */
#define PM_GRAPH_MAX_NODES (UINT32_C(1) << 24)
#define PM_GRAPH_MAX_EDGES (UINT32_C(1) << 26)
int pm_graph_add_node(pm_graph *g, const char *name, size_t len,
                      int64_t cycles, uint32_t *id);

/* Give node v per-class cycles: row[c] for each class c of the platform
 * (PM_CANNOT_RUN where class c cannot run it).  The platform's classes must
 * be set before.  Copies `row`. */
int pm_graph_set_class_cycles(pm_graph *g, uint32_t v, const int64_t *row);

/* Node index by name, or PM_NONE. O(1) expected. */
uint32_t pm_graph_find(const pm_graph *g, const char *name, size_t len);

/* "Did you mean": the node (or class) whose name is nearest to the unknown
 * name[0..len) by optimal string alignment distance (edits and adjacent
 * swaps), when it is within one step per three characters; else PM_NONE.
 * Ties: the lowest index.  For error messages only: O(names x len^2). */
uint32_t pm_graph_suggest_node(const pm_graph *g, const char *name, size_t len);
uint32_t pm_graph_suggest_class(const pm_graph *g, const char *name, size_t len);

/* Look up n names at once: ids[k] = pm_graph_find(g, names[k], lens[k]).
 * Same result as n single calls, several times faster on graphs too big for
 * the cache, because the lookups' memory loads overlap.  O(n) expected. */
void pm_graph_find_many(const pm_graph *g, const char *const *names, const size_t *lens,
                        size_t n, uint32_t *ids);

/* Add an edge (copied).  Node indices must exist.  PM_ELIMIT past
 * PM_GRAPH_MAX_EDGES.  *id may be NULL. */
int pm_graph_add_edge(pm_graph *g, const pm_edge *e, uint32_t *id);

/* An edge with defaults: no delay, 1 word, rates 1/1. */
pm_edge pm_graph_edge_default(uint32_t src, uint32_t dst);

/* Set the platform's cores: `nclasses` classes with names and counts.
 * names == NULL means the identical-core form (one class "core").
 * Replaces any earlier setting; must come before per-class cycles. */
int pm_graph_set_cores(pm_graph *g, uint32_t nclasses, const char *const *names,
                       const uint32_t *counts);

/* Change the number of identical cores to `procs` (the -p option), keeping
 * the rest of the platform.  PM_EPLATFORM when the platform has named
 * classes or a node is pinned to a core that no longer exists (diag names
 * the node and its scenario line).  Works on a finalized graph. */
#include "pacemap/error.h"
int pm_graph_set_procs_override(pm_graph *g, uint32_t procs, pm_diag *diag);

/* Class index by name, or PM_NONE. */
uint32_t pm_graph_find_class(const pm_graph *g, const char *name, size_t len);

/* Build adjacency arrays; the graph is read-only afterwards. */
int pm_graph_finalize(pm_graph *g);

const char *pm_graph_node_name(const pm_graph *g, uint32_t v);

/* Execution time of v on a core of class c, or PM_CANNOT_RUN. */
int64_t pm_graph_cycles_on(const pm_graph *g, uint32_t v, uint32_t c);

/* Whether core c may run node v: its pin (core or class) allows c and
 * c's class has cycles for v. */
bool pm_graph_can_run(const pm_graph *g, uint32_t v, uint32_t c);

/* Smallest execution time of v over the classes that can run it (the
 * optimistic time every floor uses), or PM_CANNOT_RUN if none can.  A pin
 * (to a core or a class) leaves only the pinned class. */
int64_t pm_graph_min_cycles(const pm_graph *g, uint32_t v);

/* True when every edge has produce == consume == 1. */
bool pm_graph_is_single_rate(const pm_graph *g);

#endif
