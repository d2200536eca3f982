/* The robust (HC3) test's size and the wild bootstrap power against the exact formula.
 * See LICENSE. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include <gsl/gsl_test.h>

#include "power/power.h"

#define SEED 20261205UL
#define ALPHA 0.05
/* Size: 2,000 campaigns of 60 runs from a heteroscedastic null (invented: x uniform on [0, 2],
 * noise SD x^2 + 0.1, a variance ratio of about 40 between the ends, no effect). With far more
 * extreme spread (x skewed on [0, 4], SD x^2 / 2) HC3's size at 60 runs is 0.068, just outside:
 * HC3 is not exact at small n. Monte Carlo SE of a rejection rate at alpha: sqrt(a (1 - a) / R)
 * = 0.0049; the robust test must sit within 3 SE of alpha (false alarm about 0.3% if HC3's size
 * is alpha) and the classic one outside (MacKinnon & White 1985, Long & Ervin 2000 find its size
 * far above alpha under this kind of variance). */
#define SIZE_CAMPAIGNS 2000
#define SIZE_RUNS 60
/* Resampling against the formula: Gaussian fixtures (invented: y = 0.4 x + 0.3 s + N(0, 1), x and
 * s uniform on [0, 2]), each resampled with B replicates, the mean over fixtures of resampled
 * minus formula power within 3 SE of that mean (SE from the fixtures' spread of the difference,
 * which includes each B's Monte Carlo error). */
#define GAUSS_FIXTURES 200
#define GAUSS_RUNS 60
#define GAUSS_B 400

static void heteroscedastic_null(gsl_rng *r, double *X, double *y, size_t n)
{
    for (size_t i = 0; i < n; i++) {
        double x = 2 * gsl_rng_uniform(r);
        X[i * 2] = 1;
        X[i * 2 + 1] = x;
        y[i] = 1 + gsl_ran_gaussian(r, x * x + 0.1);
    }
}

static void test_size(gsl_rng *r)
{
    size_t n = SIZE_RUNS;
    double X[SIZE_RUNS * 2], y[SIZE_RUNS];
    double c[2] = {0, 1};
    double tc = gsl_cdf_tdist_Qinv(ALPHA / 2, (double)n - 2);
    int rej_hc = 0, rej_cl = 0, done = 0;
    for (int k = 0; k < SIZE_CAMPAIGNS; k++) {
        heteroscedastic_null(r, X, y, n);
        pw_hcfit *f = NULL;
        if (pw_hc3_fit(X, y, n, 2, &f) != PW_OK) continue;
        double b = f->coef[1];
        rej_hc += fabs(b) / sqrt(pw_hc_contrast_var(f, c, 1)) > tc;
        rej_cl += fabs(b) / sqrt(pw_hc_contrast_var(f, c, 0)) > tc;
        done++;
        pw_hcfit_free(f);
    }
    double se = sqrt(ALPHA * (1 - ALPHA) / SIZE_CAMPAIGNS);
    double s_hc = (double)rej_hc / done, s_cl = (double)rej_cl / done;
    gsl_test_int(done, SIZE_CAMPAIGNS, "every heteroscedastic-null campaign was fitted");
    gsl_test(!(fabs(s_hc - ALPHA) <= 3 * se), "robust (HC3) test's size on a heteroscedastic null "
             "%.4f within 3 MC SE (%.4f) of alpha %.2f over %d campaigns of %zu runs", s_hc,
             3 * se, ALPHA, SIZE_CAMPAIGNS, n);
    gsl_test(!(fabs(s_cl - ALPHA) > 3 * se), "classic test's size on the same null %.4f is NOT "
             "within 3 MC SE of alpha (it is the problem the robust test fixes)", s_cl);
}

