/* The per-claim regression: cross-product solver against QR, fast and slow paths, noise checks.
 * See LICENSE. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include <gsl/gsl_test.h>

#include "coverage/plan/plan.h"
#include "coverage/report/report.h"

/* Two double-precision solvers of a well-conditioned problem (condition number of the scaled
 * cross-products below 1e3 here) agree to about cond * 1e-16; 1e-9 leaves a wide margin. */
#define SOLVER_TOL 1e-9

#define MAXV 8
#define SEED 20261202UL

/* An invented campaign built in memory: variables, claims and data. */
typedef struct {
    cov_graph g;
    cov_var vars[MAXV];
    cov_claims cl;
    cov_claim items[MAXV];
    size_t conds[MAXV][MAXV];
    cov_data d;
    double *cols[MAXV];
    size_t miss[MAXV];
    char *levels[3];
} fixture;

static void fx_init(fixture *f, size_t n_runs)
{
    memset(f, 0, sizeof *f);
    f->g.path = "invented.graph";
    f->g.vars = f->vars;
    f->g.default_effect.value = NAN;
    f->g.margin.value = NAN;
    f->cl.items = f->items;
    f->d.n_runs = n_runs;
    f->d.col = f->cols;
    f->d.n_missing = f->miss;
    static char a[] = "a", b[] = "b", c[] = "c";
    f->levels[0] = a;
    f->levels[1] = b;
    f->levels[2] = c;
}

static size_t fx_var(fixture *f, const char *name, cov_role role, cov_type type, double lo,
                     double hi)
{
    size_t v = f->g.n_vars++;
    cov_var *x = &f->vars[v];
    x->name = (char *)name;
    x->role = role;
    x->type = type;
    x->lo = lo;
    x->hi = hi;
    x->noise_sd = NAN;
    if (type == COV_LEVELS) {
        x->levels = f->levels;
        x->n_levels = 3;
    }
    f->d.n_vars = f->g.n_vars;
    f->cols[v] = calloc(f->d.n_runs ? f->d.n_runs : 1, sizeof(double));
    return v;
}

static size_t fx_claim(fixture *f, cov_claim_kind kind, size_t x, size_t y, const size_t *s,
                       size_t ns, double effect, cov_unit unit)
{
    size_t i = f->cl.n++;
    cov_claim *c = &f->items[i];
    memset(c, 0, sizeof *c);
    c->kind = kind;
    c->treatment = x;
    c->outcome = y;
    if (ns > 0) memcpy(f->conds[i], s, ns * sizeof *s);
    c->cond = f->conds[i];
    c->n_cond = ns;
    c->effect.value = effect;
    c->effect.unit = unit;
    c->status = COV_TESTABLE;
    return i;
}

static void fx_free(fixture *f)
{
    for (size_t v = 0; v < f->g.n_vars; v++) free(f->cols[v]);
}

static cov_power_options default_opt(void)
{
    cov_power_options o = {0.05, 0.80, 1, 0, COV_TEST_CLASSIC, COV_POWER_BY_FORMULA, 0, 0, 1};
    return o;
}

/* Kept reflectors (pw_ols_reflectors, pw_ols_reflect_rss) give pw_ols_fit's residual sum of
 * squares bit for bit for every response fitted on one design (identity: the same operations in
 * the same order), here a cubic basis of a skewed treatment with heavy-tailed, zero-inflated and
 * heteroscedastic responses; an aliased design is refused by both. */
