/*
 * test_units.c - the one way reports write times and frequencies (units.h).
 * Expected strings are worked by hand beside each check: the unit puts the
 * number in [1, 1000); frequencies are exact, times keep four significant
 * digits.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>
#include <math.h>
#include <stdlib.h>

#include "pacemap/units.h"

static void test_units_freq(void **state)
{
    (void)state;
    char b[PM_UNITS_LEN];
    assert_string_equal(pm_units_freq(b, sizeof b, 400000000), "400 MHz");
    assert_string_equal(pm_units_freq(b, sizeof b, 44100), "44.1 kHz");   /* 44100 / 1e3 */
    assert_string_equal(pm_units_freq(b, sizeof b, 48000), "48 kHz");
    assert_string_equal(pm_units_freq(b, sizeof b, 999), "999 Hz");
    assert_string_equal(pm_units_freq(b, sizeof b, 1500000000), "1.5 GHz");
    /* exact, not rounded: 123456789 Hz = 123.456789 MHz */
    assert_string_equal(pm_units_freq(b, sizeof b, 123456789), "123.456789 MHz");
    /* above 999 GHz the unit stays GHz: 2e12 Hz = 2000 GHz */
    assert_string_equal(pm_units_freq(b, sizeof b, 2000000000000ull), "2000 GHz");
}

static void test_units_time(void **state)
{
    (void)state;
    char b[PM_UNITS_LEN];
    assert_string_equal(pm_units_time(b, sizeof b, 2.235e-6), "2.235 us");
    assert_string_equal(pm_units_time(b, sizeof b, 2e-6), "2 us");
    assert_string_equal(pm_units_time(b, sizeof b, 650e-9), "650 ns");
    assert_string_equal(pm_units_time(b, sizeof b, 0.0125), "12.5 ms");
    assert_string_equal(pm_units_time(b, sizeof b, 3.0), "3 s");
    assert_string_equal(pm_units_time(b, sizeof b, 0.0), "0 ns");
    /* 999.96 us rounds to 1000.0 at four digits: written as 1 ms */
    assert_string_equal(pm_units_time(b, sizeof b, 999.96e-6), "1 ms");
}

/* 894 cycles at 400 MHz: 894 / 4e8 s = 2.235e-6 s.  686 at 400 MHz: 1.715 us.
 * 540 at 400 MHz: 1.35 us.  5 cycles at 200 MHz: 25 ns. */
static void test_units_cycles(void **state)
{
    (void)state;
    char b[PM_UNITS_LEN];
    assert_string_equal(pm_units_cycles(b, sizeof b, 894, 400000000), "2.235 us");
    assert_string_equal(pm_units_cycles(b, sizeof b, 686, 400000000), "1.715 us");
    assert_string_equal(pm_units_cycles(b, sizeof b, 540, 400000000), "1.35 us");
    assert_string_equal(pm_units_cycles(b, sizeof b, 5, 200000000), "25 ns");
}

/* Shortest round trip: 0.1 needs 1 digit (the %.17g form would be
 * 0.10000000000000001); 1/3 needs 16 (Python's repr(1/3), which prints the
 * shortest round-trip form, gives 0.3333333333333333); every result reads
 * back exactly. */
static void test_units_number(void **state)
{
    (void)state;
    char b[PM_UNITS_LEN];
    assert_string_equal(pm_units_number(b, sizeof b, 0.1), "0.1");
    assert_string_equal(pm_units_number(b, sizeof b, 686.0), "686");
    assert_string_equal(pm_units_number(b, sizeof b, 1.5e-9), "1.5e-09");
    assert_string_equal(pm_units_number(b, sizeof b, 1.0 / 3.0), "0.3333333333333333");
    const double samples[] = { 0.1, 1.0 / 3.0, 2.0 / 3.0, 1e300, 5e-324, 123456.789, -0.0 };
    for (size_t i = 0; i < sizeof samples / sizeof samples[0]; i++)
        assert_true(strtod(pm_units_number(b, sizeof b, samples[i]), NULL) == samples[i]);
    assert_string_equal(pm_units_number(b, sizeof b, (double)NAN), "nan");
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_units_freq),
        cmocka_unit_test(test_units_time),
        cmocka_unit_test(test_units_cycles),
        cmocka_unit_test(test_units_number),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
