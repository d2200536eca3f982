/* Calibration: predicted power against the rejection rate over simulated campaigns.
 * See LICENSE. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_multifit.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include <gsl/gsl_test.h>

#include "coverage/plan/plan.h"
#include "coverage/report/report.h"

/* Campaigns simulated from an invented linear model whose true effects equal the effects of
 * interest (absence: true effect 0). For each claim kind the mean predicted power over the
 * campaigns must match the share of campaigns in which the test rejects, within 3 Monte Carlo
 * standard errors of the difference, sqrt((p (1 - p) + var(predicted)) / R): a false alarm rate
 * of about 0.27% per kind when the formulas are right. */
#define CAMPAIGNS 2000          /* SHOAL_SLOW=1: 20000 */
#define RUNS 120                /* runs per campaign; SHOAL_SLOW=1: 480 */
#define MAX_RUNS 480
/* With 20000 campaigns the tolerance (3 SE, about 0.01) is finer than the finite-sample error of
 * the normal approximation on the arcsine scale at 120 runs (it under-predicts the arcsine z
 * test's rejection rate by about 0.014 there, measured with this test); that error shrinks like
 * 1/n, so the slow variant uses 480 runs, with the effects scaled by sqrt(120/480) to keep the
 * powers where the check can tell. */
#define SEED 20261202UL
#define ALPHA 0.05
#define N_KINDS 5

enum { V_X, V_S, V_B, V_L, V_Z, V_Y1, V_Y2, V_Y3, V_Y4, V_Y5, N_VARS };

static const char *const kind_name[N_KINDS] = {
    "numeric treatment, coefficient t", "bool treatment, two-sample t", "level set, F test",
    "bool outcome, two proportions", "absence, TOST"};

/* True effects at 120 runs: chosen so that power sits near 0.5-0.8, where the rate is most
 * informative. */
static const double effect_120[N_KINDS] = {0.8, 0.45, 0.63, 0.22, 0.75};
static double effect[N_KINDS];
static size_t runs = RUNS;

typedef struct {
    cov_graph g;
    cov_var vars[N_VARS];
    cov_claim items[N_KINDS];
    size_t cond_s;
    cov_claims cl;
    cov_data d;
    double *col[N_VARS];
    size_t miss[N_VARS];
    char *levels[3];
} campaign;

static void campaign_init(campaign *c)
{
    static const char *const names[N_VARS] = {"x", "s", "b", "l", "z", "y1", "y2", "y3", "y4",
                                              "y5"};
    static char la[] = "a", lb[] = "b", lc[] = "c";
    memset(c, 0, sizeof *c);
    c->levels[0] = la;
    c->levels[1] = lb;
    c->levels[2] = lc;
    c->g.path = "invented-calibration.graph";
    c->g.vars = c->vars;
    c->g.n_vars = N_VARS;
    for (int v = 0; v < N_VARS; v++) {
        cov_var *x = &c->vars[v];
        x->name = (char *)names[v];
        x->role = v < V_Y1 ? COV_INPUT : COV_OUTPUT;
        x->type = COV_REAL;
        x->lo = 0;
        x->hi = 1;
        x->noise_sd = NAN;
        c->col[v] = malloc(MAX_RUNS * sizeof(double));
    }
    c->vars[V_B].type = c->vars[V_Y4].type = COV_BOOL;
    c->vars[V_L].type = COV_LEVELS;
    c->vars[V_L].levels = c->levels;
    c->vars[V_L].n_levels = 3;
    c->cond_s = V_S;
    size_t pairs[N_KINDS][2] = {{V_X, V_Y1}, {V_B, V_Y2}, {V_L, V_Y3}, {V_B, V_Y4}, {V_Z, V_Y5}};
    for (int k = 0; k < N_KINDS; k++) {
        cov_claim *cl = &c->items[k];
        cl->kind = k == 4 ? COV_CLAIM_ABSENCE : COV_CLAIM_EFFECT;
        cl->treatment = pairs[k][0];
        cl->outcome = pairs[k][1];
        cl->cond = k == 0 ? &c->cond_s : NULL;
        cl->n_cond = k == 0;
        cl->effect.value = effect[k];
        cl->effect.unit = COV_UNIT_RAW;
        cl->status = COV_TESTABLE;
    }
    c->cl.items = c->items;
    c->cl.n = N_KINDS;
    c->d.n_runs = runs;
    c->d.n_vars = N_VARS;
    c->d.col = c->col;
    c->d.n_missing = c->miss;
}

