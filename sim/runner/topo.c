/*
 * topo.c - host topology through hwloc and the choice of processing units
 * for the runner's threads (topo.h).
 *
 * The topology is flattened once into a table of allowed PUs with their
 * core, SMT rank, L3 cache and package; choosing is then a stable sort of
 * that table by (outside the preferred cache group, SMT rank, logical
 * order).  No printing: reasons are returned as text.
 */
#include "pacemap/topo.h"

#include <hwloc.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

typedef struct topo_pu {
    uint32_t os, core, rank; /* core: logical index of its core; rank: SMT position */
    uint32_t l3, pkg;        /* logical indices, PM_TOPO_NONE when absent */
    uint32_t order;          /* logical index of the PU */
    bool preferred;          /* inside the chosen cache group */
} topo_pu;

#define PM_TOPO_NONE UINT32_MAX

struct pm_topo {
    hwloc_topology_t h;
    uint32_t npus, ncores, npkgs;
    topo_pu *pus;
};

static uint32_t topo_ancestor(hwloc_topology_t h, hwloc_obj_t pu, hwloc_obj_type_t type)
{
    hwloc_obj_t a = hwloc_get_ancestor_obj_by_type(h, type, pu);
    return a ? a->logical_index : PM_TOPO_NONE;
}

/* Count distinct values of a field over the table (values are small
 * logical indices, so a mark array is enough). */
static uint32_t topo_distinct(const topo_pu *p, uint32_t n, size_t field)
{
    uint32_t count = 0;
    for (uint32_t i = 0; i < n; i++) {
        uint32_t v = *(const uint32_t *)((const char *)&p[i] + field);
        bool seen = false;
        for (uint32_t j = 0; j < i && !seen; j++)
            seen = *(const uint32_t *)((const char *)&p[j] + field) == v;
        count += !seen;
    }
    return count;
}

/* The PUs this process may run on: hwloc already drops those outside its
 * cgroup cpuset; an affinity mask (taskset) narrows them further. */
static hwloc_bitmap_t topo_allowed(hwloc_topology_t h)
{
    hwloc_bitmap_t set = hwloc_bitmap_alloc();
    if (!set)
        return NULL;
    if (!hwloc_topology_is_thissystem(h) ||
        hwloc_get_cpubind(h, set, HWLOC_CPUBIND_PROCESS) != 0 || hwloc_bitmap_iszero(set))
        hwloc_bitmap_copy(set, hwloc_topology_get_allowed_cpuset(h));
    return set;
}

static void topo_fill(pm_topo *t, hwloc_obj_t pu, uint32_t i)
{
    hwloc_obj_t core = hwloc_get_ancestor_obj_by_type(t->h, HWLOC_OBJ_CORE, pu);
    topo_pu *p = &t->pus[i];
    p->os = pu->os_index;
    p->order = i;
    /* a PU without a core object counts as a core of its own */
    p->core = core ? core->logical_index : 0x80000000u + i;
    p->rank = 0;
    for (uint32_t j = 0; j < i; j++)
        p->rank += t->pus[j].core == p->core;
    p->l3 = topo_ancestor(t->h, pu, HWLOC_OBJ_L3CACHE);
    p->pkg = topo_ancestor(t->h, pu, HWLOC_OBJ_PACKAGE);
}

static int topo_flatten(pm_topo *t)
{
    int n = hwloc_get_nbobjs_by_type(t->h, HWLOC_OBJ_PU);
    hwloc_bitmap_t allowed = topo_allowed(t->h);
    t->pus = n > 0 ? calloc((size_t)n, sizeof *t->pus) : NULL;
    if (!allowed || !t->pus) {
        hwloc_bitmap_free(allowed);
        return n > 0 ? PM_ENOMEM : PM_EPLATFORM;
    }
    uint32_t k = 0;
    for (int i = 0; i < n; i++) {
        hwloc_obj_t pu = hwloc_get_obj_by_type(t->h, HWLOC_OBJ_PU, (unsigned)i);
        if (hwloc_bitmap_isset(allowed, pu->os_index))
            topo_fill(t, pu, k++);
    }
    hwloc_bitmap_free(allowed);
    if (k == 0)
        return PM_EPLATFORM;
    t->npus = k;
    t->ncores = topo_distinct(t->pus, t->npus, offsetof(topo_pu, core));
    t->npkgs = topo_distinct(t->pus, t->npus, offsetof(topo_pu, pkg));
    return PM_OK;
}

