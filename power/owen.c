/* Owen's Q function by adaptive quadrature, and the exact power of the two one-sided tests.
 * See LICENSE. */
#include <float.h>
#include <math.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_integration.h>
#include <gsl/gsl_math.h>
#include <gsl/gsl_sf_erf.h>
#include <gsl/gsl_sf_gamma.h>

#include "power/internal.h"

/* For nu >= 1 both integrands below are strongly log-concave: the chi density's -log has second
 * derivative (nu - 1) / x^2 + 1 >= 1, and the normal factor is the Gaussian measure of a convex
 * set moving linearly with x, log-concave by Prekopa's theorem. So the integrand is at most its
 * peak times exp(-(x - mode)^2 / 2), and beyond mode +- 13 lies under 1e-37 of the peak. Working
 * around the mode (not around the chi density's centre) keeps far tails, where the normal factor
 * drags the mass far from sqrt(nu), as accurate as the bulk. */
#define OWEN_HALFWIDTH 13.0
/* Quadrature tolerance, relative, so that tails of 1e-27 keep ten digits: a hundred times inside
 * the 1e-8 relative tail check of tests/ref_dist.py and far inside the 1e-9 absolute target;
 * 1e-12 costs about twice the integrand evaluations. */
#define OWEN_EPSREL 1e-10
/* Subintervals QAGP may create: smooth log-concave integrands need far fewer. */
#define OWEN_LIMIT 1000
/* The golden-section search for the mode stops once the bracket is below this share of its upper
 * end. The mode only places breakpoints, within which QAGP adapts, and the peaks met are wider
 * than 1e-4 of their distance from 0 (the chi factor alone gives about 1 / sqrt(nu) of it); a peak
 * at 0 makes the bracket shrink onto 0 until OWEN_MODE_ITER. */
#define OWEN_MODE_TOL 1e-6
/* Golden-section steps allowed: 0.618^200 shrinks any double bracket below the tolerance. */
#define OWEN_MODE_ITER 200
/* Breakpoints: 4^40 spans any ratio between the peak's scale and the window's. */
#define OWEN_MAX_POINTS 84
/* Doublings of the search interval for the mode before giving up (2^1100 passes DBL_MAX). */
#define OWEN_MAX_DOUBLE 1100

/* erfc(z) stays a normal double up to z = 26.5; beyond 26 the logarithm comes from GSL. */
#define OWEN_ERFC_DIRECT_MAX 26.0
/* From this nu on the chi density is taken through Loader's Poisson term (k = nu / 2 - 1); below
 * it the direct formula's terms stay under about 3500, so it loses under 1e-12, and it is cheaper. */
#define OWEN_LOADER_NU 1e3

enum kind { OWEN_Q, TOST_BAND };

struct chi_args {
    enum kind kind;
    double nu, slope;        /* slope = t / sqrt(nu) */
    double delta, delta2;    /* delta2 is used by the TOST band only */
    double log_norm;         /* log of the chi density's constant */
};

/* log Phi(u), accurate far into either tail: C99 erfc (three times faster than GSL's, and this is
 * the quadrature's inner loop) until it would underflow, then gsl_sf_log_erfc's asymptotics. */
static double log_Phi(double u)
{
    double z = -u / M_SQRT2;
    if (z < OWEN_ERFC_DIRECT_MAX)
        return log(0.5 * erfc(z));
    return gsl_sf_log_erfc(z) - M_LN2;
}

/* log P(a < Z < b) for a standard normal Z, from whichever tail is small, so nothing cancels. */
static double log_between(double a, double b)
{
    if (!(b > a))
        return -INFINITY;
    if (a >= 0.0) {
        double la = log_Phi(-a), lb = log_Phi(-b);
        return la + log1p(-exp(lb - la));
    }
    if (b <= 0.0) {
        double la = log_Phi(a), lb = log_Phi(b);
        return lb + log1p(-exp(la - lb));
    }
    /* (Phi(b) - 1/2) + (1/2 - Phi(a)), each half by erf, which stays accurate near 0 */
    return log(0.5 * (erf(b / M_SQRT2) + erf(-a / M_SQRT2)));
}

/* log of the integrand: the normal factor times the chi density
 * x^{nu - 1} e^{-x^2 / 2} / (2^{nu/2 - 1} Gamma(nu/2)). */
