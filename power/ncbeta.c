/* Noncentral beta and F distributions (Poisson mixtures of incomplete betas), and the accurate
 * Poisson and binomial terms that every mixture series in power/ shares. See LICENSE. */
#include <float.h>
#include <math.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_math.h>
#include <gsl/gsl_sf_gamma.h>

#include "power/internal.h"

/* The continued fraction stops when a step changes it by under one ulp. */
#define BETA_CF_EPS DBL_EPSILON
/* Guard against a zero denominator in Lentz's method (Press et al. 2007, sec. 5.2). */
#define BETA_CF_TINY 1e-300
/* Steps of the fraction before giving up: it needs O(sqrt(max(a, b))) steps, about 3000 for
 * shapes of 5e5 (df 1e6) with room for the Poisson terms' extra shape. */
#define BETA_CF_MAX_ITER 100000
/* Cap on that series' terms: each shrinks by v^2 < 0.01, so 8 reach rounding; 100 is slack. */
#define BD0_MAX_TERMS 100
/* Switch between the direct form of the deviance term and its series (Loader 2000, bd0). */
#define BD0_SERIES_SHARE 0.1
/* Stirling's series for the log-gamma remainder is used above this argument; below it the
 * remainder is taken from lgamma directly, which is accurate there to a few ulps. */
#define STIRLERR_SERIES_FROM 15.0

/* Remainder of Stirling's formula, ln Gamma(n + 1) - (n + 1/2) ln n + n - ln sqrt(2 pi)
 * (Loader 2000, "Fast and accurate computation of binomial probabilities", eq. 2 and sec. 3). */
static double stirlerr(double n)
{
    if (n > STIRLERR_SERIES_FROM) {
        const double s0 = 1.0 / 12, s1 = 1.0 / 360, s2 = 1.0 / 1260, s3 = 1.0 / 1680,
                     s4 = 1.0 / 1188;
        double nn = n * n;
        return (s0 - (s1 - (s2 - (s3 - s4 / nn) / nn) / nn) / nn) / n;
    }
    return gsl_sf_lngamma(n + 1.0) - (n + 0.5) * log(n) + n - 0.5 * log(2.0 * M_PI);
}

/* The deviance term x ln(x / np) + np - x, by its series when x is near np so that nothing
 * cancels (Loader 2000, sec. 2). */
static double bd0(double x, double np)
{
    if (fabs(x - np) < BD0_SERIES_SHARE * (x + np)) {
        double v = (x - np) / (x + np);
        double s = (x - np) * v, ej = 2.0 * x * v;
        v *= v;
        for (int j = 1; j < BD0_MAX_TERMS; j++) {
            /* the ratio is v^2 < 0.01: about 8 terms reach rounding */
            ej *= v;
            double s1 = s + ej / (2 * j + 1);
            if (s1 == s)
                return s1;
            s = s1;
        }
        return s;
    }
    return x * log(x / np) + np - x;
}

double pw_log_dpois(double x, double lambda)
{
    if (x < 0.0)
        return -INFINITY;
    if (lambda == 0.0)
        return x == 0.0 ? 0.0 : -INFINITY;
    if (x == 0.0)
        return -lambda;
    return -stirlerr(x) - bd0(x, lambda) - 0.5 * log(2.0 * M_PI * x);
}

/* Loader's (2000) binomial term for k successes and m failures, given as such so that a small m
 * beside a large k is not taken as the difference of two rounded numbers; log(m / n) replaces his
 * log1p(-k / n) for the same reason (it lost 1e-12 relative at k / n near 1 - 4e-5). */
static double log_binom_term(double k, double m, double p, double q)
{
    double n = k + m;
    double lc = stirlerr(n) - stirlerr(k) - stirlerr(m) - bd0(k, n * p) - bd0(m, n * q);
    double lf = log(2.0 * M_PI) + log(k) + log(m) - log(n);
    /* Loader's form assumes p + q = 1. Rounded separately they miss by eps = p + q - 1 (formed
     * without loss as (p - 1) + q), which the form turns into an error n eps; and a p near 1 is
     * itself uncertain by an ulp, which p^k magnifies k times. Taking the smaller of p and q as
     * exact and the larger as its complement removes both: to first order in eps the log term
     * changes by eps (n - k / p) (or eps (n - m / q)). */
    double corr = p >= q ? ((p - 1.0) + q) * (n - k / p) : ((q - 1.0) + p) * (n - m / q);
    return lc - 0.5 * lf + corr;
}

