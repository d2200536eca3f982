/* Noncentral t, F, chi-squared, their quantiles, Owen's Q and TOST power: identities and tables.
 * See LICENSE. */
#include <math.h>
#include <stdio.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_math.h>
#include <gsl/gsl_test.h>

#include "power/power.h"

/* P + Q = 1: both tails are sums of the same weights with rounding of a few ulps each; GSL's
 * incomplete beta at shapes near 1e6 holds ~1e-14, so 1e-14 is the bar (the figure). */
#define SUM_TOL 1e-14
/* Against the 40-digit mpmath references of tests/REFERENCES.md 3a/3b: the series sum a few hundred
 * terms, each good to ~1e-16; 1e-13 absolute leaves room and is 4 orders inside the 1e-9 target. */
#define REF_TOL 1e-13
/* Powers tabled to 10 digits (tests/REFERENCES.md 1a, 2a, 2b): half a unit in the 10th digit. */
#define POWER10_TOL 1e-9
/* Central special cases: the same incomplete beta/gamma reached by two routes; GSL's own CDFs are
 * good to ~1e-15 relative, the series adds a few ulps. */
#define CENTRAL_REL_TOL 1e-13
/* Two routes to one number (nct vs ncf, Owen's Q vs nct, band vs Q difference): each ~1e-14. */
#define ROUTE_TOL 1e-12
/* TOST table values trusted to 9 digits (tests/REFERENCES.md 5), the 7-digit sample-size steps to 7. */
#define TOST9_TOL 1e-9
#define TOST7_TOL 1e-7

static double t_power2(double df, double ncp, double alpha)
{
    /* Two-sided t power, both rejection tails (as R pwr and statsmodels: tests/REFERENCES.md 1). */
    double tc = gsl_cdf_tdist_Qinv(alpha / 2.0, df), up = NAN, lo = NAN;
    int s = pw_nct_cdf(tc, df, ncp, NULL, &up);
    s |= pw_nct_cdf(-tc, df, ncp, &lo, NULL);
    return s == PW_OK ? up + lo : NAN;
}

