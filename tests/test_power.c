/* Power, MDE and runs needed (power/sizing.c) against handbook tables and identities.
 * See LICENSE. */
#include <math.h>
#include <string.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_test.h>

#include "power/power.h"

/* Closed-form noncentral CDFs reproduce the tabled powers to ~1e-12 (tests/REFERENCES.md section 1:
 * "trust 10 digits"); 1e-9 leaves room for the series' truncation. */
#define POWER_TOL 1e-9
/* Real-valued n from a root search on power(n) to 1e-10 in n; tests/REFERENCES.md gives 7 digits. */
#define N_TOL 1e-6
/* MDE multipliers are tabled to 6 decimals (tests/REFERENCES.md section 4). */
#define M_TOL 1e-6
/* TOST exact powers are trusted to 9 digits (tests/REFERENCES.md section 5). */
#define TOST_TOL 1e-8

/* The two-sample t test as a coefficient t test: bool treatment with share n2/(n1+n2). */
static pw_design two_sample(double d, double n1, double n2, double alpha, int sides, double target)
{
    pw_design g;
    memset(&g, 0, sizeof g);
    g.test = PW_TEST_COEF_T;
    g.alpha = alpha;
    g.sides = sides;
    g.target = target;
    g.effect = d;
    g.sigma = 1.0;
    g.n = n1 + n2;
    g.sd_x_resid = sqrt(n1 * n2) / g.n;
    g.n_params = 1.0;
    g.ncp_per_run = NAN;
    return g;
}

/* Real n per group where the power of the equal-groups test reaches target (bisection). */
static double n_exact(double d, double alpha, int sides, double target)
{
    double lo = 2.0, hi = 1e6;
    for (int it = 0; it < 200 && hi - lo > 1e-11 * hi; it++) {
        double mid = 0.5 * (lo + hi), p = 0;
        pw_design g = two_sample(d, mid, mid, alpha, sides, target);
        if (pw_power(&g, &p) != PW_OK) return NAN;
        if (p >= target) hi = mid;
        else lo = mid;
    }
    return 0.5 * (lo + hi);
}

/* Cohen (1988), Statistical Power Analysis for the Behavioral Sciences, 2nd ed., Table 2.4.1 (n
 * per group, two-sample t) as reproduced in tests/REFERENCES.md section 1a [secondary]; exact real n
 * from R pwr 1.3-0 / statsmodels 0.13.5 / scipy (tests/REFERENCES.md, recomputed). Cohen rounds to the
 * nearest integer, so the rule is ceil(n_exact) - cohen in {0, 1} and |n_exact - cohen| < 0.5. */
static void test_cohen_tables(void)
{
    static const struct { double d, alpha; int sides; double power, exact; int cohen; } t[] = {
        {0.2, 0.05, 2, 0.80, 393.405695, 393}, {0.5, 0.05, 2, 0.80, 63.765610, 64},
        {0.8, 0.05, 2, 0.80, 25.524572, 26},   {0.2, 0.05, 1, 0.80, 309.806470, 310},
        {0.5, 0.05, 1, 0.80, 50.150783, 50},   {0.8, 0.05, 1, 0.80, 20.032758, 20},
        {0.2, 0.01, 2, 0.80, 585.609264, 586}, {0.5, 0.01, 2, 0.80, 95.103620, 95},
        {0.8, 0.01, 2, 0.80, 38.188313, 38},   {0.5, 0.05, 2, 0.90, 85.031284, 85},
    };
    for (size_t i = 0; i < sizeof t / sizeof t[0]; i++) {
        double n = n_exact(t[i].d, t[i].alpha, t[i].sides, t[i].power);
        gsl_test_rel(n, t[i].exact, N_TOL,
                     "exact n per group, d %g alpha %g %d-sided power %g (pwr/statsmodels, "
                     "tests/REFERENCES.md 1a)", t[i].d, t[i].alpha, t[i].sides, t[i].power);
        int up = (int)ceil(n) - t[i].cohen;
        gsl_test(!((up == 0 || up == 1) && fabs(n - t[i].cohen) < 0.5),
                 "Cohen (1988) Table 2.4.1: d %g alpha %g %d-sided power %g needs %d per group "
                 "(ours %.4f; ceil differs by 0 or 1)", t[i].d, t[i].alpha, t[i].sides,
                 t[i].power, t[i].cohen, n);
    }
    /* Power at integer n per group (tests/REFERENCES.md section 1a, scipy nct = R pt, 10 digits). */
    static const struct { double d, alpha; int sides, n; double power; } s[] = {
        {0.2, 0.05, 2, 393, 0.7995942412}, {0.2, 0.05, 2, 394, 0.8005931284},
        {0.5, 0.05, 2, 64, 0.8014595579},  {0.5, 0.01, 2, 95, 0.7994688513},
        {0.8, 0.01, 2, 39, 0.8104158219},  {0.5, 0.05, 1, 51, 0.8058985991},
        {0.8, 0.05, 1, 20, 0.7994081788},
    };
    for (size_t i = 0; i < sizeof s / sizeof s[0]; i++) {
        double p = NAN;
        pw_design g = two_sample(s[i].d, s[i].n, s[i].n, s[i].alpha, s[i].sides, 0.8);
        int rc = pw_power(&g, &p);
        gsl_test_abs(rc == PW_OK ? p : NAN, s[i].power, POWER_TOL,
                     "two-sample power d %g n %d/group alpha %g %d-sided (tests/REFERENCES.md 1a)",
                     s[i].d, s[i].n, s[i].alpha, s[i].sides);
    }
    /* Cohen (1988) Ex. 2.1 p. 40 as cited in pwr's help: d = 2/2.8, 30 per group. */
    double p = NAN;
    pw_design g = two_sample(2 / 2.8, 30, 30, 0.05, 2, 0.8);
    pw_power(&g, &p);
    gsl_test_abs(p, 0.776488877, 1e-8, "Cohen (1988) Ex. 2.1: d 2/2.8, 30/group, power");
}