static double log_integrand(double x, const struct chi_args *ca)
{
    if (x < 0.0 || (x == 0.0 && ca->nu > 1.0))
        return -INFINITY;
    double lchi;
    if (ca->nu >= OWEN_LOADER_NU)
        /* With u = x^2 / 2 the chi density is x times the Poisson-form term u^k e^{-u} / k!,
         * k = nu / 2 - 1, which Loader's form gives to full relative accuracy; the direct sum of
         * (nu - 1) ln x, -x^2 / 2 and the constant cancels terms near 7e6 at nu = 1e6 and loses
         * about 1e-9. */
        lchi = log(x) + pw_log_dpois(0.5 * ca->nu - 1.0, 0.5 * x * x);
    else
        lchi = (ca->nu == 1.0 ? 0.0 : (ca->nu - 1.0) * log(x)) - 0.5 * x * x + ca->log_norm;
    double s = ca->slope * x;
    if (ca->kind == OWEN_Q)   /* Owen (1965): Phi(t x / sqrt(nu) - delta) */
        return log_Phi(s - ca->delta) + lchi;
    /* Phillips (1990): both one-sided tests pass when s - delta1 < Z < -s - delta2 */
    return log_between(s - ca->delta, -s - ca->delta2) + lchi;
}

static double integrand(double x, void *params)
{
    return exp(log_integrand(x, params));
}

/* Append x to an increasing list of breakpoints unless it repeats the last one. */
static void add_point(double *pts, size_t *np, double x)
{
    if (*np == 0 || x > pts[*np - 1])
        pts[(*np)++] = x;
}

/* Integrate over [0, R]. For nu >= 1: find the mode of the log-concave integrand by golden
 * section, then integrate over mode +- 13 with breakpoints at the mode's own scale. */
static int chi_integral(struct chi_args *ca, double R, double *val)
{
    double lo = 0.0, hi;
    double pts[OWEN_MAX_POINTS + 1];
    size_t np = 0;
    if (ca->nu < 1.0) {
        /* x^{nu - 1} is singular at 0 and the integrand is not log-concave: the chi mass sits
         * below sqrt(nu) + 13 by the tail bound above, and QAGS extrapolates through 0. */
        add_point(pts, &np, 0.0);
        add_point(pts, &np, fmin(R, sqrt(ca->nu) + OWEN_HALFWIDTH));
    } else {
        hi = fmin(R, sqrt(ca->nu) + OWEN_HALFWIDTH);
        int n = 0;
        while (hi < R && log_integrand(hi + 1.0, ca) > log_integrand(hi, ca)) {
            if (++n > OWEN_MAX_DOUBLE)
                return PW_ENOCONV;
            hi = fmin(R, 2.0 * hi + 1.0);
        }
        const double g = 0.5 * (sqrt(5.0) - 1.0);
        double c = hi - g * (hi - lo), d = lo + g * (hi - lo);
        double hc = log_integrand(c, ca), hd = log_integrand(d, ca);
        for (int it = 0; it < OWEN_MODE_ITER && hi - lo > OWEN_MODE_TOL * hi; it++) {
            if (hc >= hd) {
                hi = d;
                d = c;
                hd = hc;
                c = hi - g * (hi - lo);
                hc = log_integrand(c, ca);
            } else {
                lo = c;
                c = d;
                hc = hd;
                d = lo + g * (hi - lo);
                hd = log_integrand(d, ca);
            }
        }
        double mode = 0.5 * (lo + hi);
        double hm = log_integrand(mode, ca);
        if (!(hm > -INFINITY)) {          /* the integrand is 0 everywhere on [0, R] */
            *val = 0.0;
            return PW_OK;
        }
        /* Curvature at the mode by central differences, at a step matched to it. */
        double curv = 1.0, step = 0.1;
        for (int k = 0; k < 6; k++) {
            double hp = log_integrand(mode + step, ca), hn = log_integrand(mode - step, ca);
            double c2 = isfinite(hn) ? -(hp - 2.0 * hm + hn) / (step * step)
                                     : -2.0 * (hp - hm) / (step * step);
            if (!isfinite(c2))
                break;
            curv = fmax(c2, 1.0);
            if (step * step * curv <= 0.01)
                break;
            step = 0.1 / sqrt(curv);
        }
        /* Breakpoints at mode +- w 4^k up to the half-width: every scale from the peak's own
         * (which a boundary mode with a steep normal factor makes tiny) to the outer window gets
         * segments that a Gauss-Kronrod rule resolves. */
        double w = fmin(1.0 / sqrt(curv), 1.0);
        double left[OWEN_MAX_POINTS / 2], right[OWEN_MAX_POINTS / 2];
        size_t nl = 0, nr = 0;
        for (double off = w; nl < OWEN_MAX_POINTS / 2 - 1; off *= 4.0) {
            double o = fmin(off, OWEN_HALFWIDTH);
            left[nl++] = mode - o;
            right[nr++] = mode + o;
            if (o >= OWEN_HALFWIDTH)
                break;
        }
        for (size_t k = nl; k-- > 0;)
            add_point(pts, &np, fmin(fmax(left[k], 0.0), R));
        add_point(pts, &np, fmin(fmax(mode, 0.0), R));
        for (size_t k = 0; k < nr; k++)
            add_point(pts, &np, fmin(fmax(right[k], 0.0), R));
    }
    if (np < 2) {
        *val = 0.0;
        return PW_OK;
    }
    gsl_integration_workspace *ws = gsl_integration_workspace_alloc(OWEN_LIMIT);
    if (!ws)
        return PW_ENOMEM;
    gsl_function f = {integrand, ca};
    double err;
    int s;
    if (ca->nu < 1.0)
        s = gsl_integration_qags(&f, pts[0], pts[1], 0.0, OWEN_EPSREL, OWEN_LIMIT, ws, val, &err);
    else
        s = gsl_integration_qagp(&f, pts, np, 0.0, OWEN_EPSREL, OWEN_LIMIT, ws, val, &err);
    gsl_integration_workspace_free(ws);
    if (s == GSL_EROUND && err <= 1e3 * OWEN_EPSREL * fabs(*val))
        s = GSL_SUCCESS;   /* rounding stopped it just short of a tolerance it nearly met */
    if (s != GSL_SUCCESS && !(*val == 0.0 && err == 0.0))
        return PW_ENOCONV;
    return PW_OK;
}

