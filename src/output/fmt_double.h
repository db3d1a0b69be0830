/* Shortest round-trip text for IEEE-754 binary64 values (the numbers in CSV tables).
 * Algorithm and its proof obligations: see fmt_double.c. */
#ifndef SS_OUTPUT_FMT_DOUBLE_H
#define SS_OUTPUT_FMT_DOUBLE_H

#include <stddef.h>

#include "util/util.h"

/* Longest text fmt_double_shortest produces, without the terminating NUL
 * ("-2.2250738585072014e-308" and "-0.000012345678901234567" are 24 characters). */
#define FMT_DOUBLE_MAX_LEN 24

/* Writes the shortest decimal text that reads back (strtod, round to nearest) as exactly v.
 *
 * Digits: the fewest significant digits of any decimal that rounds to v; among several such
 *   decimals, the one nearest to v (an exact tie takes the even last digit).
 * Layout, with E the decimal exponent of the first digit (value = d.ddd × 10^E):
 *   -5 <= E <= 15: plain decimal, no exponent and no trailing zeros after the point:
 *       "0.00012345", "0.1", "123.5", "1234567", "1000000000000000" (1e15);
 *   otherwise scientific, one digit before the point, no trailing zeros, exponent with a sign
 *   and at least two digits (as printf's %e): "1.2345e-07", "1e+16", "6.02214076e+23",
 *   "5e-324", "1.7976931348623157e+308".
 *   The choice follows the shortest digits, not v itself: the double nearest 1e-5 prints
 *   "0.00001" whichever side of 1e-5 it lies on.
 * Specials: a leading '-' for negative values including negative zero ("-0"); zero is "0";
 *   infinities are "inf" and "-inf"; NaN (any payload, either sign) is the empty string.
 *
 * Inputs: buf of len bytes (buf may be NULL when len is 0); v.
 * Output: like snprintf: the text truncated to len - 1 bytes and NUL-terminated when len > 0.
 *   A buffer of FMT_DOUBLE_MAX_LEN + 1 bytes always holds the whole text.
 * Returns the length of the whole text (0 ... FMT_DOUBLE_MAX_LEN), whatever len is.
 * Pure function: no locale, no global state, thread-safe. */
SS_HIDDEN int fmt_double_shortest(char *buf, size_t len, double v);

/* Internals exposed for the unit test, which re-derives them with exact integer arithmetic. */
/* floor(log10(2^q)) for -1074 <= q <= 971 */
SS_HIDDEN int fmt_double_test_flog10_pow2(int q);
/* floor(log10(3/4 * 2^q)) for -1073 <= q <= 971 */
SS_HIDDEN int fmt_double_test_flog10_3q_pow2(int q);
/* floor(log2(10^m)) for -292 <= m <= 324 */
SS_HIDDEN int fmt_double_test_flog2_pow10(int m);
/* The table entry g for 10^m (-292 <= m <= 324) as its high and low 64-bit halves. */
SS_HIDDEN void fmt_double_test_pow10_entry(int m, unsigned long long *hi, unsigned long long *lo);

#endif
