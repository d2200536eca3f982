"""Exact TOST power (power/owen.c, Phillips 1990 via Owen's Q) against Monte Carlo and quadrature.

Run with Debian's /usr/bin/python3 (numpy, scipy 1.10.1). Drives build/tests/probe_dist (env
BUILD). Prints PASS/FAIL lines.

* Monte Carlo: for each case, N = 200,000 replicates of the two one-sided tests (numpy default_rng,
  fixed seed 20261202), drawing the estimate and its standard error as in the model (estimate
  ~ N(theta, se^2), estimated se = se * sqrt(chi2_df / df)); one case simulates raw two-sample data
  and the pooled t test instead. Tolerance 3.5 Monte Carlo standard errors, sqrt(p (1 - p) / N) at
  the exact p: a correct value fails a case with probability 4.7e-4, and one of the 8 cases with
  probability below 4e-3 (the false-alarm rate; with the seed fixed the outcome is deterministic,
  and the seed was chosen before the first run).
* Quadrature: scipy.integrate.quad of Phillips' integral over the chi density (an independent
  integrator, tests/REFERENCES.md 5 used the same check) to 1e-11 absolute, 100 times inside the
  issue's 1e-9 target (quad is asked for 1e-12 relative).
"""
import math
import os
import sys

import numpy as np
from scipy import integrate, optimize, special, stats

import refcheck
from refcheck import report

PROBE = refcheck.probe_path("probe_dist")
N_MC = 200_000
SEED = 20261202
Z_TOL = 3.5
QUAD_TOL = 1e-11   # quad asked for 1e-12 relative; agreement seen ~1e-14


def probe(lines):
    out = refcheck.probe_output(PROBE, lines).split()
    return [float(v) for v in out]


def t_crit(alpha, df):
    """t_{1-alpha, df} by Brent's method on the regularized incomplete beta (Cephes incbet).
    Not stats.t.isf: in scipy 1.10.1 it is off by 2.5e-9 at df 38 and 5e-9 at df 4, which moves
    the power in the 10th digit (and explains tests/REFERENCES.md 5's last digit 0.815845281)."""
    return optimize.brentq(lambda t: special.betainc(df / 2, 0.5, df / (df + t * t)) / 2 - alpha,
                           1e-3, 1e3, xtol=1e-15, rtol=1e-15)


def mc_model(rng, theta, lo, hi, se, df, alpha, n):
    """Rejection rate of TOST with estimate ~ N(theta, se^2) and se estimated on df."""
    tc = t_crit(alpha, df)
    est = theta + se * rng.standard_normal(n)
    se_hat = se * np.sqrt(rng.chisquare(df, n) / df)
    return np.mean(((est - lo) / se_hat > tc) & ((est - hi) / se_hat < -tc))


def mc_two_sample(rng, diff, margin, n_group, alpha, n):
    """Raw data: groups of n_group N(0, 1) and N(diff, 1), pooled-variance t, TOST at +-margin."""
    df = 2 * n_group - 2
    tc = t_crit(alpha, df)
    hits = 0
    chunk = 20_000
    for start in range(0, n, chunk):
        m = min(chunk, n - start)
        a = rng.standard_normal((m, n_group))
        b = diff + rng.standard_normal((m, n_group))
        est = b.mean(axis=1) - a.mean(axis=1)
        pooled = (a.var(axis=1, ddof=1) + b.var(axis=1, ddof=1)) / 2
        se_hat = np.sqrt(pooled * 2 / n_group)
        hits += np.sum(((est + margin) / se_hat > tc) & ((est - margin) / se_hat < -tc))
    return hits / n


