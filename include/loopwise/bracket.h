/* bracket: a root of a function of one variable inside a bracket, by
 * Brent's method (GSL's fsolver), for the refinements of response and step
 * times. */
#ifndef LOOPWISE_BRACKET_H
#define LOOPWISE_BRACKET_H

/* The root of fn on [a, b] to |dx| < epsabs + epsrel |x| (at most 200
 * iterations). When an end is a root it is returned; when fn does not
 * change sign, the end where |fn| is smaller. */
double bracket_root(double (*fn)(double, void *), void *ctx, double a, double b, double epsabs,
                    double epsrel);

#endif
