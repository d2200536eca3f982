/* Power, minimum detectable effect and runs needed for one claim's test.
 * See LICENSE. */
#include <math.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>

#include "power/power.h"

/* The MDE search stops when the bracket is this small relative to the root: far below the
 * precision any reported MDE is printed with, and well above the resolution of the power curve. */
#define MDE_REL_TOL 1e-10
#define ROOT_MAX_ITER 200         /* the root search converges superlinearly; 200 steps is never reached */
/* Runs needed: the search on continuous n stops within this many runs of the root; the integer
 * answer is then settled by checking its neighbours. */
#define RUNS_ABS_TOL 0.25
/* The bracket around a first guess grows by this factor per step; 200 steps of 1.5 cover any
 * finite effect or run count from any positive guess. */
#define BRACKET_GROWTH 1.5
#define BRACKET_MAX_STEPS 200

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
    if (d->test == PW_TEST_BASIS_F && !(d->n_levels >= 2 && d->ncp_per_run > 0)) return PW_EDOM;
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
    double fc, lo, up;
    int rc = pw_f_crit(alpha, u, v, &fc);
    if (rc != PW_OK) return rc;
    rc = pw_ncf_cdf(fc, u, v, f2 * (u + v + 1.0), &lo, &up);
    if (rc != PW_OK) return rc;
    *power = up;
    return PW_OK;
}

/* Whether P(T' < -tc) can exceed FAR_TAIL_NEGLIGIBLE for T' = (Z + ncp) / S, S = sqrt(V / df),
 * ncp >= 0. For any s0, P(Z + ncp < -tc S) <= P(S < s0) + Phi(-ncp - tc s0); with s0 = 1/2 both
 * terms are cheap, and when their sum is negligible the costly far-tail series is skipped. */
