/* The Poisson mixture series behind the noncentral beta, F and chi-squared: both tails summed from
 * the Poisson mode both ways. See LICENSE. */
#include <float.h>
#include <math.h>

#include "power/internal.h"

/* The series stops once the bound on the neglected terms falls below this share of the tail's
 * sum: below double rounding, so truncation never shows beside rounding error (AS R84 and R's
 * pnbeta use an absolute 1e-9, too coarse for the 1e-12 tail values a power search meets). */
#define MIX_SERIES_EPS 1e-17
/* Terms on each side of the Poisson mode before giving up. The weights have SD sqrt(L); nine SDs
 * reach 1e-18 of the mass, so 2e5 terms serve lambda = 2 L up to about 1e9. */
#define MIX_MAX_TERMS 200000
/* From this Poisson mean on, the weights beyond FAR_SDS standard deviations of the mode hold less
 * than DBL_MIN: with sqrt(L) >= 1000, Bennett's inequality gives
 * P(|J - L| >= 40 sqrt L) <= 2 exp(-800 / (1 + 40 / (3 sqrt L))) < 1e-340 (Boucheron, Lugosi &
 * Massart 2013, sec. 2.7). A tail whose central term is already negligible at that distance is
 * then settled without summing out to where the weights underflow, which for L near 1e8 would
 * take more terms than MIX_MAX_TERMS. */
#define FAR_MIN_L 1e6
#define FAR_SDS 40.0

/* A weight below the smallest normal double is taken as 0: multiplied by ratios above 1/2, the
 * smallest subnormal rounds back to itself, and the series would never see its tail vanish. */
static double flush(double w)
{
    return fabs(w) < DBL_MIN ? 0.0 : w;
}

/* Whether a tail's remaining terms, bounded in all by far (see FAR_MIN_L), are negligible beside
 * its sum so far, or below anything a double can hold. */
static int far_negligible(double far, double sum)
{
    return far <= fmax(MIX_SERIES_EPS * sum, 2.0 * DBL_MIN);
}

/* log s(j + 1) - log s(j): the step ratio z / (a + j + 1) of the incomplete gamma (Ding 1992,
 * AS 275) or x (a + j + b) / (a + j + 1) of the incomplete beta (A&S 26.5.16). */
static double log_ratio_up(const pw_mixture *m, double j)
{
    if (m->family == PW_MIX_BETA)
        return m->log_x + log(m->a + j + m->b) - log(m->a + j + 1.0);
    return m->log_x - log(m->a + j + 1.0);
}

/* log s(j) - log s(j + 1), formed directly rather than as the negative of log_ratio_up. */
static double log_ratio_down(const pw_mixture *m, double j)
{
    if (m->family == PW_MIX_BETA)
        return log(m->a + j + 1.0) - m->log_x - log(m->a + j + m->b);
    return log(m->a + j + 1.0) - m->log_x;
}

double pw_mixture_far_span(double L)
{
    return L >= FAR_MIN_L ? ceil(FAR_SDS * sqrt(L)) : 0.0;
}

/* Chattamvelli & Shanmugam (1997, AS 310) start at the Poisson mode and sum both ways; Frick
 * (1990, AS R84) gives the bound on the neglected weights. Unlike AS 275, which sums forward from
 * j = 0, large L needs no long run-up and the upper tail is summed directly, never as 1 - P. */
int pw_mixture_tails(const pw_mixture *m, double *lower, double *upper)
{
    double L = m->L;
    double k = floor(L);
    double w0 = exp(pw_log_dpois(k, L));
    double lo_sum = 0.0, up_sum = 0.0;
    double w = w0, t_lo = m->lo_mode, t_up = m->up_mode, g = m->log_step_mode;
    int converged = 0;
    for (long n = 0; n < MIX_MAX_TERMS; n++) {
        double j = k + (double)n;
        lo_sum += w * t_lo;
        up_sum += w * t_up;
        double step = exp(g);
        t_lo = fmax(t_lo - step, 0.0);
        t_up = fmin(t_up + step, 1.0);
        g += log_ratio_up(m, j);
        w = flush(w * L / (j + 1.0));
        /* Past the mode the weight ratios are below r = L / (j + 2): the neglected weights sum to
         * at most w / (1 - r); the lower tail only falls from here and the upper is at most 1. */
        double r = L / (j + 2.0);
        if (r < 1.0) {
            double rest = w / (1.0 - r);
            if (rest * t_lo <= MIX_SERIES_EPS * lo_sum
                && (rest <= MIX_SERIES_EPS * up_sum || far_negligible(m->far_up, up_sum))) {
                converged = 1;
                break;
            }
        }
    }
    if (!converged)
        return PW_ENOCONV;

    w = w0;
    t_lo = m->lo_mode;
    t_up = m->up_mode;
    g = m->log_step_mode;
    converged = k == 0.0;
    for (long n = 1; !converged && n <= MIX_MAX_TERMS; n++) {
        double j = k - (double)n;          /* the term now added */
        g += log_ratio_down(m, j);
        double step = exp(g);
        t_lo = fmin(t_lo + step, 1.0);
        t_up = fmax(t_up - step, 0.0);
        w = flush(w * (j + 1.0) / L);
        lo_sum += w * t_lo;
        up_sum += w * t_up;
        if (j <= 0.0) {
            converged = 1;
            break;
        }
        double r = j / L;                  /* below the mode, w_{j-1} / w_j = j / L */
        if (r < 1.0) {
            double rest = w * r / (1.0 - r);
            if ((rest <= MIX_SERIES_EPS * lo_sum || far_negligible(m->far_lo, lo_sum))
                && rest * t_up <= MIX_SERIES_EPS * up_sum)
                converged = 1;
        }
    }
    if (!converged)
        return PW_ENOCONV;
    *lower = fmin(lo_sum, 1.0);
    *upper = fmin(up_sum, 1.0);
    return PW_OK;
}