static void campaign_free(campaign *c)
{
    for (int v = 0; v < N_VARS; v++) free(c->col[v]);
}

/* One campaign from the invented model. */
static void simulate(campaign *c, gsl_rng *r)
{
    for (size_t i = 0; i < runs; i++) {
        double s = gsl_rng_uniform(r), x = gsl_rng_uniform(r) + 0.5 * s;
        double b = gsl_rng_uniform(r) < 0.5, l = (double)(i % 3), z = gsl_rng_uniform(r);
        /* Level means in the least favourable pattern: a at -e/2, b at +e/2, c at the midpoint. */
        double lmean = l == 0 ? -effect[2] / 2 : (l == 1 ? effect[2] / 2 : 0);
        c->col[V_X][i] = x;
        c->col[V_S][i] = s;
        c->col[V_B][i] = b;
        c->col[V_L][i] = l;
        c->col[V_Z][i] = z;
        c->col[V_Y1][i] = 0.3 * s + effect[0] * x + gsl_ran_gaussian(r, 1);
        c->col[V_Y2][i] = effect[1] * b + gsl_ran_gaussian(r, 1);
        c->col[V_Y3][i] = lmean + gsl_ran_gaussian(r, 1);
        c->col[V_Y4][i] = gsl_rng_uniform(r) < 0.5 + (b - 0.5) * effect[3];
        c->col[V_Y5][i] = gsl_ran_gaussian(r, 1);
    }
}

/* The F test of the level set (no adjustment set): between-group over within-group mean squares. */
static int level_f_rejects(const campaign *c, double alpha)
{
    double sum[3] = {0}, cnt[3] = {0}, grand = 0;
    for (size_t i = 0; i < runs; i++) {
        int l = (int)c->col[V_L][i];
        sum[l] += c->col[V_Y3][i];
        cnt[l] += 1;
        grand += c->col[V_Y3][i] / (double)runs;
    }
    double ssb = 0, ssw = 0;
    for (int l = 0; l < 3; l++) ssb += cnt[l] * pow(sum[l] / cnt[l] - grand, 2);
    for (size_t i = 0; i < runs; i++) {
        int l = (int)c->col[V_L][i];
        ssw += pow(c->col[V_Y3][i] - sum[l] / cnt[l], 2);
    }
    double f = (ssb / 2) / (ssw / ((double)runs - 3.0));
    return gsl_cdf_fdist_Q(f, 2, (double)runs - 3.0) < alpha;
}

/* The arcsine z test of two proportions (Cohen 1988, ch. 6). */
static int two_prop_rejects(const campaign *c, double alpha)
{
    double k[2] = {0}, n[2] = {0};
    for (size_t i = 0; i < runs; i++) {
        int g = c->col[V_B][i] > 0.5;
        n[g] += 1;
        k[g] += c->col[V_Y4][i];
    }
    if (n[0] == 0 || n[1] == 0) return 0;
    double h = 2 * asin(sqrt(k[1] / n[1])) - 2 * asin(sqrt(k[0] / n[0]));
    double z = h / sqrt(1 / n[0] + 1 / n[1]);
    return fabs(z) > gsl_cdf_ugaussian_Qinv(alpha / 2);
}

/* The last coefficient of y on an intercept and the columns xs[0..k-1], fitted apart from shoal by
 * GSL's gsl_multifit_linear (SVD; its cov is s^2 (X'X)^-1 with s^2 = RSS / (n - p)): the estimate,
 * its standard error and the residual degrees of freedom. Returns 0 on success. */
static int ols_last(const double *const *xs, size_t k, const double *y, double *est, double *se,
                    double *df)
{
    size_t p = k + 1;
    gsl_matrix *X = gsl_matrix_alloc(runs, p), *cov = gsl_matrix_alloc(p, p);
    gsl_vector *yv = gsl_vector_alloc(runs), *b = gsl_vector_alloc(p);
    gsl_multifit_linear_workspace *w = gsl_multifit_linear_alloc(runs, p);
    int rc = 1;
    if (X && cov && yv && b && w) {
        for (size_t i = 0; i < runs; i++) {
            gsl_matrix_set(X, i, 0, 1.0);
            for (size_t j = 0; j < k; j++) gsl_matrix_set(X, i, j + 1, xs[j][i]);
            gsl_vector_set(yv, i, y[i]);
        }
        double chisq;
        if (gsl_multifit_linear(X, yv, b, cov, &chisq, w) == GSL_SUCCESS) {
            *est = gsl_vector_get(b, k);
            *se = sqrt(gsl_matrix_get(cov, k, k));
            *df = (double)runs - (double)p;
            rc = 0;
        }
    }
    gsl_matrix_free(X);
    gsl_matrix_free(cov);
    gsl_vector_free(yv);
    gsl_vector_free(b);
    gsl_multifit_linear_free(w);
    return rc;
}