static void identities(void)
{
    /* P + Q = 1 over a grid of all three families, worst case reported. */
    static const double dfs[] = {1, 2, 5, 30, 1e3, 1e6};
    static const double ncps[] = {0, 0.5, 3, 10, 40};
    static const double xs[] = {-50, -3, -0.5, 0, 0.7, 2, 8, 100, 1e6};
    double worst[3] = {0, 0, 0};
    int bad = 0;
    for (size_t i = 0; i < sizeof dfs / sizeof dfs[0]; i++)
        for (size_t j = 0; j < sizeof ncps / sizeof ncps[0]; j++)
            for (size_t k = 0; k < sizeof xs / sizeof xs[0]; k++) {
                double lo, up, df = dfs[i], nc = ncps[j], x = xs[k];
                for (int sgn = -1; sgn <= 1; sgn += 2) {
                    bad |= pw_nct_cdf(x, df, sgn * nc, &lo, &up);
                    worst[0] = fmax(worst[0], fabs(lo + up - 1.0));
                }
                bad |= pw_ncf_cdf(fabs(x), 1 + (double)j, df, nc, &lo, &up);
                worst[1] = fmax(worst[1], fabs(lo + up - 1.0));
                bad |= pw_ncchisq_cdf(fabs(x) * df, df, nc, &lo, &up);
                worst[2] = fmax(worst[2], fabs(lo + up - 1.0));
            }
    gsl_test_int(bad, PW_OK, "grid of df 1..1e6, ncp 0..40 (+-), x -50..1e6: every call PW_OK");
    gsl_test(!(worst[0] <= SUM_TOL), "nct P + Q = 1 to %g over the grid (worst %.2g)", SUM_TOL,
             worst[0]);
    gsl_test(!(worst[1] <= SUM_TOL), "ncf P + Q = 1 to %g over the grid (worst %.2g)", SUM_TOL,
             worst[1]);
    gsl_test(!(worst[2] <= SUM_TOL), "ncx2 P + Q = 1 to %g over the grid (worst %.2g)", SUM_TOL,
             worst[2]);

    /* F(0; nu, d) = Phi(-d) exactly (Guenther's series at t = 0; tests/REFERENCES.md 3). The tiny
     * t = +-1e-150 runs the full series and the reflection with x ~ 1e-300. */
    static const double d0[] = {-5, -1, 0, 0.5, 3, 12, 40};
    for (size_t j = 0; j < sizeof d0 / sizeof d0[0]; j++) {
        double lo, up, lo2, up2;
        pw_nct_cdf(1e-150, 10.0, d0[j], &lo, &up);
        pw_nct_cdf(-1e-150, 3.0, d0[j], &lo2, &up2);
        gsl_test_rel(lo, gsl_cdf_ugaussian_P(-d0[j]), 1e-14, "nct F(+0; 10, %g) = Phi(-d)", d0[j]);
        gsl_test_rel(up, gsl_cdf_ugaussian_Q(-d0[j]), 1e-14, "nct Q(+0; 10, %g) = Phi(d)", d0[j]);
        /* t < 0 reflects to ncp -d, where the series' terms alternate and up to five digits may
         * cancel before Owen's Q takes over (NCT_CANCEL_SHARE): 1e-9 relative. */
        gsl_test_rel(lo2, gsl_cdf_ugaussian_P(-d0[j]), 1e-9, "nct F(-0; 3, %g) = Phi(-d)", d0[j]);
    }

    /* ncp = 0 / lambda = 0 reduce to GSL's central t, F and chi-squared. The continued fraction
     * for the incomplete beta near its switch point loses up to about (a + b) ulps (measured
     * against mpmath: 2.5e-11 relative at df 1e6), hence the df term in the tolerance. */
    static const double cx[] = {0.001, 0.3, 1.0, 2.5, 7.0, 40.0};
    static const double cdf_[] = {1, 3, 17, 200, 1e5};
    for (size_t i = 0; i < sizeof cdf_ / sizeof cdf_[0]; i++)
        for (size_t k = 0; k < sizeof cx / sizeof cx[0]; k++) {
            double df = cdf_[i], x = cx[k], lo, up, tol = CENTRAL_REL_TOL + 1e-16 * df;
            /* GSL 2.7.1's gsl_cdf_tdist_Q(40, 200) = 1.1243695256e-97 is off by 2.7e-7 relative;
             * mpmath (40 digits, regularized incomplete beta) gives the value used here
             * (tests/REFERENCES.md 11). */
            int gsl_off = x == 40.0 && df == 200;
            double tq = gsl_off ? 1.1243698267601253e-97 : gsl_cdf_tdist_Q(x, df);
            pw_nct_cdf(-x, df, 0.0, &lo, &up);
            gsl_test_rel(lo, tq, tol, "nct(ncp 0) P = %s at t=%g df=%g",
                         gsl_off ? "mpmath" : "GSL tdist_P", -x, df);
            pw_nct_cdf(x, df, 0.0, &lo, &up);
            gsl_test_rel(up, tq, tol, "nct(ncp 0) Q = %s at t=%g df=%g",
                         gsl_off ? "mpmath" : "GSL tdist_Q", x, df);
            pw_ncf_cdf(x, 4.0, df, 0.0, &lo, &up);
            gsl_test_rel(lo, gsl_cdf_fdist_P(x, 4.0, df), tol, "ncf(lambda 0) P = GSL fdist_P at "
                         "f=%g (4, %g)", x, df);
            gsl_test_rel(up, gsl_cdf_fdist_Q(x, 4.0, df), tol, "ncf(lambda 0) Q = GSL fdist_Q at "
                         "f=%g (4, %g)", x, df);
            pw_ncchisq_cdf(x * df, df, 0.0, &lo, &up);
            gsl_test_rel(lo, gsl_cdf_chisq_P(x * df, df), tol, "ncx2(lambda 0) P = GSL chisq_P at "
                         "x=%g df=%g", x * df, df);
            gsl_test_rel(up, gsl_cdf_chisq_Q(x * df, df), tol, "ncx2(lambda 0) Q = GSL chisq_Q at "
                         "x=%g df=%g", x * df, df);
        }

    /* Two-sided t power = F(1, df) power with lambda = ncp^2 (tests/REFERENCES.md 2b): the t series
     * and the beta mixture are independent code. */
    static const double tdf[] = {2, 9, 96, 1e4};
    static const double tnc[] = {0.3, 1.5, 3.0, 7.0, 25.0};
    for (size_t i = 0; i < 4; i++)
        for (size_t j = 0; j < 5; j++) {
            double tc = gsl_cdf_tdist_Qinv(0.025, tdf[i]), fq = NAN;
            pw_ncf_cdf(tc * tc, 1.0, tdf[i], tnc[j] * tnc[j], NULL, &fq);
            gsl_test_abs(t_power2(tdf[i], tnc[j], 0.05), fq, ROUTE_TOL,
                         "two-sided t power = ncf(1, %g, %g^2) power", tdf[i], tnc[j]);
        }

    /* Owen's Q with R = infinity is the noncentral t CDF: Q_nu(t, d; 0, inf) = P(T <= t). */
    static const double ot[][3] = {{1.0, 10, 1.0}, {-2.0, 4, 1.5}, {3.0, 1, -2.0}, {5, 300, 4}};
    for (size_t i = 0; i < 4; i++) {
        double q = NAN, lo = NAN;
        pw_owen_q(ot[i][1], ot[i][0], ot[i][2], INFINITY, &q);
        pw_nct_cdf(ot[i][0], ot[i][1], ot[i][2], &lo, NULL);
        gsl_test_abs(q, lo, ROUTE_TOL, "Owen's Q(inf) = nct CDF at t=%g df=%g ncp=%g", ot[i][0],
                     ot[i][1], ot[i][2]);
    }

    /* Monotonicity: F rises with t and falls with ncp. */
    double prev = -1.0;
    int mono = 1;
    for (double t = -30.0; t <= 30.0; t += 0.25) {
        double lo;
        pw_nct_cdf(t, 7.0, 2.0, &lo, NULL);
        mono &= lo >= prev;
        prev = lo;
    }
    gsl_test(!mono, "nct CDF non-decreasing in t over -30..30 (df 7, ncp 2)");
    prev = 2.0;
    mono = 1;
    for (double d = -40.0; d <= 40.0; d += 0.5) {
        double lo;
        pw_nct_cdf(1.5, 12.0, d, &lo, NULL);
        mono &= lo <= prev;
        prev = lo;
    }
    gsl_test(!mono, "nct CDF non-increasing in ncp over -40..40 (t 1.5, df 12)");
}