def quad_power(theta, lo, hi, se, df, alpha):
    """Phillips (1990): integral over the chi_df density of Phi(-tc s - d2) - Phi(tc s - d1)."""
    tc = t_crit(alpha, df)
    d1, d2 = (theta - lo) / se, (theta - hi) / se
    R = math.sqrt(df) * (d1 - d2) / (2 * tc)
    chi = stats.chi(df)
    m = math.sqrt(df)

    def f(x):
        s = tc * x / math.sqrt(df)
        return (stats.norm.cdf(-s - d2) - stats.norm.cdf(s - d1)) * chi.pdf(x)
    pts = sorted({p for p in (m - 8, m - 3, m, m + 3) if 0 < p < R})
    val, _ = integrate.quad(f, 0, min(R, m + 40), points=pts or None, limit=500,
                            epsabs=1e-14, epsrel=1e-12)
    return val


def main():
    if not os.access(PROBE, os.X_OK):
        print("FAIL: %s not built (make check builds it)" % PROBE)
        return 1
    rng = np.random.default_rng(SEED)
    lg = math.log
    sw20, sw30 = math.sqrt(lg(1.04)), math.sqrt(lg(1.09))
    # (description, theta, lo, hi, se, df, alpha); the first six are tests/REFERENCES.md 5's cases.
    cases = [
        ("2x2 crossover CV .20 n 20 theta0 .95", lg(0.95), lg(0.8), lg(1.25),
         sw20 * math.sqrt(2 / 20), 18, 0.05),
        ("2x2 crossover CV .30 n 40 theta0 .95", lg(0.95), lg(0.8), lg(1.25),
         sw30 * math.sqrt(2 / 40), 38, 0.05),
        ("paired n 30 theta 0 Delta .5", 0.0, -0.5, 0.5, 1 / math.sqrt(30), 29, 0.05),
        ("two-sample 50/grp theta .1 Delta .5", 0.1, -0.5, 0.5, 0.2, 98, 0.05),
        ("two-sample 10/grp theta 0 Delta .5 (approximations negative)", 0.0, -0.5, 0.5,
         math.sqrt(0.2), 18, 0.05),
        ("two-sample 20/grp theta 0 Delta 1", 0.0, -1.0, 1.0, math.sqrt(0.1), 38, 0.05),
        ("invented asymmetric margins (-.3, .6), theta .1, df 4, alpha .10", 0.1, -0.3, 0.6, 0.12,
         4, 0.10),
    ]
    lines = ["tost %r %r %r %r %r %r" % (c[1], c[2], c[3], c[4], float(c[5]), c[6])
             for c in cases]
    lines.append("tost 0.2 -1.0 1.0 %r 38.0 0.05" % math.sqrt(2 / 20))   # raw-data case below
    exact = probe(lines)
    for (desc, theta, lo, hi, se, df, alpha), p in zip(cases, exact):
        mc = mc_model(rng, theta, lo, hi, se, df, alpha, N_MC)
        mcse = math.sqrt(p * (1 - p) / N_MC)
        z = (mc - p) / mcse
        report(abs(z) <= Z_TOL, "TOST %s: exact %.9f vs Monte Carlo %.5f +- %.5f (N=%d, seed %d), "
               "|z| = %.2f <= %.1f" % (desc, p, mc, mcse, N_MC, SEED, abs(z), Z_TOL))
        q = quad_power(theta, lo, hi, se, df, alpha)
        report(abs(q - p) <= QUAD_TOL, "TOST %s: exact %.12f vs scipy.integrate.quad %.12f, "
               "|diff| %.2g <= %g" % (desc, p, q, abs(q - p), QUAD_TOL))
    # Raw data: two invented groups of 20, true difference 0.2 sigma, margin +-1 sigma.
    p = exact[-1]
    mc = mc_two_sample(rng, 0.2, 1.0, 20, 0.05, N_MC)
    mcse = math.sqrt(p * (1 - p) / N_MC)
    z = (mc - p) / mcse
    report(abs(z) <= Z_TOL, "TOST raw two-sample data 20/grp, diff .2, margin 1 (pooled t): "
           "exact %.9f vs Monte Carlo %.5f +- %.5f (N=%d), |z| = %.2f <= %.1f" % (
               p, mc, mcse, N_MC, abs(z), Z_TOL))
    return 1 if refcheck.failures else 0


if __name__ == "__main__":
    sys.exit(main())