/* Two proportions: Cohen's h tables (tests/REFERENCES.md section 6, closed form; Cohen 1992 Table 2
 * [recalled]). n per group for power .80, two-sided alpha .05. */
static void test_proportions(void)
{
    static const struct { double h, alpha; int sides; double exact; } t[] = {
        {0.2, 0.05, 2, 392.443025}, {0.5, 0.05, 2, 62.790884}, {0.8, 0.01, 2, 36.496775},
        {0.5, 0.05, 1, 49.460458},
    };
    for (size_t i = 0; i < sizeof t / sizeof t[0]; i++) {
        double lo = 1, hi = 1e6;
        while (hi - lo > 1e-10 * hi) {
            double mid = 0.5 * (lo + hi), p = 0;
            pw_prop_power_h(t[i].h, mid / 2, t[i].alpha, t[i].sides, &p);
            if (p >= 0.8) hi = mid;
            else lo = mid;
        }
        gsl_test_rel(0.5 * (lo + hi), t[i].exact, N_TOL,
                     "Cohen's h %g alpha %g %d-sided: n per group for power .80 (tests/REFERENCES.md 6)",
                     t[i].h, t[i].alpha, t[i].sides);
    }
    /* pw_power's two-proportion test reaches the same figure from p1, p2 and unequal groups:
     * p .65 vs .45, n1 60, n2 120 (tests/REFERENCES.md 6: 0.7259485189, pwr = statsmodels). */
    pw_design g;
    memset(&g, 0, sizeof g);
    g.test = PW_TEST_TWO_PROP;
    g.alpha = 0.05;
    g.sides = 2;
    g.target = 0.8;
    g.p_base = 0.55;
    g.effect = 0.2;
    g.n = 180;
    g.sd_x_resid = sqrt(60.0 * 120.0) / 180.0;
    double p = NAN;
    int rc = pw_power(&g, &p);
    gsl_test_abs(rc == PW_OK ? p : NAN, 0.7259485189, POWER_TOL,
                 "two proportions .45 vs .65, n 60/120 (pwr.2p2n.test, tests/REFERENCES.md 6)");
    double mde = NAN;
    rc = pw_mde(&g, &mde);
    pw_design e = g;
    e.effect = mde;
    pw_power(&e, &p);
    gsl_test_abs(rc == PW_OK ? p : NAN, 0.8, 1e-8, "two proportions: power at the MDE is the "
                 "target (identity)");
}