static void reference_tables(void)
{
    /* tests/REFERENCES.md 3a: mpmath 40-digit values (two methods agreeing), P(T <= x). */
    static const double nt[][4] = {
        {1.0, 10, 1.0, 0.49024005139545066},      {2.0, 5, 1.0, 0.77807466261621487},
        {-1.0, 3, 2.0, 0.0030052475953985060},    {0.0, 1, 5.0, 2.8665157187919391e-7},
        {10.0, 2, 8.0, 0.52869038922040092},      {40.0, 5, 38.0, 0.47842505654158199},
        {50.0, 20, 45.0, 0.70274990002208773},    {40.0, 10, 37.0, 0.574401524162093},
        {3.0, 1, 1.0, 0.73010259861056336},       {1.5, 0.5, 0.5, 0.60533729219331782},
        {-3.0, 10, 2.0, 1.2230169286078767e-5},   {1.9844674, 98, 3.0, 0.15612497353853363},
        {4.30265273, 2, 0.978343, 0.910761935815206}};
    for (size_t i = 0; i < sizeof nt / sizeof nt[0]; i++) {
        double lo = NAN;
        int s = pw_nct_cdf(nt[i][0], nt[i][1], nt[i][2], &lo, NULL);
        gsl_test_int(s, PW_OK, "nct status at x=%g df=%g ncp=%g", nt[i][0], nt[i][1], nt[i][2]);
        gsl_test_abs(lo, nt[i][3], REF_TOL, "nct P(T <= %g; %g, %g) vs mpmath (tests/REFERENCES.md 3a)",
                     nt[i][0], nt[i][1], nt[i][2]);
    }
    double up = NAN;
    pw_nct_cdf(5.0, 30, 1.0, NULL, &up);
    gsl_test_rel(up, 3.8089357252780786e-4, 1e-12, "nct upper P(T > 5; 30, 1) vs mpmath "
                 "(tests/REFERENCES.md 3a), relative");

    /* tests/REFERENCES.md 3b: mpmath 40-digit values, P(F' <= x). */
    static const double ft[][5] = {
        {2.0, 3, 20, 5.0, 0.40313008503458855},     {1.0, 1, 10, 2.0, 0.32423930043787208},
        {2.3157, 5, 89, 10.5555555555556, 0.32608947775755128},
        {0.5, 2, 2, 1.0, 0.23884377019126308},      {10.0, 4, 6, 50.0, 0.26905501008056807},
        {100.0, 2, 10, 200.0, 0.44029786810698584}, {0.001, 1, 1, 1.0, 0.012210482462015027},
        {3.0, 1, 1000, 9.0, 0.10249929152372697},   {50.0, 10, 3, 100.0, 0.88212094456782521},
        {2.0, 1, 5, 0.5, 0.69085894709653994},      {20.0, 6, 33, 30.4, 0.99892110308787}};
    for (size_t i = 0; i < sizeof ft / sizeof ft[0]; i++) {
        double lo = NAN;
        pw_ncf_cdf(ft[i][0], ft[i][1], ft[i][2], ft[i][3], &lo, NULL);
        gsl_test_abs(lo, ft[i][4], REF_TOL, "ncf P(F' <= %g; %g, %g, %g) vs mpmath "
                     "(tests/REFERENCES.md 3b)", ft[i][0], ft[i][1], ft[i][2], ft[i][3]);
    }

    /* tests/REFERENCES.md 1a: two-sample t power at integer n per group (scipy nct = R pt, 10 digits);
     * Cohen (1988) tables via pwr. df = 2n - 2, ncp = d sqrt(n / 2). */
    static const double pt[][4] = {{0.2, 393, 0.05, 0.7995942412}, {0.5, 64, 0.05, 0.8014595579},
                                   {0.8, 26, 0.05, 0.8074866158}, {0.5, 95, 0.01, 0.7994688513},
                                   {0.8, 39, 0.01, 0.8104158219}};
    for (size_t i = 0; i < sizeof pt / sizeof pt[0]; i++) {
        double n = pt[i][1];
        gsl_test_abs(t_power2(2 * n - 2, pt[i][0] * sqrt(n / 2), pt[i][2]), pt[i][3],
                     POWER10_TOL, "two-sample t power d=%g n=%g/group alpha=%g (tests/REFERENCES.md 1a)",
                     pt[i][0], n, pt[i][2]);
    }
    /* One-sided: d = 0.5, n = 50 per group -> 0.7989361642. */
    {
        double tc = gsl_cdf_tdist_Qinv(0.05, 98), up1 = NAN;
        pw_nct_cdf(tc, 98, 0.5 * 5.0, NULL, &up1);
        gsl_test_abs(up1, 0.7989361642, POWER10_TOL, "one-sided t power d=.5 n=50/group "
                     "(tests/REFERENCES.md 1a)");
    }
    /* tests/REFERENCES.md 2b: coefficient t test, ncp 3, df 96 -> 0.8437274953; ncp 1.4907, df 17. */
    gsl_test_abs(t_power2(96, 3.0, 0.05), 0.8437274953, POWER10_TOL,
                 "coefficient t power ncp=3 df=96 (tests/REFERENCES.md 2b)");
    gsl_test_abs(t_power2(17, 1.4907119850, 0.05), 0.2905362545, POWER10_TOL,
                 "coefficient t power ncp=1.4907 df=17 (tests/REFERENCES.md 2b)");
    gsl_test_abs(t_power2(194, 2.8284271247, 0.01), 0.5903347237, POWER10_TOL,
                 "coefficient t power ncp=2.828 df=194 alpha .01 (tests/REFERENCES.md 2b)");
    /* tests/REFERENCES.md 2a: Cohen (1988) Ex. 9.1 via pwr.f2.test: u=5, v=89, f2=1/9, lambda=f2*95. */
    {
        double fc = gsl_cdf_fdist_Qinv(0.05, 5, 89), up2 = NAN;
        pw_ncf_cdf(fc, 5, 89, 95.0 / 9.0, NULL, &up2);
        gsl_test_abs(up2, 0.6735857708, POWER10_TOL, "F power u=5 v=89 f2=1/9 (Cohen 1988 "
                     "Ex. 9.1; tests/REFERENCES.md 2a)");
        pw_ncf_cdf(gsl_cdf_fdist_Qinv(0.01, 2, 37), 2, 37, 0.3 / 0.7 * 40, NULL, &up2);
        gsl_test_abs(up2, 0.8406123894, POWER10_TOL, "F power u=2 v=37 f2=.3/.7 alpha .01 (pwr "
                     "vignette; tests/REFERENCES.md 2a)");
    }
    /* tests/REFERENCES.md 3c: F_{.95}(5, 89) = 2.3168575165 from the quantile with lambda 0. */
    {
        double q = NAN;
        int s = pw_ncf_quantile(0.05, 1, 5, 89, 0.0, &q);
        gsl_test_int(s, PW_OK, "ncf quantile status");
        gsl_test_abs(q, 2.3168575165, 1e-9, "ncf upper 5%% quantile (5, 89, 0) = 2.3168575165 "
                     "(tests/REFERENCES.md 3c)");
        gsl_test_rel(q, gsl_cdf_fdist_Qinv(0.05, 5, 89), 1e-13, "ncf quantile (lambda 0) = GSL "
                     "fdist_Qinv");
    }
}