int pm_topo_create(const char *synthetic, pm_topo **out)
{
    *out = NULL;
    pm_topo *t = calloc(1, sizeof *t);
    if (!t)
        return PM_ENOMEM;
    if (hwloc_topology_init(&t->h) != 0) {
        free(t);
        return PM_EPLATFORM;
    }
    if ((synthetic && hwloc_topology_set_synthetic(t->h, synthetic) != 0) ||
        hwloc_topology_load(t->h) != 0) {
        hwloc_topology_destroy(t->h);
        free(t);
        return PM_EPLATFORM;
    }
    int rc = topo_flatten(t);
    if (rc != PM_OK) {
        pm_topo_destroy(t);
        return rc;
    }
    *out = t;
    return PM_OK;
}

void pm_topo_destroy(pm_topo *t)
{
    if (!t)
        return;
    hwloc_topology_destroy(t->h);
    free(t->pus);
    free(t);
}

uint32_t pm_topo_npus(const pm_topo *t) { return t->npus; }
uint32_t pm_topo_ncores(const pm_topo *t) { return t->ncores; }
uint32_t pm_topo_npackages(const pm_topo *t) { return t->npkgs; }

/* Distinct cores among the PUs whose `field` equals v. */
static uint32_t topo_cores_in(const pm_topo *t, size_t field, uint32_t v)
{
    uint32_t count = 0;
    for (uint32_t i = 0; i < t->npus; i++) {
        const topo_pu *p = &t->pus[i];
        if (*(const uint32_t *)((const char *)p + field) == v && p->rank == 0)
            count++;
    }
    return count;
}

/* The first L3 cache, else the first package, with at least n cores:
 * writes its kind and index; false when no single group holds n cores. */
static bool topo_group(const pm_topo *t, uint32_t n, size_t *field, uint32_t *v)
{
    const size_t fields[2] = {offsetof(topo_pu, l3), offsetof(topo_pu, pkg)};
    for (int f = 0; f < 2; f++)
        for (uint32_t i = 0; i < t->npus; i++) {
            uint32_t val = *(const uint32_t *)((const char *)&t->pus[i] + fields[f]);
            if (val != PM_TOPO_NONE && topo_cores_in(t, fields[f], val) >= n) {
                *field = fields[f];
                *v = val;
                return true;
            }
        }
    return false;
}

static int topo_cmp(const void *a, const void *b)
{
    const topo_pu *x = a, *y = b;
    if (x->preferred != y->preferred)
        return x->preferred ? -1 : 1;
    if (x->rank != y->rank)
        return x->rank < y->rank ? -1 : 1;
    return x->order < y->order ? -1 : x->order > y->order;
}

static const topo_pu *topo_find_os(const pm_topo *t, uint32_t os)
{
    for (uint32_t i = 0; i < t->npus; i++)
        if (t->pus[i].os == os)
            return &t->pus[i];
    return NULL;
}

#define TOPO_PLACE 96 /* the longest place below with 10-digit numbers */

/* Where PU p sits, in plain words; the numbers count from 0 in the order
 * the machine lists its cores, packages and caches. */
static void topo_place(const topo_pu *p, char *buf)
{
    int len = snprintf(buf, TOPO_PLACE, "on physical core %u", p->core);
    if (p->pkg != PM_TOPO_NONE)
        len += snprintf(buf + len, TOPO_PLACE - (size_t)len, " of package %u", p->pkg);
    if (p->l3 != PM_TOPO_NONE)
        snprintf(buf + len, TOPO_PLACE - (size_t)len, ", last-level cache %u", p->l3);
}

