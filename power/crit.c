/* Central chi-squared and F quantiles that hold at the large df of big archives.
 * See LICENSE. */
#include <math.h>

#include <gsl/gsl_cdf.h>

#include "power/power.h"

/* GSL 2.7's gsl_cdf_chisq_Qinv and gsl_cdf_fdist_Qinv return wrong values or NaN, silently, once
 * df passes about 1e5 (seen here: Qinv(0.025, 99998) = 132863 against 100876). Every quantile is
 * therefore checked by its own CDF, and a failed one recomputed by Brent's method on the CDF
 * (pw_ncchisq_quantile, pw_ncf_quantile at noncentrality 0), or for enormous df by the limit. */
#define CRIT_CHECK_REL 1e-8      /* the tail at the quantile must match p this closely */
#define CRIT_BIG_DF 1e7          /* beyond: Wilson-Hilferty for chi-squared (its root search stops
                                    converging near 1e8), and the chi-squared limit of F as the
                                    last resort */

static int tail_ok(double got, double p)
{
    return isfinite(got) && fabs(got - p) <= CRIT_CHECK_REL * p;
}

int pw_chisq_quantile(double p, int upper, double df, double *x)
{
    if (!(p > 0 && p < 1) || !(df > 0)) return PW_EDOM;
    if (df > CRIT_BIG_DF) {
        /* Wilson & Hilferty (1931): (X / df)^(1/3) is nearly normal with mean 1 - 2/(9 df) and
         * variance 2/(9 df); the error is O(1/df), below 1e-9 relative here. */
        double z = upper ? gsl_cdf_ugaussian_Qinv(p) : gsl_cdf_ugaussian_Pinv(p);
        double h = 2.0 / (9.0 * df), c = 1 - h + z * sqrt(h);
        *x = df * c * c * c;
        return PW_OK;
    }
    double q = upper ? gsl_cdf_chisq_Qinv(p, df) : gsl_cdf_chisq_Pinv(p, df);
    if (isfinite(q) && tail_ok(upper ? gsl_cdf_chisq_Q(q, df) : gsl_cdf_chisq_P(q, df), p)) {
        *x = q;
        return PW_OK;
    }
    return pw_ncchisq_quantile(p, upper, df, 0.0, x);
}

int pw_f_crit(double alpha, double df1, double df2, double *x)
{
    if (!(alpha > 0 && alpha < 1) || !(df1 > 0) || !(df2 > 0)) return PW_EDOM;
    double q = gsl_cdf_fdist_Qinv(alpha, df1, df2);
    if (isfinite(q) && tail_ok(gsl_cdf_fdist_Q(q, df1, df2), alpha)) {
        *x = q;
        return PW_OK;
    }
    int rc = pw_ncf_quantile(alpha, 1, df1, df2, 0.0, x);
    if (rc == PW_OK || !(df2 > CRIT_BIG_DF)) return rc;
    /* F(df1, df2) -> chi-squared(df1) / df1 as df2 grows (relative error O(1/df2)). */
    double c;
    rc = pw_chisq_quantile(alpha, 1, df1, &c);
    if (rc == PW_OK) *x = c / df1;
    return rc;
}
