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
 * Method: Lenth (1989) AS 243 (Guenther's 1978 series), summed from the Poisson mode both ways;
 * t < 0 by reflection. Where t and ncp differ in sign the small tail's series alternates, and once
 * more than five digits would cancel that tail comes from Owen's Q by quadrature (about 25 us
 * instead of about 5), so it keeps about nine significant digits however small it is. */
int pw_nct_cdf(double t, double df, double ncp, double *lower, double *upper);

/* Noncentral beta with shapes a, b > 0 and noncentrality lambda >= 0, at x in [0, 1].
 * Method: Poisson mixture of incomplete beta functions started at the Poisson mode and summed both
 * ways (Frick 1990, AS R84; Chattamvelli & Shanmugam 1997, AS 310). */
int pw_ncbeta_cdf(double x, double a, double b, double lambda, double *lower, double *upper);

/* Noncentral F with df1, df2 > 0 and noncentrality lambda >= 0, through the noncentral beta. */
int pw_ncf_cdf(double f, double df1, double df2, double lambda, double *lower, double *upper);

/* Noncentral chi-squared with df > 0 and lambda >= 0 (Ding 1992, AS 275, and the Poisson mixture).
 * All the mixtures sum at most 2e5 terms each side of the Poisson mode: enough for lambda up to
 * about 1e9 (|ncp| up to about 3e4 for the t); beyond that they return PW_ENOCONV. */
int pw_ncchisq_cdf(double x, double df, double lambda, double *lower, double *upper);

/* Quantiles by Brent root finding (gsl_root_fsolver_brent): the x with P(X <= x) = p when upper is
 * 0, or P(X > x) = p when upper is 1. p in (0, 1), else PW_EDOM. The bracket grows by doubling from
 * a guess (ncp, the mean); PW_ENOCONV when it cannot be found within the doubles or when it closes
 * on a jump (a tail underflowing to 0) rather than a root. */
int pw_nct_quantile(double p, int upper, double df, double ncp, double *x);
int pw_ncf_quantile(double p, int upper, double df1, double df2, double lambda, double *x);
int pw_ncchisq_quantile(double p, int upper, double df, double lambda, double *x);

/* Owen's Q function Q_nu(t, delta; 0, R) (Owen 1965), by GSL adaptive quadrature (QAGP) over the
 * chi density, around the mode of the log-concave integrand (to 1e-10 relative). nu > 0, R >= 0
 * (INFINITY allowed: then Q is the noncentral t CDF at t). */
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
    double *cov_unscaled; /* p * p, row-major: (X'X)^-1, so that Cov(coef) = sigma^2 cov_unscaled */
} pw_ols;

/* Fit by Householder QR (Golub & Van Loan 2013, sec. 5.2), which keeps the NIST StRD Longley
 * figures to 9 or more significant digits. X is n-by-p, row-major; X and y are only read.
 * Returns PW_OK, PW_ESING (rank-deficient), PW_EFEW (n <= p) or PW_ENOMEM. */
int pw_ols_fit(const double *X, const double *y, size_t n, size_t p, pw_ols **out);
void pw_ols_free(pw_ols *fit);
/* The Householder reflectors of pw_ols_fit's QR of one design, kept to fit many y on it: the
 * residual sum of squares of each then costs 4 n p flops and equals pw_ols_fit's rss bit for
 * bit (the same operations in the same order). */
typedef struct {
    size_t n, p;
    double *v;     /* n * p: reflector j in v[j n + j .. j n + n - 1] */
    double *vtv;   /* p: v'v of each reflector */
} pw_reflectors;
/* X is n-by-p, row-major, only read. PW_OK, PW_ESING (rank-deficient, as pw_ols_fit), PW_EFEW
 * (n <= p), PW_EDOM, PW_ENOMEM. */
int pw_ols_reflectors(const double *X, size_t n, size_t p, pw_reflectors **out);
/* Overwrite b (n entries) by Q'b and return the squared norm of its last n - p entries. */
double pw_ols_reflect_rss(const pw_reflectors *q, double *b);
void pw_reflectors_free(pw_reflectors *q);

/* Means and centred cross-products of k columns, accumulated one row at a time by the co-moment
 * update (Welford 1962; Chan, Golub & LeVeque 1983), which stays accurate when the means are large
 * against the spread. Only the upper triangle of xprod (j >= i) is kept. (power/xprod.c) */
typedef struct {
    size_t k;            /* columns */
    double n;            /* rows added */
    double *mean;        /* k means */
    double *xprod;       /* k * k row-major: sum over rows of (x_i - mean_i)(x_j - mean_j), j >= i */
} pw_moments;

/* Allocate moments of k >= 1 columns, no rows yet; *out is the caller's (pw_moments_free, which
 * accepts NULL). PW_OK or PW_ENOMEM. */
int pw_moments_alloc(size_t k, pw_moments **out);
void pw_moments_free(pw_moments *m);
/* Add one row of k values, none NaN (the caller keeps complete cases only). */
void pw_moments_add(pw_moments *m, const double *row);
/* Add nb rows at once (row-major, nb * k values, none NaN): the block's own centred cross-products
 * merged by Chan, Golub & LeVeque (1983). The same figures as nb calls of pw_moments_add (to
 * rounding), and faster: the block's products stay in cache. PW_OK or PW_ENOMEM. */