/* Reason for thread i placed on p, given the PUs of threads before it. */
static void topo_reason(const pm_topo *t, const pm_topo_choice *c, uint32_t i,
                        const topo_pu *p, bool listed)
{
    char place[TOPO_PLACE];
    topo_place(p, place);
    uint32_t same_pu = PM_TOPO_NONE, same_core = PM_TOPO_NONE;
    for (uint32_t j = 0; j < i; j++) {
        const topo_pu *q = topo_find_os(t, c->pu[j]);
        if (q == p && same_pu == PM_TOPO_NONE)
            same_pu = j;
        else if (q->core == p->core && same_core == PM_TOPO_NONE)
            same_core = j;
    }
    const char *src = listed ? "given by --cores; " : "";
    if (same_pu != PM_TOPO_NONE)
        snprintf(c->why[i], PM_TOPO_WHY, "%s%s; shared with map core %u "
                 "(--oversubscribe)", src, place, same_pu);
    else if (same_core != PM_TOPO_NONE)
        snprintf(c->why[i], PM_TOPO_WHY, "%s%s; SMT sibling of map core %u "
                 "(only %u physical cores)", src, place, same_core, t->ncores);
    else
        snprintf(c->why[i], PM_TOPO_WHY, "%s%s; a core of its own", src, place);
}

static void topo_summary(const pm_topo *t, pm_topo_choice *c)
{
    uint32_t cores = 0, l3 = PM_TOPO_NONE, pkg = PM_TOPO_NONE;
    bool one_l3 = true, one_pkg = true;
    for (uint32_t i = 0; i < c->n; i++) {
        const topo_pu *p = topo_find_os(t, c->pu[i]);
        bool first = true;
        for (uint32_t j = 0; j < i && first; j++)
            first = topo_find_os(t, c->pu[j])->core != p->core;
        cores += first;
        one_l3 = one_l3 && p->l3 != PM_TOPO_NONE && (i == 0 || p->l3 == l3);
        one_pkg = one_pkg && (i == 0 || p->pkg == pkg);
        l3 = p->l3;
        pkg = p->pkg;
    }
    snprintf(c->summary, sizeof c->summary,
             "%u thread%s on %u of %u physical cores (%u PU%s allowed)%s%s", c->n,
             c->n == 1 ? "" : "s", cores, t->ncores, t->npus, t->npus == 1 ? "" : "s",
             one_l3 ? ", sharing one last-level cache" : one_pkg ? ", one package" : "",
             c->shared ? ", PUs shared" : "");
}

static int topo_alloc_choice(pm_topo_choice *c, uint32_t n)
{
    memset(c, 0, sizeof *c);
    c->pu = calloc(n, sizeof *c->pu);
    c->why = calloc(n, sizeof *c->why);
    if (!c->pu || !c->why) {
        pm_topo_choice_free(c);
        return PM_ENOMEM;
    }
    c->n = n;
    return PM_OK;
}

/* Automatic order of the allowed PUs (topo.h rule) into `sorted`. */
static void topo_rank(const pm_topo *t, uint32_t n, topo_pu *sorted)
{
    size_t field = 0;
    uint32_t v = 0;
    bool grouped = topo_group(t, n, &field, &v);
    for (uint32_t i = 0; i < t->npus; i++) {
        sorted[i] = t->pus[i];
        sorted[i].preferred =
            grouped && *(const uint32_t *)((const char *)&sorted[i] + field) == v;
    }
    qsort(sorted, t->npus, sizeof *sorted, topo_cmp);
}

static int topo_check_list(const pm_topo *t, const uint32_t *list, uint32_t nlist,
                           pm_diag *diag)
{
    for (uint32_t i = 0; i < nlist; i++)
        if (!topo_find_os(t, list[i])) {
            pm_diag_set(diag, "", 0, 0, "--cores: PU %u does not exist or is not allowed "
                        "to this process (%u PUs allowed)", list[i], t->npus);
            return PM_ENAME;
        }
    return PM_OK;
}

