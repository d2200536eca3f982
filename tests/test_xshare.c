/* Tests of the shared pass of cross-products (coverage/archive/xshare.c): each total equals, bit
 * for bit, what the assessment and the support's summary sum on their own, with 1, 2 and 3
 * threads, and the claims' figures do not change. See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include <gsl/gsl_test.h>

#include "coverage/assess/assess.h"
#include "coverage/measure/measure.h"

/* Invented data only (fixed seed): replicated configurations, an input far from zero, a level-set
 * input and a level-set output, skewed noise growing with load, and an output with missing cells
 * (left out of both totals). 140,011 runs: three shards, the last one short, and a last block of
 * 107 runs. */
#define N_RUNS 140011
#define N_VARS 8

static const char *GRAPH =
    "# Invented test graph.\n"
    "default effect 0.2 sd\ndefault margin 0.1 sd\ndesign independent\n"
    "input a real [0, 10]\ninput b real [1000, 1001]\ninput site levels {hill, river, port}\n"
    "input e integer [1, 4]\ninput f real [0, 1]\n"
    "output load real\noutput grade levels {low, mid, high}\noutput wait real\n"
    "a -> load\nb -> load\nsite -> load\ne -> load\nload -> wait\nf -> wait\n"
    "site -> grade\na -> grade\n";

typedef struct {
    cov_data d;
    double *cols[N_VARS];
    size_t n_missing[N_VARS], n_outside[N_VARS];
} fixture;

static void make_fixture(fixture *f, const cov_graph *g, size_t n)
{
    memset(f, 0, sizeof *f);
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, 20261205UL);
    size_t a = 0, b = 1, site = 2, e = 3, fv = 4, load = 5, grade = 6, wait = 7;
    for (size_t v = 0; v < N_VARS; v++) f->cols[v] = malloc(n * sizeof(double));
    for (size_t i = 0; i < n; i++) {
        int rep = i > 0 && i % 3 == 0;   /* every third run replicates the one before it */
        for (size_t v = 0; v <= fv; v++) {
            if (rep) {
                f->cols[v][i] = f->cols[v][i - 1];
                continue;
            }
            f->cols[v][i] = v == a ? 10 * gsl_rng_uniform(r)
                            : v == b ? 1000 + gsl_rng_uniform(r)
                            : v == site ? (double)gsl_rng_uniform_int(r, 3)
                            : v == e ? (double)(1 + gsl_rng_uniform_int(r, 4))
                                     : gsl_rng_uniform(r);
        }
        double x = 0.5 * f->cols[a][i] + 3 * (f->cols[b][i] - 1000) + 0.7 * f->cols[site][i] +
                   0.2 * f->cols[e][i];
        f->cols[load][i] = x + gsl_ran_lognormal(r, 0, 1) * (1 + 0.3 * f->cols[a][i]);
        double u = 0.1 * f->cols[a][i] + 0.3 * f->cols[site][i] + gsl_ran_gaussian(r, 0.5);
        f->cols[grade][i] = u < 0.5 ? 0 : u < 1.0 ? 1 : 2;
        f->cols[wait][i] = gsl_rng_uniform(r) < 0.3 ? 0 : 2 * f->cols[load][i] +
                                                           gsl_ran_cauchy(r, 0.1) + f->cols[fv][i];
        if (i % 997 == 5) {
            f->cols[wait][i] = NAN;
            f->n_missing[wait]++;
        }
    }
    gsl_rng_free(r);
    (void)g;
    f->d.n_runs = n;
    f->d.n_vars = N_VARS;
    f->d.col = f->cols;
    f->d.n_missing = f->n_missing;
    f->d.n_outside = f->n_outside;
}

static int same_moments(const pw_moments *a, const pw_moments *b)
{
    if (a == NULL || b == NULL || a->k != b->k || memcmp(&a->n, &b->n, sizeof a->n) != 0) return 0;
    if (memcmp(a->mean, b->mean, a->k * sizeof *a->mean) != 0) return 0;
    for (size_t i = 0; i < a->k; i++)
        if (memcmp(a->xprod + i * a->k + i, b->xprod + i * b->k + i,
                   (a->k - i) * sizeof *a->xprod) != 0)
            return 0;
    return 1;
}

/* The global columns built here independently of xshare.c: site as 2 dummies against hill, grade
 * as 2 dummies and its level index, wait left out (missing cells); summed block after block as
 * the assessment does on its own. */