int pw_moments_add_block(pw_moments *m, const double *rows, size_t nb);
/* The moments of nb >= 1 rows alone (row-major, out->k values each, none NaN) into out, which the
 * caller allocated: n = nb, the block's means and the upper triangle of its centred
 * cross-products. pw_moments_add_block(m, rows, nb) is exactly pw_moments_merge(m, out) after
 * this, so one block's moments can be merged into several totals bit for bit as if each had added
 * the block itself. PW_OK, PW_EDOM (nb == 0) or PW_ENOMEM. */
int pw_moments_of_block(const double *rows, size_t nb, pw_moments *out);
/* Merge the moments b of other rows into a (both of k columns): a then holds the moments of all
 * their rows (Chan, Golub & LeVeque 1983, eq. 2.1), so shards summarised apart give the figures of
 * one pass to rounding. PW_OK, or PW_EDOM when the column counts differ. */
int pw_moments_merge(pw_moments *a, const pw_moments *b);
/* The centred cross-product of columns i and j of m, either order. */
double pw_moments_at(const pw_moments *m, size_t i, size_t j);
/* sum_i a_i b_i over n entries in four partial sums, so that the additions do not wait on one
 * another; always the same order, so the same bits on every call. */
double pw_dot(const double *a, const double *b, size_t n);

/* A regression solved from centred cross-products: y on k predictors and an intercept, where the
 * last t predictors are the treatment (t = 1 for a single column, L - 1 dummies for a level set).
 * The cross-products are scaled to correlations and factored by Cholesky in the order
 * (others, treatment, y) (Golub & Van Loan 2013, sec. 4.2; the residual sum of squares is the last
 * pivot squared, as in the sweep of Goodnight 1979). A predictor whose share of variance left after
 * the earlier ones is below PW_ALIAS_TOL is aliased and dropped (kept[j] = 0). */
#define PW_ALIAS_TOL 1e-9    /* 1 - R^2 below this: the column is a linear function of the others up
                                to rounding of data stored with ~16 digits */
typedef struct {
    size_t k, t;          /* predictors without the intercept; trailing treatment columns */
    double n;             /* rows */
    unsigned char *kept;  /* k flags */
    size_t rank, t_rank;  /* kept predictors; kept treatment columns */
    double *coef;         /* k slopes (0 when dropped) */
    double *se;           /* k standard errors (NAN when dropped) */
    double intercept;
    double rss, df, sigma, r2;   /* df = n - 1 - rank; sigma NAN when df <= 0 */
    double *treat_info;   /* t_rank * t_rank: X_T'(I - H)X_T of the kept treatment columns given the
                             intercept and the other predictors (the inverse of their block of
                             (X'X)^-1), row-major */
    double *treat_coef;   /* t_rank slopes of the kept treatment columns */
} pw_xfit;

/* Solve the regression whose columns are idx[0..k-1] (predictors, the treatment last) and idx[k]
 * (outcome) of the accumulated moments m. Returns PW_OK, PW_EDOM (bad sizes), PW_ENOMEM. A constant
 * or aliased predictor is dropped, not an error; t_rank == 0 means the treatment never varies
 * apart from the other predictors. */
int pw_xfit_solve(const pw_moments *m, const size_t *idx, size_t k, size_t t, pw_xfit **out);
void pw_xfit_free(pw_xfit *f);
/* sd(X | S) of a fit with one kept treatment column (t_rank = 1: one column, or a level set run
 * at two of its levels): sqrt(treat_info / n), the residual SD of the treatment given the
 * intercept and the other predictors, divisor n; 0 when the treatment was dropped as aliased or
 * constant (t_rank 0); NAN when t_rank > 1. The one definition of sd(X | S) in
 * shoal: the assessment reads it from its fit, the support measure through pw_resid_sd. */
double pw_xfit_sd_treatment(const pw_xfit *f);
/* sd(X | S) of column idx[k] given an intercept and the columns idx[0..k-1] of m, by the fit
 * pw_xfit_solve makes (X as the treatment and as the outcome). Returns PW_OK, PW_EDOM, PW_ENOMEM;
 * *out is written on PW_OK only. */
int pw_resid_sd(const pw_moments *m, const size_t *idx, size_t k, double *out);

/* Residual diagnostics of a fit on m rows (power/diag.c): excess kurtosis of the residuals
 * y - fitted; Koenker's (1981) studentised Breusch-Pagan (1979) LM statistic with the fitted values
 * as variance regressor (chi-squared, 1 df) and its p value; the ratio (>= 1) of residual variances
 * between the highest and lowest thirds of the fitted values (computed only when the test's p is
 * below 0.05, else NAN). Fields NAN when undefined. Returns PW_OK, PW_EFEW (m < 4), PW_ENOMEM. */
typedef struct {
    double excess_kurtosis;
    double bp_lm, bp_p;
    double third_ratio;
} pw_resid_diag;
int pw_resid_diagnose(const double *y, const double *fitted, size_t m, pw_resid_diag *out);
/* The share of the m values y taken by the most common one. PW_OK, PW_EFEW (m = 0), PW_ENOMEM. */
int pw_mode_share(const double *y, size_t m, double *share);

