/* Quantiles of the noncentral t, F and chi-squared distributions by bracketing and Brent's method.
 * See LICENSE. */
#include <float.h>
#include <math.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_roots.h>

#include "power/power.h"

/* Brent stops when the bracket is this narrow relative to the root: a few ulps, so the root is as
 * good as the CDF that defines it. */
#define QUANTILE_EPSREL (4.0 * DBL_EPSILON)
/* Absolute floor for the noncentral t, whose root can sit at 0: its spread is at least about one
 * unit, so 1e-15 is at rounding level on that scale. F and chi-squared roots are positive and use
 * the relative test alone. */
#define QUANTILE_NCT_EPSABS 1e-15
/* Brent iterations before giving up: bisection alone would need about 1100 halvings to go from the
 * widest double bracket to 4 ulps; Brent's interpolation takes far fewer on these smooth CDFs. */
#define QUANTILE_MAX_ITER 2000
/* At a true root the CDF misses p by the density times a few ulps of x, relative to p far below
 * this; a bracket closed on a discontinuity misses it by order p. */
#define QUANTILE_RESIDUAL 1e-8
/* Doublings of the bracket before giving up: 1100 doublings of a unit step pass DBL_MAX. */
#define QUANTILE_MAX_EXPAND 1100

enum dist { DIST_NCT, DIST_NCF, DIST_NCX2 };

struct target {
    enum dist dist;
    double p, df1, df2, ncp;
    int upper;
    int status;           /* first failing CDF status, so Brent's caller can stop */
};

static int tails(const struct target *tg, double x, double *lo, double *up)
{
    switch (tg->dist) {
    case DIST_NCT:
        return pw_nct_cdf(x, tg->df1, tg->ncp, lo, up);
    case DIST_NCF:
        return pw_ncf_cdf(x, tg->df1, tg->df2, tg->ncp, lo, up);
    case DIST_NCX2:
    default:
        return pw_ncchisq_cdf(x, tg->df1, tg->ncp, lo, up);
    }
}

/* Increasing in x in both cases: F(x) - p, or p - Q(x), so small upper-tail p keeps its digits. */
static double gap(double x, void *params)
{
    struct target *tg = params;
    double lo = 0.0, up = 0.0;
    int s = tails(tg, x, &lo, &up);
    if (s != PW_OK) {
        if (tg->status == PW_OK)
            tg->status = s;
        return 0.0;       /* ends the search; the caller sees tg->status */
    }
    return tg->upper ? tg->p - up : lo - tg->p;
}

/* Find [a, b] with gap(a) <= 0 < gap(b), stepping out from a guess by doubling steps; positive
 * distributions start from a = 0, where the CDF is 0 and the gap is -p (or p - 1). */
static int bracket(struct target *tg, double guess, int positive, double *a, double *b)
{
    double step = fmax(1.0, fabs(guess));
    double lo = positive ? 0.0 : guess - step, hi = positive ? fmax(guess, 1.0) : guess + step;
    double g;
    int n;
    for (n = 0, g = gap(lo, tg); !positive && g > 0.0 && n < QUANTILE_MAX_EXPAND; n++) {
        if (tg->status != PW_OK)
            return tg->status;
        hi = lo;
        step *= 2.0;
        lo -= step;
        g = gap(lo, tg);
    }
    if (tg->status != PW_OK)
        return tg->status;
    if (g > 0.0)
        return PW_ENOCONV;
    step = fmax(1.0, fabs(hi));
    for (n = 0, g = gap(hi, tg); g <= 0.0 && n < QUANTILE_MAX_EXPAND; n++) {
        if (tg->status != PW_OK)
            return tg->status;
        lo = hi;
        step *= 2.0;
        hi += step;
        if (!isfinite(hi))
            return PW_ENOCONV;
        g = gap(hi, tg);
    }
    if (tg->status != PW_OK)
        return tg->status;
    if (g <= 0.0)
        return PW_ENOCONV;
    *a = lo;
    *b = hi;
    return PW_OK;
}

/* Brent's method (Brent 1973, ch. 4) through gsl_root_fsolver_brent on a bracket found above. */
static int solve(struct target *tg, double guess, int positive, double epsabs, double *x)
{
    if (!(tg->p > 0.0 && tg->p < 1.0))
        return PW_EDOM;
    double a, b;
    int s = bracket(tg, guess, positive, &a, &b);
    if (s != PW_OK)
        return s;
    gsl_root_fsolver *solver = gsl_root_fsolver_alloc(gsl_root_fsolver_brent);
    if (!solver)
        return PW_ENOMEM;
    gsl_function fn = {gap, tg};
    s = PW_ENOCONV;
    if (gsl_root_fsolver_set(solver, &fn, a, b) != GSL_SUCCESS)
        goto fail;
    for (int it = 0; it < QUANTILE_MAX_ITER; it++) {
        int gs = gsl_root_fsolver_iterate(solver);
        if (tg->status != PW_OK) {
            s = tg->status;
            goto fail;
        }
        if (gs != GSL_SUCCESS)
            goto fail;
        double r = gsl_root_fsolver_root(solver);
        double xl = gsl_root_fsolver_x_lower(solver), xu = gsl_root_fsolver_x_upper(solver);
        if (gsl_root_test_interval(xl, xu, epsabs, QUANTILE_EPSREL) == GSL_SUCCESS
            || gap(r, tg) == 0.0) {
            double residual = fabs(gap(r, tg));
            if (tg->status != PW_OK) {
                s = tg->status;
                goto fail;
            }
            /* A bracket can also close on a jump (a tail that underflows to 0): there the CDF
             * misses p by about p itself, so such a "root" is refused. */
            if (!(residual <= QUANTILE_RESIDUAL * tg->p))
                goto fail;
            *x = r;
            s = PW_OK;
            break;
        }
    }
fail:
    gsl_root_fsolver_free(solver);
    return s;
}

int pw_nct_quantile(double p, int upper, double df, double ncp, double *x)
{
    if (!(df > 0.0) || !isfinite(df) || !isfinite(ncp))
        return PW_EDOM;
    struct target tg = {DIST_NCT, p, df, 0.0, ncp, upper != 0, PW_OK};
    /* The noncentral t is roughly centred at ncp; the bracket grows from there. */
    return solve(&tg, ncp, 0, QUANTILE_NCT_EPSABS, x);
}

int pw_ncf_quantile(double p, int upper, double df1, double df2, double lambda, double *x)
{
    if (!(df1 > 0.0) || !(df2 > 0.0) || !(lambda >= 0.0) || !isfinite(df1) || !isfinite(df2)
        || !isfinite(lambda))
        return PW_EDOM;
    struct target tg = {DIST_NCF, p, df1, df2, lambda, upper != 0, PW_OK};
    /* Near the mean (df1 + lambda) / df1 * df2 / (df2 - 2) for large df2. */
    return solve(&tg, (df1 + lambda) / df1, 1, 0.0, x);
}

int pw_ncchisq_quantile(double p, int upper, double df, double lambda, double *x)
{
    if (!(df > 0.0) || !(lambda >= 0.0) || !isfinite(df) || !isfinite(lambda))
        return PW_EDOM;
    struct target tg = {DIST_NCX2, p, df, 0.0, lambda, upper != 0, PW_OK};
    return solve(&tg, df + lambda, 1, 0.0, x);
}