int pm_topo_choose(const pm_topo *t, uint32_t n, const uint32_t *list, uint32_t nlist,
                   bool oversubscribe, pm_topo_choice *out, pm_diag *diag)
{
    memset(out, 0, sizeof *out);
    if (n < 1)
        return PM_EINVAL;
    int rc = topo_check_list(t, list, nlist, diag);
    if (rc != PM_OK)
        return rc;
    uint32_t avail = nlist ? nlist : t->npus;
    if (avail < n && !oversubscribe) {
        pm_diag_set(diag, "", 0, 0, "the map has %u cores but only %u processing unit%s "
                    "%s %s; use fewer cores (-p) or --oversubscribe", n, avail,
                    avail == 1 ? "" : "s", avail == 1 ? "is" : "are",
                    nlist ? "listed in --cores" : "available to this process");
        return PM_EPLATFORM;
    }
    topo_pu *sorted = malloc(t->npus * sizeof *sorted);
    if (!sorted || (rc = topo_alloc_choice(out, n)) != PM_OK) {
        free(sorted);
        return PM_ENOMEM;
    }
    topo_rank(t, n, sorted);
    for (uint32_t i = 0; i < n; i++) {
        out->pu[i] = nlist ? list[i % nlist] : sorted[i % t->npus].os;
        out->shared = out->shared || i >= avail;
        topo_reason(t, out, i, topo_find_os(t, out->pu[i]), nlist > 0);
    }
    free(sorted);
    topo_summary(t, out);
    return PM_OK;
}

void pm_topo_choice_free(pm_topo_choice *c)
{
    if (!c)
        return;
    free(c->pu);
    free(c->why);
    memset(c, 0, sizeof *c);
}

int pm_topo_bind_thread(const pm_topo *t, uint32_t os_index)
{
    hwloc_obj_t pu = hwloc_get_pu_obj_by_os_index(t->h, os_index);
    if (!pu || !hwloc_topology_is_thissystem(t->h))
        return PM_EPLATFORM;
    return hwloc_set_cpubind(t->h, pu->cpuset, HWLOC_CPUBIND_THREAD) == 0 ? PM_OK
                                                                       : PM_EPLATFORM;
}

/* One number of a --cores list at s[*i]; false when none is there. */
static bool topo_number(const char *s, size_t *i, uint32_t *v)
{
    if (s[*i] < '0' || s[*i] > '9')
        return false;
    uint64_t x = 0;
    while (s[*i] >= '0' && s[*i] <= '9' && x <= 1000000u)
        x = x * 10u + (uint64_t)(s[(*i)++] - '0');
    *v = (uint32_t)x;
    return x <= 1000000u;
}

int pm_topo_parse_list(const char *s, uint32_t **out, uint32_t *n, pm_diag *diag)
{
    enum { MAXN = 4096 };
    *out = NULL;
    *n = 0;
    uint32_t *v = malloc(MAXN * sizeof *v);
    if (!v)
        return PM_ENOMEM;
    size_t i = 0;
    uint32_t count = 0;
    for (;;) {
        uint32_t a, b;
        if (!topo_number(s, &i, &a))
            goto bad;
        b = a;
        if (s[i] == '-' && (++i, !topo_number(s, &i, &b)))
            goto bad;
        if (b < a || b - a >= MAXN - count)
            goto bad;
        for (uint32_t x = a; x <= b; x++)
            v[count++] = x;
        if (s[i] == '\0')
            break;
        if (s[i++] != ',')
            goto bad;
    }
    *out = v;
    *n = count;
    return PM_OK;
bad:
    pm_diag_set(diag, "--cores", 1, (uint32_t)i + 1u, "expected a list like 0,2,4-7");
    free(v);
    return PM_ESYNTAX;
}
