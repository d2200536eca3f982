/* Seed blocks: the within transformation against explicit seed dummies, and the blocked test's
 * predicted power against simulated campaigns with common random numbers (tests/REFERENCES.md 13).
 * See LICENSE. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include <gsl/gsl_test.h>

#include "coverage/assess/assess.h"

/* Two backward-stable solvers of a problem whose scaled condition number is below 1e3 agree to
 * about 1e-13; 1e-9 leaves a wide margin. */
#define SOLVER_TOL 1e-9
#define SEED 20261205UL
/* Campaigns per scenario: at power 0.6 the Monte Carlo SE of a rejection rate is 0.015. */
#define CAMPAIGNS 1000

/* ---- Frisch-Waugh-Lovell: the within fit equals least squares with one dummy per seed -------- */

static void test_within_vs_dummies(gsl_rng *r)
{
    enum { G = 6, PER = 7, N = G * PER, K = 2, P = 1 + K + G - 1 };
    double rows[N][K + 1], X[N * P], y[N];
    int gr[N];
    pw_moments *raw = NULL, *within = NULL;
    pw_within *w = NULL;
    pw_moments_alloc(K + 1, &raw);
    pw_moments_alloc(K + 1, &within);
    pw_within_alloc(K + 1, G, &w);
    for (size_t i = 0; i < N; i++) {
        int g = (int)(i % G);
        double u = 5.0 * (g - 2.5);                         /* the seed's effect */
        double x1 = 1e3 + gsl_rng_uniform(r), x2 = gsl_rng_uniform(r) < 0.5;
        rows[i][0] = x1;
        rows[i][1] = x2;
        rows[i][2] = y[i] = 2 + 0.7 * x1 - 1.2 * x2 + u + gsl_ran_gamma(r, 2.0, 1.0);
        gr[i] = g;
        double *xr = X + i * P;
        xr[0] = 1;
        xr[1] = x1;
        xr[2] = x2;
        for (int b = 1; b < G; b++) xr[2 + b] = g == b;
        pw_moments_add(raw, rows[i]);
        pw_within_add_mean(w, (size_t)g, rows[i]);
    }
    for (size_t i = 0; i < N; i++) {
        double dm[K + 1];
        pw_within_demean(w, (size_t)gr[i], rows[i], dm);
        pw_moments_add(within, dm);
    }
    size_t idx[K + 1] = {0, 1, 2};
    pw_xfit *f = NULL;
    pw_ols *q = NULL;
    int rc1 = pw_within_fit(within, raw, idx, K, 1, G, &f);
    int rc2 = pw_ols_fit(X, y, N, P, &q);
    gsl_test_int(rc1 | rc2, PW_OK, "within fit and the QR fit with seed dummies both solve");
    if (rc1 == PW_OK && rc2 == PW_OK) {
        for (size_t j = 0; j < K; j++) {
            gsl_test_rel(f->coef[j], q->coef[1 + j], SOLVER_TOL,
                         "slope %zu: within transformation equals seed dummies (QR; FWL)", j);
            gsl_test_rel(f->se[j], q->se[1 + j], SOLVER_TOL,
                         "SE %zu: within transformation equals seed dummies (QR)", j);
        }
        gsl_test_rel(f->df, q->df, 0, "residual df n - G - rank = %g", q->df);
        gsl_test_rel(f->rss, q->rss, SOLVER_TOL, "residual sum of squares");
    }
    pw_xfit_free(f);
    pw_ols_free(q);
    pw_moments_free(raw);
    pw_moments_free(within);
    pw_within_free(w);
}

/* ---- calibration: predicted power of the blocked test against simulated CRN campaigns -------- */

/* An invented campaign: 8 configurations of x in [0, 1] with z alternating, each run with the
 * same 10 seeds (common random numbers), plus 4 runs on seeds of their own; y = beta x + 0.5 z +
 * seed effect + noise. The design is fixed; the seed effects and the noise are drawn afresh. */
enum { CONFIGS = 8, SHARED = 10, OWN = 4, NRUNS = CONFIGS * SHARED + OWN };

typedef struct {
    cov_graph g;
    cov_var vars[3];
    cov_claims cl;
    cov_claim item;
    size_t cond[1];
    cov_data d;
    double *cols[3];
    size_t miss[3];
    long long seed[NRUNS];
} campaign;

