#!/usr/bin/python3
"""Clopper-Pearson bounds of loopwise (src/binom.c) against outside references.

    /usr/bin/python3 tests/binom/check.py BUILD/tests/binom_grid

The grid program prints, for each pair (k, n), the two-sided 95% lower and
upper bounds and the one-sided 95% lower bound. They are checked

  * for every k of every n from 1 to 2000, and for a spread of k at n from
    2001 to 10^7 (the Monte Carlo limit);
  * against scipy.stats.beta.ppf (Debian's scipy, which inverts the incomplete
    beta function with its own code, not GSL's), to a relative 1e-9;
  * against the definition (Clopper and Pearson 1934): the lower bound is the
    p at which P(X >= k | n, p) equals the tail, the upper bound the p at
    which P(X <= k | n, p) does. The binomial tails come from
    scipy.stats.binom (every pair), and, for small n and the counts for which
    GSL's own quantile once gave NaN, from a direct sum of the binomial
    terms in 50-digit decimal arithmetic. The check brackets the root: the
    tail must lie on one side of the target at p(1 - d) and on the other at
    p(1 + d), so the exact bound is within a relative d of the one printed;
  * against closed forms for k = 0, 1, n - 1, n, and values published in
    textbooks.

Prints one line per check and "N passed, M failed"; exit status 1 on failure.
"""
import decimal
import subprocess
import sys

import numpy as np
from scipy.stats import beta, binom

GRID_N = 2000      # every (k, n) up to here, as tests/binom/grid.c
REL = 1e-9         # agreement with scipy and the width of the bracket (issue 14)
EXACT_REL = 1e-12  # bracket width for the 50-digit sums
passed = failed = 0


def report(ok, what):
    global passed, failed
    passed += bool(ok)
    failed += not ok
    print(("PASS " if ok else "FAIL ") + what)


def run(grid, mode, text=None):
    out = subprocess.run([grid, mode], input=text, capture_output=True, check=True).stdout
    return np.frombuffer(out, dtype=np.float64).reshape(-1, 5)


def spread_pairs():
    """A spread of counts for n from 2001 to 10^7: the ends, fractions of n,
    pseudo-random counts (a fixed seed), and the pairs of issue 14 for which
    GSL's beta quantile gave NaN."""
    rng = np.random.RandomState(14)
    pairs = {(358, 5000), (409, 5000), (817, 5000), (4183, 5000)}
    for n in (2001, 2500, 5000, 7919, 10**4, 31623, 10**5, 316228, 10**6, 3162278, 10**7):
        ks = {0, 1, 2, 3, 5, 10, 30, 100}
        ks |= {n - k for k in ks}
        ks |= {int(round(n * f)) for f in (1e-4, 1e-3, 0.01, 0.05, 0.1, 0.25, 0.5, 0.75, 0.9,
                                           0.95, 0.99, 0.999, 0.9999)}
        ks |= set(int(k) for k in rng.randint(0, n + 1, size=20))
        pairs |= {(k, n) for k in ks}
    return sorted(pairs, key=lambda p: (p[1], p[0]))


def scipy_bounds(k, n):
    """The bounds as beta quantiles (Clopper and Pearson 1934), by scipy."""
    with np.errstate(all="ignore"):
        lo = np.where(k > 0, beta.ppf(0.025, k, n - k + 1), 0.0)
        hi = np.where(k < n, beta.ppf(0.975, k + 1, n - k), 1.0)
        l1 = np.where(k > 0, beta.ppf(0.05, k, n - k + 1), 0.0)
    return lo, hi, l1


