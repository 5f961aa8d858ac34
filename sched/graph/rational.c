/*
 * rational.c - exact fractions with overflow checks.
 *
 * Intermediates are 128-bit so that cross products of two 64-bit values
 * never wrap; a result is rejected only when its reduced form does not fit.
 */
#include "pacemap/rational.h"
#include "pacemap/error.h"

#include <stdlib.h>

static uint64_t rat_gcd64(uint64_t a, uint64_t b)
{
    while (b) {
        uint64_t t = a % b;
        a = b;
        b = t;
    }
    return a;
}

pm_u128 pm_rat_gcd(pm_u128 a, pm_u128 b)
{
    while (b) {
        if ((a | b) >> 64 == 0) /* 64-bit division is several times cheaper */
            return rat_gcd64((uint64_t)a, (uint64_t)b);
        pm_u128 t = a % b;
        a = b;
        b = t;
    }
    return a;
}

/* Reduce a 128-bit fraction and narrow it to 64 bits. */
static int rat_from128(pm_i128 num, pm_i128 den, pm_rat *out)
{
    if (den == 0)
        return PM_EINVAL;
    if (den < 0) {
        num = -num;
        den = -den;
    }
    pm_u128 an = num < 0 ? (pm_u128)(-num) : (pm_u128)num;
    pm_u128 g = pm_rat_gcd(an, (pm_u128)den);
    if (g > 1) {
        num /= (pm_i128)g;
        den /= (pm_i128)g;
    }
    if (num > INT64_MAX || num < -INT64_MAX || den > INT64_MAX)
        return PM_ERANGE;
    out->num = (int64_t)num;
    out->den = (int64_t)den;
    return PM_OK;
}

int pm_rat_make(int64_t num, int64_t den, pm_rat *out)
{
    return rat_from128(num, den, out);
}

pm_rat pm_rat_int(int64_t n)
{
    pm_rat r = { n, 1 };
    return r;
}

int pm_rat_cmp(pm_rat a, pm_rat b)
{
    pm_i128 l = (pm_i128)a.num * b.den;
    pm_i128 r = (pm_i128)b.num * a.den;
    return (l > r) - (l < r);
}

int pm_rat_add(pm_rat a, pm_rat b, pm_rat *out)
{
    return rat_from128((pm_i128)a.num * b.den + (pm_i128)b.num * a.den,
                       (pm_i128)a.den * b.den, out);
}

int pm_rat_sub(pm_rat a, pm_rat b, pm_rat *out)
{
    return rat_from128((pm_i128)a.num * b.den - (pm_i128)b.num * a.den,
                       (pm_i128)a.den * b.den, out);
}

int pm_rat_mul(pm_rat a, pm_rat b, pm_rat *out)
{
    return rat_from128((pm_i128)a.num * b.num, (pm_i128)a.den * b.den, out);
}

int pm_rat_div(pm_rat a, pm_rat b, pm_rat *out)
{
    if (b.num == 0)
        return PM_EINVAL;
    return rat_from128((pm_i128)a.num * b.den, (pm_i128)a.den * b.num, out);
}

pm_rat pm_rat_max(pm_rat a, pm_rat b)
{
    return pm_rat_cmp(a, b) >= 0 ? a : b;
}

double pm_rat_to_double(pm_rat a)
{
    return (double)a.num / (double)a.den;
}

int64_t pm_rat_ceil(pm_rat a)
{
    int64_t q = a.num / a.den;
    if (a.num % a.den != 0 && a.num > 0)
        q++;
    return q;
}
