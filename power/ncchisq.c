/* Noncentral chi-squared distribution: both tails as a Poisson mixture of central chi-squared.
 * See LICENSE. */
#include <float.h>
#include <math.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_sf_gamma.h>

#include "power/power.h"

/* The series stops once the bound on the neglected terms falls below this share of the tail's
 * sum: below double rounding, so truncation never shows beside rounding error. */
#define NCX2_SERIES_EPS 1e-17
/* Terms on each side of the Poisson mode before giving up: the weights have SD sqrt(lambda / 2),
 * and nine SDs reach 1e-18 of the mass, so 2e5 terms serve lambda up to about 1e9. */
#define NCX2_MAX_TERMS 200000
/* From this half-noncentrality on, the weights beyond FAR_SDS standard deviations of the Poisson
 * mode hold less than DBL_MIN (Bennett's inequality, as in power/ncbeta.c), so a tail whose
 * central term is already negligible at that distance is settled without summing out to where the
 * weights underflow. */
#define FAR_MIN_L 1e6
#define FAR_SDS 40.0

/* A weight below the smallest normal double is taken as 0: multiplied by ratios above 1/2, the
 * smallest subnormal rounds back to itself, and the series would never see its tail vanish. */
static double flush(double w)
{
    return fabs(w) < DBL_MIN ? 0.0 : w;
}

/* P(a, z) and Q(a, z), the regularized incomplete gamma functions, from GSL. */
static int gamma_pair(double a, double z, double *lo, double *up)
{
    gsl_sf_result r;
    int s = gsl_sf_gamma_inc_P_e(a, z, &r);
    if (s != GSL_SUCCESS && s != GSL_EUNDRFLW)
        return s == GSL_EDOM ? PW_EDOM : PW_ENOCONV;
    *lo = s == GSL_EUNDRFLW ? 0.0 : r.val;
    s = gsl_sf_gamma_inc_Q_e(a, z, &r);
    if (s != GSL_SUCCESS && s != GSL_EUNDRFLW)
        return s == GSL_EDOM ? PW_EDOM : PW_ENOCONV;
    *up = s == GSL_EUNDRFLW ? 0.0 : r.val;
    return PW_OK;
}

/* Whether a tail's remaining terms, bounded in all by far (see FAR_MIN_L), are negligible beside
 * its sum so far, or below anything a double can hold. */
static int far_negligible(double far, double sum)
{
    return far <= fmax(NCX2_SERIES_EPS * sum, 2.0 * DBL_MIN);
}

/* P(X <= x) = sum_j Pois(j; L) P(df / 2 + j, x / 2), L = lambda / 2, and the same sum with Q for
 * the upper tail. The central terms follow the recurrence P(a + 1, z) = P(a, z) - z^a e^{-z} /
 * Gamma(a + 1) of Ding (1992, AS 275); unlike AS 275, which sums forward from j = 0, the sum starts
 * at the Poisson mode and runs both ways (as in AS 310 for the beta case), so that large lambda
 * needs no long run-up and the upper tail is summed directly rather than taken as 1 - P. */
static int ncx2_tails(double x, double df, double lambda, double *lower, double *upper)
{
    double z = 0.5 * x, a0 = 0.5 * df, L = 0.5 * lambda;
    double k = floor(L);
    double w0 = exp(pw_log_dpois(k, L));
    double p0, q0;
    int s = gamma_pair(a0 + k, z, &p0, &q0);
    if (s != PW_OK)
        return s;
    double lz = log(z);
    double g0 = pw_log_dpois(a0 + k, z);   /* log of the step z^a e^{-z} / Gamma(a + 1) */

    /* For large L: P at the window's low end and Q at its high end bound every term of their tail
     * inside the window; outside it the weights are below DBL_MIN. */
    double far_lo = 1.0, far_up = 1.0;   /* 1: no shortcut (also when GSL cannot tell) */
    if (L >= FAR_MIN_L) {
        double span = ceil(FAR_SDS * sqrt(L));
        gsl_sf_result r;
        if (gsl_sf_gamma_inc_P_e(a0 + k - span, z, &r) == GSL_SUCCESS)
            far_lo = fmin(r.val + DBL_MIN, 1.0);
        if (gsl_sf_gamma_inc_Q_e(a0 + k + span, z, &r) == GSL_SUCCESS)
            far_up = fmin(r.val + DBL_MIN, 1.0);
    }

    double lo_sum = 0.0, up_sum = 0.0;
    double w = w0, pg = p0, qg = q0, g = g0;
    int converged = 0;
    for (long n = 0; n < NCX2_MAX_TERMS; n++) {
        double j = k + (double)n;
        lo_sum += w * pg;
        up_sum += w * qg;
        double step = exp(g);
        pg = fmax(pg - step, 0.0);
        qg = fmin(qg + step, 1.0);
        g += lz - log(a0 + j + 1.0);
        w = flush(w * L / (j + 1.0));
        /* Past the mode the weight ratios are below r = L / (j + 2): the neglected weights sum to
         * at most w / (1 - r); P only falls from here and Q is at most 1. */
        double r = L / (j + 2.0);
        if (r < 1.0) {
            double rest = w / (1.0 - r);
            if (rest * pg <= NCX2_SERIES_EPS * lo_sum
                && (rest <= NCX2_SERIES_EPS * up_sum || far_negligible(far_up, up_sum))) {
                converged = 1;
                break;
            }
        }
    }
    if (!converged)
        return PW_ENOCONV;

    w = w0;
    pg = p0;
    qg = q0;
    g = g0;
    converged = k == 0.0;
    for (long n = 1; !converged && n <= NCX2_MAX_TERMS; n++) {
        double j = k - (double)n;          /* the term now added */
        g += log(a0 + j + 1.0) - lz;       /* step(a) = step(a + 1) (a + 1) / z */
        double step = exp(g);
        pg = fmin(pg + step, 1.0);
        qg = fmax(qg - step, 0.0);
        w = flush(w * (j + 1.0) / L);
        lo_sum += w * pg;
        up_sum += w * qg;
        if (j <= 0.0) {
            converged = 1;
            break;
        }
        double r = j / L;                  /* below the mode, w_{j-1} / w_j = j / L */
        if (r < 1.0) {
            double rest = w * r / (1.0 - r);
            if ((rest <= NCX2_SERIES_EPS * lo_sum || far_negligible(far_lo, lo_sum))
                && rest * qg <= NCX2_SERIES_EPS * up_sum)
                converged = 1;
        }
    }
    if (!converged)
        return PW_ENOCONV;
    *lower = fmin(lo_sum, 1.0);
    *upper = fmin(up_sum, 1.0);
    return PW_OK;
}

int pw_ncchisq_cdf(double x, double df, double lambda, double *lower, double *upper)
{
    if (isnan(x) || !(df > 0.0) || !(lambda >= 0.0) || !isfinite(df) || !isfinite(lambda))
        return PW_EDOM;
    double lo, up;
    int s = PW_OK;
    if (x <= 0.0) {
        lo = 0.0;
        up = 1.0;
    } else if (isinf(x)) {
        lo = 1.0;
        up = 0.0;
    } else {
        s = ncx2_tails(x, df, lambda, &lo, &up);
    }
    if (s != PW_OK)
        return s;
    if (lower)
        *lower = lo;
    if (upper)
        *upper = up;
    return PW_OK;
}