static double chi_log_norm(double nu)
{
    return -(0.5 * nu - 1.0) * M_LN2 - gsl_sf_lngamma(0.5 * nu);
}

int pw_owen_q(double nu, double t, double delta, double R, double *q)
{
    if (!(nu > 0.0) || !isfinite(nu) || !isfinite(t) || !isfinite(delta) || !(R >= 0.0)
        || isnan(R))
        return PW_EDOM;
    struct chi_args ca = {OWEN_Q, nu, t / sqrt(nu), delta, 0.0, chi_log_norm(nu)};
    double v;
    int s = chi_integral(&ca, R, &v);
    if (s != PW_OK)
        return s;
    *q = fmin(fmax(v, 0.0), 1.0);
    return PW_OK;
}

int pw_tost_power(double theta, double lo, double hi, double se, double df, double alpha,
                  double *power)
{
    if (!isfinite(theta) || !isfinite(lo) || !isfinite(hi) || !(lo < hi) || !(se > 0.0)
        || !isfinite(se) || !(df > 0.0) || !isfinite(df) || !(alpha > 0.0 && alpha < 0.5))
        return PW_EDOM;
    /* Phillips (1990): power = Q_nu(-t_c, delta2; 0, R) - Q_nu(t_c, delta1; 0, R) with
     * delta1 = (theta - lo) / se, delta2 = (theta - hi) / se, t_c = t_{1 - alpha, nu} and
     * R = sqrt(nu) (delta1 - delta2) / (2 t_c). Integrating the difference of the two normal CDFs
     * in one pass keeps small powers (0.00097 in tests/REFERENCES.md 5) free of cancellation. */
    double tc = gsl_cdf_tdist_Qinv(alpha, df);
    if (!isfinite(tc) || !(tc > 0.0))
        return PW_ENOCONV;
    double d1 = (theta - lo) / se, d2 = (theta - hi) / se;
    double R = sqrt(df) * (d1 - d2) / (2.0 * tc);
    struct chi_args ca = {TOST_BAND, df, tc / sqrt(df), d1, d2, chi_log_norm(df)};
    double v;
    int s = chi_integral(&ca, R, &v);
    if (s != PW_OK)
        return s;
    *power = fmin(fmax(v, 0.0), 1.0);
    return PW_OK;
}
