/*
 * topo.h - the host's processing units (hwloc) and which of them the
 * real-core runner's threads use (docs/runner.md).
 *
 * Choice rule: distinct physical cores first, then SMT siblings of cores
 * already used; among cores, those of the first L3 (last-level) cache (else package)
 * that holds enough cores come first, so threads share a cache where
 * possible.  Each chosen PU carries a one-line reason.  Only PUs allowed
 * to this process are considered: its cgroup cpuset and, on this machine,
 * its affinity mask at pm_topo_create (taskset).
 *
 * Ownership: pm_topo_destroy(NULL) and pm_topo_choice_free(NULL) are no-ops;
 * a choice owns its arrays.  Thread safety: after pm_topo_create, every call
 * only reads the topology, and pm_topo_bind_thread may be called from any
 * number of threads at once (hwloc binding calls do not modify it).
 */
#ifndef PACEMAP_TOPO_H
#define PACEMAP_TOPO_H

#include <stdbool.h>
#include <stdint.h>

#include "pacemap/error.h"

#define PM_TOPO_WHY 200 /* bytes of one reason line */

typedef struct pm_topo pm_topo;

/* Load the topology of this machine (synthetic == NULL) or an hwloc
 * synthetic description such as "pack:2 l3:1 core:4 pu:2" (for tests; PU
 * OS indices then equal logical indices and binding is not possible).
 * PM_EPLATFORM when hwloc fails or the description is malformed. */
int pm_topo_create(const char *synthetic, pm_topo **out);
void pm_topo_destroy(pm_topo *t);

/* Allowed PUs, physical cores having one, packages having one. O(PUs). */
uint32_t pm_topo_npus(const pm_topo *t);
uint32_t pm_topo_ncores(const pm_topo *t);
uint32_t pm_topo_npackages(const pm_topo *t);

typedef struct pm_topo_choice {
    uint32_t n;              /* threads */
    uint32_t *pu;            /* n OS indices of the PU of each thread */
    char (*why)[PM_TOPO_WHY];/* n reasons */
    bool shared;             /* some PU carries two threads (oversubscribed) */
    char summary[256];       /* one line: cores, siblings, shared cache */
} pm_topo_choice;

/* Choose PUs for `n` threads (n >= 1).  `list`/`nlist` (may be NULL/0) are
 * OS indices the user gave (--cores): used in that order, each must be an
 * allowed PU.  When fewer PUs are available than threads: PM_EPLATFORM
 * with diag naming both counts, unless `oversubscribe` (then PUs are
 * reused round-robin and the choice says so).  PM_ENAME for a listed PU
 * that does not exist or is not allowed (diag names it), PM_ENOMEM.
 * O(PUs log PUs + n). */
int pm_topo_choose(const pm_topo *t, uint32_t n, const uint32_t *list, uint32_t nlist,
                   bool oversubscribe, pm_topo_choice *out, pm_diag *diag);
void pm_topo_choice_free(pm_topo_choice *c);

/* Pin the calling thread to PU `os_index` (hwloc_set_cpubind with
 * HWLOC_CPUBIND_THREAD).  PM_EPLATFORM when the system refuses (restricted
 * cpuset, container, synthetic topology): the caller warns and runs
 * unpinned. */
int pm_topo_bind_thread(const pm_topo *t, uint32_t os_index);

/* Parse a --cores list: "0,2,4-7" (OS indices, ranges inclusive, at most
 * 4096 entries).  *out is malloc'ed (caller frees).  PM_ESYNTAX with diag
 * (column = 1-based offset of the fault), PM_ENOMEM. */
int pm_topo_parse_list(const char *s, uint32_t **out, uint32_t *n, pm_diag *diag);

#endif