static void test_kept_reflectors(void)
{
    enum { N = 2000, P = 4 };
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);   /* its own stream: the other tests' stay put */
    gsl_rng_set(r, 20261205);
    static double X[N * P], y[N], b[N];
    for (size_t i = 0; i < N; i++) {
        double z = gsl_ran_lognormal(r, 0, 0.8);
        X[i * P] = 1, X[i * P + 1] = z, X[i * P + 2] = z * z, X[i * P + 3] = z * z * z;
    }
    pw_reflectors *q = NULL;
    gsl_test(pw_ols_reflectors(X, N, P, &q) != PW_OK, "reflectors of a cubic basis are kept");
    for (int k = 0; q != NULL && k < 4; k++) {
        for (size_t i = 0; i < N; i++) {
            double z = X[i * P + 1];
            y[i] = k == 0 ? 1 + z + gsl_ran_cauchy(r, 1)
                   : k == 1 ? (gsl_rng_uniform(r) < 0.4 ? 0 : gsl_ran_lognormal(r, 0, 1))
                   : k == 2 ? 0.3 * z * z + gsl_ran_gaussian(r, 0.1 + z)
                            : gsl_ran_exponential(r, 2.0);
            b[i] = y[i];
        }
        pw_ols *fit = NULL;
        int rc = pw_ols_fit(X, y, N, P, &fit);
        double rss = pw_ols_reflect_rss(q, b);
        gsl_test(rc != PW_OK || memcmp(&rss, &fit->rss, sizeof rss) != 0, "response %d: kept "
                 "reflectors' RSS %.17g equals pw_ols_fit's %.17g bit for bit", k, rss,
                 rc == PW_OK ? fit->rss : NAN);
        pw_ols_free(fit);
    }
    pw_reflectors_free(q);
    for (size_t i = 0; i < N; i++) X[i * P + 3] = 2 * X[i * P + 1];
    q = NULL;
    gsl_test_int(pw_ols_reflectors(X, N, P, &q), PW_ESING, "an aliased column: PW_ESING");
    gsl_test(q != NULL, "nothing is handed out for an aliased design");
    gsl_rng_free(r);
}

/* pw_xfit_solve on the centred cross-products agrees with Householder QR (pw_ols_fit) on data
 * with means 1e6 times their spread, which defeats raw normal equations. */
static void test_xfit_vs_qr(gsl_rng *r)
{
    enum { N = 500, K = 4 };
    double X[N * (K + 1)], y[N], row[K + 1];
    pw_moments *m = NULL;
    pw_moments_alloc(K + 1, &m);
    for (size_t i = 0; i < N; i++) {
        X[i * (K + 1)] = 1;
        double x1 = 1e6 + gsl_ran_gaussian(r, 1), x2 = gsl_ran_gaussian(r, 3);
        double x3 = 0.5 * x2 + gsl_ran_gaussian(r, 1), x4 = gsl_rng_uniform(r) < 0.3;
        double v[K] = {x1, x2, x3, x4};
        for (size_t j = 0; j < K; j++) X[i * (K + 1) + j + 1] = row[j] = v[j];
        y[i] = row[K] = 2 + 0.7 * x1 - 0.2 * x2 + 1.5 * x4 + gsl_ran_gaussian(r, 2);
        pw_moments_add(m, row);
    }
    pw_ols *q = NULL;
    pw_xfit *f = NULL;
    size_t idx[K + 1] = {0, 1, 2, 3, 4};
    int rc1 = pw_ols_fit(X, y, N, K + 1, &q), rc2 = pw_xfit_solve(m, idx, K, 1, &f);
    gsl_test(rc1 || rc2, "QR and cross-product fits succeed");
    if (rc1 || rc2) goto done;
    for (size_t j = 0; j < K; j++) {
        gsl_test_rel(f->coef[j], q->coef[j + 1], SOLVER_TOL, "slope %zu: cross-products = QR", j);
        gsl_test_rel(f->se[j], q->se[j + 1], SOLVER_TOL, "SE %zu: cross-products = QR", j);
    }
    gsl_test_rel(f->intercept, q->coef[0], 1e-6, "intercept (offset 1e6 loses ~6 digits in both)");
    gsl_test_rel(f->sigma, q->sigma, SOLVER_TOL, "sigma: cross-products = QR");
    gsl_test_rel(f->df, q->df, 0, "df = n - p");
    /* The treatment's residual cross-product is the inverse of its (X'X)^-1 diagonal. */
    gsl_test_rel(f->treat_info[0], 1 / q->cov_unscaled[K * (K + 1) + K], SOLVER_TOL,
                 "treatment information = 1 / [(X'X)^-1]_tt (Schur complement)");
done:
    pw_ols_free(q);
    pw_xfit_free(f);
    pw_moments_free(m);
}