static void test_resampled_vs_formula(gsl_rng *r)
{
    size_t n = GAUSS_RUNS;
    double X[GAUSS_RUNS * 3], y[GAUSS_RUNS], c[3] = {0, 0, 1};
    const double effect = 0.5;
    for (int robust = 0; robust <= 1; robust++) {
        for (int tost = 0; tost <= 1; tost++) {
            double sum = 0, sum2 = 0, mean_formula = 0;
            int done = 0;
            for (int k = 0; k < GAUSS_FIXTURES; k++) {
                for (size_t i = 0; i < n; i++) {
                    double s = 2 * gsl_rng_uniform(r), x = 2 * gsl_rng_uniform(r);
                    X[i * 3] = 1;
                    X[i * 3 + 1] = s;
                    X[i * 3 + 2] = x;
                    y[i] = (tost ? 0 : 0.4 * x) + 0.3 * s + gsl_ran_gaussian(r, 1);
                }
                pw_hcfit *f = NULL;
                pw_wild *w = NULL;
                if (pw_hc3_fit(X, y, n, 3, &f) != PW_OK) continue;
                double v = pw_hc_contrast_var(f, c, robust);
                if (pw_wild_draw(f, X, c, robust, k % 2 ? PW_WILD_MAMMEN : PW_WILD_RADEMACHER,
                                 GAUSS_B, SEED + (unsigned long)k, &w) != PW_OK) {
                    pw_hcfit_free(f);
                    continue;
                }
                pw_wild_test t = {tost, 2, ALPHA};
                double pr = NAN, pf = NAN;
                pw_wild_power(w, &t, effect, (double)n, &pr, NULL);
                /* The exact formula for the same SE: sd_x_resid sqrt(n) = sigma_eff / SE. */
                pw_design d;
                memset(&d, 0, sizeof d);
                d.test = tost ? PW_TEST_TOST : PW_TEST_COEF_T;
                d.alpha = ALPHA;
                d.sides = 2;
                d.target = 0.8;
                d.effect = effect;
                d.sigma = 1.0;
                d.n = (double)n;
                d.n_params = 2;
                d.sd_x_resid = 1.0 / (sqrt(v) * sqrt((double)n));
                d.ncp_per_run = NAN;
                pw_power(&d, &pf);
                sum += pr - pf;
                sum2 += (pr - pf) * (pr - pf);
                mean_formula += pf;
                done++;
                pw_wild_free(w);
                pw_hcfit_free(f);
            }
            double m = sum / done, sd = sqrt(fmax(sum2 / done - m * m, 0));
            double se = sd / sqrt((double)done);
            gsl_test(!(done == GAUSS_FIXTURES && fabs(m) <= 3 * se + 1e-12),
                     "resampled %s power (%s test) reproduces the exact formula on Gaussian "
                     "fixtures: mean difference %+.4f, 3 SE %.4f, mean formula power %.3f, %d "
                     "fixtures x %d replicates", tost ? "equivalence" : "t",
                     robust ? "robust" : "classic", m, 3 * se, mean_formula / done, done, GAUSS_B);
        }
    }
}

/* Same seed, same figures; MDE and runs invert the power. */
static void test_reproducible(gsl_rng *r)
{
    size_t n = 80;
    double X[80 * 2], y[80], c[2] = {0, 1};
    heteroscedastic_null(r, X, y, n);
    pw_hcfit *f = NULL;
    pw_wild *w1 = NULL, *w2 = NULL;
    if (pw_hc3_fit(X, y, n, 2, &f) != PW_OK || pw_wild_draw(f, X, c, 1, 0, 400, 7, &w1) != PW_OK ||
        pw_wild_draw(f, X, c, 1, 0, 400, 7, &w2) != PW_OK) {
        gsl_test(1, "wild bootstrap fixture could be drawn");
        goto done;
    }
    pw_wild_test t = {0, 2, ALPHA};
    double p1, p2, se, mde, pm, runs, pr, pb;
    pw_wild_power(w1, &t, 1.0, (double)n, &p1, &se);
    pw_wild_power(w2, &t, 1.0, (double)n, &p2, NULL);
    gsl_test(p1 != p2, "the same seed gives the same resampled power (%.4f and %.4f)", p1, p2);
    gsl_test_abs(se, sqrt(p1 * (1 - p1) / 400), 1e-15, "MC SE is the binomial sqrt(p(1-p)/B)");
    pw_wild_mde(w1, &t, 0.8, (double)n, &mde);
    pw_wild_power(w1, &t, mde, (double)n, &pm, NULL);
    pw_wild_power(w1, &t, mde * 0.999, (double)n, &pb, NULL);
    gsl_test(!(pm >= 0.8 && pb < 0.8), "resampled MDE %.4g is the smallest effect reaching 0.8 "
             "(%.4f at it, %.4f just below)", mde, pm, pb);
    pw_wild_runs(w1, &t, 1.0, 0.8, &runs);
    pw_wild_power(w1, &t, 1.0, runs, &pr, NULL);
    pw_wild_power(w1, &t, 1.0, runs - 1, &pb, NULL);
    gsl_test(!(pr >= 0.8 && pb < 0.8), "resampled runs needed %.0f: %.4f there, %.4f with one "
             "fewer", runs, pr, pb);
done:
    pw_wild_free(w1);
    pw_wild_free(w2);
    pw_hcfit_free(f);
}

/* The replicates by their sums equal full refits: the test draws the same weights from the same
 * mt19937 stream as pw_wild_draw documents (Rademacher: bit j of the k-th 32-bit word signs run
 * 32 k + j; Mammen: one uniform per run), builds each replicate's outcome y* = fitted + e_i /
 * sqrt(1 - h_ii) v_i, refits it by Householder QR (pw_hc3_fit) and counts the replicates whose
 * test rejects at each of a sweep of effects. The counts must agree exactly (a tie within
 * rounding at a threshold is the only way they could differ; none in these fixtures). 45 runs, so
 * that the last word's bits are only partly used; an invented heteroscedastic fixture with an
 * adjustment column, so that every term of the HC3 sum matters. */
