/* Power, minimum detectable effect and runs needed for one claim's test.
 * See LICENSE. */
#include <math.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_roots.h>

#include "power/power.h"

/* Brent's method stops when the bracket is this small relative to the root: far below the
 * precision any reported MDE is printed with, and well above the resolution of the power curve. */
#define MDE_REL_TOL 1e-10
#define MDE_MAX_ITER 200          /* Brent converges superlinearly; 200 steps is never reached */
#define BRACKET_MAX_DOUBLINGS 200 /* 2^200 times the first guess covers any finite effect */

/* Treatment columns the test uses: L - 1 for a level set, otherwise 1. */
static double treat_df(const pw_design *d)
{
    return d->n_levels >= 2 ? d->n_levels - 1 : 1.0;
}

static int check_design(const pw_design *d)
{
    if (d == NULL || !(d->alpha > 0 && d->alpha < 1) || !(d->effect >= 0) ||
        !(d->n >= 0) || !(d->n_params >= 0) || !(d->sides == 1 || d->sides == 2))
        return PW_EDOM;
    if (d->test != PW_TEST_TWO_PROP && !(d->sigma > 0 && d->sd_x_resid > 0)) return PW_EDOM;
    if (d->test == PW_TEST_LEVELS_F && !(d->n_levels >= 2)) return PW_EDOM;
    if (d->test == PW_TEST_TWO_PROP && !(d->p_base > 0 && d->p_base < 1)) return PW_EDOM;
    return PW_OK;
}

int pw_prop_power_h(double h, double n_eff, double alpha, int sides, double *power)
{
    if (!(alpha > 0 && alpha < 1) || !(n_eff >= 0) || !isfinite(h) || (sides != 1 && sides != 2))
        return PW_EDOM;
    double z = gsl_cdf_ugaussian_Qinv(alpha / sides);
    double shift = h * sqrt(n_eff);
    /* Both tails of the arcsine z test (Cohen 1988, sec. 6.2), each computed directly. */
    double p = gsl_cdf_ugaussian_Q(z - shift);
    if (sides == 2) p += gsl_cdf_ugaussian_P(-z - shift);
    *power = p > 1 ? 1 : p;
    return PW_OK;
}

int pw_f2_power(double f2, double u, double v, double alpha, double *power)
{
    if (!(f2 >= 0) || !(u > 0) || !(v > 0) || !(alpha > 0 && alpha < 1)) return PW_EDOM;
    double fc = gsl_cdf_fdist_Qinv(alpha, u, v);
    if (!isfinite(fc)) return PW_ENOCONV;
    double lo, up;
    int rc = pw_ncf_cdf(fc, u, v, f2 * (u + v + 1.0), &lo, &up);
    if (rc != PW_OK) return rc;
    *power = up;
    return PW_OK;
}

static double clip_prop(double p)
{
    return p < PW_PROP_EPS ? PW_PROP_EPS : (p > 1 - PW_PROP_EPS ? 1 - PW_PROP_EPS : p);
}

int pw_power(const pw_design *d, double *power)
{
    int rc = check_design(d);
    if (rc != PW_OK) return rc;
    double lo, up;
    switch (d->test) {
    case PW_TEST_COEF_T: {
        double df = d->n - d->n_params - 1.0;
        if (!(df > 0)) return PW_EFEW;
        double ncp = d->effect * d->sd_x_resid * sqrt(d->n) / d->sigma;
        double tc = gsl_cdf_tdist_Qinv(d->alpha / d->sides, df);
        if (!isfinite(tc)) return PW_ENOCONV;
        if ((rc = pw_nct_cdf(tc, df, ncp, &lo, &up)) != PW_OK) return rc;
        double p = up;
        if (d->sides == 2) {
            /* The far tail: a significant estimate of the wrong sign also rejects (as pwr and
             * statsmodels count it). */
            if ((rc = pw_nct_cdf(-tc, df, ncp, &lo, &up)) != PW_OK) return rc;
            p += lo;
        }
        *power = p > 1 ? 1 : p;
        return PW_OK;
    }
    case PW_TEST_LEVELS_F: {
        double df1 = d->n_levels - 1.0;
        double df2 = d->n - d->n_params - df1;
        if (!(df2 > 0)) return PW_EFEW;
        double unit = d->ncp_per_run > 0 ? d->ncp_per_run : 1.0 / (2.0 * d->n_levels);
        double es = d->effect / d->sigma;
        double lambda = unit * d->n * es * es;
        double fc = gsl_cdf_fdist_Qinv(d->alpha, df1, df2);
        if (!isfinite(fc)) return PW_ENOCONV;
        if ((rc = pw_ncf_cdf(fc, df1, df2, lambda, &lo, &up)) != PW_OK) return rc;
        *power = up;
        return PW_OK;
    }
    case PW_TEST_TWO_PROP: {
        if (!(d->n > 0)) return PW_EFEW;
        double p1 = clip_prop(d->p_base - d->effect / 2), p2 = clip_prop(d->p_base + d->effect / 2);
        double h = 2 * asin(sqrt(p2)) - 2 * asin(sqrt(p1));
        double spread = d->sd_x_resid > 0 ? d->sd_x_resid * d->sd_x_resid
                                           : d->share_treated * (1 - d->share_treated);
        if (!(spread > 0)) return PW_EDOM;
        return pw_prop_power_h(h, d->n * spread, d->alpha, d->sides, power);
    }
    case PW_TEST_TOST: {
        double df = d->n - d->n_params - treat_df(d);
        if (!(df > 0) || !(d->n > 0)) return PW_EFEW;
        double se = d->sigma / (d->sd_x_resid * sqrt(d->n));
        if (d->effect == 0) {
            *power = 0;
            return PW_OK;
        }
        return pw_tost_power(0.0, -d->effect, d->effect, se, df, d->alpha, power);
    }
    }
    return PW_EDOM;
}

