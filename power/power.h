/* shoal power/: distributions, regression, power, MDE and run sizing. Pure numerics, no I/O.
 * See LICENSE. */
#ifndef SHOAL_POWER_H
#define SHOAL_POWER_H

#include <stddef.h>

/* Ownership: a pw_ function that hands out memory says so; the caller frees it with the matching
 * _free, and every _free accepts NULL. No function here prints, exits or keeps global state, so all
 * of them are safe to call from any thread on distinct data. Callers must have switched GSL's
 * abort-on-error handler off (gsl_set_error_handler_off) before the first call. */

enum pw_status {
    PW_OK = 0,
    PW_EDOM,     /* an argument is outside its valid range (NaN, negative df, p outside [0,1]) */
    PW_ENOCONV,  /* a series, root search or quadrature did not reach its tolerance */
    PW_ESING,    /* a design or cross-product matrix is singular (a column is constant or aliased) */
    PW_ENOMEM,
    PW_EFEW      /* too few observations for the requested figure (df <= 0) */
};

/* A short English phrase for a pw_status value ("did not converge"); static storage. */
const char *pw_strerror(int status);

/* ---------------------------------------------------------------------------------------------
 * Noncentral distributions (power/nct.c, power/ncbeta.c, power/ncchisq.c).
 * Each _cdf writes both tails: *lower = P(X <= x), *upper = P(X > x), the upper one computed
 * directly, never as 1 - lower. Either pointer may be NULL. Accuracy target: 1e-9 absolute in either
 * tail against scipy.stats (Boost.Math) over df 1..1e6 and noncentrality 0..40.
 * Returns PW_OK, PW_EDOM or PW_ENOCONV. */

/* Noncentral t with df > 0 degrees of freedom and noncentrality ncp (any real).
 * Method: Lenth (1989) AS 243 (Guenther's 1978 series), summed from the Poisson mode both ways. */
int pw_nct_cdf(double t, double df, double ncp, double *lower, double *upper);

/* Noncentral beta with shapes a, b > 0 and noncentrality lambda >= 0, at x in [0, 1].
 * Method: Poisson mixture of incomplete beta functions started at the Poisson mode and summed both
 * ways (Frick 1990, AS R84; Chattamvelli & Shanmugam 1997, AS 310). */
int pw_ncbeta_cdf(double x, double a, double b, double lambda, double *lower, double *upper);

/* Noncentral F with df1, df2 > 0 and noncentrality lambda >= 0, through the noncentral beta. */
int pw_ncf_cdf(double f, double df1, double df2, double lambda, double *lower, double *upper);

/* Library-internal terms shared by the mixture series (power/ncbeta.c): the log of the Poisson term
 * e^{-lambda} lambda^x / Gamma(x + 1) and of the binomial term
 * Gamma(n + 1) / (Gamma(k + 1) Gamma(n - k + 1)) p^k q^(n - k), for real x, k, n (q = 1 - p, both
 * given), by Loader's (2000) saddle-point forms, which keep full relative accuracy where
 * differences of lgamma lose digits. Return -INFINITY for a zero term. */
double pw_log_dpois(double x, double lambda);
double pw_log_dbinom(double k, double n, double p, double q);

/* Noncentral chi-squared with df > 0 and lambda >= 0 (Ding 1992, AS 275, and the Poisson mixture). */
int pw_ncchisq_cdf(double x, double df, double lambda, double *lower, double *upper);

/* Quantiles by Brent root finding (gsl_root_fsolver_brent): the x with P(X <= x) = p when upper is
 * 0, or P(X > x) = p when upper is 1. p in (0, 1). */
int pw_nct_quantile(double p, int upper, double df, double ncp, double *x);
int pw_ncf_quantile(double p, int upper, double df1, double df2, double lambda, double *x);
int pw_ncchisq_quantile(double p, int upper, double df, double lambda, double *x);

/* Owen's Q function Q_nu(t, delta; 0, R) (Owen 1965), by GSL adaptive quadrature (QAG) over the
 * chi density. nu > 0, R >= 0. */