static void campaign_init(campaign *c, double effect)
{
    memset(c, 0, sizeof *c);
    c->g.path = "invented-crn.graph";
    c->g.vars = c->vars;
    c->g.n_vars = 3;
    c->g.default_effect.value = NAN;
    c->g.margin.value = NAN;
    const char *names[3] = {"x", "z", "y"};
    cov_role roles[3] = {COV_INPUT, COV_INPUT, COV_OUTPUT};
    cov_type types[3] = {COV_REAL, COV_BOOL, COV_REAL};
    for (size_t v = 0; v < 3; v++) {
        c->vars[v].name = (char *)names[v];
        c->vars[v].role = roles[v];
        c->vars[v].type = types[v];
        c->vars[v].lo = v == 2 ? NAN : 0;
        c->vars[v].hi = v == 2 ? NAN : 1;
        c->vars[v].noise_sd = NAN;
        c->cols[v] = calloc(NRUNS, sizeof(double));
    }
    c->item.kind = COV_CLAIM_EFFECT;
    c->item.treatment = 0;
    c->item.outcome = 2;
    c->cond[0] = 1;
    c->item.cond = c->cond;
    c->item.n_cond = 1;
    c->item.effect.value = effect;
    c->item.effect.unit = COV_UNIT_RAW;
    c->item.status = COV_TESTABLE;
    c->cl.items = &c->item;
    c->cl.n = 1;
    c->d.n_runs = NRUNS;
    c->d.n_vars = 3;
    c->d.col = c->cols;
    c->d.n_missing = c->miss;
    c->d.seed = c->seed;
    size_t i = 0;
    for (size_t k = 0; k < CONFIGS; k++)
        for (size_t s = 0; s < SHARED; s++, i++) {
            c->cols[0][i] = (double)k / (CONFIGS - 1);
            c->cols[1][i] = (double)(k % 2);
            c->seed[i] = 100 + (long long)s;
        }
    for (size_t k = 0; k < OWN; k++, i++) {
        c->cols[0][i] = (k + 0.5) / OWN;
        c->cols[1][i] = (double)((k + 1) % 2);
        c->seed[i] = 9000 + (long long)k;
    }
}

static void campaign_free(campaign *c)
{
    for (size_t v = 0; v < 3; v++) free(c->cols[v]);
}

typedef enum { NOISE_SKEWED, NOISE_HEAVY } noise_kind;

/* Noise of SD 1: a centred gamma(4) (skewness 1) or a t with 5 df scaled to SD 1. */
static double noise(gsl_rng *r, noise_kind k)
{
    if (k == NOISE_SKEWED) return (gsl_ran_gamma(r, 4.0, 0.5) - 2.0);
    return gsl_ran_tdist(r, 5.0) / sqrt(5.0 / 3.0);
}

/* A seed's effect with SD seed_sd: centred gamma(2) (skewed) or centred lognormal. */
static double seed_effect(gsl_rng *r, noise_kind k, double seed_sd)
{
    if (k == NOISE_SKEWED) return seed_sd * (gsl_ran_gamma(r, 2.0, 1.0) - 2.0) / sqrt(2.0);
    double s = 0.5, m = exp(s * s / 2), sd = sqrt((exp(s * s) - 1) * exp(s * s));
    return seed_sd * (gsl_ran_lognormal(r, 0.0, s) - m) / sd;
}

static void campaign_draw(campaign *c, gsl_rng *r, double beta, double seed_sd, noise_kind k)
{
    double u[SHARED];
    for (size_t s = 0; s < SHARED; s++) u[s] = seed_effect(r, k, seed_sd);
    for (size_t i = 0; i < NRUNS; i++) {
        double us = c->seed[i] < 9000 ? u[c->seed[i] - 100] : seed_effect(r, k, seed_sd);
        c->cols[2][i] = beta * c->cols[0][i] + 0.5 * c->cols[1][i] + us + noise(r, k);
    }
}

typedef struct {
    size_t used, rejected, n;
    double predicted, predicted_unblocked;   /* at the true noise SD */
    double mean_power, mean_power_unblocked;
} calib;

/* CAMPAIGNS campaigns at true slope beta (the claim's effect of interest is effect): how often
 * the blocks are used and the claim's own test rejects, against the power predicted from the
 * blocked design at the true noise SD 1 (and the unblocked one at the true total SD). */