/* Pure error and the lack-of-fit F test from rows that repeat a configuration: rows with equal
 * keys (m rows of kk values, row-major) are replicates. n_coef is the fitted coefficients
 * (intercept included). sigma_pure is NAN without replicates; f and p NAN when either df < 1. */
typedef struct {
    size_t groups;        /* distinct configurations */
    double df_pe, df_lof;
    double sigma_pure, f, p;
    size_t repeated;      /* configurations holding two or more rows (the ones pure error uses) */
} pw_lof;
/* Returns PW_OK, PW_EFEW (m = 0) or PW_ENOMEM. */
int pw_lack_of_fit(const double *keys, size_t kk, const double *y, const double *fitted, size_t m,
                   double n_coef, pw_lof *out);

/* ---------------------------------------------------------------------------------------------
 * Power, minimum detectable effect and run sizing for one test (power/sizing.c and friends).
 * All figures are at a declared effect of interest, never at an observed effect. */

typedef enum {
    PW_TEST_COEF_T,     /* t test of one regression coefficient (numeric or bool treatment) */
    PW_TEST_LEVELS_F,   /* F test of the L - 1 contrasts of a level-set treatment */
    PW_TEST_TWO_PROP,   /* two proportions through Cohen's h (bool outcome, bool treatment) */
    PW_TEST_TOST,       /* equivalence: two one-sided tests against +-margin (absence claims) */
    PW_TEST_TREND_T,    /* t test of the linear trend contrast of an ordered level set: one df,
                           fitted beside its other L - 2 level columns */
    PW_TEST_BASIS_F     /* F test of the n_levels - 1 columns of a numeric treatment's polynomial
                           basis given the adjustment set (`expect turning`; power/basis.c) */
} pw_test;

/* What one claim's test looks like, in the outcome's units. */
typedef struct {
    pw_test test;
    double alpha;        /* per-test level after any family correction, in (0, 1) */
    int sides;           /* 1 or 2; TOST ignores it */
    double target;       /* target power, in (0, 1) */
    double effect;       /* effect of interest per unit of treatment (t, F) or margin (TOST), > 0 */
    double sigma;        /* residual SD of the outcome given treatment and adjustment set */
    double sd_x_resid;   /* sd(X | S) with divisor n: the treatment's spread left after S */
    double n;            /* runs (complete cases) */
    double n_params;     /* columns besides the treatment's own: intercept + dummy-coded S */
    double n_levels;     /* PW_TEST_LEVELS_F: levels L; PW_TEST_BASIS_F: basis columns + 1;
                            otherwise ignored */
    double p_base;       /* PW_TEST_TWO_PROP: outcome's base rate; share_treated: group share */
    double share_treated;
    double ncp_per_run;  /* PW_TEST_LEVELS_F: noncentrality per run per (effect / sigma)^2 under the
                            least favourable pattern; NAN or <= 0: balanced groups, 1 / (2 L).
                            PW_TEST_BASIS_F: u' M u / n of the reference turn, > 0 */
} pw_design;

/* Central quantiles checked against their own CDF (power/crit.c): GSL's inverses fail silently
 * at large df, so a failed one is redone by root finding, or by the large-df limit. The chi-squared
 * x with P(X <= x) = p (upper 0) or P(X > x) = p (upper 1); the F critical value with
 * P(F > x) = alpha. PW_OK, PW_EDOM, PW_ENOCONV. */
int pw_chisq_quantile(double p, int upper, double df, double *x);
int pw_f_crit(double alpha, double df1, double df2, double *x);

/* A level-set treatment with t + 1 levels present, M = X_T'(I - H)X_T its t * t information
 * matrix given the other columns (power/levels.c). For every pair of levels the pattern "these two
 * differ by one unit, the others sit at their midpoint" gives the F noncentrality per unit of
 * (effect / sigma)^2 as b' M b; *q_min is its smallest value over pairs. *v_max is the largest
 * variance factor c' M^-1 c of a pairwise contrast, the pair in *wi, *wj (0 = reference level).
 * Returns PW_OK, PW_ESING (M not positive definite), PW_ENOMEM. */
int pw_level_pattern(const double *M, size_t t, double *q_min, double *v_max, size_t *wi,
                     size_t *wj);