/* Large noncentrality (the flushed subnormal weights and the 40-SD window of the mixtures). */
static void large_noncentrality(void)
{
    double lo = NAN, up = NAN;
    int s = pw_ncchisq_cdf(1e8, 3, 1e8, &lo, &up);
    gsl_test_int(s, PW_OK, "ncx2 at lambda 1e8: status");
    /* scipy 1.10.1 ncx2.cdf(1e8, 3, 1e8) (Boost; tests/REFERENCES.md 11); 1e-9 is the accuracy target */
    gsl_test_abs(lo, 0.49996010577192784, 1e-9, "ncx2 P(X <= 1e8; 3, 1e8) vs scipy");
    s = pw_ncf_cdf(7e5, 3, 1e6, 2e6, &lo, &up);
    gsl_test_int(s, PW_OK, "ncf at lambda 2e6: status");
    /* scipy 1.10.1 ncf.sf(7e5, 3, 1e6, 2e6) (tests/REFERENCES.md 11); relative, the value being 5.6e-132 */
    gsl_test_rel(up, 5.6316016049133254e-132, 1e-8, "ncf far upper tail at lambda 2e6 vs scipy");
    s = pw_ncf_cdf(1.0, 3, 1e6, 2e6, &lo, &up);
    gsl_test(s != PW_OK || lo != 0.0 || fabs(up - 1.0) > 1e-12, "ncf lower tail at lambda 2e6, "
             "x far below: 0 and 1 (status %d)", s);
    s = pw_nct_cdf(2e4, 10, 2e4, &lo, &up);
    gsl_test_int(s, PW_OK, "nct at ncp 2e4: status");
    /* mpmath 40-digit quadrature over the chi density (tests/ref_dist.py's mp_nct), computed for
     * this check (tests/REFERENCES.md 11); scipy 1.10.1 gives 0.4404932651, 2.2e-8 off */
    gsl_test_abs(lo, 0.4404932872585544, 1e-9, "nct P(T <= 2e4; 10, 2e4) vs mpmath");
    /* Owen's Q with nu < 1 (QAGS through the singular density): mpmath 30-digit quadrature,
     * computed for this check (tests/REFERENCES.md 11). */
    double q = NAN;
    pw_owen_q(0.5, 2.0, 1.0, 3.0, &q);
    gsl_test_abs(q, 0.5196281676755334, 1e-10, "Owen's Q_0.5(2, 1; 0, 3) vs mpmath");
}