/* Block accumulation (Chan, Golub & LeVeque's merge) gives the row-by-row co-moments. */
static void test_moments_block(gsl_rng *r)
{
    enum { N = 1000, K = 5 };
    static double rows[N * K];
    pw_moments *a = NULL, *b = NULL;
    pw_moments_alloc(K, &a);
    pw_moments_alloc(K, &b);
    for (size_t i = 0; i < N * K; i++) rows[i] = 1e4 + gsl_ran_gaussian(r, 1.0 + (double)(i % K));
    for (size_t i = 0; i < N; i++) pw_moments_add(a, rows + i * K);
    for (size_t i = 0; i < N; i += 128) pw_moments_add_block(b, rows + i * K, N - i < 128 ? N - i : 128);
    double worst = 0;
    for (size_t i = 0; i < K; i++)
        for (size_t j = i; j < K; j++) {
            double scale = sqrt(pw_moments_at(a, i, i) * pw_moments_at(a, j, j));
            worst = fmax(worst, fabs(pw_moments_at(a, i, j) - pw_moments_at(b, i, j)) / scale);
        }
    gsl_test(!(worst < SOLVER_TOL && b->n == N), "block and row-by-row co-moments agree (worst "
             "%.2g relative to the SDs, offset 1e4)", worst);
    gsl_test_rel(b->mean[2], a->mean[2], 1e-14, "block and row-by-row means agree");
    pw_moments_free(a);
    pw_moments_free(b);
}

/* Level patterns with unequal groups and no adjustment set: M = diag(n_l) - n n' / N over the
 * dummies, so b' M b = sum_l n_l (mu_l - mu_bar)^2 (the between-groups sum of squares, Searle
 * 1971, sec. 3.5) and a pairwise contrast has variance factor 1/n_i + 1/n_j. */
static void test_level_pattern(void)
{
    const double cnt[3] = {10, 20, 30}, N = 60;
    double M[4] = {cnt[1] - cnt[1] * cnt[1] / N, -cnt[1] * cnt[2] / N, -cnt[1] * cnt[2] / N,
                   cnt[2] - cnt[2] * cnt[2] / N};
    double q_min = NAN, v_max = NAN;
    size_t wi = 9, wj = 9;
    int rc = pw_level_pattern(M, 2, &q_min, &v_max, &wi, &wj);
    double best = INFINITY;
    for (int i = 0; i < 3; i++)
        for (int j = i + 1; j < 3; j++) {
            double mu[3] = {0, 0, 0}, bar = 0, ss = 0;
            mu[i] = -0.5;
            mu[j] = 0.5;
            for (int l = 0; l < 3; l++) bar += cnt[l] * mu[l] / N;
            for (int l = 0; l < 3; l++) ss += cnt[l] * (mu[l] - bar) * (mu[l] - bar);
            best = fmin(best, ss);
        }
    gsl_test(rc, "pw_level_pattern on groups of 10, 20, 30");
    gsl_test_rel(q_min, best, 1e-12, "least favourable noncentrality = smallest between-groups SS");
    gsl_test_rel(v_max, 1.0 / 10 + 1.0 / 20, 1e-12, "widest pairwise contrast: 1/10 + 1/20");
    gsl_test(!(wi == 0 && wj == 1), "the widest contrast is between the two smallest groups");
}

/* An aliased predictor is dropped, and the rest is the fit without it. */
static void test_aliased(gsl_rng *r)
{
    enum { N = 200 };
    pw_moments *m4 = NULL, *m3 = NULL;
    pw_moments_alloc(4, &m4);
    pw_moments_alloc(3, &m3);
    for (size_t i = 0; i < N; i++) {
        double a = gsl_ran_gaussian(r, 1), b = gsl_ran_gaussian(r, 1);
        double y = a - b + gsl_ran_gaussian(r, 1);
        double r4[4] = {a, b, a + 2 * b, y}, r3[3] = {a, b, y};
        pw_moments_add(m4, r4);
        pw_moments_add(m3, r3);
    }
    pw_xfit *f4 = NULL, *f3 = NULL;
    size_t i4[4] = {0, 1, 2, 3}, i3[3] = {0, 1, 2};
    pw_xfit_solve(m4, i4, 3, 1, &f4);
    pw_xfit_solve(m3, i3, 2, 1, &f3);
    gsl_test(!(f4 && f3 && !f4->kept[2] && f4->rank == 2 && f4->t_rank == 0),
             "a + 2b is dropped as aliased; the treatment then has rank 0");
    if (f4 && f3) {
        gsl_test_rel(f4->sigma, f3->sigma, SOLVER_TOL, "sigma without the aliased column");
        gsl_test_rel(f4->coef[0], f3->coef[0], SOLVER_TOL, "slope without the aliased column");
    }
    pw_xfit_free(f4);
    pw_xfit_free(f3);
    pw_moments_free(m4);
    pw_moments_free(m3);
}