#define REFIT_RUNS 45
#define REFIT_B 150
static void test_replicates_refit(gsl_rng *r)
{
    size_t n = REFIT_RUNS, p = 3;
    double X[REFIT_RUNS * 3], y[REFIT_RUNS], ys[REFIT_RUNS], v[REFIT_RUNS], c[3] = {0, 1, 0};
    for (size_t i = 0; i < n; i++) {
        double x = 2 * gsl_rng_uniform(r), s = gsl_rng_uniform(r);
        X[i * 3] = 1;
        X[i * 3 + 1] = x;
        X[i * 3 + 2] = s;
        y[i] = 1 + 0.5 * x + s + gsl_ran_exponential(r, 0.2 + x * x) - (0.2 + x * x);
    }
    pw_hcfit *f = NULL;
    if (pw_hc3_fit(X, y, n, p, &f) != PW_OK) {
        gsl_test(1, "refit fixture could be fitted");
        return;
    }
    double s5 = sqrt(5.0);
    for (int k = 0; k < 4; k++) {
        int robust = k & 1, weights = k & 2 ? PW_WILD_MAMMEN : PW_WILD_RADEMACHER;
        unsigned long seed = 11 + (unsigned long)k;
        pw_wild *w = NULL;
        if (pw_wild_draw(f, X, c, robust, weights, REFIT_B, seed, &w) != PW_OK) {
            gsl_test(1, "wild replicates could be drawn");
            continue;
        }
        gsl_rng *g = gsl_rng_alloc(gsl_rng_mt19937);
        gsl_rng_set(g, seed);
        double err[REFIT_B], se[REFIT_B];
        int ok = 1;
        for (size_t b = 0; b < REFIT_B && ok; b++) {
            if (weights == PW_WILD_RADEMACHER) {
                for (size_t i = 0; i < n; i += 32) {
                    unsigned long bits = gsl_rng_get(g);
                    for (size_t j = 0; j < 32 && i + j < n; j++) v[i + j] = (bits >> j) & 1 ? 1 : -1;
                }
            } else {
                for (size_t i = 0; i < n; i++)
                    v[i] = gsl_rng_uniform(g) < (s5 + 1) / (2 * s5) ? -(s5 - 1) / 2 : (s5 + 1) / 2;
            }
            for (size_t i = 0; i < n; i++)
                ys[i] = y[i] - f->resid[i] + f->resid[i] / sqrt(1 - f->lev[i]) * v[i];
            pw_hcfit *fb = NULL;
            ok = pw_hc3_fit(X, ys, n, p, &fb) == PW_OK;
            if (ok) {
                err[b] = fb->coef[1] - f->coef[1];
                se[b] = sqrt(pw_hc_contrast_var(fb, c, robust));
            }
            pw_hcfit_free(fb);
        }
        gsl_rng_free(g);
        double tc = gsl_cdf_tdist_Qinv(ALPHA / 2, (double)(n - p));
        int worst = 0;
        double mean_se = 0;
        for (size_t b = 0; b < REFIT_B; b++) mean_se += se[b] / REFIT_B;
        for (int e = 0; e <= 20 && ok; e++) {
            double effect = mean_se * 0.25 * e, rate = NAN;
            pw_wild_test t = {0, 2, ALPHA};
            pw_wild_power(w, &t, effect, (double)n, &rate, NULL);
            int hits = 0;
            for (size_t b = 0; b < REFIT_B; b++) hits += fabs(effect + err[b]) / se[b] > tc;
            int diff = abs(hits - (int)lround(rate * REFIT_B));
            if (diff > worst) worst = diff;
        }
        gsl_test(!ok || worst != 0, "wild replicates (%s, %s test) reject exactly where full "
                 "refits of the same draws do, at 21 effects (largest difference %d of %d)",
                 weights == PW_WILD_MAMMEN ? "Mammen" : "Rademacher", robust ? "robust" : "classic",
                 worst, REFIT_B);
        pw_wild_free(w);
    }
    pw_hcfit_free(f);
}

/* The pairs replicates by weighted cross-products equal full refits of the runs drawn: the test
 * draws the same run indices from the same stream (one gsl_rng_uniform_int per run, as
 * pw_pairs_draw documents), copies the runs and refits them by Householder QR (pw_hc3_fit). A
 * resample whose refit is singular, holds a run of leverage 1 (within 1e-8: a treatment level
 * drawn once) or whose outcome is constant has SE 0 (never rejects). The
 * invented fixtures: a mostly-zero count (about 80% zeros) and a rare bool treatment (3 of 40
 * runs), so that some resamples lose the treatment's variation and take the QR route; and an
 * outcome at 1 in all but 2 runs, so that some resamples hold a constant outcome. */
