/*
 * sweep_jobs.c - the sweep's points on several threads.
 *
 * Each point's own map, its simulation and its floors depend only on the
 * core count, so workers compute them side by side, each on its own plan:
 * the plan is changed by setting its cores, and maps are made from it.
 * A worker's plan is made from a deep copy of the caller's scenario, so it
 * expands and maps exactly as the caller's would.  Which point a worker
 * takes is first come, first served; what a point holds does not depend on
 * which worker made it.  The rule that lets a point run an earlier count's
 * map stays with the caller, in core-count order (sweep.c).
 * What it does not do: decide anything about a point itself.
 */
#include "sweep_internal.h"

#include <pthread.h>
#include <stdlib.h>
#include <string.h>

/* Words of one slot of the graph's name table (graph.c). */
#define SJ_HASH_SLOT 4u

static int sj_dup(void *dst, const void *src, size_t n, size_t elem)
{
    void **d = dst;
    *d = NULL;
    if (!src)
        return PM_OK;
    *d = malloc(n * elem + 1);
    if (!*d)
        return PM_ENOMEM;
    if (n)
        memcpy(*d, src, n * elem);
    return PM_OK;
}

static int sj_dup_str(char **dst, const char *src)
{
    return sj_dup(dst, src, src ? strlen(src) + 1 : 0, 1);
}

static int sj_platform(pm_platform *d, const pm_platform *s)
{
    *d = *s;
    d->class_names = NULL;
    d->class_count = NULL;
    d->core_class = NULL;
    d->title = NULL;
    int rc = sj_dup(&d->class_count, s->class_count, s->nclasses, sizeof *s->class_count);
    if (rc == PM_OK)
        rc = sj_dup(&d->core_class, s->core_class, s->ncores, sizeof *s->core_class);
    if (rc == PM_OK)
        rc = sj_dup_str(&d->title, s->title);
    if (rc == PM_OK && s->class_names) {
        d->class_names = calloc((size_t)s->nclasses + 1, sizeof *d->class_names);
        rc = d->class_names ? PM_OK : PM_ENOMEM;
    }
    for (uint32_t c = 0; rc == PM_OK && s->class_names && c < s->nclasses; c++)
        rc = sj_dup_str(&d->class_names[c], s->class_names[c]);
    return rc;
}

static int sj_arrays(pm_graph *d, const pm_graph *s)
{
    size_t adj = s->finalized ? (size_t)s->nnodes + 1 : 0;
    size_t adj_e = s->finalized ? (size_t)s->nedges : 0;
    int rc = sj_dup_str(&d->file, s->file);
    if (rc == PM_OK)
        rc = sj_dup(&d->nodes, s->nodes, s->nodes_cap, sizeof *s->nodes);
    if (rc == PM_OK)
        rc = sj_dup(&d->edges, s->edges, s->edges_cap, sizeof *s->edges);
    if (rc == PM_OK)
        rc = sj_dup(&d->class_cycles, s->class_cycles, s->class_cycles_cap,
                    sizeof *s->class_cycles);
    if (rc == PM_OK)
        rc = sj_dup(&d->names, s->names, s->names_cap, 1);
    if (rc == PM_OK)
        rc = sj_dup(&d->hash, s->hash, (size_t)s->hash_cap * SJ_HASH_SLOT, sizeof *s->hash);
    if (rc == PM_OK)
        rc = sj_dup(&d->out_off, s->out_off, adj, sizeof *s->out_off);
    if (rc == PM_OK)
        rc = sj_dup(&d->in_off, s->in_off, adj, sizeof *s->in_off);
    if (rc == PM_OK)
        rc = sj_dup(&d->out_edge, s->out_edge, adj_e, sizeof *s->out_edge);
    if (rc == PM_OK)
        rc = sj_dup(&d->in_edge, s->in_edge, adj_e, sizeof *s->in_edge);
    return rc;
}

int sweep_graph_clone(const pm_graph *s, pm_graph **out)
{
    pm_graph *d = calloc(1, sizeof *d);
    int rc = d ? PM_OK : PM_ENOMEM;
    if (rc == PM_OK) {
        *d = *s;
        d->file = NULL, d->nodes = NULL, d->edges = NULL, d->class_cycles = NULL;
        d->names = NULL, d->hash = NULL, d->out_off = NULL, d->in_off = NULL;
        d->out_edge = NULL, d->in_edge = NULL;
        memset(&d->platform, 0, sizeof d->platform);
        rc = sj_arrays(d, s);
    }
    if (rc == PM_OK)
        rc = sj_platform(&d->platform, &s->platform);
    if (rc != PM_OK)
        pm_graph_destroy(d), d = NULL;
    *out = d;
    return rc;
}

/* ---- the workers ---------------------------------------------------------- */

typedef struct sj_pool {
    pm_plan *caller;
    const pm_sweep_opts *o;
    const pm_bound *bound;
    sweep_own *own;          /* one per point */
    uint32_t npoints;
    uint32_t next, done;     /* next point to take; points finished */
    pthread_mutex_t lock;
} sj_pool;