/* Quantiles invert their own CDF, both tails, including far ones. */
static void quantiles(void)
{
    static const double ps[] = {1e-10, 0.01, 0.5, 0.9};
    double worst = 0.0;
    int bad = 0;
    for (size_t i = 0; i < 4; i++)
        for (int upper = 0; upper <= 1; upper++) {
            double x, lo, up;
            bad |= pw_nct_quantile(ps[i], upper, 6.0, -2.5, &x);
            bad |= pw_nct_cdf(x, 6.0, -2.5, &lo, &up);
            worst = fmax(worst, fabs((upper ? up : lo) - ps[i]) / ps[i]);
            bad |= pw_ncf_quantile(ps[i], upper, 3.0, 40.0, 12.0, &x);
            bad |= pw_ncf_cdf(x, 3.0, 40.0, 12.0, &lo, &up);
            worst = fmax(worst, fabs((upper ? up : lo) - ps[i]) / ps[i]);
            bad |= pw_ncchisq_quantile(ps[i], upper, 4.0, 25.0, &x);
            bad |= pw_ncchisq_cdf(x, 4.0, 25.0, &lo, &up);
            worst = fmax(worst, fabs((upper ? up : lo) - ps[i]) / ps[i]);
        }
    gsl_test_int(bad, PW_OK, "quantiles and their CDFs return PW_OK");
    /* Brent stops at 4 ulps of x, where the CDF moves by < 1e-12 relative; but the t's wrong-sign
     * tail (ncp -2.5 here) is itself good to about 1e-10 relative (NCT_CANCEL_SHARE), so 1e-9. */
    gsl_test(!(worst <= 1e-9), "cdf(quantile(p)) = p to 1e-9 relative, p 1e-10..0.9, both tails "
             "(worst %.2g)", worst);
}

