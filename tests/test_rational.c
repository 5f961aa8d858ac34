/*
 * test_rational.c - exact fractions: reduction, order, overflow detection.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>

#include "pacemap/error.h"
#include "pacemap/rational.h"

static void test_make_reduces_and_normalises_sign(void **state)
{
    (void)state;
    pm_rat r;
    assert_int_equal(pm_rat_make(6, -4, &r), PM_OK);
    assert_true(r.num == -3 && r.den == 2);
    assert_int_equal(pm_rat_make(0, 7, &r), PM_OK);
    assert_true(r.num == 0 && r.den == 1);
    assert_int_equal(pm_rat_make(1, 0, &r), PM_EINVAL);
}

static void test_compare_is_exact_near_int64_limits(void **state)
{
    (void)state;
    /* (2^62-1)/(2^62) < (2^62)/(2^62+1)? No: a/b vs c/d with a*d vs c*b;
     * doubles cannot tell these apart, 128-bit products can. */
    pm_rat a = { (INT64_C(1) << 62) - 1, INT64_C(1) << 62 };
    pm_rat b = { (INT64_C(1) << 62) - 2, (INT64_C(1) << 62) - 1 };
    assert_int_equal(pm_rat_cmp(a, b), 1);
    assert_int_equal(pm_rat_cmp(b, a), -1);
    assert_int_equal(pm_rat_cmp(a, a), 0);
}

static void test_arithmetic_and_overflow(void **state)
{
    (void)state;
    pm_rat r;
    assert_int_equal(pm_rat_add((pm_rat){ 1, 3 }, (pm_rat){ 1, 6 }, &r), PM_OK);
    assert_true(r.num == 1 && r.den == 2);
    assert_int_equal(pm_rat_div((pm_rat){ 3, 4 }, (pm_rat){ 9, 8 }, &r), PM_OK);
    assert_true(r.num == 2 && r.den == 3);
    pm_rat big = { INT64_MAX, 1 };
    assert_int_equal(pm_rat_mul(big, (pm_rat){ 2, 1 }, &r), PM_ERANGE);
    assert_int_equal(pm_rat_ceil((pm_rat){ 7, 2 }), 4);
    assert_int_equal(pm_rat_ceil((pm_rat){ -7, 2 }), -3);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_make_reduces_and_normalises_sign),
        cmocka_unit_test(test_compare_is_exact_near_int64_limits),
        cmocka_unit_test(test_arithmetic_and_overflow),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