/* How the figures are formed (documented in README.md, "shoal power"):
 * - PW_TEST_COEF_T: df = n - n_params - 1, ncp = effect sd_x_resid sqrt(n) / sigma; power of the
 *   t test with both tails (sides 2) or the upper one (sides 1, effect in the expected direction).
 * - PW_TEST_LEVELS_F: df1 = L - 1, df2 = n - n_params - df1,
 *   lambda = ncp_per_run n (effect / sigma)^2, power = P(F'(df1, df2, lambda) > F_{1-alpha}).
 * - PW_TEST_TWO_PROP: p1, p2 = p_base -+ effect / 2 clipped to [PW_PROP_EPS, 1 - PW_PROP_EPS],
 *   Cohen's h = 2 asin sqrt(p2) - 2 asin sqrt(p1), normal test on n sd_x_resid^2 effective units
 *   (n1 n2 / (n1 + n2) when the adjustment set is empty), as pwr.2p2n.test computes it.
 * - PW_TEST_TREND_T: as PW_TEST_COEF_T with df = n - n_params - (L - 1) (the level set keeps its
 *   L - 1 columns; the contrast is one combination of them), sd_x_resid the contrast's
 *   equivalent spread S_xx / sqrt(n c' M^-1 c), effect per unit of the levels' positions.
 * - PW_TEST_TOST: se = sigma / (sd_x_resid sqrt(n)), df = n - n_params - max(1, L - 1), exact
 *   power through pw_tost_power at a true effect of 0 with margins -+effect.
 * - PW_TEST_BASIS_F: as PW_TEST_LEVELS_F with df1 = n_levels - 1 basis columns and the design's
 *   exact lambda = ncp_per_run n (effect / sigma)^2, effect the height of the reference turn
 *   (power/basis.c); ncp_per_run must be > 0. */
#define PW_PROP_EPS 1e-9     /* keeps both proportions inside (0, 1), where the arcsine is smooth */

/* Power of the normal-approximation test of Cohen's h (Cohen 1988, ch. 6) with effective size
 * n_eff = n1 n2 / (n1 + n2): Phi(h sqrt(n_eff) - z) + [sides 2] Phi(-h sqrt(n_eff) - z), z the
 * upper alpha / sides normal quantile. */
int pw_prop_power_h(double h, double n_eff, double alpha, int sides, double *power);

/* Cohen's f^2 form of the F test for u tested coefficients and v residual df, with R's
 * pwr.f2.test convention lambda = f2 (u + v + 1). */
int pw_f2_power(double f2, double u, double v, double alpha, double *power);


/* Power of the test described by d. Returns PW_OK, PW_EDOM, PW_EFEW or PW_ENOCONV. */
int pw_power(const pw_design *d, double *power);

/* Minimum detectable effect at d->target: the effect (or, for TOST, the smallest margin) whose
 * power equals the target, by Brent root finding on pw_power (Bloom 1995 gives the additive
 * approximation (t_{1-a/2} + t_{power}) SE that brackets the root). */
int pw_mde(const pw_design *d, double *mde);

/* Total runs needed for d->target if new runs resemble the current ones (same sd_x_resid, sigma,
 * shares): the smallest integer n with power >= target. *runs is INFINITY when no n up to
 * PW_MAX_RUNS reaches it. Returns PW_OK or the status of pw_power on d (PW_EDOM, PW_ENOCONV). */
#define PW_MAX_RUNS 1e9
int pw_runs_needed(const pw_design *d, double *runs);
/* The same, given the MDE at d->n (from pw_mde), which places the first guess within a run or
 * two when df is large; mde NAN falls back to pw_runs_needed's own guess. */
int pw_runs_needed_from(const pw_design *d, double mde, double *runs);

/* ---------------------------------------------------------------------------------------------
 * A turning effect (`expect turning` on a numeric treatment; power/basis.c). The treatment x is
 * mapped to z = (2x - lo - hi) / (hi - lo), -1 .. 1 over the reference range [lo, hi], and enters
 * the regression as the Legendre polynomials P_1(z) .. P_D(z). The reference turn of height h is
 * h (1 - z^2): 0 at both ends of the range, h in the middle (a hump for h > 0); it lies in the
 * basis for every D >= 2, so the F test's noncentrality under it is exact. */

/* Degree D = min(PW_TURN_DEGREE_MAX, distinct - 2), or 0 when distinct < PW_TURN_DEGREE_MIN + 2:
 * the basis leaves one distinct value beyond the D + 1 it needs, and a turn needs degree 2. */
#define PW_TURN_DEGREE_MIN 2
#define PW_TURN_DEGREE_MAX 3
size_t pw_turn_degree(size_t distinct);
/* P_1(z) .. P_degree(z) into out[0 .. degree - 1]. */
void pw_turn_basis(double z, size_t degree, double *out);
/* z of x over [lo, hi] (hi > lo); the reference turn's shape 1 - z^2 at z; the shape's
 * coefficients on P_1 .. P_degree (intercept aside) into u[0 .. degree - 1]. */
double pw_turn_z(double x, double lo, double hi);
double pw_turn_shape(double z);
void pw_turn_shape_coef(size_t degree, double *u);

typedef struct {
    double f, p, df1, df2;   /* the basis's partial F given the adjustment set, and its p */
    double ncp_per_run;      /* u' M u / n: lambda per run per (h / sigma)^2 */
    double turn, turn_se;    /* the turn's height estimated from the P_2 coefficient, its SE */
} pw_basis_figures;
/* The figures of a fit (pw_xfit_solve) whose last t = D columns are the basis, u the shape's
 * coefficients (pw_turn_shape_coef). PW_OK; PW_ESING when a basis column was aliased (t_rank < t)
 * or M is singular; PW_EFEW when df < 1; PW_ENOMEM. */
int pw_basis_test(const pw_xfit *fit, const double *u, pw_basis_figures *out);
/* The same ncp_per_run without an adjustment set for a design of m points z with weights w (their
 * shares of the runs): the weighted variance of 1 - z^2. PW_OK or PW_EDOM. */