/* Whether the test of claim kind rejects on campaign c at level alpha, judged from the runs alone:
 * the assessment is not consulted (its estimate and SE are what is being checked). */
static int rejects(const campaign *c, int kind, double alpha)
{
    double est = NAN, se = NAN, df = NAN;
    switch (kind) {
    case 0: {
        const double *xs[2] = {c->col[V_S], c->col[V_X]};
        if (ols_last(xs, 2, c->col[V_Y1], &est, &se, &df)) return 0;
        return fabs(est / se) > gsl_cdf_tdist_Qinv(alpha / 2, df);
    }
    case 1: {
        const double *xs[1] = {c->col[V_B]};
        if (ols_last(xs, 1, c->col[V_Y2], &est, &se, &df)) return 0;
        return fabs(est / se) > gsl_cdf_tdist_Qinv(alpha / 2, df);
    }
    case 2: return level_f_rejects(c, alpha);
    case 3: return two_prop_rejects(c, alpha);
    default: {
        /* TOST (Schuirmann 1987): both one-sided tests against -+margin at level alpha; the
         * margin is the claim's declared one (raw units). */
        const double *xs[1] = {c->col[V_Z]};
        if (ols_last(xs, 1, c->col[V_Y5], &est, &se, &df)) return 0;
        double tc = gsl_cdf_tdist_Qinv(alpha, df), m = c->items[4].effect.value;
        return (est + m) / se > tc && (est - m) / se < -tc;
    }
    }
}

int main(void)
{
    gsl_set_error_handler_off();
    gsl_test_verbose(1);
    const char *slow = getenv("SHOAL_SLOW");
    int is_slow = slow && strcmp(slow, "1") == 0;
    int R = is_slow ? 10 * CAMPAIGNS : CAMPAIGNS;
    runs = is_slow ? MAX_RUNS : RUNS;
    for (int k = 0; k < N_KINDS; k++) effect[k] = effect_120[k] * sqrt(120.0 / (double)runs);
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, SEED);
    campaign c;
    campaign_init(&c);
    cov_power_options opt = {ALPHA, 0.80, 0, 0, COV_TEST_CLASSIC, COV_POWER_BY_FORMULA, 0, 0, 1};
    double hits[N_KINDS] = {0}, pred[N_KINDS] = {0}, pred2[N_KINDS] = {0};
    int failed = 0;
    for (int rep = 0; rep < R && !failed; rep++) {
        simulate(&c, r);
        cov_assessments *as = NULL;
        cov_error err;
        if (cov_assess(&c.g, &c.cl, &c.d, &opt, &as, &err) != COV_OK) {
            gsl_test(1, "cov_assess on simulated campaign %d: %s", rep, err.msg);
            failed = 1;
            break;
        }
        for (int k = 0; k < N_KINDS; k++) {
            const cov_assessment *a = &as->items[k];
            hits[k] += rejects(&c, k, ALPHA);
            pred[k] += a->power;
            pred2[k] += a->power * a->power;
        }
        cov_assessments_free(as);
    }
    for (int k = 0; k < N_KINDS && !failed; k++) {
        double rate = hits[k] / R, mean = pred[k] / R;
        double var_pred = pred2[k] / R - mean * mean;
        double se = sqrt((rate * (1 - rate) + (var_pred > 0 ? var_pred : 0)) / R);
        gsl_test(!(fabs(rate - mean) <= 3 * se),
                 "calibration, %s: mean predicted power %.4f vs rejection rate %.4f over %d "
                 "simulated campaigns of %zu runs (tolerance 3 MC SE = %.4f)", kind_name[k],
                 mean, rate, R, runs, 3 * se);
        gsl_test(!(mean > 0.3 && mean < 0.95), "calibration, %s: power %.3f lies where the check "
                 "can tell (0.3 to 0.95)", kind_name[k], mean);
    }
    campaign_free(&c);
    gsl_rng_free(r);
    return gsl_test_summary();
}
