/* Calibration of the ordered-level trend test: predicted power against the rejection rate of
 * simulated campaigns with a true straight-line effect. See LICENSE. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include <gsl/gsl_test.h>

#include "coverage/plan/plan.h"
#include "coverage/report/report.h"

/* Each scenario: 2,000 campaigns (SHOAL_SLOW=1: 20,000) of 120 runs from an invented simulator
 * whose level means lie on a straight line with the declared slope. The mean predicted trend power
 * must match the share of campaigns whose trend test rejects within 3 Monte Carlo SE of the
 * difference, sqrt((p (1 - p) + var(predicted)) / R): a false alarm rate of about 0.27% per
 * scenario when the power formula is right. The rejection is decided here, independently of
 * shoal: the linear contrast of the level means over its pooled-variance SE (Kirk 2013, sec. 6.4
 * [recalled]), two-sided at alpha = 0.05. */
#define CAMPAIGNS 2000
#define RUNS 120
#define SEED 20261205UL
#define ALPHA 0.05
#define L 5
#define SLOPE 0.016         /* per position unit: noncentrality about 2.5 with sigma 1 */

static const double positions[L] = {30, 40, 50, 60, 70};

typedef struct {
    const char *name;
    double share[L];        /* allocation of runs to levels */
    int skewed;             /* 1: centred gamma(2) noise; 0: normal */
    double var_lo, var_hi;  /* noise variance at the lowest and highest level (linear between) */
} scenario;

static const scenario scenarios[] = {
    /* Noise that grows with load, balanced design. */
    {"heteroscedastic noise (variance 0.5 to 1.5 with the level), balanced",
     {0.2, 0.2, 0.2, 0.2, 0.2}, 0, 0.5, 1.5},
    /* Skewed noise, uneven design. */
    {"skewed gamma(2) noise, uneven allocation 30/25/20/15/10%", {0.3, 0.25, 0.2, 0.15, 0.1}, 1,
     1.0, 1.0},
};

static int trend_rejects(const double *lvl, const double *y, size_t n)
{
    double sum[L] = {0}, cnt[L] = {0}, ss = 0, mean = 0;
    for (size_t i = 0; i < n; i++) {
        sum[(int)lvl[i]] += y[i];
        cnt[(int)lvl[i]] += 1;
    }
    for (int l = 0; l < L; l++) mean += positions[l] / L;
    for (size_t i = 0; i < n; i++) {
        int l = (int)lvl[i];
        ss += pow(y[i] - sum[l] / cnt[l], 2);
    }
    double df = (double)n - L, s2 = ss / df, psi = 0, v = 0;
    for (int l = 0; l < L; l++) {
        double c = positions[l] - mean;
        psi += c * sum[l] / cnt[l];
        v += c * c / cnt[l];
    }
    return fabs(psi / sqrt(s2 * v)) > gsl_cdf_tdist_Qinv(ALPHA / 2, df);
}