int pw_turn_ncp_points(const double *z, const double *w, size_t m, double *ncp_per_run);

/* ---------------------------------------------------------------------------------------------
 * Optimal-design arithmetic for planning runs (power/design.c). Matrices are row-major. */

/* The inverse of a symmetric positive definite p-by-p matrix a, by Cholesky
 * (gsl_linalg_cholesky_decomp1 and _invert). a and ainv may not overlap. Returns PW_OK, PW_ESING
 * (not positive definite), PW_ENOMEM. */
int pw_spd_inverse(const double *a, size_t p, double *ainv);

/* Sherman & Morrison (1950): given ainv = A^-1, u = A^-1 x and xu = x' A^-1 x, the inverse of
 * A + w x x' is A^-1 - w u u' / (1 + w xu). pw_sm_direction writes u (p values) and *xu;
 * pw_sm_update overwrites ainv with the inverse of A + w x x' (w > 0) in O(p^2). PW_EDOM when
 * 1 + w xu is not positive (ainv was not positive definite). */
void pw_sm_direction(const double *ainv, size_t p, const double *x, double *u, double *xu);
int pw_sm_update(double *ainv, size_t p, const double *x, double w, double *u);

/* The information a design holds about a treatment block of k columns starting at column first
 * (its coefficients are contrasts against a left-out level): 1 / the largest variance, in units of
 * sigma^2, among the block's coefficients and their pairwise differences, i.e. the worst-estimated
 * difference between two levels. k = 1: 1 / ainv[first][first]. With u and xu from
 * pw_sm_direction and w > 0, _after gives the same figure for A + w x x' without forming it. */
double pw_block_info(const double *ainv, size_t p, size_t first, size_t k);
double pw_block_info_after(const double *ainv, size_t p, size_t first, size_t k, const double *u,
                           double xu, double w);

/* The level-set F test's information in a block of k dummy columns: with V_TT the block of ainv
 * (after adding w x x' when u != NULL, u and xu from pw_sm_direction), M = V_TT^-1 and the smallest
 * b' M b over the least favourable pairwise patterns of pw_level_pattern: the noncentrality per
 * (effect / sigma)^2, the assessment's ncp_per_run n. Blocks wider than PW_PATTERN_MAX_COLS fall
 * back to 1 / (worst contrast variance), the pattern's value for a balanced design. */
#define PW_PATTERN_MAX_COLS 32
double pw_block_pattern_info(const double *ainv, size_t p, size_t first, size_t k, const double *u,
                             double xu, double w);

/* The information a test's noncentrality rests on, as q with noncentrality (effect q / sigma):
 * sd_x_resid sqrt(n) for t and TOST tests, sqrt(ncp_per_run n) for the level-set and basis F tests (its
 * noncentrality is q^2 (effect / sigma)^2), sqrt(n sd_x_resid^2) or sqrt(n s (1 - s)) for two
 * proportions. pw_design_q reads it; pw_design_with_q writes d at n_new runs with q = q_new. */
double pw_design_q(const pw_design *d);
int pw_design_with_q(const pw_design *d, double n_new, double q_new, pw_design *out);

/* The smallest q = sd_x_resid sqrt(n) with which d reaches d->target at n_new runs, by Brent root
 * finding on pw_power (power rises with q). *q is INFINITY when no q up to PW_Q_MAX (or, for two
 * proportions, a balanced allocation) reaches it. */
#define PW_Q_MAX 1e8
int pw_design_q_needed(const pw_design *d, double n_new, double *q);   /* PW_OK, PW_EDOM, PW_ENOCONV */

/* Greedy sequential augmentation (Wynn 1970; Fedorov 1972, ch. 4), forward selection without
 * exchange. A pw_aug holds groups of claims that share design columns: each group keeps
 * (X'X + ridge I)^-1 over its columns, drawn from a global coded row of n_cols values (column 0 is
 * the intercept, always 1). A target is one claim's treatment block in a group, with the
 * information it needs (pw_block_info units). Allocated by pw_aug_alloc, freed by pw_aug_free. */
typedef struct pw_aug pw_aug;

/* An empty augmentation over n_cols >= 1 global columns; *out is the caller's (pw_aug_free,
 * which accepts NULL). PW_OK or PW_ENOMEM. */
int pw_aug_alloc(size_t n_cols, pw_aug **out);
void pw_aug_free(pw_aug *a);
/* Add a group over the global columns cols[0..p-1] (cols[0] should be 0, the intercept) whose
 * current cross-product matrix is gram (p-by-p, X0'X0 of the runs so far; NULL for none); ridge > 0
 * is added to its diagonal so that an empty or rank-deficient start stays invertible. */
int pw_aug_add_group(pw_aug *a, const size_t *cols, size_t p, const double *gram, double ridge,
                     size_t *group);
/* Add a target: columns first..first+k-1 of the group (positions within cols). pattern 0 measures
 * it with pw_block_info (t and equivalence tests), 1 with pw_block_pattern_info (the level-set F
 * test). need: the information at which it reaches its target; NAN or INFINITY: never active. */
int pw_aug_add_target(pw_aug *a, size_t group, size_t first, size_t k, int pattern, double need,
                      size_t *target);
