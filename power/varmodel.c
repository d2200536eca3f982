/* How the noise and the run cost change over the inputs (log-linear models), and the expected
 * residual sum of squares of a straight-line fit when the mean bends and the noise varies. See LICENSE. */
#include <math.h>
#include <stdlib.h>

#include <gsl/gsl_cdf.h>

#include "power/power.h"

/* -E[log chi^2_1] = -(psi(1/2) + log 2) = 1.2703628...: the bias of a log squared residual as an
 * estimate of the log variance (Harvey 1976, "Estimating regression models with multiplicative
 * heteroscedasticity", Econometrica 44, eq. 9). */
#define HARVEY_OFFSET 1.2703628454614782

int pw_harvey_fit(const double *Z, const double *e, size_t n, size_t p, double floor_share,
                  double *gamma, double *pval)
{
    *pval = NAN;
    if (n <= p || p == 0) return PW_EFEW;
    double mean_e2 = 0.0;
    for (size_t i = 0; i < n; i++) mean_e2 += e[i] * e[i] / (double)n;
    if (!(mean_e2 > 0.0) || !isfinite(mean_e2)) return PW_EDOM;
    double *y = malloc(n * sizeof *y);
    if (y == NULL) return PW_ENOMEM;
    /* A residual of exactly zero (a tied or integer outcome) has log -infinity: floor it at a small
     * share of the mean square so one such run cannot drag the fit. */
    double fl = floor_share > 0.0 ? floor_share * mean_e2 : 1e-8 * mean_e2;
    for (size_t i = 0; i < n; i++) y[i] = log(fmax(e[i] * e[i], fl));
    pw_ols *fit = NULL;
    int rc = pw_ols_fit(Z, y, n, p, &fit);
    free(y);
    if (rc != PW_OK) return rc;
    for (size_t j = 0; j < p; j++) gamma[j] = fit->coef[j];
    gamma[0] += HARVEY_OFFSET;
    /* Whether the spread changes at all: n R^2 of this regression, chi-squared with p - 1 degrees
     * of freedom under constant variance (the studentised LM test, Koenker 1981, which does not
     * lean on normal errors). */
    if (p > 1 && isfinite(fit->r2)) *pval = gsl_cdf_chisq_Q((double)n * fit->r2, (double)(p - 1));
    pw_ols_free(fit);
    return PW_OK;
}

int pw_loglin_fit(const double *Z, const double *y, size_t n, size_t p, double *gamma,
                  double *smear)
{
    if (n <= p || p == 0) return PW_EFEW;
    double *ly = malloc(n * sizeof *ly);
    if (ly == NULL) return PW_ENOMEM;
    for (size_t i = 0; i < n; i++) {
        if (!(y[i] > 0.0) || !isfinite(y[i])) {
            free(ly);
            return PW_EDOM;
        }
        ly[i] = log(y[i]);
    }
    pw_ols *fit = NULL;
    int rc = pw_ols_fit(Z, ly, n, p, &fit);
    if (rc == PW_OK) {
        for (size_t j = 0; j < p; j++) gamma[j] = fit->coef[j];
        /* Duan's (1983) smearing estimate, JASA 78, eq. 2.5: the mean of exp(residual) turns the
         * back-transformed log fit into an estimate of the mean, not of the median. */
        double s = 0.0;
        for (size_t i = 0; i < n; i++) {
            double f = 0.0;
            for (size_t j = 0; j < p; j++) f += Z[i * p + j] * gamma[j];
            s += exp(ly[i] - f);
        }
        *smear = s / (double)n;
    }
    pw_ols_free(fit);
    free(ly);
    return rc;
}

double pw_loglin_eval(const double *gamma, const double *z, size_t p)
{
    double s = 0.0;
    for (size_t j = 0; j < p; j++) s += gamma[j] * z[j];
    return exp(s);
}

int pw_expected_rss(const double *X, const double *m, const double *v, size_t n, size_t p,
                    double *rss, double *coef)
{
    if (n <= p || p == 0) return PW_EFEW;
    pw_ols *fit = NULL;
    int rc = pw_ols_fit(X, m, n, p, &fit);
    if (rc != PW_OK) return rc;
    /* With y = m + e, Var e_i = v_i, H the hat matrix: E[y'(I - H)y] = m'(I - H)m +
     * sum_i v_i (1 - h_ii) (Seber & Lee 2003, "Linear Regression Analysis", Thm 1.5 and eq. 9.2);
     * h_ii = x_i' (X'X)^-1 x_i. */
    double s = fit->rss;
    const double *c = fit->cov_unscaled;
    for (size_t i = 0; i < n; i++) {
        const double *x = X + i * p;
        double h = 0.0;
        for (size_t a = 0; a < p; a++) {
            double t = 0.0;
            for (size_t b = 0; b < p; b++) t += c[a * p + b] * x[b];
            h += x[a] * t;
        }
        s += v[i] * (1.0 - h);
    }
    *rss = s;
    if (coef != NULL)
        for (size_t j = 0; j < p; j++) coef[j] = fit->coef[j];
    pw_ols_free(fit);
    return PW_OK;
}

int pw_nested_f(double rss_small, double p_small, double rss_big, double p_big, double n,
                double *f, double *pval)
{
    *f = NAN;
    *pval = NAN;
    double df1 = p_big - p_small, df2 = n - p_big;
    if (!(df1 >= 1.0) || !(df2 >= 1.0)) return PW_EFEW;
    if (!(rss_big > 0.0) || !(rss_small >= rss_big * (1.0 - 1e-12))) return PW_EDOM;
    /* The extra-sum-of-squares F test of nested least-squares models (Draper & Smith 1998,
     * "Applied Regression Analysis", sec. 6.1): ((RSS0 - RSS1) / df1) / (RSS1 / df2). */
    *f = fmax(rss_small - rss_big, 0.0) / df1 / (rss_big / df2);
    *pval = gsl_cdf_fdist_Q(*f, df1, df2);
    return PW_OK;
}