#define PAIRS_RUNS 40
#define PAIRS_B 300
static void test_pairs_refit(gsl_rng *r)
{
    size_t n = PAIRS_RUNS, p = 3;
    double X[PAIRS_RUNS * 3], y[PAIRS_RUNS], Xb[PAIRS_RUNS * 3], yb[PAIRS_RUNS], c[3] = {0, 1, 0};
    for (size_t i = 0; i < n; i++) {
        double x = i % 13 == 5, s = gsl_rng_uniform(r);
        X[i * 3] = 1;
        X[i * 3 + 1] = x;
        X[i * 3 + 2] = s;
        y[i] = gsl_rng_uniform(r) < 0.15 + 0.3 * x ? 1 + gsl_ran_poisson(r, 2 + 3 * s) : 0;
    }
    for (int k = 0; k < 4; k++) {
        int robust = k & 1, nearly_constant = k >= 2;
        if (k == 2)   /* the second fixture: 1 in all runs but two */
            for (size_t i = 0; i < n; i++) y[i] = i % 20 == 7 ? 2.5 + X[i * 3 + 2] : 1;
        pw_hcfit *f = NULL;
        if (pw_hc3_fit(X, y, n, p, &f) != PW_OK) {
            gsl_test(1, "pairs fixture could be fitted");
            return;
        }
        double est = f->coef[1];
        pw_hcfit_free(f);
        unsigned long seed = 21 + (unsigned long)k;
        pw_wild *w = NULL;
        if (pw_pairs_draw(X, y, n, p, c, robust, PAIRS_B, seed, &w) != PW_OK) {
            gsl_test(1, "pairs replicates could be drawn");
            continue;
        }
        gsl_rng *g = gsl_rng_alloc(gsl_rng_mt19937);
        gsl_rng_set(g, seed);
        double err[PAIRS_B], se[PAIRS_B], mean_se = 0;
        int singular = 0, constants = 0;
        for (size_t b = 0; b < PAIRS_B; b++) {
            int constant = 1, lev1 = 0;
            for (size_t i = 0; i < n; i++) {
                size_t j = (size_t)gsl_rng_uniform_int(g, n);
                memcpy(Xb + i * p, X + j * p, p * sizeof *Xb);
                yb[i] = y[j];
                constant &= yb[i] == yb[0];
            }
            constants += constant;
            pw_hcfit *fb = NULL;
            err[b] = se[b] = 0;
            if (pw_hc3_fit(Xb, yb, n, p, &fb) == PW_OK) {
                double v = pw_hc_contrast_var(fb, c, robust);
                for (size_t i = 0; i < n; i++) lev1 |= fb->lev[i] > 1 - 1e-8;
                err[b] = fb->coef[1] - est;
                se[b] = v > 0 && !constant && !lev1 ? sqrt(v) : 0;
            } else {
                singular++;
            }
            pw_hcfit_free(fb);
            mean_se += se[b] / PAIRS_B;
        }
        gsl_rng_free(g);
        double tc = gsl_cdf_tdist_Qinv(ALPHA / 2, (double)(n - p));
        int worst = 0;
        for (int e = 0; e <= 20; e++) {
            double effect = mean_se * 0.25 * e, rate = NAN;
            pw_wild_test t = {0, 2, ALPHA};
            pw_wild_power(w, &t, effect, (double)n, &rate, NULL);
            int hits = 0;
            for (size_t b = 0; b < PAIRS_B; b++)
                hits += se[b] > 0 && fabs(effect + err[b]) / se[b] > tc;
            int diff = abs(hits - (int)lround(rate * PAIRS_B));
            if (diff > worst) worst = diff;
        }
        /* Each fixture must reach the route it is there for. */
        int reached = nearly_constant ? constants > 0 : singular > 0;
        gsl_test(worst != 0 || !reached, "pairs replicates (%s, %s test) reject exactly where "
                 "full refits of the same draws do, at 21 effects (largest difference %d of %d; "
                 "%d singular resamples, %d with a constant outcome)",
                 nearly_constant ? "outcome 1 in all but 2 runs" : "mostly-zero count",
                 robust ? "robust" : "classic", worst, PAIRS_B, singular, constants);
        pw_wild_free(w);
    }
}

int main(void)
{
    gsl_set_error_handler_off();
    gsl_test_verbose(1);
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, SEED);
    test_size(r);
    test_resampled_vs_formula(r);
    test_reproducible(r);
    test_replicates_refit(r);
    test_pairs_refit(r);
    gsl_rng_free(r);
    return gsl_test_summary();
}
