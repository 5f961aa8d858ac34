/*
 * units.c - times and frequencies written one way in every report
 * (units.h).  Does not choose whether a report shows a time; only how.
 */
#include "pacemap/units.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* Drop trailing zeros of a decimal fraction, and the point if bare. */
static void units_trim(char *num)
{
    if (!strchr(num, '.'))
        return;
    size_t n = strlen(num);
    while (n > 0 && num[n - 1] == '0')
        num[--n] = '\0';
    if (n > 0 && num[n - 1] == '.')
        num[n - 1] = '\0';
}

char *pm_units_freq(char *buf, size_t len, uint64_t hz)
{
    static const char *const unit[] = { "Hz", "kHz", "MHz", "GHz" };
    int k = 0;
    uint64_t scale = 1;
    while (k < 3 && hz / scale >= 1000)
        k++, scale *= 1000;
    char num[PM_UNITS_LEN];
    if (k == 0)
        snprintf(num, sizeof num, "%llu", (unsigned long long)hz);
    else /* exact: the remainder has 3k digits */
        snprintf(num, sizeof num, "%llu.%0*llu", (unsigned long long)(hz / scale), 3 * k,
                 (unsigned long long)(hz % scale));
    units_trim(num);
    snprintf(buf, len, "%s %s", num, unit[k]);
    return buf;
}

/* Four significant digits of v in [1, 1000): 1.235, 12.35, 123.5. */
static void units_sig4(char *num, size_t len, double v)
{
    int decimals = v >= 100 ? 1 : v >= 10 ? 2 : 3;
    snprintf(num, len, "%.*f", decimals, v);
    units_trim(num);
}

char *pm_units_time(char *buf, size_t len, double seconds)
{
    static const char *const unit[] = { "s", "ms", "us", "ns", "ps" };
    if (!(seconds > 0) || !isfinite(seconds)) {
        snprintf(buf, len, "0 ns");
        return buf;
    }
    int k = 0;
    double v = seconds;
    while (k < 4 && v < 1.0)
        k++, v *= 1000.0;
    /* rounding to four digits may reach 1000: move up one unit */
    if (k > 0 && v >= 999.95)
        k--, v /= 1000.0;
    char num[PM_UNITS_LEN];
    units_sig4(num, sizeof num, v);
    snprintf(buf, len, "%s %s", num, unit[k]);
    return buf;
}

char *pm_units_cycles(char *buf, size_t len, double cycles, uint64_t hz)
{
    return pm_units_time(buf, len, cycles / (double)hz);
}

char *pm_units_number(char *buf, size_t len, double v)
{
    if (!isfinite(v)) {
        snprintf(buf, len, "%s", isnan(v) ? "nan" : v > 0 ? "inf" : "-inf");
        return buf;
    }
    /* the fewest significant digits that survive the round trip; 17 always do */
    for (int digits = 1; digits <= 17; digits++) {
        snprintf(buf, len, "%.*g", digits, v);
        if (strtod(buf, NULL) == v)
            break;
    }
    return buf;
}