double pw_log_dbinom(double k, double n, double p, double q)
{
    if (k < 0.0 || k > n)
        return -INFINITY;
    if (p == 0.0)
        return k == 0.0 ? 0.0 : -INFINITY;
    if (q == 0.0)
        return k == n ? 0.0 : -INFINITY;
    if (k == 0.0)
        return n * log(q);
    if (k == n)
        return n * log(p);
    return log_binom_term(k, n - k, p, q);
}

double pw_log_beta_step(double x, double y, double a, double b)
{
    if (x <= 0.0 || y <= 0.0)
        return -INFINITY;
    return log(b / (a + b)) + log_binom_term(a, b, x, y);
}

/* One term of the modified Lentz method with partial numerator aa (denominators 1): updates the
 * ratios c and d and returns the factor c d by which the fraction's value moves (Press et al.
 * 2007, sec. 5.2). */
static double lentz_step(double aa, double *c, double *d)
{
    *d = 1.0 + aa * *d;
    if (fabs(*d) < BETA_CF_TINY)
        *d = BETA_CF_TINY;
    *c = 1.0 + aa / *c;
    if (fabs(*c) < BETA_CF_TINY)
        *c = BETA_CF_TINY;
    *d = 1.0 / *d;
    return *d * *c;
}

/* The continued fraction for I_x(a, b) / (x^a y^b / (a B(a, b))) (A&S 26.5.8), evaluated by the
 * modified Lentz method (Press et al. 2007, Numerical Recipes 3rd ed., sec. 6.4, whose betacf this
 * follows; GSL's gsl_sf_beta_inc uses the same fraction). It converges fast for
 * x < (a + 1) / (a + b + 2), in about sqrt(max(a, b)) steps. */
static int beta_cf(double a, double b, double x, double *cf)
{
    double qab = a + b, qap = a + 1.0, qam = a - 1.0;
    double c = 1.0, d = 1.0 - qab * x / qap;
    if (fabs(d) < BETA_CF_TINY)
        d = BETA_CF_TINY;
    d = 1.0 / d;
    double h = d;
    for (int m = 1; m <= BETA_CF_MAX_ITER; m++) {
        double m2 = 2.0 * m;
        h *= lentz_step(m * (b - m) * x / ((qam + m2) * (a + m2)), &c, &d);
        double del = lentz_step(-(a + m) * (qab + m) * x / ((a + m2) * (qap + m2)), &c, &d);
        h *= del;
        if (fabs(del - 1.0) <= BETA_CF_EPS) {
            *cf = h;
            return PW_OK;
        }
    }
    return PW_ENOCONV;
}

int pw_beta_inc_pair(double x, double y, double a, double b, double *lo, double *up)
{
    /* Evaluate the fraction on whichever of x and y lies on its fast side and take the other tail
     * as the complement: on the fast side the value stays below 0.96 for shapes from 1/4 to 1e6
     * (checked on a grid with scipy.special.betainc), so the complement loses at most about one
     * digit, and a tail that is really small is always the one computed directly. The prefactor
     * x^a y^b / (a B(a, b)) comes from Loader's binomial term with x and y both given, so neither
     * a y near 1e-14 nor an x near 1 raised to a large power loses digits (GSL forms 1 - x and
     * a ln x, which costs up to 1e-12 relative at shapes near 1e5). */
    if (x <= 0.0 || y <= 0.0) {
        *lo = x <= 0.0 ? 0.0 : 1.0;
        *up = x <= 0.0 ? 1.0 : 0.0;
        return PW_OK;
    }
    int direct_x = x < (a + 1.0) / (a + b + 2.0);
    double cf, v;
    int s = direct_x ? beta_cf(a, b, x, &cf) : beta_cf(b, a, y, &cf);
    if (s != PW_OK)
        return s;
    if (direct_x)
        v = exp(pw_log_beta_step(x, y, a, b)) * cf;
    else
        v = exp(pw_log_beta_step(y, x, b, a)) * cf;
    v = fmin(fmax(v, 0.0), 1.0);
    *lo = direct_x ? v : 1.0 - v;
    *up = direct_x ? 1.0 - v : v;
    return PW_OK;
}