def compare(name, v):
    k, n = v[:, 0], v[:, 1]
    finite = np.isfinite(v[:, 2:]).all()
    report(finite, "%s: every bound finite (%d pairs)" % (name, len(k)))
    lo, hi, l1 = v[:, 2], v[:, 3], v[:, 4]
    # the one-sided bound (tail 0.05) lies between the two-sided one (tail
    # 0.025) and the observed fraction, which the upper bound exceeds
    order = (0 <= lo) & (lo <= l1) & (l1 <= k / n) & (k / n <= hi) & (hi <= 1)
    report(order.all(), "%s: 0 <= lower <= one-sided lower <= k/n <= upper <= 1" % name)
    ref = scipy_bounds(k, n)
    for label, got, want in (("lower", lo, ref[0]), ("upper", hi, ref[1]),
                             ("one-sided lower", l1, ref[2])):
        rel = np.abs(got - want) / np.maximum(np.abs(want), 1e-300)
        i = int(np.argmax(rel))
        report(rel[i] <= REL, "%s: %s vs scipy.stats.beta.ppf, max relative difference %.2e "
               "(k=%d, n=%d)" % (name, label, rel[i], k[i], n[i]))
    # The definition, by scipy.stats.binom: the tail crosses the target
    # between p(1 - REL) and p(1 + REL).
    with np.errstate(all="ignore"):
        for label, p, tail in (("lower", lo, 0.025), ("one-sided lower", l1, 0.05)):
            m = k > 0
            below = binom.sf(k[m] - 1, n[m], p[m] * (1 - REL))    # P(X >= k)
            above = binom.sf(k[m] - 1, n[m], np.minimum(p[m] * (1 + REL), 1.0))
            ok = (below < tail) & (tail < above)
            report(ok.all(), "%s: %s bound: P(X >= k) crosses %g within relative %g of it "
                   "(%d pairs, %d outside)" % (name, label, tail, REL, m.sum(), (~ok).sum()))
        m = k < n
        above = binom.cdf(k[m], n[m], hi[m] * (1 - REL))           # P(X <= k)
        below = binom.cdf(k[m], n[m], np.minimum(hi[m] * (1 + REL), 1.0))
        ok = (below < 0.025) & (0.025 < above)
        report(ok.all(), "%s: upper bound: P(X <= k) crosses 0.025 within relative %g of it "
               "(%d pairs, %d outside)" % (name, REL, m.sum(), (~ok).sum()))
    report(((k > 0) | (lo == 0)).all() and ((k < n) | (hi == 1)).all(),
           "%s: the interval reaches 0 when k = 0 and 1 when k = n" % name)


def exact_tail_ge(k, n, p):
    """P(X >= k | n, p) by summing the binomial terms in 50-digit decimals;
    p is a double, converted exactly."""
    p = decimal.Decimal(p)
    q = 1 - p
    term = q ** n            # P(X = 0)
    total = term if k == 0 else decimal.Decimal(0)
    for i in range(1, n + 1):
        term = term * (n - i + 1) / i * p / q
        if i >= k:
            total += term
    return total


def exact_checks(v):
    """The definition in 50-digit arithmetic for the pairs given."""
    decimal.getcontext().prec = 50
    bad = []
    for k, n, lo, hi, l1 in v:
        k, n = int(k), int(n)
        for p, tail, side in ((lo, 0.025, "lower"), (l1, 0.05, "one-sided lower"),
                              (hi, 0.025, "upper")):
            if (side != "upper" and k == 0) or (side == "upper" and k == n):
                continue
            dt = decimal.Decimal(tail)
            if side == "upper":   # P(X <= k) = 1 - P(X >= k + 1), decreasing in p
                f = lambda x: 1 - exact_tail_ge(k + 1, n, x)
                ok = f(p * (1 - EXACT_REL)) > dt > f(min(p * (1 + EXACT_REL), 1.0))
            else:
                f = lambda x: exact_tail_ge(k, n, x)
                ok = f(p * (1 - EXACT_REL)) < dt < f(min(p * (1 + EXACT_REL), 1.0))
            if not ok:
                bad.append((side, k, n, p))
    return bad


