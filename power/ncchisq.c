/* Noncentral chi-squared distribution: both tails as a Poisson mixture of central chi-squared.
 * See LICENSE. */
#include <float.h>
#include <math.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_sf_gamma.h>

#include "power/internal.h"

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

/* P(X <= x) = sum_j Pois(j; L) P(df / 2 + j, x / 2), L = lambda / 2, and the same sum with Q for
 * the upper tail. The central terms follow the recurrence P(a + 1, z) = P(a, z) - z^a e^{-z} /
 * Gamma(a + 1) of Ding (1992, AS 275); unlike AS 275, which sums forward from j = 0, the sum starts
 * at the Poisson mode and runs both ways (as in AS 310 for the beta case), so that large lambda
 * needs no long run-up and the upper tail is summed directly rather than taken as 1 - P. */
static int ncx2_tails(double x, double df, double lambda, double *lower, double *upper)
{
    double z = 0.5 * x, a0 = 0.5 * df, L = 0.5 * lambda;
    double k = floor(L);
    pw_mixture m = {.family = PW_MIX_GAMMA, .L = L, .a = a0};
    int s = gamma_pair(a0 + k, z, &m.lo_mode, &m.up_mode);
    if (s != PW_OK)
        return s;
    m.log_x = log(z);
    m.log_step_mode = pw_log_dpois(a0 + k, z);   /* log of the step z^a e^{-z} / Gamma(a + 1) */

    /* For large L: P at the window's low end and Q at its high end bound every term of their tail
     * inside the window; outside it the weights are below DBL_MIN. */
    m.far_lo = m.far_up = 1.0;   /* 1: no shortcut (also when GSL cannot tell) */
    double span = pw_mixture_far_span(L);
    if (span > 0.0) {
        gsl_sf_result r;
        if (gsl_sf_gamma_inc_P_e(a0 + k - span, z, &r) == GSL_SUCCESS)
            m.far_lo = fmin(r.val + DBL_MIN, 1.0);
        if (gsl_sf_gamma_inc_Q_e(a0 + k + span, z, &r) == GSL_SUCCESS)
            m.far_up = fmin(r.val + DBL_MIN, 1.0);
    }
    return pw_mixture_tails(&m, lower, upper);
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
