/* units: numbers for people: SI prefixes and units ("1.23 MHz", "2.2 pF"). */
#ifndef LOOPWISE_UNITS_H
#define LOOPWISE_UNITS_H

#include <stddef.h>

/* Formats v with 3 significant digits, an SI prefix and unit into buf;
 * returns buf. Infinite values print as "inf", NaN as "undefined". */
char *si_format(double v, const char *unit, char *buf, size_t size);
/* Same with a leading sign always shown. */
char *si_format_signed(double v, const char *unit, char *buf, size_t size);
/* The same as si_format with `digits` significant digits (an answer a
 * search refined beyond three digits). */
char *si_format_digits(double v, const char *unit, int digits, char *buf, size_t size);

/* A percentage for people: 3 significant digits ("37.2%"), whole numbers
 * from 1000 on ("2218%") rather than an exponent. */
char *pct_format(double v, char *buf, size_t size);

/* v as one word in the file's number syntax: up to 6 significant digits and
 * an ASCII SI prefix, no unit ("2.5p", "10u", "47k"), for suggested
 * command lines. */
char *si_word(double v, char *buf, size_t size);
/* v, or 0 when it prints as zero with `decimals` decimals: printf then shows
 * "0.0", never "-0.0". */
double units_no_neg_zero(double v, int decimals);

#endif