/* cov_assess on an invented campaign: figures against a direct QR fit; slow path = fast path. */
static void test_assess_numeric(gsl_rng *r)
{
    enum { N = 400 };
    fixture f;
    fx_init(&f, N);
    size_t x = fx_var(&f, "dose", COV_INPUT, COV_REAL, 0, 10);
    size_t s = fx_var(&f, "load", COV_INPUT, COV_REAL, 0, 5);
    size_t y = fx_var(&f, "yield", COV_OUTPUT, COV_REAL, NAN, NAN);
    size_t z = fx_var(&f, "spare", COV_INPUT, COV_REAL, 0, 1);
    for (size_t i = 0; i < N; i++) {
        f.cols[s][i] = gsl_rng_uniform(r) * 5;
        f.cols[x][i] = gsl_rng_uniform(r) * 10 + 0.5 * f.cols[s][i];
        f.cols[y][i] = 1 + 0.3 * f.cols[x][i] - 2 * f.cols[s][i] + gsl_ran_gaussian(r, 1.5);
        f.cols[z][i] = gsl_rng_uniform(r);
    }
    fx_claim(&f, COV_CLAIM_EFFECT, x, y, &s, 1, 0.05, COV_UNIT_RAW);
    fx_claim(&f, COV_CLAIM_ABSENCE, z, y, (size_t[]){s, x}, 2, 0.1, COV_UNIT_SD);
    cov_power_options opt = default_opt();
    cov_assessments *as = NULL;
    cov_error err;
    int rc = cov_assess(&f.g, &f.cl, &f.d, &opt, &as, &err);
    gsl_test(rc, "cov_assess on an invented campaign returns COV_OK");
    if (rc) goto done;
    double X[N * 3], yy[N];
    for (size_t i = 0; i < N; i++) {
        X[i * 3] = 1;
        X[i * 3 + 1] = f.cols[s][i];
        X[i * 3 + 2] = f.cols[x][i];
        yy[i] = f.cols[y][i];
    }
    pw_ols *q = NULL;
    pw_ols_fit(X, yy, N, 3, &q);
    const cov_assessment *a = &as->items[0];
    gsl_test_int((int)a->n, N, "n counts the complete runs");
    gsl_test_rel(a->df, N - 3.0, 0, "df = n - |S| - 2");
    gsl_test_rel(a->sigma, q->sigma, SOLVER_TOL, "sigma matches the QR fit");
    gsl_test_rel(a->estimate, q->coef[2], SOLVER_TOL, "estimate matches the QR fit");
    gsl_test_rel(a->se, q->se[2], SOLVER_TOL, "SE matches the QR fit");
    gsl_test_rel(a->sd_treatment_resid, q->sigma / (q->se[2] * sqrt(N)), SOLVER_TOL,
                 "sd(X|S) = sigma / (SE sqrt(n)), divisor n");
    gsl_test_rel(a->alpha, 0.025, 1e-15, "Bonferroni over 2 testable claims: alpha / 2");
    pw_design dz;
    gsl_test(cov_assess_design(&f.g, &f.cl, as, 0, &dz) != COV_OK || dz.test != PW_TEST_COEF_T,
             "cov_assess_design gives the claim's coefficient t test");
    double p = NAN;
    pw_power(&dz, &p);
    gsl_test_abs(p, a->power, 1e-15, "cov_assess_design reproduces the claim's power");
    gsl_test(!(a->power_lo <= a->power && a->power <= a->power_hi && a->mde_lo <= a->mde &&
               a->mde <= a->mde_hi), "power and MDE lie inside their intervals");
    gsl_test(!(a->verdict == (a->power >= 0.8 ? COV_AMPLE : COV_UNDERPOWERED)), "verdict follows power");
    const cov_assessment *b = &as->items[1];
    gsl_test(b->design.test != PW_TEST_TOST, "absence claim uses TOST");
    gsl_test_rel(b->effect_raw, 0.1 * b->sd_outcome, 1e-15, "sd margin = 0.1 x outcome SD");

    /* Slow path: a missing cell in the treatment. The claim must equal the fast path on the
     * data without that run. */
    cov_assessments *as2 = NULL, *as3 = NULL;
    double keep = f.cols[x][7];
    f.cols[x][7] = NAN;
    f.miss[x] = 1;
    rc = cov_assess(&f.g, &f.cl, &f.d, &opt, &as2, &err);
    f.cols[x][7] = keep;
    f.miss[x] = 0;
    for (size_t v = 0; v < f.g.n_vars; v++)   /* drop run 7 */
        memmove(f.cols[v] + 7, f.cols[v] + 8, (N - 8) * sizeof(double));
    f.d.n_runs = N - 1;
    int rc3 = cov_assess(&f.g, &f.cl, &f.d, &opt, &as3, &err);
    gsl_test(rc || rc3, "slow and fast paths run");
    if (!rc && !rc3) {
        gsl_test_int((int)as2->items[0].n, N - 1, "slow path drops the incomplete run");
        gsl_test_rel(as2->items[0].sigma, as3->items[0].sigma, SOLVER_TOL, "slow = fast: sigma");
        gsl_test_rel(as2->items[0].power, as3->items[0].power, SOLVER_TOL, "slow = fast: power");
        gsl_test_rel(as2->items[0].mde, as3->items[0].mde, 1e-8, "slow = fast: MDE");
    }
    cov_assessments_free(as2);
    cov_assessments_free(as3);
    pw_ols_free(q);
done:
    cov_assessments_free(as);
    fx_free(&f);
}