int pw_owen_q(double nu, double t, double delta, double R, double *q);

/* Exact power of the two one-sided tests procedure (Schuirmann 1987) through Owen's Q (Phillips
 * 1990): the probability of showing lo < theta < hi when the true effect is theta, the estimate has
 * standard error se (estimated with df degrees of freedom) and each one-sided test has level alpha.
 * Writes *power in [0, 1]. */
int pw_tost_power(double theta, double lo, double hi, double se, double df, double alpha,
                  double *power);

/* ---------------------------------------------------------------------------------------------
 * Ordinary least squares (power/ols.c). */

/* A fitted linear model y = X b + e. Allocated by pw_ols_fit, freed by pw_ols_free. */
typedef struct {
    size_t n, p;         /* observations, columns of X (including the intercept column if any) */
    double *coef;        /* p estimates */
    double *se;          /* p standard errors */
    double df;           /* residual degrees of freedom, n - rank */
    double rss;          /* residual sum of squares */
    double sigma;        /* residual SD, sqrt(rss / df) */
    double r2;           /* coefficient of determination (centred when X has an intercept) */
} pw_ols;

/* Fit by Householder QR (Golub & Van Loan 2013, sec. 5.2), which keeps the NIST StRD Longley
 * figures to 9 or more significant digits. X is n-by-p, row-major; X and y are only read.
 * Returns PW_OK, PW_ESING (rank-deficient), PW_EFEW (n <= p) or PW_ENOMEM. */
int pw_ols_fit(const double *X, const double *y, size_t n, size_t p, pw_ols **out);
void pw_ols_free(pw_ols *fit);

/* ---------------------------------------------------------------------------------------------
 * Power, minimum detectable effect and run sizing for one test (power/sizing.c and friends).
 * All figures are at a declared effect of interest, never at an observed effect. */

typedef enum {
    PW_TEST_COEF_T,     /* t test of one regression coefficient (numeric or bool treatment) */
    PW_TEST_LEVELS_F,   /* F test of the L - 1 contrasts of a level-set treatment */
    PW_TEST_TWO_PROP,   /* two proportions through Cohen's h (bool outcome, bool treatment) */
    PW_TEST_TOST        /* equivalence: two one-sided tests against +-margin (absence claims) */
} pw_test;

/* What one claim's test looks like, in the outcome's units. */
typedef struct {
    pw_test test;
    double alpha;        /* per-test level after any family correction, in (0, 1) */
    int sides;           /* 1 or 2; TOST ignores it */
    double target;       /* target power, in (0, 1) */
    double effect;       /* effect of interest per unit of treatment (t, F) or margin (TOST), > 0 */
    double sigma;        /* residual SD of the outcome given treatment and conditioning set */
    double sd_x_resid;   /* sd(X | S) with divisor n: the treatment's spread left after S */
    double n;            /* runs (complete cases) */
    double n_params;     /* columns besides the treatment's own: intercept + dummy-coded S */
    double n_levels;     /* PW_TEST_LEVELS_F: levels L; otherwise ignored */
    double p_base;       /* PW_TEST_TWO_PROP: outcome's base rate; share_treated: group share */
    double share_treated;
} pw_design;

/* Power of the test described by d. Returns PW_OK, PW_EDOM, PW_EFEW or PW_ENOCONV. */
int pw_power(const pw_design *d, double *power);

/* Minimum detectable effect at d->target: the effect (or, for TOST, the smallest margin) whose
 * power equals the target, by Brent root finding on pw_power (Bloom 1995 gives the additive
 * approximation (t_{1-a/2} + t_{power}) SE that brackets the root). */
int pw_mde(const pw_design *d, double *mde);

/* Total runs needed for d->target if new runs resemble the current ones (same sd_x_resid, sigma,
 * shares): the smallest integer n with power >= target. *runs is INFINITY when no n up to
 * PW_MAX_RUNS reaches it. */
#define PW_MAX_RUNS 1e9
int pw_runs_needed(const pw_design *d, double *runs);

#endif