#define FAR_TAIL_NEGLIGIBLE 1e-13   /* four orders below the 1e-9 accuracy of the CDFs */
static int far_tail_matters(double tc, double df, double ncp)
{
    if (ncp < 0) return 1;
    double bound = gsl_cdf_chisq_P(0.25 * df, df) + gsl_cdf_ugaussian_P(-ncp - 0.5 * tc);
    return !(bound < FAR_TAIL_NEGLIGIBLE);
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
        if (d->sides == 2 && far_tail_matters(tc, df, ncp)) {
            /* The far tail: a significant estimate of the wrong sign also rejects (as pwr and
             * statsmodels count it). */
            if ((rc = pw_nct_cdf(-tc, df, ncp, &lo, &up)) != PW_OK) return rc;
            p += lo;
        }
        *power = p > 1 ? 1 : p;
        return PW_OK;
    }
    case PW_TEST_LEVELS_F:
    case PW_TEST_BASIS_F: {
        /* P(F'(df1, df2, lambda) > F_{1-alpha}(df1, df2)) (Scheffe 1959, sec. 2.8). */
        double df1 = d->n_levels - 1.0;
        double df2 = d->n - d->n_params - df1;
        if (!(df2 > 0)) return PW_EFEW;
        double unit = d->ncp_per_run > 0 ? d->ncp_per_run : 1.0 / (2.0 * d->n_levels);
        double es = d->effect / d->sigma;
        double lambda = unit * d->n * es * es;
        double fc;
        if ((rc = pw_f_crit(d->alpha, df1, df2, &fc)) != PW_OK) return rc;
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
    case PW_TEST_TREND_T: {
        /* The trend contrast's t test is the coefficient test with the level set's other L - 2
         * columns counted among the parameters. */
        pw_design e = *d;
        e.test = PW_TEST_COEF_T;
        e.n_params = d->n_params + treat_df(d) - 1.0;
        e.n_levels = 0;
        return pw_power(&e, power);
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

/* A function of one variable for Brent's method: power minus target at an effect or a run count. */
typedef struct {
    pw_design d;
    int by_runs;     /* 1: the variable is n; 0: the effect */
    int status;
} gap_ctx;

static double power_gap(double v, void *vp)
{
    gap_ctx *c = vp;
    double p = 0;
    if (c->by_runs) c->d.n = v;
    else c->d.effect = v;
    int rc = pw_power(&c->d, &p);
    if (rc == PW_EFEW && c->by_runs) rc = PW_OK;   /* too few runs: power 0 */
    if (rc != PW_OK && c->status == PW_OK) c->status = rc;
    return p - c->d.target;
}

/* Bloom's (1995) multiplier, with t quantiles at df residual degrees of freedom (z when df is
 * not positive): (t_{1-a/s} + t_{power}) standard errors; for TOST the margin needs
 * t_{1-a} + t_{(1+power)/2} (both one-sided tests must pass at a true effect of 0). */
static double bloom_multiplier(const pw_design *d, double df)
{
    double p_crit = d->test == PW_TEST_TOST ? d->alpha : d->alpha / d->sides;
    double p_pow = d->test == PW_TEST_TOST ? (1 + d->target) / 2 : d->target;
    double z = df > 0 ? gsl_cdf_tdist_Qinv(p_crit, df) + gsl_cdf_tdist_Pinv(p_pow, df)
                      : gsl_cdf_ugaussian_Qinv(p_crit) + gsl_cdf_ugaussian_Pinv(p_pow);
    /* The F test of L - 1 contrasts needs a larger noncentrality; sqrt(L - 1) is a rough guess
     * that the bracket search corrects. */
    if (d->test == PW_TEST_LEVELS_F || d->test == PW_TEST_BASIS_F) z *= sqrt(d->n_levels - 1);
    return z;
}

/* Residual degrees of freedom at n runs (0 for the two-proportion test, which has none). */
static double resid_df(const pw_design *d, double n)
{
    if (d->test == PW_TEST_TWO_PROP) return 0;
    return n - d->n_params - treat_df(d);
}

/* Relative half-width of the first bracket around a guess from Bloom's multiplier: the guess
 * is off by O(1/df) (the t quantiles stand in for the noncentral t), plus a floor. */
static double first_width(const pw_design *d, double df)
{
    if (d->test == PW_TEST_TWO_PROP || d->test == PW_TEST_LEVELS_F ||
        d->test == PW_TEST_BASIS_F || !(df > 0))
        return 0.06;
    return fmin(0.06, 2.0 / df + 1e-4);
}

/* The spread per run that turns an effect into a standardised shift: shift = effect * k sqrt(n). */
static double shift_per_effect(const pw_design *d)
{
    switch (d->test) {
    case PW_TEST_TWO_PROP: {
        double sp = d->sd_x_resid > 0 ? d->sd_x_resid : sqrt(d->share_treated *
                                                            (1 - d->share_treated));
        /* dh/dp = 1 / sqrt(p (1 - p)) near the base rate. */
        return sp / sqrt(d->p_base * (1 - d->p_base));
    }
    case PW_TEST_LEVELS_F:
    case PW_TEST_BASIS_F: {
        double unit = d->ncp_per_run > 0 ? d->ncp_per_run : 1.0 / (2.0 * d->n_levels);
        return sqrt(unit) / d->sigma;
    }
    default: return d->sd_x_resid / d->sigma;
    }
}

/* The Illinois variant of regula falsi (Dowell & Jarratt 1971) on gap over [lo, hi], whose end
 * values ga < 0 <= gb are known: superlinear (order about 1.44) on the smooth, monotone power
 * curve, and no evaluation is repeated. Stops when a step moves less than abs_tol + rel_tol |x|. */
static int illinois(gap_ctx *c, double a, double ga, double b, double gb, double abs_tol,
                    double rel_tol, double *root)
{
    int side = 0;
    for (int it = 0; it < ROOT_MAX_ITER; it++) {
        double x = b - gb * (b - a) / (gb - ga);
        if (!(x > fmin(a, b) && x < fmax(a, b))) x = 0.5 * (a + b);
        double gx = power_gap(x, c);
        if (c->status != PW_OK) return c->status;
        double tol = abs_tol + rel_tol * fabs(x);
        if (gx == 0 || fabs(b - a) <= tol) {
            *root = x;
            return PW_OK;
        }
        if ((gx < 0) == (gb < 0)) {
            /* x replaces b; a stays: halve its value when it stays twice (the Illinois step). */
            b = x;
            gb = gx;
            if (side == -1) ga /= 2;
            side = -1;
        } else {
            a = b;
            ga = gb;
            b = x;
            gb = gx;
            side = 1;
        }
        if (fabs(b - a) <= tol) {
            *root = x;
            return PW_OK;
        }
    }
    return PW_ENOCONV;
}

/* Grow [lo, hi] around a guess until gap changes sign, within [floor_, cap]; the gaps at the ends
 * are returned too. The first bracket is guess (1 -+ width); each miss moves the failing end out
 * and quadruples the width. Returns 1 when bracketed, 0 when even cap falls short, -1 when the
 * floor already reaches the target. */
static int bracket(gap_ctx *c, double guess, double width, double floor_, double cap, double *lo,
                   double *glo, double *hi, double *ghi)
{
    double a = fmax(floor_, fmin(guess * (1 - width), cap));
    double b = fmin(cap, guess * (1 + width));
    if (b <= a) b = fmin(cap, a * BRACKET_GROWTH + 1);
    double ga = power_gap(a, c);
    for (int i = 0; ga >= 0 && i < BRACKET_MAX_STEPS; i++) {
        if (a <= floor_) return -1;
        b = a;
        width = fmin(4 * width, 0.5);
        a = fmax(floor_, a * (1 - width));
        ga = power_gap(a, c);
    }
    if (ga >= 0) return -1;
    double gb = power_gap(b, c);
    for (int i = 0; gb < 0 && i < BRACKET_MAX_STEPS; i++) {
        if (b >= cap) return 0;
        a = b;
        ga = gb;
        width = fmin(4 * width, BRACKET_GROWTH - 1);
        b = fmin(cap, b * (1 + width));
        gb = power_gap(b, c);
    }
    if (gb < 0) return 0;
    *lo = a;
    *glo = ga;
    *hi = b;
    *ghi = gb;
    return 1;
}

int pw_mde(const pw_design *d, double *mde)
{
    int rc = check_design(d);
    if (rc != PW_OK) return rc;
    if (!(d->target > 0 && d->target < 1)) return PW_EDOM;
    gap_ctx c = {*d, 0, PW_OK};
    /* The largest difference two proportions can show: beyond it both are clipped. */
    double cap = d->test == PW_TEST_TWO_PROP ? 2 * fmax(d->p_base, 1 - d->p_base) : INFINITY;
    double k = shift_per_effect(d) * sqrt(d->n > 1 ? d->n : 1.0);
    double df = resid_df(d, d->n);
    double guess = k > 0 ? bloom_multiplier(d, df) / k : 1.0;
    if (!(guess > 0 && isfinite(guess))) guess = 1.0;
    double lo, hi, glo, ghi;
    int b = bracket(&c, guess, first_width(d, df), 0.0, cap, &lo, &glo, &hi, &ghi);
    if (c.status != PW_OK) return c.status;
    if (b < 0) {   /* the target is at or below the size of the test */
        *mde = 0;
        return PW_OK;
    }
    if (b == 0) {
        *mde = INFINITY;
        return PW_OK;
    }
    return illinois(&c, lo, glo, hi, ghi, 0.0, MDE_REL_TOL, mde);
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
    return pw_runs_needed_from(d, NAN, runs);
}

int pw_runs_needed_from(const pw_design *d, double mde, double *runs)
{
    int rc = check_design(d);
    if (rc != PW_OK) return rc;
    if (!(d->target > 0 && d->target < 1) || !(d->effect > 0)) return PW_EDOM;
    /* The fewest runs that leave one residual degree of freedom. */
    double n_min = d->test == PW_TEST_TWO_PROP ? 1.0 : d->n_params + treat_df(d) + 1.0;
    gap_ctx c = {*d, 1, PW_OK};
    double guess, width;
    if (mde > 0 && isfinite(mde) && d->n > n_min && d->test != PW_TEST_TWO_PROP) {
        /* The t, F and TOST powers depend on n through effect sqrt(n) / sigma and through df;
         * matching the first keeps the power of the MDE at n, and df moves it by O(1/df). */
        guess = d->n * (mde / d->effect) * (mde / d->effect);
        width = first_width(d, fmin(resid_df(d, d->n), resid_df(d, guess)));
    } else {
        /* Normal-theory guess: the shift effect k sqrt(n) reaches Bloom's multiplier. */
        double k = shift_per_effect(d) * d->effect;
        guess = k > 0 ? pow(bloom_multiplier(d, 0) / k, 2) : n_min;
        width = 0.06;
    }
    if (!(guess >= n_min && isfinite(guess))) guess = n_min;
    if (guess > PW_MAX_RUNS) guess = PW_MAX_RUNS;
    double lo, hi, glo, ghi, root;
    int b = bracket(&c, guess, width, n_min, PW_MAX_RUNS, &lo, &glo, &hi, &ghi);
    if (c.status != PW_OK) return c.status;
    if (b < 0) {
        *runs = n_min;
        return PW_OK;
    }
    if (b == 0) {
        *runs = INFINITY;
        return PW_OK;
    }
    if (hi - lo <= 1) root = hi;
    else if ((rc = illinois(&c, lo, glo, hi, ghi, RUNS_ABS_TOL, 0.0, &root)) != PW_OK) return rc;
    /* Settle the integer: the smallest whole n at or above the target. The power of every test
     * here rises with n at a fixed effect and spread, near the target at least. */
    double r = fmax(n_min, ceil(root)), p;
    if ((rc = power_at(d, r, &p)) != PW_OK) return rc;
    while (p < d->target && r < PW_MAX_RUNS) {
        r += 1;
        if ((rc = power_at(d, r, &p)) != PW_OK) return rc;
    }
    for (;;) {
        if (r - 1 < n_min) break;
        if ((rc = power_at(d, r - 1, &p)) != PW_OK) return rc;
        if (p < d->target) break;
        r -= 1;
    }
    *runs = r;
    return PW_OK;
}
