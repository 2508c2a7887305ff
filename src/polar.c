/* polar: the curve of the polar plot on the exact T. See polar.h. */
#include "loopwise/polar.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/margins.h"

#define TWO_PI 6.283185307179586
#define PI_ 3.14159265358979323846
/* The largest turn of T (radians) between two points, the longest chord in
 * the drawn plane, and the narrowest step (log10 f) that is still halved. */
#define MAX_TURN (10.0 * PI_ / 180.0)
#define MAX_CHORD 0.05
#define MIN_STEP 1e-10
/* How far (log10 f) the curve stops short of a pole on the axis, and the
 * relative distance from the axis within which a pole is on it (as in the
 * Nyquist count). */
#define AXIS_GAP 1e-6
#define AXIS_TOL 1e-9
#define PER_DECADE 20

double polar_radius(double mag, double rho_max)
{
    double rho = mag <= 1.0 ? mag : 1.0 + 20.0 * log10(mag) / POLAR_DB_PER_UNIT;
    return rho < rho_max ? rho : rho_max;
}

double complex polar_map(double complex t, double rho_max)
{
    double mag = cabs(t);
    if (!(mag > 0))
        return 0;
    if (!isfinite(mag))
        return rho_max; /* not drawn: the caller skips non-finite T */
    return polar_radius(mag, rho_max) * (t / mag);
}

double polar_unmap_radius(double rho)
{
    return rho <= 1.0 ? rho : pow(10.0, (rho - 1.0) * POLAR_DB_PER_UNIT / 20.0);
}

typedef struct sampler {
    lgain *lg;
    polar_curve *c;
    int cap;
} sampler;

static double complex t_at(lgain *lg, double u)
{
    return lgain_eval(lg, I * TWO_PI * pow(10.0, u));
}

static int finite_c(double complex t)
{
    return isfinite(creal(t)) && isfinite(cimag(t));
}

static int append(sampler *s, double u, double complex t, int gap)
{
    polar_curve *c = s->c;
    if (c->n == s->cap) {
        int cap = 2 * s->cap;
        double *hz = realloc(c->hz, sizeof *hz * (size_t)cap);
        if (!hz)
            return LW_ENOMEM;
        c->hz = hz;
        double complex *t2 = realloc(c->t, sizeof *t2 * (size_t)cap);
        if (!t2)
            return LW_ENOMEM;
        c->t = t2;
        unsigned char *g = realloc(c->gap, (size_t)cap);
        if (!g)
            return LW_ENOMEM;
        c->gap = g;
        s->cap = cap;
    }
    c->hz[c->n] = pow(10.0, u);
    c->t[c->n] = t;
    c->gap[c->n] = (unsigned char)(gap > 255 ? 255 : gap);
    c->n++;
    return LW_OK;
}

/* The tolerance at a drawn point: finer within POLAR_NEAR of -1. */
static double tolerance(double complex p)
{
    return cabs(p + 1.0) < POLAR_NEAR ? POLAR_TOL_NEAR : POLAR_TOL;
}

/* Adds the points after (ua, ta) up to and including (ub, tb), halving the
 * step while the midpoint leaves the chord, T turns too far, or the chord
 * is long (all in the drawn plane, unclamped up to POLAR_RHO_MAX). */
static int refine(sampler *s, double ua, double complex ta, double ub, double complex tb,
                  int depth)
{
    double um = 0.5 * (ua + ub);
    int split = 0;
    double complex tm = 0;
    if (ub - ua > MIN_STEP && depth < 60 && s->c->n < POLAR_MAX_POINTS) {
        tm = t_at(s->lg, um);
        if (finite_c(tm) && finite_c(ta) && finite_c(tb)) {
            double complex pa = polar_map(ta, POLAR_RHO_MAX), pb = polar_map(tb, POLAR_RHO_MAX),
                           pm = polar_map(tm, POLAR_RHO_MAX);
            double turn = ta != 0 && tb != 0 ? fabs(carg(tb / ta)) : 0;
            split = cabs(pm - 0.5 * (pa + pb)) > tolerance(pm) || turn > MAX_TURN ||
                    cabs(pb - pa) > MAX_CHORD;
        }
    } else if (s->c->n >= POLAR_MAX_POINTS) {
        s->c->coarse = 1;
    }
    if (split) {
        int rc = refine(s, ua, ta, um, tm, depth + 1);
        return rc ? rc : refine(s, um, tm, ub, tb, depth + 1);
    }
    return finite_c(tb) ? append(s, ub, tb, 0) : LW_OK;
}

