/*
 * rational.h - exact fractions of 64-bit integers.
 *
 * A pm_rat is always reduced with a positive denominator.  Operations check
 * for overflow (128-bit intermediates) and return PM_ERANGE rather than wrap.
 * Plain values; nothing to free.  Thread-safe.
 */
#ifndef PACEMAP_RATIONAL_H
#define PACEMAP_RATIONAL_H

#include <stdbool.h>
#include <stdint.h>

/* The project's one 128-bit integer type (a GCC and Clang extension):
 * exact intermediates, e.g. cross products of two 64-bit values. */
__extension__ typedef __int128 pm_i128;
__extension__ typedef unsigned __int128 pm_u128;

typedef struct pm_rat {
    int64_t num;
    int64_t den; /* > 0 */
} pm_rat;

/* num/den reduced; den must not be 0.  PM_EINVAL if den == 0, PM_ERANGE if
 * the reduced result does not fit (only INT64_MIN cases). */
int pm_rat_make(int64_t num, int64_t den, pm_rat *out);

/* The integer n as a fraction. */
pm_rat pm_rat_int(int64_t n);

/* -1, 0, 1 as a < b, a == b, a > b.  Exact (128-bit cross products). */
int pm_rat_cmp(pm_rat a, pm_rat b);

/* a + b, a - b, a * b, a / b (b != 0); PM_ERANGE on overflow. */
int pm_rat_add(pm_rat a, pm_rat b, pm_rat *out);
int pm_rat_sub(pm_rat a, pm_rat b, pm_rat *out);
int pm_rat_mul(pm_rat a, pm_rat b, pm_rat *out);
int pm_rat_div(pm_rat a, pm_rat b, pm_rat *out);

/* The larger of a and b. */
pm_rat pm_rat_max(pm_rat a, pm_rat b);

/* Nearest double (for display and ratios only, never for decisions). */
double pm_rat_to_double(pm_rat a);

/* Smallest integer >= a. */
int64_t pm_rat_ceil(pm_rat a);

/* Greatest common divisor of a and b (gcd(0,0) = 0): the project's one
 * gcd, for 64-bit values too (it runs in 64-bit steps while they fit). */
pm_u128 pm_rat_gcd(pm_u128 a, pm_u128 b);

#endif