/* sum_j Pois(j; L) I_x(a + j, b) and sum_j Pois(j; L) I_y(b, a + j), L = lambda / 2, summed from
 * the Poisson mode both ways (Chattamvelli & Shanmugam 1997, AS 310; Frick 1990, AS R84 gives the
 * error bound on the neglected weights). The incomplete betas move by the step
 * g(a) = x^a y^b / (a B(a, b)) = b / (a + b) * binom(a; a + b, x) (A&S 26.5.16), taken from the
 * accurate binomial term at the mode and then by its ratio x (a + b) / (a + 1), in logs so a step
 * that underflows at the mode can still grow to matter further out. x + y = 1, both given
 * exactly. */
static int ncbeta_tails(double x, double y, double a, double b, double lambda, double *lower,
                        double *upper)
{
    if (x <= 0.0) {
        *lower = 0.0;
        *upper = 1.0;
        return PW_OK;
    }
    if (y <= 0.0) {
        *lower = 1.0;
        *upper = 0.0;
        return PW_OK;
    }
    double L = 0.5 * lambda;
    double k = floor(L);
    pw_mixture m = {.family = PW_MIX_BETA, .L = L, .a = a, .b = b};
    int s = pw_beta_inc_pair(x, y, a + k, b, &m.lo_mode, &m.up_mode);
    if (s != PW_OK)
        return s;
    m.log_x = x < 0.5 ? log(x) : log1p(-y);   /* x near 1: from the exact y */
    m.log_step_mode = pw_log_beta_step(x, y, a + k, b);

    /* For large L: I_x at the window's low end and its complement at the high end bound every
     * term of their tail inside the window; outside it the weights are below DBL_MIN. */
    m.far_lo = m.far_up = 1.0;   /* 1: no shortcut (also when the fraction fails) */
    double span = pw_mixture_far_span(L), i_far, ic_far;
    if (span > 0.0) {
        if (pw_beta_inc_pair(x, y, a + k - span, b, &i_far, &ic_far) == PW_OK)
            m.far_lo = fmin(i_far + DBL_MIN, 1.0);
        if (pw_beta_inc_pair(x, y, a + k + span, b, &i_far, &ic_far) == PW_OK)
            m.far_up = fmin(ic_far + DBL_MIN, 1.0);
    }
    return pw_mixture_tails(&m, lower, upper);
}

/* ncbeta_tails into whichever of lower and upper is not NULL. */
static int ncbeta_tails_opt(double x, double y, double a, double b, double lambda, double *lower,
                            double *upper)
{
    double lo, up;
    int s = ncbeta_tails(x, y, a, b, lambda, &lo, &up);
    if (s != PW_OK)
        return s;
    if (lower)
        *lower = lo;
    if (upper)
        *upper = up;
    return PW_OK;
}

int pw_ncbeta_cdf(double x, double a, double b, double lambda, double *lower, double *upper)
{
    if (isnan(x) || !(a > 0.0) || !(b > 0.0) || !(lambda >= 0.0) || !isfinite(a)
        || !isfinite(b) || !isfinite(lambda))
        return PW_EDOM;
    return ncbeta_tails_opt(fmin(fmax(x, 0.0), 1.0), fmin(fmax(1.0 - x, 0.0), 1.0), a, b, lambda,
                            lower, upper);
}

int pw_ncf_cdf(double f, double df1, double df2, double lambda, double *lower, double *upper)
{
    if (isnan(f) || !(df1 > 0.0) || !(df2 > 0.0) || !(lambda >= 0.0) || !isfinite(df1)
        || !isfinite(df2) || !isfinite(lambda))
        return PW_EDOM;
    double y, yc;                       /* y = 0 and y = 1 are settled by ncbeta_tails at once */
    if (f <= 0.0) {
        y = 0.0;
        yc = 1.0;
    } else if (isinf(f)) {
        y = 1.0;
        yc = 0.0;
    } else {
        /* F' = (X1 / df1) / (X2 / df2) maps to B = df1 F' / (df1 F' + df2), noncentral beta with
         * shapes df1 / 2, df2 / 2 (Johnson, Kotz & Balakrishnan 1995, ch. 30). Both y and 1 - y
         * are formed from their own numerators so neither loses digits. */
        double num = df1 * f;
        double den = num + df2;
        y = num / den;
        yc = df2 / den;
        if (!isfinite(den)) {           /* df1 f overflowed: the whole mass is below f */
            y = 1.0;
            yc = 0.0;
        }
    }
    return ncbeta_tails_opt(y, yc, 0.5 * df1, 0.5 * df2, lambda, lower, upper);
}
