/*
 * ring.h - a bounded single-producer single-consumer queue of fixed-size
 * slots, for handing tokens between two pinned threads of the real-core
 * runner (docs/runner.md).
 *
 * Lock-free with C11 atomics: the producer owns `head`, the consumer owns
 * `tail`, each on its own cache line; a slot is published with a release
 * store and read after an acquire load, so its contents are visible whole.
 * Slots are padded to whole cache lines so neighbouring slots never share
 * one.  The calls never block: claim/peek return NULL when the ring is
 * full/empty and the caller decides how to wait.
 *
 * Thread safety: exactly one producer thread calls claim/push and exactly
 * one consumer thread calls peek/pop; create/destroy happen while neither
 * runs.  Ownership: pm_ring_destroy(NULL) is a no-op.
 */
#ifndef PACEMAP_RING_H
#define PACEMAP_RING_H

#include <stddef.h>
#include <stdint.h>

#include "pacemap/error.h"

#define PM_RING_LINE 64u                   /* assumed cache line, bytes */
#define PM_RING_MAX_CAPACITY (1u << 24)    /* slots */

typedef struct pm_ring pm_ring;

/* A ring of `capacity` slots of `slot_bytes` each (both >= 1; capacity at
 * most PM_RING_MAX_CAPACITY, capacity * padded slot at most 1 GiB).
 * PM_ERANGE, PM_ENOMEM. */
int pm_ring_create(size_t slot_bytes, uint32_t capacity, pm_ring **out);
void pm_ring_destroy(pm_ring *r);

/* Producer: the next free slot to fill, or NULL when the ring is full.
 * Calling it again before pm_ring_push returns the same slot. O(1). */
void *pm_ring_claim(pm_ring *r);
/* Producer: publish the slot last claimed (release). */
void pm_ring_push(pm_ring *r);

/* Consumer: the oldest published slot, or NULL when empty (acquire). O(1). */
const void *pm_ring_peek(pm_ring *r);
/* Consumer: free the slot last peeked. */
void pm_ring_pop(pm_ring *r);

/* Slots published and not yet popped; exact only when neither side runs. */
uint32_t pm_ring_count(const pm_ring *r);
uint32_t pm_ring_capacity(const pm_ring *r);

#endif
