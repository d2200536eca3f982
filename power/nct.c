/* Noncentral t distribution: both tails of the CDF by Guenther's series (Lenth 1989, AS 243).
 * See LICENSE. */
#include <float.h>
#include <math.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_math.h>
#include <gsl/gsl_sf_gamma.h>

#include "power/internal.h"

/* The series stops once the bound on the neglected terms falls below this share of the sum of the
 * absolute values of the terms taken: below double rounding, so truncation never shows beside
 * rounding error (AS 243 uses an absolute 1e-12, which is too coarse for 1e-12 tail values). */
#define NCT_SERIES_EPS 1e-17
/* Terms taken on each side of the Poisson mode before giving up. The Poisson weights have SD
 * sqrt(ncp^2 / 2); nine SDs reach 1e-18 of the mass, so 2e5 terms serve |ncp| up to about 3e4
 * (with the FAR_SDS shortcut below), far beyond any power computation. */
#define NCT_MAX_TERMS 200000
/* From this L = ncp^2 / 2 on, the p and q weights beyond FAR_SDS standard deviations of the mode
 * hold less than DBL_MIN (Bennett's inequality, as in power/ncbeta.c), so a tail whose incomplete
 * betas are negligible at that distance is settled without summing out to where the weights
 * underflow (more terms than NCT_MAX_TERMS once |ncp| passes about 5e3). */
#define FAR_MIN_L 1e6
#define FAR_SDS 40.0
/* With d < 0 the upper-tail terms alternate in sign. When the tail is below this share of the sum
 * of their absolute values, more than five digits have cancelled, so the tail is recomputed as
 * Owen's Q by quadrature of positive terms (power/owen.c), accurate relative to itself. Above it
 * the series keeps about nine digits (against mpmath: 1.3e-9 relative at worst, at df 1e6 where
 * the incomplete betas themselves carry ~1e-13), and costs a fifth of the quadrature; two-sided
 * power spends most of its calls on such wrong-sign tails. 1e-6 let df 1e6 reach 7e-9. */
#define NCT_CANCEL_SHARE 1e-5

/* A weight below the smallest normal double is taken as 0: multiplied by ratios above 1/2, the
 * smallest subnormal rounds back to itself, and the series would never see its tail vanish. */
static double flush(double w)
{
    return fabs(w) < DBL_MIN ? 0.0 : w;
}

/* Whether a tail's remaining terms, bounded in all by far (see FAR_MIN_L), are negligible beside
 * the absolute sum of its terms so far, or below anything a double can hold. */
static int far_negligible(double far, double scale)
{
    return far <= fmax(NCT_SERIES_EPS * scale, 4.0 * DBL_MIN);
}

/* Both tails for t >= 0 (any ncp). Guenther (1978), as in AS 243:
 *   P(T <= t) = Phi(-d) + 1/2 sum_j [p_j I_x(j + 1/2, nu/2) + q_j I_x(j + 1, nu/2)],
 *   P(T > t)  =           1/2 sum_j [p_j I_y(nu/2, j + 1/2) + q_j I_y(nu/2, j + 1)],
 * x = t^2 / (t^2 + nu), y = nu / (t^2 + nu), p_j = e^{-L} L^j / j!, q_j = d e^{-L} L^j / (sqrt 2
 * Gamma(j + 3/2)), L = d^2 / 2. The upper form follows from sum_j (p_j + q_j) / 2 = Phi(d). Summed
 * from the Poisson mode both ways (as Boost.Math and AS 310 do) so that large ncp converges. */