static pw_moments *reference_global(const fixture *f)
{
    const size_t K = 10;
    pw_moments *m = NULL;
    if (pw_moments_alloc(K, &m) != PW_OK) return NULL;
    double *rows = malloc(COV_XSHARE_BLOCK * K * sizeof *rows);
    for (size_t r0 = 0; r0 < f->d.n_runs; r0 += COV_XSHARE_BLOCK) {
        size_t nb = f->d.n_runs - r0 < COV_XSHARE_BLOCK ? f->d.n_runs - r0 : COV_XSHARE_BLOCK;
        for (size_t r = 0; r < nb; r++) {
            double *row = rows + r * K;
            size_t i = r0 + r;
            row[0] = f->cols[0][i];
            row[1] = f->cols[1][i];
            row[2] = f->cols[2][i] == 1;
            row[3] = f->cols[2][i] == 2;
            row[4] = f->cols[3][i];
            row[5] = f->cols[4][i];
            row[6] = f->cols[5][i];
            row[7] = f->cols[6][i] == 1;
            row[8] = f->cols[6][i] == 2;
            row[9] = f->cols[6][i];
        }
        pw_moments_add_block(m, rows, nb);
    }
    free(rows);
    return m;
}

static void test_totals(const fixture *f, const cov_graph *g)
{
    pw_moments *ref = reference_global(f);
    cov_summary *own = NULL;
    unsigned char want[N_VARS] = {0};
    gsl_test_int(cov_summary_build(g, &f->d, want, 1, &own), COV_OK, "xshare: summary by itself");
    for (int t = 1; t <= 3; t++) {
        cov_xshare *x = NULL;
        gsl_test_int(cov_xshare_build(g, &f->d, t, &x), COV_OK, "xshare: built with %d threads", t);
        if (x == NULL || ref == NULL || own == NULL) continue;
        /* a, b, site's 2 dummies, e, f, load, grade's 2 dummies and its level index: compared
         * column by column wherever xshare.c placed them. */
        gsl_test_int((int)x->k, 10, "xshare: 10 global columns (%d threads)", t);
        size_t map[10] = {x->base[0], x->base[1], x->base[2], x->base[2] + 1, x->base[3],
                          x->base[4], x->base[5], x->base[6], x->base[6] + 1, x->index_col[6]};
        int ok = x->global != NULL && memcmp(&x->global->n, &ref->n, sizeof ref->n) == 0;
        for (size_t p = 0; ok && p < 10; p++) {
            ok &= memcmp(&x->global->mean[map[p]], &ref->mean[p], sizeof(double)) == 0;
            for (size_t q = p; ok && q < 10; q++) {
                double got = pw_moments_at(x->global, map[p], map[q]);
                double want_pq = pw_moments_at(ref, p, q);
                ok &= memcmp(&got, &want_pq, sizeof got) == 0;
            }
        }
        gsl_test(!ok, "xshare: global cross-products = block-by-block sum bit for bit (%d "
                 "threads)", t);
        gsl_test(!(x->base[7] == SIZE_MAX && x->sub_col[2] == SIZE_MAX),
                 "xshare: missing cells and level sets left out where due (%d threads)", t);
        gsl_test(!same_moments(x->sub, own->xprod), "xshare: subset = the summary's own shards "
                 "bit for bit (%d threads)", t);
        cov_xshare_free(x);
    }
    cov_summary_free(own);
    pw_moments_free(ref);
}

/* The claims' figures from the shared pass against each part summing on its own. */
static void test_figures(const fixture *f, const cov_graph *g)
{
    cov_claims *cl = NULL;
    cov_error err;
    if (cov_claims_derive(g, &cl, &err) != COV_OK) {
        gsl_test(1, "xshare: claims derive (%s)", err.msg);
        return;
    }
    /* The CLI's defaults: robust test, power by the noise (resampled where it asks for it). */
    cov_power_options po = {0.05, 0.80, 1, 0, COV_TEST_ROBUST, COV_POWER_BY_AUTO, 0, 0, 1};
    cov_coverage_options co = {5, 10, 2, 0.5, 20261202UL, 2};
    cov_xshare *x = NULL;
    cov_assessments *a0 = NULL, *a1 = NULL;
    cov_supports *s0 = NULL, *s1 = NULL;
    int built = cov_xshare_build(g, &f->d, 2, &x) == COV_OK;
    int rc = cov_assess(g, cl, &f->d, &po, &a0, &err) | cov_support_measure(g, cl, &f->d, &co,
                                                                            &s0, &err);
    if (built)
        rc |= cov_assess_shared(g, cl, &f->d, &po, x, &a1, &err) |
              cov_support_measure_shared(g, cl, &f->d, &co, x, &s1, &err);
    gsl_test(!built || rc != COV_OK, "xshare: assessment and support with and without it");
    size_t same = 0, fitted = 0;
    for (size_t k = 0; rc == COV_OK && built && k < cl->n; k++) {
        const cov_assessment *p = &a0->items[k], *q = &a1->items[k];
        const double *pv[] = {&p->df, &p->estimate, &p->se, &p->sigma, &p->sd_treatment_resid,
                              &p->vif, &p->power, &p->power_lo, &p->power_hi, &p->mde,
                              &p->runs_needed};
        const double *qv[] = {&q->df, &q->estimate, &q->se, &q->sigma, &q->sd_treatment_resid,
                              &q->vif, &q->power, &q->power_lo, &q->power_hi, &q->mde,
                              &q->runs_needed};
        int eq = p->n == q->n && p->verdict == q->verdict &&
                 memcmp(&s0->items[k].spread_resid, &s1->items[k].spread_resid,
                        sizeof(double)) == 0;
        for (size_t j = 0; j < sizeof pv / sizeof *pv; j++)
            eq &= memcmp(pv[j], qv[j], sizeof(double)) == 0;
        same += eq;
        fitted += isfinite(p->sigma);
    }
    gsl_test(same != cl->n || fitted < 5, "xshare: %zu of %zu claims' figures identical bit for "
             "bit (%zu fitted)", same, cl->n, fitted);
    cov_assessments_free(a0);
    cov_assessments_free(a1);
    cov_supports_free(s0);
    cov_supports_free(s1);
    cov_xshare_free(x);
    cov_claims_free(cl);
}