static int run_scenario(gsl_rng *r, double beta, double effect, double seed_sd, noise_kind k,
                        calib *out)
{
    campaign c;
    campaign_init(&c, effect);
    cov_power_options opt = {.alpha = 0.05, .target = 0.80, .bonferroni = 1,
                             .test = COV_TEST_ROBUST, .power_by = COV_POWER_BY_AUTO};
    memset(out, 0, sizeof *out);
    out->predicted = out->predicted_unblocked = NAN;
    int rc = COV_OK;
    for (size_t t = 0; t < CAMPAIGNS && rc == COV_OK; t++) {
        campaign_draw(&c, r, beta, seed_sd, k);
        cov_assessments *as = NULL;
        cov_error err;
        rc = cov_assess(&c.g, &c.cl, &c.d, &opt, &as, &err);
        if (rc != COV_OK) break;
        const cov_assessment *a = &as->items[0];
        out->n++;
        if (a->seed_blocks_used) {
            out->used++;
            out->mean_power += a->power / CAMPAIGNS;
            out->mean_power_unblocked += a->power_unblocked / CAMPAIGNS;
            if (isnan(out->predicted)) {
                /* The design (n, sd(X | z, blocks), n_params) is the same in every campaign. */
                pw_design e = a->design;
                e.sigma = 1.0;
                e.effect = beta > 0 ? beta : effect;
                pw_power(&e, &out->predicted);
                /* Without blocks: sd(X | z) of this design and the total noise SD. */
                double sxx = 0, mx[2] = {0, 0}, nz[2] = {0, 0};
                for (size_t i = 0; i < NRUNS; i++) {
                    int z = c.cols[1][i] != 0;
                    mx[z] += c.cols[0][i];
                    nz[z]++;
                }
                for (size_t i = 0; i < NRUNS; i++) {
                    int z = c.cols[1][i] != 0;
                    sxx += pow(c.cols[0][i] - mx[z] / nz[z], 2);
                }
                e.sd_x_resid = sqrt(sxx / NRUNS);
                e.n_params = 2;
                e.sigma = sqrt(1.0 + seed_sd * seed_sd);
                pw_power(&e, &out->predicted_unblocked);
            }
        }
        /* The claim's own test at its level: |estimate / se| beyond the t critical value. */
        double tc = gsl_cdf_tdist_Qinv(a->alpha / 2, a->df);
        if (fabs(a->estimate / a->se) > tc) out->rejected++;
        cov_assessments_free(as);
    }
    campaign_free(&c);
    return rc;
}

static void test_calibration(gsl_rng *r)
{
    static const struct {
        const char *name;
        noise_kind k;
        double seed_sd;
    } sc[] = {{"skewed noise, skewed seed effects SD 3", NOISE_SKEWED, 3.0},
              {"heavy-tailed noise (t5), lognormal seed effects SD 2", NOISE_HEAVY, 2.0}};
    const double effect = 0.9;   /* outcome units per unit of x; noise SD 1 */
    for (size_t s = 0; s < sizeof sc / sizeof sc[0]; s++) {
        calib cb;
        int rc = run_scenario(r, effect, effect, sc[s].seed_sd, sc[s].k, &cb);
        gsl_test_int(rc, COV_OK, "%s: %d campaigns assessed", sc[s].name, CAMPAIGNS);
        if (rc != COV_OK) continue;
        /* A campaign whose 10 seed effects happen to lie close together may keep the unblocked
         * test; its rejection is then the unblocked test's, counted as it is. */
        gsl_test(!(cb.used >= CAMPAIGNS * 98 / 100), "%s: seed blocks used in %zu of %d "
                 "campaigns (at least 98%%)", sc[s].name, cb.used, CAMPAIGNS);
        double obs = (double)cb.rejected / (double)cb.n;
        double se = sqrt(cb.predicted * (1 - cb.predicted) / (double)cb.n);
        /* Monte Carlo, fixed seed: 3 SE, a false alarm about 0.3% of the time. */
        gsl_test(!(fabs(obs - cb.predicted) <= 3 * se), "%s: rejection rate of the blocked test "
                 "%.4f within 3 MC SE (%.4f) of its predicted power %.4f", sc[s].name, obs, se,
                 cb.predicted);
        gsl_test(!(cb.predicted > cb.predicted_unblocked + 0.2),
                 "%s: blocked power %.3f above the unblocked test's %.3f at the true SDs",
                 sc[s].name, cb.predicted, cb.predicted_unblocked);
        gsl_test(!(cb.mean_power > cb.mean_power_unblocked + 0.2),
                 "%s: the assessment's power with blocks (mean %.3f) above its power without "
                 "(mean %.3f)", sc[s].name, cb.mean_power, cb.mean_power_unblocked);
    }
    /* No effect: the blocked test's false alarms at its level. */
    calib cb;
    int rc = run_scenario(r, 0.0, effect, 3.0, NOISE_SKEWED, &cb);
    if (rc == COV_OK) {
        double obs = (double)cb.rejected / (double)cb.n, a = 0.05;
        double se = sqrt(a * (1 - a) / (double)cb.n);
        gsl_test(!(fabs(obs - a) <= 3 * se), "no effect: the blocked test rejects %.4f of "
                 "campaigns, within 3 MC SE (%.4f) of its level %.2f", obs, se, a);
    }
    /* No seed effect: the blocks must seldom be used (the F test alone fires at 5%). */
    rc = run_scenario(r, effect, effect, 0.0, NOISE_SKEWED, &cb);
    if (rc == COV_OK) {
        double used = (double)cb.used / (double)cb.n, se = sqrt(0.05 * 0.95 / (double)cb.n);
        gsl_test(!(used <= 0.05 + 3 * se), "no seed effect: seed blocks used in %.4f of "
                 "campaigns, at most the F test's level 0.05 + 3 MC SE", used);
    }
}

int main(void)
{
    gsl_set_error_handler_off();
    gsl_test_verbose(1);
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, SEED);
    test_within_vs_dummies(r);
    test_calibration(r);
    gsl_rng_free(r);
    return gsl_test_summary();
}
