/* loopgain_impl: what the two files of the loop-gain module share
 * (loopgain.c: the evaluator and the closed loop; loopgain_tf.c: the
 * structure of T). Not part of the library's public interface. */
#ifndef LOOPWISE_LOOPGAIN_IMPL_H
#define LOOPWISE_LOOPGAIN_IMPL_H

#include <complex.h>

#include "loopwise/loopgain.h"
#include "loopwise/netlu.h"
#include "loopwise/pencil.h"

struct lgain {
    int n, in, out;           /* out = -1: the break is the vector u (lgain_new_vec) */
    double gain;              /* the LU path's factor: -g d_in d_out, or -d_in for a vector */
    double hgain;             /* the Hessenberg path's factor: gain, or -1 for a vector
                                 (pencil_io with node vectors gives v^T Y0^-1 u unscaled) */
    double *u, *v;            /* a vector break: u and e_in, unscaled; us = D u */
    double *us;
    pencil_io io;
    pencil *p;                /* the reduction of Y0, shared with lg_tf_analyse */
    pencil_hess *h;           /* O(rank^2) evaluation */
    int full;                 /* 1: evaluate by the LU of the whole network */
    double *Gs, *Cs;          /* D G0 D and D C D */
    double complex *Y, *x;    /* the LU path: Y0(s) and the right-hand side */
    double *Yr, *xr;          /* the same at real s, by a real LU */
    int *perm;
    netlu *lu;                /* the LU path as a sparse LU (from NETLU_MIN nodes) */
    int walked;               /* a point of the exact phase walk is kept */
    double walk_hz, walk_ph;
    struct lgain_ahead *ahead; /* results computed ahead (loopgain_ahead.c); NULL: none */
};

/* loopgain_ahead.c: from AHEAD_MIN nodes the poles with their owners run
 * beside the Hessenberg form, the closed-loop poles and the zero
 * candidates (two OpenMP sections, the same calls as one after the
 * other). lgain_ahead_run builds lg->h and keeps the rest; each take
 * function copies a result out once (1) or says there is none (0), and the
 * caller then computes it itself. */
#define AHEAD_MIN 1000
typedef struct lgain_ahead lgain_ahead;
int lgain_ahead_wanted(int n);
int lgain_ahead_run(lgain *lg, const double *C, lw_error *err);
void lgain_ahead_free(lgain_ahead *a);
int lgain_ahead_poles(lgain *lg, double complex *poles, int *owner);
int lgain_ahead_zero_candidates(lgain *lg, double complex *cand, int *nc, int *used);
/* lg_verify_zero(lg, z) for a candidate handed out above, when it was
 * computed ahead; -1 when it was not. */
int lgain_ahead_verified(const lgain *lg, double complex z);
int lgain_ahead_closed_loop(lgain *lg, double complex *roots, int *ok);

/* 1 when the zero candidate z is a zero of T (|T| near z far below |T| on
 * a small circle around it), 0 for a mode T cannot see or debris. */
int lg_verify_zero(lgain *lg, double complex z);

/* lg->h from lg->p: the controller Hessenberg form (with its real Schur
 * form unless T is evaluated by the LU of the whole network). */
int lgain_hess_build(lgain *lg, lw_error *err);

/* Order of lg_sort: by magnitude, then imaginary part (qsort comparator). */
int lg_cmp_root(const void *pa, const void *pb);
/* Cleans rounding residue: an imaginary part below 1e-12 of the magnitude is 0. */
double complex lg_tidy(double complex z);

#endif
