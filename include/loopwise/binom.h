/* binom: exact (Clopper-Pearson) confidence bounds for a binomial proportion.
 *
 * The bounds are roots of the regularized incomplete beta function, found in
 * a bracket to full double precision, so they are finite and right for every
 * count k of n trials (n up to MC_MAX_SAMPLES and beyond). Nothing is
 * allocated; the functions are pure. */
#ifndef LOOPWISE_BINOM_H
#define LOOPWISE_BINOM_H

/* The p at which k or more successes in n trials have probability tail:
 * P(X >= k | n, p) = I_p(k, n - k + 1) = tail. 0 when k = 0.
 * Needs 0 <= k <= n, n >= 1 and 0 < tail < 1; returns NAN otherwise. */
double binom_lower_bound(int k, int n, double tail);
/* The p at which k or fewer successes in n trials have probability tail:
 * P(X <= k | n, p) = 1 - I_p(k + 1, n - k) = tail. 1 when k = n.
 * Same domain as binom_lower_bound. */
double binom_upper_bound(int k, int n, double tail);

#endif
