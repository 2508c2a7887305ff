/* margins_grid: the band of the margins and the grid scanned over it. See
 * margins.h. */
#include "loopwise/margins.h"

#include <gsl/gsl_sort.h>
#include <math.h>
#include <stdlib.h>

#define TWO_PI 6.283185307179586

void margin_band(const lg_tf *tf, const double complex *cl, int ncl, double *flo, double *fhi)
{
    double lo = INFINITY, hi = 0;
    for (int k = 0; k < tf->npoles + tf->nzeros + ncl; k++) {
        double complex v = k < tf->npoles ? tf->poles[k]
                           : k < tf->npoles + tf->nzeros ? tf->zeros[k - tf->npoles]
                                                         : cl[k - tf->npoles - tf->nzeros];
        double m = cabs(v);
        if (m == 0)
            continue; /* roots at s = 0 were snapped to exactly 0 */
        lo = fmin(lo, m);
        hi = fmax(hi, m);
    }
    if (!isfinite(lo)) {
        *flo = 1.0;
        *fhi = 1e9;
        return;
    }
    *flo = lo / TWO_PI / 1000.0;
    *fhi = hi / TWO_PI * 1000.0;
}

/* Log grid over the band plus every pole and zero frequency inside it, and
 * points on either side of each resonance so a narrow peak is not missed.
 * Beyond a decade outside the poles and zeros T is a plain power of f, so
 * the grid there is sparse. */
double *margin_grid(const lg_tf *tf, double flo, double fhi, int per_decade, int *npts)
{
    double slo = INFINITY, shi = 0;
    for (int k = 0; k < tf->npoles + tf->nzeros; k++) {
        double complex v = k < tf->npoles ? tf->poles[k] : tf->zeros[k - tf->npoles];
        if (v != 0 && (k >= tf->npoles || !tf->hidden[k])) {
            slo = fmin(slo, cabs(v) / TWO_PI / 10);
            shi = fmax(shi, cabs(v) / TWO_PI * 10);
        }
    }
    double ul = log10(flo), uh = log10(fhi);
    double il = isfinite(slo) ? fmax(ul, log10(slo)) : ul, ih = shi > 0 ? fmin(uh, log10(shi)) : uh;
    if (!(ih > il)) {
        il = ul;
        ih = uh;
    }
    int nin = (int)ceil((ih - il) * per_decade) + 1, nlo = (int)ceil((il - ul) * 3) + 1,
        nhi = (int)ceil((uh - ih) * 3) + 1;
    int nx = 5 * (tf->npoles + tf->nzeros), cap = nin + nlo + nhi + nx;
    double *u = malloc(sizeof(double) * (size_t)(cap + nx + 1)), *x = u + cap;
    if (!u)
        return NULL;
    int n = 0, ne = 0;
    for (int k = 0; k < nlo; k++)
        u[n++] = ul + (il - ul) * k / (nlo > 1 ? nlo - 1 : 1);
    for (int k = 0; k < nin; k++)
        u[n++] = il + (ih - il) * k / (nin > 1 ? nin - 1 : 1);
    for (int k = 0; k < nhi; k++)
        u[n++] = ih + (uh - ih) * k / (nhi > 1 ? nhi - 1 : 1);
    for (int k = 0; k < tf->npoles + tf->nzeros; k++) {
        double complex v = k < tf->npoles ? tf->poles[k] : tf->zeros[k - tf->npoles];
        double m = cabs(v) / TWO_PI, q = cimag(v) != 0 ? cabs(v) / (2 * fabs(creal(v))) : 0;
        double off[5] = { 0, 0.5, -0.5, 0.15, -0.15 };
        for (int j = 0; j < (q > 0.5 ? 5 : 1); j++) {
            double f = m * (1.0 + off[j] / q);
            if (f > flo && f < fhi)
                x[ne++] = log10(f);
        }
    }
    /* the log grid is sorted already: sort the few extra points and merge */
    gsl_sort(x, 1, (size_t)ne);
    for (int i = n - 1, j = ne - 1, k = n + ne - 1; j >= 0; k--)
        u[k] = i >= 0 && u[i] > x[j] ? u[i--] : x[j--];
    *npts = n + ne;
    return u;
}