/* Level-set treatment, bool outcome, never-varying treatment, planning without runs. */
static void test_assess_kinds(gsl_rng *r)
{
    enum { N = 600 };
    fixture f;
    fx_init(&f, N);
    size_t lv = fx_var(&f, "site", COV_INPUT, COV_LEVELS, 0, 2);
    size_t on = fx_var(&f, "lane", COV_INPUT, COV_BOOL, 0, 1);
    size_t y = fx_var(&f, "wait", COV_OUTPUT, COV_REAL, NAN, NAN);
    size_t hit = fx_var(&f, "late", COV_OUTPUT, COV_BOOL, NAN, NAN);
    size_t flat = fx_var(&f, "mode", COV_INPUT, COV_BOOL, 0, 1);
    for (size_t i = 0; i < N; i++) {
        f.cols[lv][i] = (double)(i % 3);
        f.cols[on][i] = gsl_rng_uniform(r) < 0.4;
        f.cols[y][i] = f.cols[lv][i] + gsl_ran_gaussian(r, 2);
        f.cols[hit][i] = gsl_rng_uniform(r) < 0.3 + 0.1 * f.cols[on][i];
        f.cols[flat][i] = 1;
    }
    fx_claim(&f, COV_CLAIM_EFFECT, lv, y, NULL, 0, 0.5, COV_UNIT_RAW);
    fx_claim(&f, COV_CLAIM_EFFECT, on, hit, NULL, 0, 0.1, COV_UNIT_RAW);
    fx_claim(&f, COV_CLAIM_EFFECT, flat, y, NULL, 0, 0.5, COV_UNIT_RAW);
    size_t u = fx_claim(&f, COV_CLAIM_EFFECT, on, y, NULL, 0, 0.5, COV_UNIT_RAW);
    f.items[u].status = COV_UNTESTABLE;
    f.items[u].reason = (char *)"open path through hidden h";
    cov_power_options opt = default_opt();
    opt.bonferroni = 0;
    cov_assessments *as = NULL;
    cov_error err;
    int rc = cov_assess(&f.g, &f.cl, &f.d, &opt, &as, &err);
    gsl_test(rc, "cov_assess with level, bool and constant treatments");
    if (rc) goto done;
    const cov_assessment *a = &as->items[0];
    /* Balanced three levels, no adjustment set: the least favourable pattern (two levels one
     * effect apart, the third at their midpoint) has lambda = n/3 (e^2/4 + e^2/4) / sigma^2, so
     * the noncentrality per run is 1 / (2 L) = 1/6 (Cohen 1988, sec. 8.2, pattern 1). */
    gsl_test(a->design.test != PW_TEST_LEVELS_F, "level-set treatment uses the F test");
    gsl_test_rel(a->design.ncp_per_run, 1.0 / 6.0, 1e-12, "least favourable ncp per run = 1/6");
    gsl_test_rel(a->design.n_levels, 3, 0, "three levels present");
    const cov_assessment *b = &as->items[1];
    gsl_test(b->design.test != PW_TEST_TWO_PROP, "bool -> bool uses two proportions");
    double share = 0, base = 0;
    for (size_t i = 0; i < N; i++) {
        share += f.cols[on][i] / N;
        base += f.cols[hit][i] / N;
    }
    gsl_test_rel(b->design.p_base, base, 1e-12, "base rate from the archive");
    gsl_test_rel(b->sd_treatment_resid, sqrt(share * (1 - share)), 1e-12,
                 "sd(X) of a bool treatment = sqrt(share (1 - share))");
    gsl_test(as->items[2].verdict != COV_BLIND || as->items[2].reason == NULL ||
             strstr(as->items[2].reason, "never varies") == NULL,
             "a treatment fixed in every run is untestable, and the reason says so");
    gsl_test(as->items[3].verdict != COV_BLIND || !as->items[3].reason ||
             strcmp(as->items[3].reason, "open path through hidden h") != 0,
             "an untestable claim keeps the claim's reason");
    gsl_test_rel(as->items[0].alpha, 0.05, 0, "--family none: alpha unchanged");
    pw_design dz;
    gsl_test_int(cov_assess_design(&f.g, &f.cl, as, 3, &dz), COV_EINPUT,
                 "cov_assess_design refuses an untestable claim");
done:
    cov_assessments_free(as);
    fx_free(&f);

    /* Planning before any run: the declared noise SD and a uniform spread over [0, 12]. */
    fx_init(&f, 0);
    size_t x = fx_var(&f, "dose", COV_INPUT, COV_REAL, 0, 12);
    size_t yy = fx_var(&f, "yield", COV_OUTPUT, COV_REAL, NAN, NAN);
    f.vars[yy].noise_sd = 2.0;
    fx_claim(&f, COV_CLAIM_EFFECT, x, yy, NULL, 0, 0.1, COV_UNIT_RAW);
    rc = cov_assess(&f.g, &f.cl, &f.d, &opt, &as, &err);
    if (rc == COV_OK) {
        pw_design g;
        memset(&g, 0, sizeof g);
        g.test = PW_TEST_COEF_T;
        g.alpha = 0.05;
        g.sides = 2;
        g.target = 0.8;
        g.effect = 0.1;
        g.sigma = 2.0;
        g.sd_x_resid = 12 / sqrt(12.0);
        g.n_params = 1;
        double runs = NAN;
        pw_runs_needed(&g, &runs);
        gsl_test_rel(as->items[0].runs_needed, runs, 0, "no runs: plan from the declared noise SD "
                     "and the uniform spread of the domain (%g runs)", runs);
        gsl_test(as->items[0].verdict != COV_UNDERPOWERED, "no runs: underpowered");
    } else {
        gsl_test(1, "cov_assess with no runs");
    }
    cov_assessments_free(as);
    fx_free(&f);
}