static void tost(void)
{
    /* tests/REFERENCES.md 5 (Phillips 1990 through Owen's Q; mpmath and scipy quad agree, Monte Carlo
     * confirms). 2x2 crossover: s_e = sqrt(ln(1 + CV^2)) sqrt(2 / n), margins ln .8, ln 1.25. */
    double lo = log(0.8), hi = log(1.25), th = log(0.95), pw = NAN;
    double se20 = sqrt(log(1.04)) * sqrt(2.0 / 20), se30 = sqrt(log(1.09)) * sqrt(2.0 / 40);
    int s = pw_tost_power(th, lo, hi, se20, 18, 0.05, &pw);
    gsl_test_int(s, PW_OK, "TOST status");
    gsl_test_abs(pw, 0.834680191, TOST9_TOL, "TOST 2x2 CV .20 n 20 (tests/REFERENCES.md 5)");
    pw_tost_power(th, lo, hi, se30, 38, 0.05, &pw);
    /* the table's last digit: a 30-digit mpmath quadrature gives 0.8158452802731 */
    gsl_test_abs(pw, 0.815845281, TOST9_TOL, "TOST 2x2 CV .30 n 40 (tests/REFERENCES.md 5)");
    pw_tost_power(0.0, -0.5, 0.5, 1.0 / sqrt(30.0), 29, 0.05, &pw);
    gsl_test_abs(pw, 0.696508614, TOST9_TOL, "TOST paired n 30 Delta .5 (tests/REFERENCES.md 5)");
    pw_tost_power(0.1, -0.5, 0.5, 0.2, 98, 0.05, &pw);
    gsl_test_abs(pw, 0.542517944, TOST9_TOL, "TOST two-sample 50/grp theta .1 (tests/REFERENCES.md 5)");
    pw_tost_power(0.0, -0.5, 0.5, sqrt(0.2), 18, 0.05, &pw);
    gsl_test_abs(pw, 0.000972503558, 1e-12, "TOST two-sample 10/grp: 0.000972503558 where the "
                 "approximations go negative (tests/REFERENCES.md 5)");
    gsl_test(!(pw > 0.0), "TOST small-n power is positive");
    pw_tost_power(0.0, -1.0, 1.0, sqrt(0.1), 38, 0.05, &pw);
    gsl_test_abs(pw, 0.855804947, TOST9_TOL, "TOST two-sample 20/grp Delta 1 (tests/REFERENCES.md 5)");
    pw_tost_power(0.5, -0.5, 0.5, 0.2, 98, 0.05, &pw);
    gsl_test_abs(pw, 0.0495503446, 1e-10, "TOST size at the margin, 50/grp (tests/REFERENCES.md 5)");
    /* Sample-size steps (7 digits): CV .20 n 16, 18; two-sample theta 0 Delta .5 n 69, 70. */
    pw_tost_power(th, lo, hi, sqrt(log(1.04)) * sqrt(2.0 / 16), 14, 0.05, &pw);
    gsl_test_abs(pw, 0.7354133, TOST7_TOL, "TOST 2x2 CV .20 n 16 (tests/REFERENCES.md 5)");
    pw_tost_power(th, lo, hi, sqrt(log(1.04)) * sqrt(2.0 / 18), 16, 0.05, &pw);
    gsl_test_abs(pw, 0.7912399, TOST7_TOL, "TOST 2x2 CV .20 n 18 (tests/REFERENCES.md 5)");
    pw_tost_power(0.0, -0.5, 0.5, sqrt(2.0 / 69), 136, 0.05, &pw);
    gsl_test_abs(pw, 0.7985118, TOST7_TOL, "TOST two-sample 69/grp (tests/REFERENCES.md 5)");
    pw_tost_power(0.0, -0.5, 0.5, sqrt(2.0 / 70), 138, 0.05, &pw);
    gsl_test_abs(pw, 0.8059312, TOST7_TOL, "TOST two-sample 70/grp (tests/REFERENCES.md 5)");

    /* The band integral equals the difference of two Owen's Q values (Phillips 1990, eq. as in
     * tests/REFERENCES.md 5), and the power is symmetric in theta for symmetric margins. */
    double tc = gsl_cdf_tdist_Qinv(0.05, 38), se = 0.25, d1 = (0.2 + 1.0) / se;
    double d2 = (0.2 - 1.0) / se, R = sqrt(38.0) * (d1 - d2) / (2 * tc), q1 = NAN, q2 = NAN;
    pw_owen_q(38, -tc, d2, R, &q1);
    pw_owen_q(38, tc, d1, R, &q2);
    pw_tost_power(0.2, -1.0, 1.0, se, 38, 0.05, &pw);
    gsl_test_abs(pw, q1 - q2, ROUTE_TOL, "TOST band = Q(-tc, d2; 0, R) - Q(tc, d1; 0, R)");
    double pw2 = NAN;
    pw_tost_power(-0.2, -1.0, 1.0, se, 38, 0.05, &pw2);
    gsl_test_abs(pw, pw2, ROUTE_TOL, "TOST power symmetric in theta");
    /* Large df: the chi density is a spike at sqrt(1e6); known-variance limit (normal formula,
     * tests/REFERENCES.md 5) Phi(D/se - z) + Phi(D/se - z) - 1 is approached to O(1/df). */
    pw_tost_power(0.0, -0.3, 0.3, 0.1, 1e6, 0.05, &pw);
    double z = gsl_cdf_ugaussian_Qinv(0.05), nrm = 2 * gsl_cdf_ugaussian_P(3.0 - z) - 1;
    gsl_test_abs(pw, nrm, 1e-5, "TOST at df 1e6 -> normal-theory power (O(1/df))");
}