size_t pw_aug_n_targets(const pw_aug *a);
double pw_aug_info(const pw_aug *a, size_t target);
double pw_aug_need(const pw_aug *a, size_t target);
/* Change a target's need; a target is active while its information is below its need. */
void pw_aug_set_need(pw_aug *a, size_t target, double need);
int pw_aug_active(const pw_aug *a, size_t target);
size_t pw_aug_n_active(const pw_aug *a);
/* The score of adding w runs at the coded row: over active targets, the share of the remaining
 * need the runs would cover (capped at 1), weighted by 1 + the share still missing so the targets
 * furthest below their need count most. 0 when nothing is active. */
int pw_aug_score(pw_aug *a, const double *row, double w, double *score);
/* Noise that changes over the inputs: a target's information counts as info * scale (scale > 0,
 * e.g. the archive's residual variance over the predicted one; anything else resets it to 1).
 * pw_aug_score_scaled scores as pw_aug_score with scale_after[t] (indexed by target; NULL: the
 * current scales) the scale of target t after the runs, and subtracts the share of need a target
 * loses when the runs add more noise than information. */
void pw_aug_set_scale(pw_aug *a, size_t target, double scale);
double pw_aug_scale(const pw_aug *a, size_t target);
int pw_aug_score_scaled(pw_aug *a, const double *row, double w, const double *scale_after,
                        double *score);
/* About how many floating-point operations one pw_aug_score call costs now (groups with an active
 * target: p^2 for A^-1 x, a few per target), so callers can budget their rescoring. */
double pw_aug_score_cost(const pw_aug *a);
/* The information (as pw_aug_info, pattern choosing the measure) of target's block when only the
 * group's columns j with on[j] != 0 (positions within its cols) enter the design: the inverse of
 * the kept cross-products' submatrix, or the Sherman-Morrison inverse when all are on. 0 when none
 * of the block's columns is on. PW_OK, PW_EDOM, PW_ENOMEM, PW_ESING. */
int pw_aug_info_subset(const pw_aug *a, size_t target, const unsigned char *on, int pattern,
                       double *info);
/* Measure target by one contrast of its block instead (an ordered level set's linear trend): its
 * information is 1 / (c' V c), c the k weights (copied; finite), V the block of the group's
 * inverse (after the runs, in scoring). Weights scaled so that 1 / (c' V c) is the test's q^2 (the
 * trend: (x_l - mean) / S_xx) make the information q^2 itself. PW_OK, PW_EDOM, PW_ENOMEM. */
int pw_aug_set_contrast(pw_aug *a, size_t target, const double *c);
/* As pw_aug_info_subset for the contrast c (k weights over the target's block; the weights of
 * columns that are off are ignored). PW_OK, PW_EDOM, PW_ENOMEM, PW_ESING. */
int pw_aug_contrast_subset(const pw_aug *a, size_t target, const unsigned char *on,
                           const double *c, double *info);
/* Add w runs at row to every group (Sherman-Morrison, with a fresh Cholesky inverse of the kept
 * cross-products every PW_AUG_REFRESH commits to stop rounding drift). */
#define PW_AUG_REFRESH 64
int pw_aug_commit(pw_aug *a, const double *row, double w);   /* PW_OK, PW_EDOM (w <= 0), or the
                                                                refresh's PW_ENOMEM or PW_ESING */

/* ---------------------------------------------------------------------------------------------
 * Noise, curvature and cost models for the plan (power/varmodel.c). Z and X are n-by-p, row-major,
 * with an intercept in column 0. */

/* Harvey's (1976) log-linear variance model: regress log e_i^2 (floored at floor_share times the
 * mean square; 0 means 1e-8) on Z and add 1.2704 to the intercept, so that exp(z'gamma) estimates
 * Var e at z. Writes p coefficients to gamma and to *pval the p value of n R^2 of that regression
 * against chi-squared with p - 1 df (Koenker 1981; NAN when p is 1). PW_OK, PW_EFEW (n <= p),
 * PW_EDOM (all e zero), PW_ESING, PW_ENOMEM. */
int pw_harvey_fit(const double *Z, const double *e, size_t n, size_t p, double floor_share,
                  double *gamma, double *pval);
/* A log-linear model of a positive quantity (a run's cost): log y on Z by least squares, with
 * Duan's (1983) smearing factor so that smear * exp(z'gamma) estimates the mean of y at z.
 * PW_OK, PW_EFEW, PW_EDOM (a y not positive and finite), PW_ESING, PW_ENOMEM. */
int pw_loglin_fit(const double *Z, const double *y, size_t n, size_t p, double *gamma,
                  double *smear);
/* exp(z'gamma). */
double pw_loglin_eval(const double *gamma, const double *z, size_t p);
/* The expected residual sum of squares of the least-squares fit of y on X when E y = m and
 * Var y_i = v_i, independent: m'(I - H)m + sum v_i (1 - h_ii). coef (may be NULL) gets the p
 * coefficients of the fit of m on X (the straight line the mean projects to). PW_OK, PW_EFEW,
 * PW_ESING, PW_ENOMEM. */
int pw_expected_rss(const double *X, const double *m, const double *v, size_t n, size_t p,
                    double *rss, double *coef);
