/*
 * timeline.c - per-core (and bus) free-time bookkeeping for the scheduler:
 * a tail plus a bounded list of remembered idle gaps (sched_internal.h).
 * It knows nothing of nodes or edges.
 */
#include "sched_internal.h"

#include <stdlib.h>
#include <string.h>

int64_t sched_add(int64_t a, int64_t b, bool *overflow)
{
    int64_t r;
    /* operands are at most PM_MAX_VALUE, so the sum cannot wrap */
    if (__builtin_add_overflow(a, b, &r) || r > PM_MAX_VALUE) {
        *overflow = true;
        return PM_MAX_VALUE;
    }
    return r;
}

int64_t sched_lane_fit(const sched_lane *l, int64_t r, int64_t w)
{
    if (w > l->maxlen)
        return l->tail > r ? l->tail : r;
    uint32_t lo = 0, hi = l->ngaps; /* first gap ending at or after r */
    while (lo < hi) {
        uint32_t mid = (lo + hi) / 2;
        if (l->gaps[mid].b < r)
            lo = mid + 1;
        else
            hi = mid;
    }
    for (uint32_t i = lo; i < l->ngaps; i++) {
        const sched_gap *g = &l->gaps[i];
        int64_t s = g->a > r ? g->a : r;
        if (s < g->b && w <= g->b - s)
            return s;
        if (s == g->b && w == 0)
            return s;
    }
    return l->tail > r ? l->tail : r;
}

int64_t sched_lane_fit_occ(const sched_lane *l, int64_t r, int64_t w)
{
    return w == 0 ? r : sched_lane_fit(l, r, w);
}

void sched_lane_reserve_occ(sched_lane *l, int64_t s, int64_t w)
{
    if (w > 0)
        sched_lane_reserve(l, s, w);
}

/* Insert gap [a, b) at index i, forgetting the oldest gap when full. */
static void lane_insert_gap(sched_lane *l, uint32_t i, int64_t a, int64_t b)
{
    if (a >= b)
        return;
    if (l->ngaps == PM_SCHED_GAPS) {
        if (i == 0)
            return; /* it would be the oldest: forget it at once */
        memmove(&l->gaps[0], &l->gaps[1], (size_t)(i - 1) * sizeof l->gaps[0]);
        l->gaps[i - 1] = (sched_gap){a, b};
        return;
    }
    memmove(&l->gaps[i + 1], &l->gaps[i], (size_t)(l->ngaps - i) * sizeof l->gaps[0]);
    l->gaps[i] = (sched_gap){a, b};
    l->ngaps++;
}

static void lane_remove_gap(sched_lane *l, uint32_t i)
{
    memmove(&l->gaps[i], &l->gaps[i + 1], (size_t)(l->ngaps - i - 1) * sizeof l->gaps[0]);
    l->ngaps--;
}

static void lane_update_max(sched_lane *l)
{
    l->maxlen = 0;
    for (uint32_t i = 0; i < l->ngaps; i++)
        if (l->gaps[i].b - l->gaps[i].a > l->maxlen)
            l->maxlen = l->gaps[i].b - l->gaps[i].a;
}

static void lane_reserve(sched_lane *l, int64_t s, int64_t w)
{
    if (s >= l->tail) {
        int64_t old = l->tail;
        l->tail = s + w;
        lane_insert_gap(l, l->ngaps, old, s);
        return;
    }
    for (uint32_t i = 0; i < l->ngaps; i++) {
        sched_gap g = l->gaps[i];
        if (s < g.a || s + w > g.b)
            continue;
        lane_remove_gap(l, i);
        lane_insert_gap(l, i, s + w, g.b);
        lane_insert_gap(l, i, g.a, s);
        return;
    }
}

void sched_lane_reserve(sched_lane *l, int64_t s, int64_t w)
{
    /* a zero-length job still splits its gap: nothing may later be
     * inserted across it, or the core order would contradict the times */
    /* past 62 bits the caller reports PM_ERANGE; until then keep s + w
     * from wrapping (times saturate at PM_MAX_VALUE) */
    if (w < 0)
        w = 0;
    if (s > PM_MAX_VALUE - w)
        w = s < PM_MAX_VALUE ? PM_MAX_VALUE - s : 0;
    lane_reserve(l, s, w);
    lane_update_max(l);
}

int sched_heap_init(sched_heap *h, uint32_t cap, sched_less_fn less, const void *ctx)
{
    h->v = malloc(((size_t)cap + 1) * sizeof *h->v);
    h->n = 0;
    h->less = less;
    h->ctx = ctx;
    return h->v ? PM_OK : PM_ENOMEM;
}

void sched_heap_free(sched_heap *h)
{
    free(h->v);
    h->v = NULL;
}

void sched_heap_push(sched_heap *h, uint32_t id)
{
    uint32_t i = h->n++;
    while (i > 0 && h->less(h->ctx, id, h->v[(i - 1) / 2])) {
        h->v[i] = h->v[(i - 1) / 2];
        i = (i - 1) / 2;
    }
    h->v[i] = id;
}

uint32_t sched_heap_pop(sched_heap *h)
{
    uint32_t top = h->v[0], last = h->v[--h->n], i = 0;
    for (;;) {
        uint32_t c = 2 * i + 1;
        if (c >= h->n)
            break;
        if (c + 1 < h->n && h->less(h->ctx, h->v[c + 1], h->v[c]))
            c++;
        if (!h->less(h->ctx, h->v[c], last))
            break;
        h->v[i] = h->v[c];
        i = c;
    }
    if (h->n > 0)
        h->v[i] = last;
    return top;
}