/* Bloom (1995) MDE multipliers: exact noncentral-t M = MDE / SE (tests/REFERENCES.md section 4). */
static void test_mde(void)
{
    static const struct { double df, exact, additive; } t[] = {
        {5, 3.513903, 3.490126}, {10, 3.109968, 3.107197}, {20, 2.945467, 2.945928},
        {30, 2.895358, 2.896040}, {120, 2.824253, 2.824557}, {1000, 2.804276, 2.804320},
    };
    for (size_t i = 0; i < sizeof t / sizeof t[0]; i++) {
        pw_design g;
        memset(&g, 0, sizeof g);
        g.test = PW_TEST_COEF_T;
        g.alpha = 0.05;
        g.sides = 2;
        g.target = 0.8;
        g.effect = 1;
        g.sigma = 1;
        g.sd_x_resid = 1;
        g.n_params = 1;
        g.n = t[i].df + 2;   /* df = n - n_params - 1 */
        double mde = NAN, se = 1 / sqrt(g.n);
        int rc = pw_mde(&g, &mde);
        gsl_test_abs(rc == PW_OK ? mde / se : NAN, t[i].exact, M_TOL,
                     "Bloom (1995) exact multiplier at df %g, alpha .05 two-sided, power .80 "
                     "(tests/REFERENCES.md 4)", t[i].df);
        /* Bloom's additive (t_{1-a/2} + t_{power}) SE is within 0.03 of the exact MDE. */
        double add = (gsl_cdf_tdist_Qinv(0.025, t[i].df) + gsl_cdf_tdist_Pinv(0.8, t[i].df));
        gsl_test_abs(add, t[i].additive, M_TOL, "additive multiplier at df %g (tests/REFERENCES.md 4)",
                     t[i].df);
        gsl_test(!(fabs(mde / se - add) < 0.03), "MDE within 0.03 SE of Bloom's additive "
                 "approximation at df %g", t[i].df);
        double p = NAN;
        g.effect = mde;
        pw_power(&g, &p);
        gsl_test_abs(p, 0.8, 1e-8, "power at the MDE equals the target at df %g", t[i].df);
    }
    /* Worked MDE: 64 vs 64, sigma 1 -> 0.499069 (tests/REFERENCES.md 4). */
    pw_design g = two_sample(1, 64, 64, 0.05, 2, 0.8);
    double mde = NAN;
    pw_mde(&g, &mde);
    gsl_test_abs(mde, 0.499069, 1e-6, "MDE of 64 vs 64 at sigma 1 (tests/REFERENCES.md 4)");
}

/* TOST exact power (tests/REFERENCES.md section 5: Owen's Q by scipy quad and 30-digit mpmath, each
 * checked by a 200,000-replicate Monte Carlo). A two-sample design of n per group: se =
 * sigma sqrt(2/n), df 2n - 2. */
static void test_tost(void)
{
    static const struct { double n_group, margin, power; } t[] = {
        {20, 1.0, 0.855804947}, {10, 0.5, 0.000972503558}, {70, 0.5, 0.8059312},
        {69, 0.5, 0.7985118},
    };
    for (size_t i = 0; i < sizeof t / sizeof t[0]; i++) {
        pw_design g = two_sample(t[i].margin, t[i].n_group, t[i].n_group, 0.05, 2, 0.8);
        g.test = PW_TEST_TOST;
        double p = NAN;
        int rc = pw_power(&g, &p);
        double tol = t[i].power < 0.01 ? 1e-11 : (t[i].n_group >= 69 ? 1e-7 : TOST_TOL);
        gsl_test_abs(rc == PW_OK ? p : NAN, t[i].power, tol,
                     "TOST power, %g per group, margin %g sigma, theta 0 (tests/REFERENCES.md 5)",
                     t[i].n_group, t[i].margin);
    }
    /* Runs needed: 70 per group is the smallest balanced design (tests/REFERENCES.md 5), so the total
     * lies in (138, 140] when the spread stays that of balanced groups. */
    pw_design g = two_sample(0.5, 50, 50, 0.05, 2, 0.8);
    g.test = PW_TEST_TOST;
    double runs = NAN;
    int rc = pw_runs_needed(&g, &runs);
    gsl_test(!(rc == PW_OK && runs > 138 && runs <= 140), "TOST runs needed for margin .5 sigma: "
             "%g in (138, 140] (tests/REFERENCES.md 5: 70 per group)", runs);
    double mde = NAN;
    rc = pw_mde(&g, &mde);
    pw_design e = g;
    e.effect = mde;
    double p = NAN;
    pw_power(&e, &p);
    gsl_test_abs(rc == PW_OK ? p : NAN, 0.8, 1e-8, "TOST: power at the smallest provable margin "
                 "equals the target (identity)");
}

/* Identities: power rises with n; runs needed is the first n at the target; the level-set F
 * with two levels equals the two-sided t (F = t^2); pwr.f2.test's lambda = f2 (u + v + 1). */