int main(void)
{
    gsl_set_error_handler_off();
    gsl_test_verbose(1);
    const char *slow = getenv("SHOAL_SLOW");
    int R = slow && strcmp(slow, "1") == 0 ? 10 * CAMPAIGNS : CAMPAIGNS;
    static char *lv[L] = {"l30", "l40", "l50", "l60", "l70"};
    double pos[L];
    memcpy(pos, positions, sizeof pos);
    cov_var vars[2];
    memset(vars, 0, sizeof vars);
    vars[0] = (cov_var){.name = "limit", .role = COV_INPUT, .type = COV_LEVELS, .lo = 0, .hi = L - 1,
                        .levels = lv, .n_levels = L, .noise_sd = NAN, .held_value = NAN,
                        .ordered = 1, .positions = pos};
    vars[1] = (cov_var){.name = "delay", .role = COV_OUTPUT, .type = COV_REAL, .lo = NAN,
                        .hi = NAN, .noise_sd = NAN, .held_value = NAN};
    cov_graph g = {.path = "invented-trend.graph", .vars = vars, .n_vars = 2,
                   .default_effect = {NAN, COV_UNIT_RAW, COV_PER_UNIT, NAN},
                   .margin = {NAN, COV_UNIT_RAW, COV_PER_UNIT, NAN}};
    cov_claim claim = {.kind = COV_CLAIM_EFFECT, .treatment = 0, .outcome = 1,
                       .effect = {SLOPE, COV_UNIT_RAW, COV_PER_UNIT, NAN},
                       .status = COV_TESTABLE, .shape = COV_SHAPE_MONOTONE};
    cov_claims cl = {&claim, 1};
    double col_l[RUNS], col_y[RUNS];
    double *cols[2] = {col_l, col_y};
    size_t miss[2] = {0, 0};
    cov_data d = {.n_runs = RUNS, .n_vars = 2, .col = cols, .n_missing = miss};
    /* The trend test simulated here uses classic (OLS) standard errors. */
    cov_power_options opt = {ALPHA, 0.80, 0, 0, COV_TEST_CLASSIC, COV_POWER_BY_FORMULA, 0, 0, 1};
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, SEED);
    for (size_t s = 0; s < sizeof scenarios / sizeof scenarios[0]; s++) {
        const scenario *sc = &scenarios[s];
        double hits = 0, pred = 0, pred2 = 0;
        int bad = 0, trend_kind = 1;
        for (int rep = 0; rep < R && !bad; rep++) {
            /* Fixed allocation: run i goes to the level its share quantile falls in. */
            for (size_t i = 0; i < RUNS; i++) {
                double u = ((double)i + 0.5) / RUNS, acc = 0;
                int l = 0;
                for (; l < L - 1; l++) {
                    acc += sc->share[l];
                    if (u < acc) break;
                }
                double var = sc->var_lo + (sc->var_hi - sc->var_lo) * l / (L - 1.0);
                /* gamma(2, 1) has mean 2 and variance 2: centred and scaled to variance var. */
                double e = sc->skewed ? (gsl_ran_gamma(r, 2.0, 1.0) - 2.0) / sqrt(2.0)
                                      : gsl_ran_gaussian(r, 1.0);
                col_l[i] = l;
                col_y[i] = 10 + SLOPE * positions[l] + sqrt(var) * e;
            }
            cov_assessments *as = NULL;
            cov_error err;
            if (cov_assess(&g, &cl, &d, &opt, &as, &err) != COV_OK) {
                gsl_test(1, "trend calibration: cov_assess failed: %s", err.msg);
                bad = 1;
                break;
            }
            const cov_assessment *a = &as->items[0];
            trend_kind &= a->trend == 1 && a->design.test == PW_TEST_TREND_T;
            hits += trend_rejects(col_l, col_y, RUNS);
            pred += a->power;
            pred2 += a->power * a->power;
            cov_assessments_free(as);
        }
        if (bad) continue;
        double rate = hits / R, mean = pred / R, var_pred = pred2 / R - mean * mean;
        double se = sqrt((rate * (1 - rate) + (var_pred > 0 ? var_pred : 0)) / R);
        gsl_test(!trend_kind, "trend calibration, %s: every campaign tested by the trend t test",
                 sc->name);
        gsl_test(!(fabs(rate - mean) <= 3 * se),
                 "trend calibration, %s: mean predicted trend power %.4f vs rejection rate %.4f "
                 "over %d simulated campaigns of %d runs (tolerance 3 MC SE = %.4f)", sc->name,
                 mean, rate, R, RUNS, 3 * se);
        gsl_test(!(mean > 0.3 && mean < 0.95), "trend calibration, %s: power %.3f lies where the "
                 "check can tell (0.3 to 0.95)", sc->name, mean);
    }
    gsl_rng_free(r);
    return gsl_test_summary();
}