/* The extra-sum-of-squares F test of a model with p_small columns inside one with p_big, on n
 * rows: *f and its upper-tail *pval. PW_OK, PW_EFEW (no degrees of freedom), PW_EDOM. */
int pw_nested_f(double rss_small, double p_small, double rss_big, double p_big, double n,
                double *f, double *pval);

/* ---------------------------------------------------------------------------------------------
 * Block fixed effects (seed blocks) by the within transformation (power/blocks.c): one mean per
 * group is taken out of every column, and the regression of the demeaned outcome on the demeaned
 * predictors gives the slopes and residuals of the regression with one dummy per group (Frisch &
 * Waugh 1933; Lovell 1963; Wooldridge 2010, sec. 10.5). */

/* Per-group running means of k columns over n_groups groups. Allocated by pw_within_alloc (PW_OK,
 * PW_EDOM when k or n_groups is 0, PW_ENOMEM), freed by pw_within_free (NULL allowed). */
typedef struct pw_within pw_within;
int pw_within_alloc(size_t k, size_t n_groups, pw_within **out);
void pw_within_free(pw_within *w);
/* Add a row of k values (none NaN) to its group's mean (Welford 1962). group < n_groups. */
void pw_within_add_mean(pw_within *w, size_t group, const double *row);
/* Rows added to group so far. */
double pw_within_count(const pw_within *w, size_t group);
/* out = row less its group's mean (k values). */
void pw_within_demean(const pw_within *w, size_t group, const double *row, double *out);
/* Add the demeaned rows to m (k columns): row_at(ctx, i, row, &group) fills row i's k values and
 * its group for i < n and returns 0 for a row to leave out. PW_OK, PW_EDOM, PW_ENOMEM. */
int pw_within_accumulate(const pw_within *w, size_t n, size_t k,
                         int (*row_at)(void *ctx, size_t i, double *row, size_t *group),
                         void *ctx, pw_moments *m);
/* The blocked regression: pw_xfit_solve on the demeaned moments within, with a column whose
 * variance within the groups is below PW_ALIAS_TOL of its variance in raw (the same rows not
 * demeaned) dropped as constant, and df = n - n_groups - rank (n the rows of within, n_groups
 * the groups among them), sigma and the SEs rescaled to it. Returns pw_xfit_solve's statuses, PW_EDOM on bad sizes. */
int pw_within_fit(const pw_moments *within, const pw_moments *raw, const size_t *idx, size_t k,
                  size_t t, size_t n_groups, pw_xfit **out);
/* The F test of the blocks: the regression without them (rss_r on df_r) against the one with
 * them (rss_u on df_u < df_r). partial_r2 = (rss_r - rss_u) / rss_r, the share of the residual
 * sum of squares the blocks explain; var_drop = 1 - (rss_u / df_u) / (rss_r / df_r), the drop in
 * the residual variance estimate (it counts the degrees of freedom the blocks cost). PW_OK, or
 * PW_EFEW when either df is below 1 (figures NAN). */
typedef struct {
    double f, df1, df2, p;
    double partial_r2, var_drop;
} pw_within_test;
int pw_within_ftest(double rss_r, double df_r, double rss_u, double df_u, pw_within_test *out);

/* ---------------------------------------------------------------------------------------------
 * Logistic regression (power/logit.c). */

/* Iterations allowed to the IRLS fit: R's glm.fit stops at 25 by default; a well-posed fit needs
 * fewer than 10, so 50 only ever binds on data that do not settle. */
#define PW_LOGIT_MAX_ITER 50

/* Maximum-likelihood logistic regression of y (each 0 or 1) on X (n x p, row-major; the caller
 * includes any intercept column) by iteratively reweighted least squares (McCullagh & Nelder 1989,
 * "Generalized Linear Models", 2nd ed., sec. 4.4.1; Green 1984), each step a Householder QR
 * least-squares solve (gsl_linalg_QR_decomp, gsl_linalg_QR_lssolve). Writes p coefficients to coef
 * and n fitted probabilities to prob (either may be NULL) and the iterations used to *iter (may be
 * NULL). Separated data drive probabilities towards 0 or 1: the fit still converges in deviance
 * and returns them, which is what a propensity-overlap check wants to see. Returns PW_OK;
 * PW_ENOCONV after PW_LOGIT_MAX_ITER iterations (coef and prob hold the last iterate); PW_ESING
 * when a weighted design is rank-deficient; PW_EFEW when n <= p; PW_EDOM when a y is not 0 or 1;
 * PW_ENOMEM. */
int pw_logit_fit(const double *X, const double *y, size_t n, size_t p, double *coef, double *prob,
                 int *iter);

/* ---------------------------------------------------------------------------------------------
 * Heteroscedasticity-consistent standard errors (power/hc.c) and power by resampling
 * (power/resample.c). */

/* A least-squares fit with its HC3 covariance (MacKinnon & White 1985; Long & Ervin 2000):
 * (X'X)^-1 [sum_i x_i x_i' e_i^2 / (1 - h_ii)^2] (X'X)^-1, the form statsmodels calls
 * cov_type='HC3'. Allocated by pw_hc3_fit, freed by pw_hcfit_free. */