static void test_identities(void)
{
    for (int test = 0; test < 4; test++) {
        pw_design g = two_sample(0.3, 20, 20, 0.01, 2, 0.9);
        if (test == 1) {
            g.test = PW_TEST_LEVELS_F;
            g.n_levels = 4;
        } else if (test == 2) {
            g.test = PW_TEST_TWO_PROP;
            g.p_base = 0.3;
            g.effect = 0.1;
        } else if (test == 3) {
            g.test = PW_TEST_TOST;
        }
        double prev = -1;
        int rising = 1;
        for (double n = 10; n <= 5000; n *= 1.3) {
            g.n = floor(n);
            double p = NAN;
            /* Below 1e-6 the TOST power is not monotone at small df: a tiny variance estimate,
             * the only way to pass with few runs, gets rarer as df grows. */
            if (pw_power(&g, &p) != PW_OK || (p > 1e-6 && !(p >= prev - 1e-12))) rising = 0;
            prev = p;
        }
        gsl_test(!rising, "power rises with n from 10 to 5000 runs (test kind %d)", test);
        double runs = NAN, p_at = NAN, p_below = NAN;
        int rc = pw_runs_needed(&g, &runs);
        g.n = runs;
        pw_power(&g, &p_at);
        g.n = runs - 1;
        if (pw_power(&g, &p_below) == PW_EFEW) p_below = 0;
        gsl_test(!(rc == PW_OK && p_at >= 0.9 && p_below < 0.9),
                 "runs needed %g is the first n with power >= .9 (kind %d: %g, %g)", runs, test,
                 p_below, p_at);
    }
    pw_design t = two_sample(0.4, 30, 30, 0.05, 2, 0.8), f = t;
    f.test = PW_TEST_LEVELS_F;
    f.n_levels = 2;
    f.ncp_per_run = 0.25;   /* sd_x^2 of balanced groups */
    double pt = NAN, pf = NAN;
    pw_power(&t, &pt);
    pw_power(&f, &pf);
    gsl_test_abs(pf, pt, 1e-10, "level-set F with two levels equals the two-sided t (F = t^2)");
    /* Cohen (1988) Ex. 9.1: u 5, v 89, f2 = .1/.9, alpha .05 -> 0.6735857708 (tests/REFERENCES.md 2a). */
    double p = NAN;
    pw_f2_power(0.1 / 0.9, 5, 89, 0.05, &p);
    gsl_test_abs(p, 0.6735857708, POWER_TOL, "Cohen (1988) Ex. 9.1 through pwr.f2.test's lambda");
    /* Bad input is refused, not computed. */
    pw_design bad = two_sample(0.4, 30, 30, 1.5, 2, 0.8);
    gsl_test_int(pw_power(&bad, &p), PW_EDOM, "alpha outside (0, 1) is PW_EDOM");
    bad = two_sample(0.4, 1, 1, 0.05, 2, 0.8);
    gsl_test_int(pw_power(&bad, &p), PW_EFEW, "no residual df is PW_EFEW");
    /* At zero effect the two-sided t rejects at the level alpha. */
    pw_design z = two_sample(0.0, 30, 30, 0.05, 2, 0.8);
    pw_power(&z, &p);
    gsl_test_abs(p, 0.05, 1e-12, "power at zero effect equals alpha (size of the test)");
}

/* Central quantiles at large df, where GSL 2.7's inverses fail silently. Reference values from
 * scipy 1.10.1 (Debian python3-scipy: stats.chi2.isf / ppf, stats.f.isf), computed on this
 * machine (tests/REFERENCES.md 11); tolerance 1e-8 relative, the accuracy the root search is asked for. */
static void test_quantiles(void)
{
    static const struct { double p; int upper; double df, ref; } c[] = {
        {0.025, 1, 99998, 100876.4065403809},  {0.025, 0, 99998, 99123.38206593192},
        {0.025, 1, 1e6, 1002773.701467926},    {0.025, 0, 1e6, 997230.0871432901},
        {0.025, 1, 1000, 1089.5309127749135},  {0.025, 0, 10, 3.2469727802368413},
    };
    for (size_t i = 0; i < sizeof c / sizeof c[0]; i++) {
        double x = NAN;
        int rc = pw_chisq_quantile(c[i].p, c[i].upper, c[i].df, &x);
        gsl_test_rel(rc == PW_OK ? x : NAN, c[i].ref, 1e-8, "chi-squared %s quantile %g at df %g "
                     "(scipy 1.10.1)", c[i].upper ? "upper" : "lower", c[i].p, c[i].df);
    }
    static const struct { double alpha, df1, df2, ref; } f[] = {
        {0.025, 3, 1e5, 3.116264611898588}, {4.37e-5, 3, 1e6, 7.611916958507437},
        {1e-9, 3, 1e8, 14.94709508312119},  {0.025, 3, 10, 4.825621493405406},
    };
    for (size_t i = 0; i < sizeof f / sizeof f[0]; i++) {
        double x = NAN;
        int rc = pw_f_crit(f[i].alpha, f[i].df1, f[i].df2, &x);
        gsl_test_rel(rc == PW_OK ? x : NAN, f[i].ref, 1e-8, "F critical value alpha %g df %g, %g "
                     "(scipy 1.10.1)", f[i].alpha, f[i].df1, f[i].df2);
    }
}

int main(void)
{
    gsl_set_error_handler_off();
    gsl_test_verbose(1);
    test_cohen_tables();
    test_proportions();
    test_mde();
    test_tost();
    test_identities();
    test_quantiles();
    return gsl_test_summary();
}