/* Power minus target as a function of the effect, for Brent's method. */
typedef struct {
    pw_design d;
    int status;
} mde_ctx;

static double power_gap(double effect, void *vp)
{
    mde_ctx *c = vp;
    double p = 0;
    c->d.effect = effect;
    int rc = pw_power(&c->d, &p);
    if (rc != PW_OK && c->status == PW_OK) c->status = rc;
    return p - c->d.target;
}

/* A first guess of the MDE: Bloom's (1995) (z_{1-a/s} + z_{power}) SE, in the normal limit. */
static double mde_guess(const pw_design *d)
{
    double z = gsl_cdf_ugaussian_Qinv(d->alpha / (d->test == PW_TEST_TOST ? 1 : d->sides)) +
               gsl_cdf_ugaussian_Pinv(d->target);
    if (d->test == PW_TEST_TWO_PROP) return fmin(0.5, z / sqrt(d->n + 1.0));
    double se = d->sigma / (d->sd_x_resid * sqrt(d->n > 1 ? d->n : 1.0));
    return z * se > 0 ? z * se : 1.0;
}

int pw_mde(const pw_design *d, double *mde)
{
    int rc = check_design(d);
    if (rc != PW_OK) return rc;
    if (!(d->target > 0 && d->target < 1)) return PW_EDOM;
    mde_ctx c = {*d, PW_OK};
    double lo = 0.0, hi = mde_guess(d);
    /* The largest difference two proportions can show: beyond it both are clipped. */
    double cap = d->test == PW_TEST_TWO_PROP ? 2 * fmax(d->p_base, 1 - d->p_base) : INFINITY;
    if (hi > cap) hi = cap;
    double g0 = power_gap(lo, &c);
    if (c.status != PW_OK) return c.status;
    if (g0 >= 0) {   /* the target is at or below the size of the test */
        *mde = 0;
        return PW_OK;
    }
    double ghi = power_gap(hi, &c);
    for (int i = 0; ghi < 0 && i < BRACKET_MAX_DOUBLINGS; i++) {
        if (c.status != PW_OK) return c.status;
        if (hi >= cap) {
            *mde = INFINITY;
            return PW_OK;
        }
        lo = hi;
        hi = fmin(2 * hi, cap);
        ghi = power_gap(hi, &c);
    }
    if (c.status != PW_OK) return c.status;
    if (ghi < 0) return PW_ENOCONV;

    gsl_function fn = {power_gap, &c};
    gsl_root_fsolver *s = gsl_root_fsolver_alloc(gsl_root_fsolver_brent);
    if (s == NULL) return PW_ENOMEM;
    int status = gsl_root_fsolver_set(s, &fn, lo, hi);
    double root = NAN;
    for (int it = 0; status == GSL_SUCCESS && it < MDE_MAX_ITER; it++) {
        status = gsl_root_fsolver_iterate(s);
        if (status != GSL_SUCCESS) break;
        root = gsl_root_fsolver_root(s);
        double a = gsl_root_fsolver_x_lower(s), b = gsl_root_fsolver_x_upper(s);
        status = gsl_root_test_interval(a, b, 0.0, MDE_REL_TOL);
        if (status == GSL_SUCCESS) break;
        if (status == GSL_CONTINUE) status = GSL_SUCCESS;
        if (it == MDE_MAX_ITER - 1) status = GSL_EMAXITER;
    }
    gsl_root_fsolver_free(s);
    if (c.status != PW_OK) return c.status;
    if (status != GSL_SUCCESS || !isfinite(root)) return PW_ENOCONV;
    *mde = root;
    return PW_OK;
}

/* Power at n runs, or 0 where n leaves no degrees of freedom. */
static int power_at(const pw_design *d, double n, double *p)
{
    pw_design e = *d;
    e.n = n;
    int rc = pw_power(&e, p);
    if (rc == PW_EFEW) {
        *p = 0;
        return PW_OK;
    }
    return rc;
}

int pw_runs_needed(const pw_design *d, double *runs)
{
    int rc = check_design(d);
    if (rc != PW_OK) return rc;
    if (!(d->target > 0 && d->target < 1)) return PW_EDOM;
    /* The fewest runs that leave one residual degree of freedom. */
    double lo = d->test == PW_TEST_TWO_PROP ? 1.0 : d->n_params + treat_df(d) + 1.0;
    double p;
    if ((rc = power_at(d, lo, &p)) != PW_OK) return rc;
    if (p >= d->target) {
        *runs = lo;
        return PW_OK;
    }
    /* Doubling search for a run count that reaches the target, then bisection on integers. The
     * power of every test here rises with n at a fixed effect and spread. */
    double hi = lo;
    for (;;) {
        hi = hi * 2 > PW_MAX_RUNS ? PW_MAX_RUNS : hi * 2;
        if ((rc = power_at(d, hi, &p)) != PW_OK) return rc;
        if (p >= d->target) break;
        if (hi >= PW_MAX_RUNS) {
            *runs = INFINITY;
            return PW_OK;
        }
        lo = hi;
    }
    while (hi - lo > 1) {
        double mid = floor((lo + hi) / 2);
        if ((rc = power_at(d, mid, &p)) != PW_OK) return rc;
        if (p >= d->target) hi = mid;
        else lo = mid;
    }
    *runs = hi;
    return PW_OK;
}
