/*
 * test_ring_thread.c - the SPSC ring: full/empty behaviour on one thread,
 * then a producer and a consumer thread passing sequence-numbered slots:
 * every slot arrives exactly once, in order, with its payload intact.
 * Run under ThreadSanitizer by `make tsan` (name contains "thread").
 */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <cmocka.h>

#include <pthread.h>
#include <sched.h>
#include <string.h>

#include "pacemap/ring.h"

typedef struct slot {
    uint64_t seq;
    uint32_t payload[13];
} slot;

static void test_full_and_empty(void **state)
{
    (void)state;
    pm_ring *r = NULL;
    assert_int_equal(pm_ring_create(sizeof(slot), 3, &r), PM_OK);
    assert_null(pm_ring_peek(r));
    for (uint64_t i = 0; i < 3; i++) {
        slot *s = pm_ring_claim(r);
        assert_non_null(s);
        assert_ptr_equal(s, pm_ring_claim(r)); /* claim twice: same slot */
        s->seq = i;
        pm_ring_push(r);
    }
    assert_null(pm_ring_claim(r));
    assert_int_equal(pm_ring_count(r), 3);
    const slot *s = pm_ring_peek(r);
    assert_non_null(s);
    assert_int_equal(s->seq, 0);
    pm_ring_pop(r);
    assert_non_null(pm_ring_claim(r)); /* one slot free again */
    for (uint64_t i = 1; i < 3; i++) {
        s = pm_ring_peek(r);
        assert_int_equal(s->seq, i);
        pm_ring_pop(r);
    }
    assert_null(pm_ring_peek(r));
    assert_int_equal(pm_ring_capacity(r), 3);
    pm_ring_destroy(r);
    pm_ring_destroy(NULL);
    assert_int_equal(pm_ring_create(0, 3, &r), PM_ERANGE);
    assert_int_equal(pm_ring_create(8, 0, &r), PM_ERANGE);
    assert_null(r);
}

enum { COUNT = 40000 };

static void *producer(void *arg)
{
    pm_ring *r = arg;
    for (uint64_t i = 0; i < COUNT; i++) {
        slot *s;
        while (!(s = pm_ring_claim(r)))
            sched_yield();
        s->seq = i;
        for (uint32_t j = 0; j < 13; j++)
            s->payload[j] = (uint32_t)(i * 31u + j);
        pm_ring_push(r);
    }
    return NULL;
}

static void test_two_threads_in_order(void **state)
{
    (void)state;
    const uint32_t caps[] = {1, 2, 7};
    for (size_t c = 0; c < 3; c++) {
        pm_ring *r = NULL;
        assert_int_equal(pm_ring_create(sizeof(slot), caps[c], &r), PM_OK);
        pthread_t t;
        assert_int_equal(pthread_create(&t, NULL, producer, r), 0);
        uint64_t bad = 0;
        for (uint64_t i = 0; i < COUNT; i++) {
            const slot *s;
            while (!(s = pm_ring_peek(r)))
                sched_yield();
            bad += s->seq != i;
            for (uint32_t j = 0; j < 13; j++)
                bad += s->payload[j] != (uint32_t)(i * 31u + j);
            pm_ring_pop(r);
        }
        assert_int_equal(pthread_join(t, NULL), 0);
        assert_int_equal(bad, 0);
        assert_null(pm_ring_peek(r)); /* nothing delivered twice */
        pm_ring_destroy(r);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_full_and_empty),
        cmocka_unit_test(test_two_threads_in_order),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
