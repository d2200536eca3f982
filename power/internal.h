/* shoal power/: helpers shared by the distribution files of power/ only (nct.c, ncbeta.c,
 * ncchisq.c, mixture.c, owen.c); not part of the public header power.h. See LICENSE. */
#ifndef SHOAL_POWER_INTERNAL_H
#define SHOAL_POWER_INTERNAL_H

#include "power/power.h"

/* Terms shared by the mixture series (power/ncbeta.c): the log of the Poisson term
 * e^{-lambda} lambda^x / Gamma(x + 1) and of the binomial term
 * Gamma(n + 1) / (Gamma(k + 1) Gamma(n - k + 1)) p^k q^(n - k), for real x, k, n (q = 1 - p, both
 * given), by Loader's (2000) saddle-point forms, which keep full relative accuracy where
 * differences of lgamma lose digits. Return -INFINITY for a zero term. */
double pw_log_dpois(double x, double lambda);
double pw_log_dbinom(double k, double n, double p, double q);
/* In power/ncbeta.c: I_x(a, b) into *lo and its complement I_y(b, a) into *up,
 * with x + y = 1 both given, each accurate even when x or y is below 1e-14: the continued fraction
 * (Numerical Recipes' betacf, as in GSL) on whichever side converges, with Loader's prefactor.
 * PW_OK or PW_ENOCONV. */
int pw_beta_inc_pair(double x, double y, double a, double b, double *lo, double *up);
/* In power/ncbeta.c: log of x^a y^b / (a B(a, b)), the step of the recurrence
 * I_x(a + 1, b) = I_x(a, b) - step (Abramowitz & Stegun 26.5.16), by Loader's binomial term with
 * x and y = 1 - x both given; -INFINITY when x or y is 0. */
double pw_log_beta_step(double x, double y, double a, double b);
/* In power/mixture.c: the Poisson mixture sum_j Pois(j; L) T(j) of a central pair
 * T_lo(j) + T_up(j) = 1 that moves by a step, T_lo(j + 1) = T_lo(j) - s(j), where s is the
 * incomplete gamma's z^(a+j) e^-z / Gamma(a + j + 1) (log_x = log z) or the incomplete beta's
 * x^(a+j) y^b / ((a + j) B(a + j, b)) (log_x = log x); everything at the mode k = floor(L) is the
 * caller's, and far_lo, far_up bound T_lo(k - span) and T_up(k + span) (1 for no bound). */
enum pw_mix_family { PW_MIX_GAMMA, PW_MIX_BETA };
typedef struct pw_mixture {
    enum pw_mix_family family;
    double L;                    /* Poisson mean, >= 0 */
    double a, b;                 /* shape at j = 0 (a + j at term j); b for the beta only */
    double log_x;
    double lo_mode, up_mode;     /* T_lo(k), T_up(k) */
    double log_step_mode;        /* log s(k) */
    double far_lo, far_up;
} pw_mixture;
/* In power/mixture.c: sums both tails of m from the mode both ways into *lower
 * and *upper (each capped at 1) until the neglected weights fall below double rounding of each
 * sum; PW_OK, or PW_ENOCONV after 2e5 terms on a side. */
int pw_mixture_tails(const pw_mixture *m, double *lower, double *upper);
/* In power/mixture.c: the distance from the mode beyond which the Poisson(L)
 * weights are all below DBL_MIN, or 0 when L is too small for that shortcut. */
double pw_mixture_far_span(double L);

#endif