static bool sj_take(sj_pool *pl, uint32_t *i)
{
    pthread_mutex_lock(&pl->lock);
    *i = pl->next;
    bool ok = pl->next < pl->npoints;
    pl->next += ok;
    pthread_mutex_unlock(&pl->lock);
    return ok;
}

/* Progress from one thread at a time, counted in the order points end. */
static void sj_finished(sj_pool *pl, uint32_t i)
{
    pthread_mutex_lock(&pl->lock);
    pl->done++;
    if (pl->o->progress)
        pl->o->progress(pl->o->progress_ctx, pl->own[i].pt->count, pl->done, pl->npoints);
    pthread_mutex_unlock(&pl->lock);
}

static void sj_drain(sj_pool *pl, pm_plan *p)
{
    uint32_t i;
    while (sj_take(pl, &i)) {
        sweep_own_point(p, pl->o, pl->bound, &pl->own[i]);
        sj_finished(pl, i);
    }
}

/* A worker's own plan: the caller's scenario copied, with its expansion. */
static int sj_plan(const pm_plan *caller, pm_plan *p)
{
    memset(p, 0, sizeof *p);
    pm_graph *src = NULL;
    int rc = sweep_graph_clone(caller->source, &src);
    return rc == PM_OK ? pm_plan_init(p, src, NULL) : rc;
}

static void *sj_worker(void *arg)
{
    sj_pool *pl = arg;
    pm_plan p;
    int rc = sj_plan(pl->caller, &p);
    uint32_t i;
    if (rc == PM_OK)
        sj_drain(pl, &p);
    else /* points this worker would have taken fail as the copy did */
        while (sj_take(pl, &i)) {
            pl->own[i].rc = rc;
            sj_finished(pl, i);
        }
    pm_plan_free(&p);
    return NULL;
}

int sweep_own_points(pm_plan *p, const pm_sweep_opts *o, const pm_bound *b, sweep_own *own,
                     uint32_t n)
{
    sj_pool pl = {p, o, b, own, n, 0, 0, PTHREAD_MUTEX_INITIALIZER};
    uint32_t jobs = o->jobs < n ? o->jobs : n;
    if (jobs <= 1) {
        sj_drain(&pl, p);
        return PM_OK;
    }
    pthread_t *t = calloc(jobs, sizeof *t);
    if (!t)
        return PM_ENOMEM;
    uint32_t started = 0;
    while (started < jobs && pthread_create(&t[started], NULL, sj_worker, &pl) == 0)
        started++;
    if (started == 0) /* no thread to be had: the caller does them all */
        sj_drain(&pl, p);
    for (uint32_t k = 0; k < started; k++)
        pthread_join(t[k], NULL);
    free(t);
    pthread_mutex_destroy(&pl.lock);
    return PM_OK;
}

/* ---- independent items (the what-ifs) -------------------------------------- */

typedef struct sj_items {
    sweep_item_fn fn;
    void *ctx;
    int *rc;
    pm_diag *diag;
    uint32_t n, next;
    pthread_mutex_t lock;
} sj_items;

static void *sj_item_worker(void *arg)
{
    sj_items *it = arg;
    for (;;) {
        pthread_mutex_lock(&it->lock);
        uint32_t i = it->next;
        it->next += i < it->n;
        pthread_mutex_unlock(&it->lock);
        if (i >= it->n)
            return NULL;
        pm_diag_clear(&it->diag[i]);
        it->rc[i] = it->fn(it->ctx, i, &it->diag[i]);
    }
}

int sweep_for_each(uint32_t jobs, uint32_t n, sweep_item_fn fn, void *ctx, pm_diag *diag)
{
    sj_items it = {fn, ctx, calloc((size_t)n + 1, sizeof(int)),
                   calloc((size_t)n + 1, sizeof(pm_diag)), n, 0, PTHREAD_MUTEX_INITIALIZER};
    uint32_t want = jobs < n ? jobs : n;
    pthread_t *t = want > 1 ? calloc(want, sizeof *t) : NULL;
    int rc = it.rc && it.diag && (want <= 1 || t) ? PM_OK : PM_ENOMEM;
    uint32_t started = 0;
    while (rc == PM_OK && want > 1 && started < want &&
           pthread_create(&t[started], NULL, sj_item_worker, &it) == 0)
        started++;
    if (rc == PM_OK && started == 0)
        sj_item_worker(&it);
    for (uint32_t k = 0; k < started; k++)
        pthread_join(t[k], NULL);
    for (uint32_t i = 0; rc == PM_OK && i < n; i++)
        if (it.rc[i] != PM_OK) { /* the first in order, as one thread meets it */
            rc = it.rc[i];
            if (diag)
                *diag = it.diag[i];
        }
    free(t);
    free(it.rc);
    free(it.diag);
    pthread_mutex_destroy(&it.lock);
    return rc;
}