def main():
    grid = sys.argv[1]
    full = run(grid, "full")
    want = sum(n + 1 for n in range(1, GRID_N + 1))
    k_expected = np.concatenate([np.arange(n + 1) for n in range(1, GRID_N + 1)])
    report(len(full) == want and (full[:, 0] == k_expected).all(),
           "grid: every k of every n from 1 to %d (%d pairs)" % (GRID_N, want))
    compare("n <= %d" % GRID_N, full)

    text = "".join("%d %d\n" % p for p in spread_pairs()).encode()
    spread = run(grid, "pairs", text)
    compare("spread of k, n up to 10^7", spread)

    # 50-digit sums: every k for n up to 12, and the pairs of issue 14
    # (GSL's quantile gave NaN for them: n = 2000, k = 1788 one-sided;
    # n = 1000, k = 941 and 971; n = 500, k = 16; n = 5000 in the spread).
    sel = full[(full[:, 1] <= 12)
               | np.isin(full[:, 1] * 10000 + full[:, 0],
                         [2000 * 10000 + 1788, 1000 * 10000 + 941, 1000 * 10000 + 971,
                          500 * 10000 + 16])]
    sel = np.vstack([sel, spread[spread[:, 1] == 5000][:8]])
    bad = exact_checks(sel)
    report(not bad, "definition in 50-digit arithmetic: %d pairs, the bound within relative "
           "%g of the root%s" % (len(sel), EXACT_REL, "; off: %s" % bad[:5] if bad else ""))

    # Closed forms (from the definition): P(X >= n) = p^n, P(X >= 1) =
    # 1 - (1 - p)^n, P(X <= 0) = (1 - p)^n, P(X <= n - 1) = 1 - p^n.
    def at(k, n):
        r = full[(full[:, 0] == k) & (full[:, 1] == n)]
        return r[0] if len(r) else run(grid, "pairs", b"%d %d\n" % (k, n))[0]
    worst = 0.0
    for n in (1, 2, 7, 10, 100, 1999, 2000, 10**5, 10**7):
        cases = [(at(n, n)[2], 0.025 ** (1 / n)), (at(n, n)[4], 0.05 ** (1 / n)),
                 (at(0, n)[3], -np.expm1(np.log(0.025) / n))]
        if n > 1:
            cases += [(at(1, n)[2], -np.expm1(np.log1p(-0.025) / n)),
                      (at(1, n)[4], -np.expm1(np.log1p(-0.05) / n)),
                      (at(n - 1, n)[3], np.exp(np.log1p(-0.025) / n))]
        for got, want in cases:
            worst = max(worst, abs(got - want) / want)
    report(worst <= 1e-13, "closed forms for k = 0, 1, n - 1, n: max relative difference %.2e"
           % worst)

    # Published values. The exact 95% interval for 5 of 10 is 0.1871 to
    # 0.8129, and for 1 of 10 0.0025 to 0.4450 (textbook tables of the
    # Clopper-Pearson interval, from memory); the "rule of three" (Hanley and
    # Lippman-Hand, JAMA 1983): with no failure in n trials the one-sided 95%
    # bound on the failure rate is close to 3/n.
    five, one = at(5, 10), at(1, 10)
    report(abs(five[2] - 0.1871) < 5e-5 and abs(five[3] - 0.8129) < 5e-5,
           "5 of 10: %.4f to %.4f (published 0.1871 to 0.8129)" % (five[2], five[3]))
    report(abs(one[2] - 0.0025) < 5e-5 and abs(one[3] - 0.4450) < 5e-5,
           "1 of 10: %.4f to %.4f (published 0.0025 to 0.4450)" % (one[2], one[3]))
    r3 = 1 - at(10**5, 10**5)[4]
    report(abs(r3 * 10**5 / 3 - 1) < 0.005,   # ln 20 = 2.996, not 3
           "rule of three: 1 - one-sided lower bound of 10^5 of 10^5 = %.6g, 3/n = 3e-05" % r3)

    print("%d passed, %d failed" % (passed, failed))
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
