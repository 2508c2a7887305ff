/* bracket: Brent's method inside a bracket. See bracket.h. */
#include "loopwise/bracket.h"

#include <gsl/gsl_errno.h>
#include <gsl/gsl_roots.h>
#include <math.h>

double bracket_root(double (*fn)(double, void *), void *ctx, double a, double b, double epsabs,
                    double epsrel)
{
    double fa = fn(a, ctx), fb = fn(b, ctx);
    if (fa == 0)
        return a;
    if (fb == 0 || !(fa * fb < 0))
        return fabs(fa) < fabs(fb) ? a : b;
    gsl_function F = { fn, ctx };
    gsl_root_fsolver *s = gsl_root_fsolver_alloc(gsl_root_fsolver_brent);
    double x = 0.5 * (a + b);
    if (!s || gsl_root_fsolver_set(s, &F, a, b) != GSL_SUCCESS) {
        gsl_root_fsolver_free(s);
        return x;
    }
    for (int it = 0; it < 200; it++) {
        if (gsl_root_fsolver_iterate(s) != GSL_SUCCESS)
            break;
        x = gsl_root_fsolver_root(s);
        if (gsl_root_test_interval(gsl_root_fsolver_x_lower(s), gsl_root_fsolver_x_upper(s),
                                   epsabs, epsrel) == GSL_SUCCESS)
            break;
    }
    gsl_root_fsolver_free(s);
    return x;
}