/* Noise checks: one value in most runs, heteroscedasticity, lack of fit with replicates. */
static void test_noise(gsl_rng *r)
{
    enum { N = 800 };
    fixture f;
    fx_init(&f, N);
    size_t x = fx_var(&f, "dose", COV_INPUT, COV_INTEGER, 0, 3);
    size_t zero = fx_var(&f, "count", COV_OUTPUT, COV_REAL, NAN, NAN);
    size_t het = fx_var(&f, "spread", COV_OUTPUT, COV_REAL, NAN, NAN);
    size_t curve = fx_var(&f, "curve", COV_OUTPUT, COV_REAL, NAN, NAN);
    size_t fine = fx_var(&f, "fine", COV_OUTPUT, COV_REAL, NAN, NAN);
    for (size_t i = 0; i < N; i++) {
        double d = (double)(i % 4);
        f.cols[x][i] = d;
        f.cols[zero][i] = gsl_rng_uniform(r) < 0.8 ? 0 : gsl_ran_poisson(r, 3 + d);
        f.cols[het][i] = d + gsl_ran_gaussian(r, 0.2 + 2 * d);
        f.cols[curve][i] = d * d + gsl_ran_gaussian(r, 1);
        f.cols[fine][i] = d + gsl_ran_gaussian(r, 1);
    }
    fx_claim(&f, COV_CLAIM_EFFECT, x, zero, NULL, 0, 0.5, COV_UNIT_RAW);
    fx_claim(&f, COV_CLAIM_EFFECT, x, het, NULL, 0, 0.5, COV_UNIT_RAW);
    fx_claim(&f, COV_CLAIM_EFFECT, x, curve, NULL, 0, 0.5, COV_UNIT_RAW);
    fx_claim(&f, COV_CLAIM_EFFECT, x, fine, NULL, 0, 0.5, COV_UNIT_RAW);
    cov_power_options opt = default_opt();
    cov_assessments *as = NULL;
    cov_error err;
    int rc = cov_assess(&f.g, &f.cl, &f.d, &opt, &as, &err);
    gsl_test(rc, "cov_assess on noisy outcomes");
    if (rc == COV_OK) {
        const cov_assessment *a = as->items;
        gsl_test(!(a[0].noise_flag && a[0].noise_note && strstr(a[0].noise_note, "one value")),
                 "a count that is zero in 80%% of runs is flagged");
        gsl_test(!(a[1].noise_flag && a[1].noise_note &&
                   strstr(a[1].noise_note, "Breusch-Pagan")),
                 "noise SD rising tenfold with the fitted value is flagged (Koenker-BP)");
        gsl_test(!(a[2].has_pure_error && a[2].lof_p < 1e-6 && a[2].fit_note &&
                   strstr(a[2].fit_note, "lack of fit") &&
                   !(a[2].noise_note && strstr(a[2].noise_note, "lack of fit"))),
                 "a quadratic truth fitted linearly fails the lack-of-fit test (p %g), reported "
                 "in its own right, not as a noise caution", a[2].lof_p);
        gsl_test(!(a[3].has_pure_error && a[3].lof_p > 1e-3 && !a[3].noise_flag),
                 "a linear truth passes every noise check (lack-of-fit p %g)", a[3].lof_p);
        gsl_test_rel(a[3].sigma_pure, 1.0, 0.1, "pure-error sigma near the true 1 (800 runs, "
                     "SE about 2.5%%)");
        /* Kurtosis widens the interval: the zero-heavy count's interval is wider than the normal
         * outcome's, relative to the point. */
        double w0 = a[0].mde_hi / a[0].mde_lo, w3 = a[3].mde_hi / a[3].mde_lo;
        gsl_test(!(w0 > w3), "excess kurtosis widens the MDE interval (%g vs %g)", w0, w3);
    }
    cov_assessments_free(as);
    fx_free(&f);
}