/* pw_moments_of_block against its definition written out here: the block's means summed in row
 * order and divided by nb, deviations from them, and each cross-product the sum over rows in
 * order from 0, so bit for bit; over shapes that leave every remainder of the register tiles. */
static void test_block_kernel(void)
{
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, 20261206UL);
    size_t shapes = 0, wrong = 0;
    const size_t ks[] = {1, 2, 3, 5, 8, 9, 12, 13, 17, 31, 80, 83};
    const size_t nbs[] = {1, 2, 7, 64, 107, 128};
    for (size_t a = 0; a < sizeof ks / sizeof *ks; a++)
        for (size_t b = 0; b < sizeof nbs / sizeof *nbs; b++) {
            size_t k = ks[a], nb = nbs[b];
            double *rows = malloc(nb * k * sizeof *rows), *dev = malloc(nb * k * sizeof *dev);
            double *mean = calloc(k, sizeof *mean);
            pw_moments *m = NULL;
            if (rows == NULL || dev == NULL || mean == NULL || pw_moments_alloc(k, &m) != PW_OK)
                break;
            for (size_t i = 0; i < nb * k; i++)   /* skewed, far from zero in some columns */
                rows[i] = (i % k % 3 == 0 ? 1000 : 0) + gsl_ran_lognormal(r, 0, 1.5);
            for (size_t i = 0; i < nb; i++)
                for (size_t j = 0; j < k; j++) mean[j] += rows[i * k + j];
            for (size_t j = 0; j < k; j++) mean[j] /= (double)nb;
            for (size_t i = 0; i < nb * k; i++) dev[i] = rows[i] - mean[i % k];
            int ok = pw_moments_of_block(rows, nb, m) == PW_OK && m->n == (double)nb &&
                     memcmp(m->mean, mean, k * sizeof *mean) == 0;
            for (size_t i = 0; ok && i < k; i++)
                for (size_t j = i; ok && j < k; j++) {
                    double s = 0;
                    for (size_t q = 0; q < nb; q++) s += dev[q * k + i] * dev[q * k + j];
                    ok = memcmp(&s, &m->xprod[i * k + j], sizeof s) == 0;
                }
            shapes++;
            wrong += !ok;
            pw_moments_free(m);
            free(rows);
            free(dev);
            free(mean);
        }
    gsl_rng_free(r);
    gsl_test(shapes != 72 || wrong > 0, "xshare: block moments = the row-order sums bit for bit "
             "(%zu shapes, %zu differ)", shapes, wrong);
}

int main(void)
{
    gsl_set_error_handler_off();
    gsl_test_verbose(1);   /* one PASS line per check, for the runner's count */
    cov_graph *g = NULL;
    cov_error err;
    if (cov_graph_parse_text("xshare.graph", GRAPH, &g, &err) != COV_OK) {
        gsl_test(1, "xshare: test graph parses (%s %s)", err.where, err.msg);
        return gsl_test_summary();
    }
    fixture f;
    make_fixture(&f, g, N_RUNS);
    test_block_kernel();
    test_totals(&f, g);
    test_figures(&f, g);
    for (size_t v = 0; v < N_VARS; v++) free(f.cols[v]);
    cov_graph_free(g);
    return gsl_test_summary();
}