typedef struct {
    size_t n, p;
    double *coef;         /* p estimates */
    double *xtx_inv;      /* p * p, (X'X)^-1, row-major */
    double *resid;        /* n residuals */
    double *lev;          /* n leverages h_ii */
    double *cov_hc3;      /* p * p, HC3 covariance */
    double *cov_classic;  /* p * p, sigma^2 (X'X)^-1 */
    double df, sigma;     /* n - p; residual SD */
} pw_hcfit;
/* Fit y on X (n-by-p, row-major; the caller includes any intercept column) by Householder QR
 * (pw_ols_fit). PW_OK, PW_EDOM, PW_EFEW (n <= p), PW_ESING (rank-deficient, or a run with
 * leverage 1, where HC3 is undefined), PW_ENOMEM. */
int pw_hc3_fit(const double *X, const double *y, size_t n, size_t p, pw_hcfit **out);
void pw_hcfit_free(pw_hcfit *f);
/* The variance of the contrast c'beta (c: p values) under the HC3 covariance (robust 1) or the
 * classic one (robust 0). */
double pw_hc_contrast_var(const pw_hcfit *f, const double *c, int robust);

/* Wild bootstrap replicates of a fit (Wu 1986; Liu 1988; Davidson & Flachaire 2008): y* = the
 * fitted model with the effect of interest planted + e_i / sqrt(1 - h_ii) v_i, v_i Rademacher or
 * Mammen weights; each replicate refits and keeps the contrast's estimation error and its SE (HC3
 * when robust, else classic). Power at any effect and run count is then read off the same
 * replicates: estimate = effect + error, both error and SE scaled by sqrt(n / n_new). B replicates
 * from a mt19937 stream seeded with seed: the same inputs and seed give the same figures
 * (Rademacher: bit j of the stream's k-th 32-bit word signs run 32 k + j, replicate after
 * replicate; Mammen: one uniform per run). Each replicate is computed from 2p sums over the runs
 * (no refit; the same figures as refitting y*, up to rounding): cost O(n p^2 + B n p).
 * PW_OK, PW_EDOM, PW_EFEW (df < 1), PW_ENOMEM. */
enum { PW_WILD_RADEMACHER = 0, PW_WILD_MAMMEN = 1 };
typedef struct pw_wild pw_wild;
int pw_wild_draw(const pw_hcfit *f, const double *X, const double *c, int robust, int weights,
                 size_t B, unsigned long seed, pw_wild **out);
void pw_wild_free(pw_wild *w);
/* The same replicates from a pairs bootstrap (resampling whole runs; for discrete outcomes, which
 * then keep their values): X (n-by-p, row-major, intercept included) and y are the runs; each
 * replicate refits and keeps its contrast estimate less the archive's, and its SE (HC3 when
 * robust). A replicate whose refit is singular, holds a run of leverage 1 (within 1e-8) or has a
 * constant outcome gets SE 0 and never rejects. Run indices: n calls of gsl_rng_uniform_int per
 * replicate from a mt19937 stream seeded with seed. Each refit is by the weighted cross-products
 * of the runs drawn (Householder QR when they are near singular). Cost O(B n p^2).
 * PW_OK, PW_EDOM, PW_EFEW, PW_ESING (the archive's own fit), PW_ENOMEM. */
int pw_pairs_draw(const double *X, const double *y, size_t n, size_t p, const double *c,
                  int robust, size_t B, unsigned long seed, pw_wild **out);
size_t pw_wild_replicates(const pw_wild *w);
/* The test read off the replicates: tost 1 for two one-sided tests at level alpha against
 * -+effect at a true effect of 0; else a t test with sides 1 (effect in the expected direction)
 * or 2, at level alpha, against a t reference with n_new - p df. */
typedef struct {
    int tost;
    int sides;
    double alpha;
} pw_wild_test;
/* Share of replicates that reject at effect (> 0) with n_new runs, and its binomial Monte Carlo
 * SE sqrt(p (1 - p) / B) (mc_se may be NULL). PW_OK, PW_EDOM, PW_EFEW (n_new - p < 1). */
int pw_wild_power(const pw_wild *w, const pw_wild_test *t, double effect, double n_new,
                  double *power, double *mc_se);
/* The smallest effect (margin for TOST) whose share reaches target at n_new runs, by doubling
 * then bisection (monotone search); INFINITY when none does. */
int pw_wild_mde(const pw_wild *w, const pw_wild_test *t, double target, double n_new, double *mde);
/* The smallest whole number of runs whose share reaches target at effect; INFINITY beyond
 * PW_MAX_RUNS. */
int pw_wild_runs(const pw_wild *w, const pw_wild_test *t, double effect, double target,
                 double *runs);

/* ---------------------------------------------------------------------------------------------
 * Sorting (power/sort.c). */

/* Sort n values ascending in time linear in n (an LSD radix sort on the IEEE 754 bit patterns;
 * Knuth, TAOCP vol. 3, sec. 5.2.5). Every -0 becomes +0; NaNs, which have no order, go to the
 * ends. The sorted values are those of a comparison sort. PW_OK or PW_ENOMEM (x unchanged). */
int pw_sort_doubles(double *x, size_t n);

#endif