/* At 150,000 runs sigma is known to about 1/sqrt(2 df) = 0.18%, so the 95% MDE interval spans
 * about +-0.36% (normal noise, kurtosis near 0). This caught GSL's chi-squared inverse failing
 * silently at large df. */
static void test_large_n(gsl_rng *r)
{
    enum { N = 150000 };
    fixture f;
    fx_init(&f, N);
    size_t x = fx_var(&f, "dose", COV_INPUT, COV_REAL, 0, 1);
    size_t y = fx_var(&f, "yield", COV_OUTPUT, COV_REAL, NAN, NAN);
    for (size_t i = 0; i < N; i++) {
        f.cols[x][i] = gsl_rng_uniform(r);
        f.cols[y][i] = 0.01 * f.cols[x][i] + gsl_ran_gaussian(r, 1);
    }
    fx_claim(&f, COV_CLAIM_EFFECT, x, y, NULL, 0, 0.02, COV_UNIT_RAW);
    cov_power_options opt = default_opt();
    cov_assessments *as = NULL;
    cov_error err;
    int rc = cov_assess(&f.g, &f.cl, &f.d, &opt, &as, &err);
    if (rc == COV_OK) {
        const cov_assessment *a = &as->items[0];
        double half = 1.96 / sqrt(2.0 * a->df);
        gsl_test(!(a->mde_lo < a->mde && a->mde < a->mde_hi &&
                   fabs(a->mde_hi / a->mde - 1 - half) < 0.2 * half &&
                   fabs(1 - a->mde_lo / a->mde - half) < 0.2 * half),
                 "150,000 runs: MDE interval [%g, %g] around %g spans +-1.96/sqrt(2 df) within "
                 "20%%", a->mde_lo, a->mde_hi, a->mde);
    } else {
        gsl_test(1, "cov_assess on 150,000 runs");
    }
    cov_assessments_free(as);
    fx_free(&f);
}

int main(void)
{
    gsl_set_error_handler_off();
    gsl_test_verbose(1);
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, SEED);
    test_xfit_vs_qr(r);
    test_kept_reflectors();
    test_moments_block(r);
    test_level_pattern();
    test_aliased(r);
    test_assess_numeric(r);
    test_assess_kinds(r);
    test_noise(r);
    test_large_n(r);
    gsl_rng_free(r);
    return gsl_test_summary();
}
