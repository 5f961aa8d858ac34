/*
 * units.h - the one way every report writes times and frequencies:
 * a number, one space, a unit ("2.235 us", "650 ns", "400 MHz", "44.1 kHz").
 *
 * The unit is the one that puts the number in [1, 1000).  Frequencies come
 * from the scenario as whole hertz and are written exactly (as many decimals
 * as they need); times are written to four significant digits, trailing
 * zeros dropped.  Pure functions of their arguments; thread-safe.
 */
#ifndef PACEMAP_UNITS_H
#define PACEMAP_UNITS_H

#include <stddef.h>
#include <stdint.h>

/* Room for any result of the functions below. */
#define PM_UNITS_LEN 32

/* Frequency hz (> 0) in Hz, kHz, MHz or GHz, exact.  Writes at most len
 * bytes to buf (PM_UNITS_LEN always suffices); returns buf. */
char *pm_units_freq(char *buf, size_t len, uint64_t hz);

/* Time `seconds` (>= 0, finite) in s, ms, us, ns or ps, four significant
 * digits; 0 is "0 ns".  Returns buf. */
char *pm_units_time(char *buf, size_t len, double seconds);

/* The time of `cycles` cycles at clock hz (> 0): pm_units_time of
 * cycles / hz.  Returns buf. */
char *pm_units_cycles(char *buf, size_t len, double cycles, uint64_t hz);

/* A finite double in its shortest decimal form that reads back to the same
 * value (strtod), for CSV and other machine text: 0.1 is "0.1", not
 * "0.10000000000000001".  Not finite: "nan", "inf" or "-inf".  Returns buf
 * (PM_UNITS_LEN suffices). */
char *pm_units_number(char *buf, size_t len, double v);

#endif