static void statuses(void)
{
    double lo, up, x;
    gsl_test_int(pw_nct_cdf(NAN, 5, 1, &lo, &up), PW_EDOM, "nct NaN t -> PW_EDOM");
    gsl_test_int(pw_nct_cdf(1, 0, 1, &lo, &up), PW_EDOM, "nct df 0 -> PW_EDOM");
    gsl_test_int(pw_ncf_cdf(1, 1, 5, -1, &lo, &up), PW_EDOM, "ncf negative lambda -> PW_EDOM");
    gsl_test_int(pw_ncchisq_cdf(1, -2, 1, &lo, &up), PW_EDOM, "ncx2 negative df -> PW_EDOM");
    gsl_test_int(pw_ncbeta_cdf(0.5, 0, 1, 1, &lo, &up), PW_EDOM, "ncbeta a 0 -> PW_EDOM");
    gsl_test_int(pw_nct_quantile(1.0, 0, 5, 1, &x), PW_EDOM, "quantile p = 1 -> PW_EDOM");
    gsl_test_int(pw_tost_power(0, 1, -1, 1, 10, 0.05, &x), PW_EDOM, "TOST lo > hi -> PW_EDOM");
    /* No silent values: an upper 1e-310 quantile of t with 1 df lies beyond DBL_MAX. */
    gsl_test_int(pw_nct_quantile(1e-310, 1, 1.0, 0.0, &x), PW_ENOCONV,
                 "nct quantile beyond DBL_MAX -> PW_ENOCONV");
    /* lambda = 1e13 needs ~1e7 Poisson terms each side, over the series' cap. */
    gsl_test_int(pw_ncf_cdf(1.0, 2, 10, 1e13, &lo, &up), PW_ENOCONV,
                 "ncf lambda 1e13 past the term cap -> PW_ENOCONV");
    gsl_test(pw_strerror(PW_ENOCONV) == NULL, "pw_strerror has a phrase for PW_ENOCONV");
    /* ncbeta directly: x in [0, 1], lambda 0 is the central beta. */
    pw_ncbeta_cdf(0.3, 2.5, 4.0, 0.0, &lo, &up);
    gsl_test_rel(lo, gsl_cdf_beta_P(0.3, 2.5, 4.0), CENTRAL_REL_TOL, "ncbeta(lambda 0) = GSL "
                 "beta_P");
    gsl_test_rel(up, gsl_cdf_beta_Q(0.3, 2.5, 4.0), CENTRAL_REL_TOL, "ncbeta(lambda 0) upper = "
                 "GSL beta_Q");
}

int main(void)
{
    gsl_set_error_handler_off();
    gsl_test_verbose(1);
    identities();
    reference_tables();
    large_noncentrality();
    quantiles();
    tost();
    statuses();
    return gsl_test_summary();
}
