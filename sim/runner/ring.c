/*
 * ring.c - bounded single-producer single-consumer slot queue (ring.h).
 *
 * Positions are free-running 64-bit counters (never wrap in practice); the
 * slot of position p is p % capacity.  Each side keeps a private copy of
 * the other side's counter and reloads it (acquire) only when the copy says
 * full/empty, so in steady flow each handoff costs one cache-line transfer
 * per direction.  No blocking, no printing.
 */
#include "pacemap/ring.h"

#include <stdalign.h>
#include <stdatomic.h>
#include <stdlib.h>

struct pm_ring {
    /* producer's line: written by the producer, read by the consumer */
    alignas(PM_RING_LINE) _Atomic uint64_t head; /* next position to publish */
    uint64_t tail_seen;                          /* producer's copy of tail */
    /* consumer's line */
    alignas(PM_RING_LINE) _Atomic uint64_t tail; /* next position to read */
    uint64_t head_seen;                          /* consumer's copy of head */
    /* read-only after create */
    alignas(PM_RING_LINE) size_t stride;         /* slot size padded to lines */
    uint32_t capacity;
    unsigned char *slots;
};

int pm_ring_create(size_t slot_bytes, uint32_t capacity, pm_ring **out)
{
    *out = NULL;
    if (slot_bytes < 1 || capacity < 1 || capacity > PM_RING_MAX_CAPACITY ||
        slot_bytes > (SIZE_MAX >> 2))
        return PM_ERANGE;
    size_t stride = (slot_bytes + PM_RING_LINE - 1u) / PM_RING_LINE * PM_RING_LINE;
    if (stride > ((size_t)1 << 30) / capacity)
        return PM_ERANGE;
    size_t size = (sizeof(pm_ring) + PM_RING_LINE - 1u) / PM_RING_LINE * PM_RING_LINE;
    pm_ring *r = aligned_alloc(PM_RING_LINE, size);
    if (!r)
        return PM_ENOMEM;
    r->slots = aligned_alloc(PM_RING_LINE, stride * capacity);
    if (!r->slots) {
        free(r);
        return PM_ENOMEM;
    }
    atomic_init(&r->head, 0);
    atomic_init(&r->tail, 0);
    r->tail_seen = 0;
    r->head_seen = 0;
    r->stride = stride;
    r->capacity = capacity;
    *out = r;
    return PM_OK;
}

void pm_ring_destroy(pm_ring *r)
{
    if (!r)
        return;
    free(r->slots);
    free(r);
}

void *pm_ring_claim(pm_ring *r)
{
    uint64_t h = atomic_load_explicit(&r->head, memory_order_relaxed);
    if (h - r->tail_seen >= r->capacity) {
        /* acquire: the consumer has finished reading the slot we reuse */
        r->tail_seen = atomic_load_explicit(&r->tail, memory_order_acquire);
        if (h - r->tail_seen >= r->capacity)
            return NULL;
    }
    return r->slots + (size_t)(h % r->capacity) * r->stride;
}

void pm_ring_push(pm_ring *r)
{
    uint64_t h = atomic_load_explicit(&r->head, memory_order_relaxed);
    atomic_store_explicit(&r->head, h + 1u, memory_order_release);
}

const void *pm_ring_peek(pm_ring *r)
{
    uint64_t t = atomic_load_explicit(&r->tail, memory_order_relaxed);
    if (t == r->head_seen) {
        r->head_seen = atomic_load_explicit(&r->head, memory_order_acquire);
        if (t == r->head_seen)
            return NULL;
    }
    return r->slots + (size_t)(t % r->capacity) * r->stride;
}

void pm_ring_pop(pm_ring *r)
{
    uint64_t t = atomic_load_explicit(&r->tail, memory_order_relaxed);
    atomic_store_explicit(&r->tail, t + 1u, memory_order_release);
}

uint32_t pm_ring_count(const pm_ring *r)
{
    uint64_t t = atomic_load_explicit(&r->tail, memory_order_acquire);
    uint64_t h = atomic_load_explicit(&r->head, memory_order_acquire);
    return (uint32_t)(h - t);
}

uint32_t pm_ring_capacity(const pm_ring *r)
{
    return r->capacity;
}