static int nct_nonneg(double t, double nu, double d, double *lower, double *upper)
{
    double tt = t * t;
    if (tt == 0.0) {             /* t = 0, or so small that x underflows: F(0) = Phi(-d) exactly */
        *lower = gsl_cdf_ugaussian_P(-d);
        *upper = gsl_cdf_ugaussian_Q(-d);
        return PW_OK;
    }
    if (isinf(t)) {
        *lower = 1.0;
        *upper = 0.0;
        return PW_OK;
    }
    double x, y;
    if (tt < nu) {
        x = tt / (tt + nu);
        y = nu / (tt + nu);
    } else {                     /* through r = nu / t^2, so that t^2 cannot overflow */
        double s = sqrt(nu) / t, r = s * s;
        x = 1.0 / (1.0 + r);
        y = r / (1.0 + r);
        if (y == 0.0) {          /* r underflowed: the upper tail is below about 1e-154 */
            *lower = 1.0;
            *upper = 0.0;
            return PW_OK;
        }
    }
    double b = 0.5 * nu;
    double lam = 0.5 * d * d;
    double k = floor(lam);
    double p0, q0;               /* weights at the mode */
    if (lam == 0.0) {
        p0 = 1.0;
        q0 = 0.0;
    } else {
        /* q_k = sign(d) e^{-L} L^{k + 1/2} / Gamma(k + 3/2), since d / sqrt 2 = sign(d) sqrt L. */
        p0 = exp(pw_log_dpois(k, lam));
        q0 = copysign(exp(pw_log_dpois(k + 0.5, lam)), d);
    }
    double ip0, icp0, iq0, icq0;
    int s = pw_beta_inc_pair(x, y, k + 0.5, b, &ip0, &icp0);
    if (s == PW_OK)
        s = pw_beta_inc_pair(x, y, k + 1.0, b, &iq0, &icq0);
    if (s != PW_OK)
        return s;
    double lx = x < 0.5 ? log(x) : log1p(-y);   /* x near 1: from the exact y */
    double gp0 = pw_log_beta_step(x, y, k + 0.5, b), gq0 = pw_log_beta_step(x, y, k + 1.0, b);

    /* For large L: I_x at the window's low end and its complement at the high end bound every
     * term of their tail inside the window (both weight sequences sum to at most 1 in absolute
     * value); outside it the weights are below DBL_MIN. 2 means no shortcut. */
    double far_lo = 2.0, far_up = 2.0;
    if (lam >= FAR_MIN_L) {
        double span = ceil(FAR_SDS * sqrt(lam)), i1, ic1, i2, ic2;
        if (pw_beta_inc_pair(x, y, k - span + 0.5, b, &i1, &ic1) == PW_OK
            && pw_beta_inc_pair(x, y, k - span + 1.0, b, &i2, &ic2) == PW_OK)
            far_lo = 2.0 * (fmax(i1, i2) + DBL_MIN);
        if (pw_beta_inc_pair(x, y, k + span + 0.5, b, &i1, &ic1) == PW_OK
            && pw_beta_inc_pair(x, y, k + span + 1.0, b, &i2, &ic2) == PW_OK)
            far_up = 2.0 * (fmax(ic1, ic2) + DBL_MIN);
    }

    /* Sums of absolute values, one per tail: each tail stops on its own relative bound, so a tiny
     * tail beside a large one keeps its relative accuracy (the terms can alternate when d < 0). */
    double lo_sum = 0.0, up_sum = 0.0, up_scale = 0.0;
    double lo_scale = 2.0 * gsl_cdf_ugaussian_P(-d);   /* the lower tail's Phi(-d), summed scale */
    /* Forward from the mode: I_x falls (subtract the step), its complement rises (add it). */
    double p = p0, q = q0, ip = ip0, icp = icp0, iq = iq0, icq = icq0, gp = gp0, gq = gq0;
    int converged = 0;
    for (long n = 0; n < NCT_MAX_TERMS; n++) {
        double j = k + (double)n;
        double tl = p * ip + q * iq, tu = p * icp + q * icq;
        lo_sum += tl;
        up_sum += tu;
        lo_scale += fabs(p * ip) + fabs(q * iq);
        up_scale += fabs(p * icp) + fabs(q * icq);
        double sp = exp(gp), sq = exp(gq);
        ip = fmax(ip - sp, 0.0);
        icp = fmin(icp + sp, 1.0);
        iq = fmax(iq - sq, 0.0);
        icq = fmin(icq + sq, 1.0);
        gp += lx + log(j + 0.5 + b) - log(j + 1.5);
        gq += lx + log(j + 1.0 + b) - log(j + 2.0);
        p = flush(p * lam / (j + 1.0));
        q = flush(q * lam / (j + 1.5));
        /* Past the mode the weight ratios are below r = L / (j + 2), so the neglected weights sum
         * to at most (p + |q|) / (1 - r); I_x only falls from here and its complement is <= 1. */
        double r = lam / (j + 2.0);
        if (r < 1.0) {
            double rest = (p + fabs(q)) / (1.0 - r);
            if (rest * fmax(ip, iq) <= NCT_SERIES_EPS * lo_scale
                && (rest <= NCT_SERIES_EPS * up_scale || far_negligible(far_up, up_scale))) {
                converged = 1;
                break;
            }
        }
    }
    if (!converged)
        return PW_ENOCONV;

    /* Backward from the mode: I_x rises (add the step below), its complement falls. */
    p = p0;
    q = q0;
    ip = ip0;
    icp = icp0;
    iq = iq0;
    icq = icq0;
    gp = gp0;
    gq = gq0;
    converged = k == 0.0;
    for (long n = 1; !converged && n <= NCT_MAX_TERMS; n++) {
        double j = k - (double)n;          /* the term now added */
        double a_p = j + 0.5, a_q = j + 1.0;
        /* step g(a) from g(a + 1): g(a) = g(a + 1) (a + 1) / (x (a + b)) */
        gp += log(a_p + 1.0) - lx - log(a_p + b);
        gq += log(a_q + 1.0) - lx - log(a_q + b);
        double sp = exp(gp), sq = exp(gq);
        ip = fmin(ip + sp, 1.0);
        icp = fmax(icp - sp, 0.0);
        iq = fmin(iq + sq, 1.0);
        icq = fmax(icq - sq, 0.0);
        p = flush(p * (j + 1.0) / lam);
        q = flush(q * (j + 1.5) / lam);
        lo_sum += p * ip + q * iq;
        up_sum += p * icp + q * icq;
        lo_scale += fabs(p * ip) + fabs(q * iq);
        up_scale += fabs(p * icp) + fabs(q * icq);
        if (j <= 0.0) {
            converged = 1;
            break;
        }
        /* Below the mode the ratios w_{j-1} / w_j are at most r = (j + 1/2) / L. */
        double r = (j + 0.5) / lam;
        if (r < 1.0) {
            double rest = (p + fabs(q)) * r / (1.0 - r);
            if ((rest <= NCT_SERIES_EPS * lo_scale || far_negligible(far_lo, lo_scale))
                && rest * fmax(icp, icq) <= NCT_SERIES_EPS * up_scale)
                converged = 1;
        }
    }
    if (!converged)
        return PW_ENOCONV;

    double lo = gsl_cdf_ugaussian_P(-d) + 0.5 * lo_sum;
    double up = 0.5 * up_sum;
    if (d < 0.0 && nu >= 1.0 && !(up_sum >= NCT_CANCEL_SHARE * up_scale)) {
        /* P(T > t) = E[Phi(d - t X / sqrt(nu))], X ~ chi_nu: Owen's Q_nu(-t, -d; 0, inf). */
        s = pw_owen_q(nu, -t, -d, INFINITY, &up);
        if (s != PW_OK)
            return s;
        /* The absolute weights sum to at most 1 + erf(|d| / sqrt 2) <= 2, so here up is below
         * about 1e-5: the lower tail is near 1, and as the complement of an upper tail accurate
         * to its last digits it is exact to rounding, while the cancelling series is not. */
        lo = 1.0 - up;
    }
    *lower = fmin(fmax(lo, 0.0), 1.0);
    *upper = fmin(fmax(up, 0.0), 1.0);
    return PW_OK;
}

int pw_nct_cdf(double t, double df, double ncp, double *lower, double *upper)
{
    if (isnan(t) || !(df > 0.0) || !isfinite(df) || !isfinite(ncp))
        return PW_EDOM;
    double lo, up;
    int s;
    /* F(t; nu, d) = 1 - F(-t; nu, -d): the reflection swaps the tails, so no subtraction. */
    if (t < 0.0)
        s = nct_nonneg(-t, df, -ncp, &up, &lo);
    else
        s = nct_nonneg(t, df, ncp, &lo, &up);
    if (s != PW_OK)
        return s;
    if (lower)
        *lower = lo;
    if (upper)
        *upper = up;
    return PW_OK;
}
