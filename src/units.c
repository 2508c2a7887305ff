/* units: SI-prefixed formatting. */
#include "loopwise/units.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

static const char *const prefixes[] = { "a", "f", "p", "n", "\xC2\xB5", "m", "", "k", "M", "G",
                                        "T", "P", "E" };

/* Prints a mantissa with `digits` significant digits, trailing zeros removed. */
static void mantissa(double m, int digits, char *out, size_t size)
{
    snprintf(out, size, "%.*g", digits, m);
    if (strchr(out, '.') && !strchr(out, 'e')) {
        char *end = out + strlen(out) - 1;
        while (*end == '0')
            *end-- = '\0';
        if (*end == '.')
            *end = '\0';
    }
}

static char *format(double v, const char *unit, char *buf, size_t size, int plus, int digits)
{
    const char *sp = *unit ? " " : "";
    if (isnan(v)) {
        snprintf(buf, size, "undefined");
        return buf;
    }
    if (isinf(v)) {
        snprintf(buf, size, "%sinf%s%s", v < 0 ? "-" : (plus ? "+" : ""), sp, unit);
        return buf;
    }
    if (v == 0) {
        snprintf(buf, size, "0%s%s", sp, unit);
        return buf;
    }
    double a = fabs(v);
    int e3 = (int)floor(log10(a) / 3.0);
    /* rounding may carry into the next prefix (999.7 -> 1.00 k at 3 digits) */
    double m = a / pow(10.0, 3 * e3);
    if (m >= 1000.0 - 0.5 * pow(10.0, 3 - digits)) {
        e3++;
        m /= 1000.0;
    }
    char mb[32];
    const char *sign = v < 0 ? "-" : (plus ? "+" : "");
    if (e3 < -6 || e3 > 6) {
        snprintf(buf, size, "%s%.*g%s%s", sign, digits, a, sp, unit);
        return buf;
    }
    mantissa(m, digits, mb, sizeof mb);
    /* a prefix without a unit is glued on, as the file writes numbers: "1m"
     * (a dimensionless param) would read as a length with the space */
    snprintf(buf, size, "%s%s%s%s%s", sign, mb, *unit ? " " : "", prefixes[e3 + 6], unit);
    return buf;
}

char *si_format(double v, const char *unit, char *buf, size_t size)
{
    return format(v, unit, buf, size, 0, 3);
}

char *si_format_digits(double v, const char *unit, int digits, char *buf, size_t size)
{
    return format(v, unit, buf, size, 0, digits);
}

char *si_format_signed(double v, const char *unit, char *buf, size_t size)
{
    return format(v, unit, buf, size, 1, 3);
}

char *pct_format(double v, char *buf, size_t size)
{
    snprintf(buf, size, fabs(v) >= 1000 ? "%.0f%%" : "%.3g%%", v);
    return buf;
}

double units_no_neg_zero(double v, int decimals)
{
    /* -0.04 printed with one decimal is "-0.0": a sign with nothing behind it */
    return fabs(v) < 0.5 * pow(10.0, -decimals) ? 0.0 : v;
}

char *si_word(double v, char *buf, size_t size)
{
    /* the file's number syntax with ASCII prefixes (u for micro), so that a
     * suggested command line can be typed or pasted anywhere */
    static const char ascii_prefix[] = "fpnum kMGT";
    double a = fabs(v);
    if (!(a >= 1e-15 && a < 1e15)) {
        snprintf(buf, size, "%.6g", v);
        return buf;
    }
    int e = (int)floor(log10(a) / 3.0);
    double m = v / pow(10.0, 3.0 * e);
    if (fabs(m) >= 999999.5) { /* rounding carried into the next prefix */
        e++;
        m /= 1000.0;
    }
    char p = ascii_prefix[e + 5];
    if (p == ' ')
        snprintf(buf, size, "%.6g", m);
    else
        snprintf(buf, size, "%.6g%c", m, p);
    return buf;
}