static int cmp_double(const void *pa, const void *pb)
{
    double a = *(const double *)pa, b = *(const double *)pb;
    return a < b ? -1 : a > b;
}

/* The frequencies (log10 Hz, rising; a double pole twice) of the poles of T
 * on the imaginary axis above the origin. */
static int axis_poles(const lg_tf *tf, double *au)
{
    int n = 0;
    for (int k = 0; k < tf->npoles; k++) {
        double complex p = tf->poles[k];
        if (p != 0 && !tf->hidden[k] && fabs(creal(p)) <= AXIS_TOL * cabs(p) && cimag(p) > 0)
            au[n++] = log10(cimag(p) / TWO_PI);
    }
    qsort(au, (size_t)n, sizeof *au, cmp_double);
    return n;
}

/* The points from (*ua, *ta) up to ub, stepping around the axis poles au[*j..]
 * that lie on the way. */
static int stretch(sampler *s, double *ua, double complex *ta, double ub, const double *au,
                   int na, int *j)
{
    int rc = LW_OK;
    while (!rc && *j < na && au[*j] < ub) {
        double up = au[*j];
        int order = 0;
        while (*j < na && au[*j] == up) {
            order++;
            (*j)++;
        }
        if (up - AXIS_GAP > *ua)
            rc = refine(s, *ua, *ta, up - AXIS_GAP, t_at(s->lg, up - AXIS_GAP), 0);
        *ua = up + AXIS_GAP;
        *ta = t_at(s->lg, *ua);
        if (!rc)
            rc = append(s, *ua, *ta, order);
    }
    if (!rc && ub > *ua) {
        double complex tb = t_at(s->lg, ub);
        rc = refine(s, *ua, *ta, ub, tb, 0);
        *ua = ub;
        *ta = tb;
    }
    return rc;
}

int polar_curve_sample(lgain *lg, const lg_tf *tf, double flo, double fhi, polar_curve *c,
                       lw_error *err)
{
    memset(c, 0, sizeof *c);
    c->origin_order = tf->origin < 0 ? -tf->origin : 0;
    int ngrid;
    double *grid = margin_grid(tf, flo, fhi, PER_DECADE, &ngrid);
    double *au = malloc(sizeof *au * (size_t)(tf->npoles + 1));
    sampler s = { lg, c, 256 };
    c->hz = malloc(sizeof *c->hz * (size_t)s.cap);
    c->t = malloc(sizeof *c->t * (size_t)s.cap);
    c->gap = malloc((size_t)s.cap);
    int rc = grid && au && c->hz && c->t && c->gap ? LW_OK : LW_ENOMEM;
    if (rc)
        goto done;
    int na = axis_poles(tf, au), j = 0;
    double ua = grid[0];
    while (j < na && au[j] <= ua)
        j++; /* below the band: not drawn */
    double complex ta = t_at(lg, ua);
    if (finite_c(ta))
        rc = append(&s, ua, ta, 0);
    for (int k = 1; !rc && k < ngrid; k++) {
        /* the grid holds every pole frequency: none on an axis pole itself */
        int near = 0;
        for (int i = 0; i < na; i++)
            near |= fabs(grid[k] - au[i]) < 2 * AXIS_GAP;
        if (grid[k] > ua && !near)
            rc = stretch(&s, &ua, &ta, grid[k], au, na, &j);
    }
done:
    free(grid);
    free(au);
    if (rc) {
        polar_curve_free(c);
        return lw_error_set(err, rc, "out of memory");
    }
    return LW_OK;
}

void polar_curve_free(polar_curve *c)
{
    if (!c)
        return;
    free(c->hz);
    free(c->t);
    free(c->gap);
    memset(c, 0, sizeof *c);
}
