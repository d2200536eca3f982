/* Tests of the shared, mergeable summaries behind each claim's support: shards merged against one
 * pass, a direct two-pass computation and GSL's least squares; results independent of the thread
 * count. See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_multifit.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include <gsl/gsl_test.h>

#include "coverage/measure/measure.h"

/* Invented data only (fixed seed): like a simulator's archive, with replicated configurations,
 * inputs far from zero, a skewed and zero-inflated output and noise that grows with load. */
#define N_RUNS 140011     /* three shards of the summary, the last one short */
#define N_IN 5
#define N_VARS (N_IN + 2)
/* Merging by Chan, Golub & LeVeque (1983) changes only the order of rounding; 1e-9 relative to
 * the scale sqrt(C_ii C_jj) is the bar and leaves ~6 digits of room at these sizes. */
#define TOL 1e-9

static const char *GRAPH =
    "# Invented test graph.\n"
    "default effect 0.2 sd\ndefault margin 0.1 sd\ndesign independent\n"
    "input a real [0, 10]\ninput b real [1000, 1001]\ninput c real [0, 1]\n"
    "input e integer [1, 4]\ninput f real [0, 1]\n"
    "output load real\noutput wait real\n"
    "a -> load\nb -> load\nc -> load\ne -> load\nload -> wait\nf -> wait\n";

typedef struct {
    cov_data d;
    double *cols[N_VARS];
    size_t n_missing[N_VARS], n_outside[N_VARS];
} fixture;

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

static void make_fixture(fixture *f, size_t n)
{
    memset(f, 0, sizeof *f);
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, 20261205UL);
    for (size_t v = 0; v < N_VARS; v++) f->cols[v] = malloc(n * sizeof(double));
    for (size_t i = 0; i < n; i++) {
        /* Every third run replicates the one before it (same configuration, new noise). */
        int rep = i > 0 && i % 3 == 0;
        double *x[N_IN];
        for (size_t v = 0; v < N_IN; v++) x[v] = f->cols[v];
        if (rep) {
            for (size_t v = 0; v < N_IN; v++) x[v][i] = x[v][i - 1];
        } else {
            x[0][i] = 10 * gsl_rng_uniform(r);
            x[1][i] = 1000 + gsl_rng_uniform(r);            /* mean far from zero */
            x[2][i] = gsl_rng_uniform(r) < 0.5 ? 0 : gsl_rng_uniform(r);   /* half zeros */
            x[3][i] = (double)(1 + gsl_rng_uniform_int(r, 4));
            x[4][i] = gsl_rng_uniform(r);
        }
        double load = 0.5 * x[0][i] + 3 * (x[1][i] - 1000) + x[2][i] + 0.2 * x[3][i];
        load += gsl_ran_lognormal(r, 0, 1) * (1 + 0.3 * x[0][i]);  /* skewed, grows with load */
        double wait = gsl_rng_uniform(r) < 0.3 ? 0 : 2 * load + gsl_ran_cauchy(r, 0.1) + x[4][i];
        f->cols[N_IN][i] = load;
        f->cols[N_IN + 1][i] = wait;
    }
    gsl_rng_free(r);
    f->d.n_runs = n;
    f->d.n_vars = N_VARS;
    f->d.col = f->cols;
    f->d.n_missing = f->n_missing;
    f->d.n_outside = f->n_outside;
}

static void free_fixture(fixture *f)
{
    for (size_t v = 0; v < N_VARS; v++) free(f->cols[v]);
}

static double scale_of(const pw_moments *m, size_t i, size_t j)
{
    return sqrt(pw_moments_at(m, i, i) * pw_moments_at(m, j, j));
}

/* Moments of rows [r0, r1) of the fixture, one block. */
static pw_moments *moments_of(const fixture *f, size_t r0, size_t r1)
{
    pw_moments *m = NULL;
    double *rows = malloc((r1 - r0) * N_VARS * sizeof *rows);
    for (size_t i = r0; i < r1; i++)
        for (size_t v = 0; v < N_VARS; v++) rows[(i - r0) * N_VARS + v] = f->cols[v][i];
    if (pw_moments_alloc(N_VARS, &m) == PW_OK) pw_moments_add_block(m, rows, r1 - r0);
    free(rows);
    return m;
}

/* Four shards of uneven sizes merged against one pass, and both against a direct two-pass
 * computation in long double (the textbook centred sums; an independent method). */
static void test_shard_merge(const fixture *f)
{
    size_t n = f->d.n_runs, cut[5] = {0, 1, n / 3, n / 3 + 4999, n};
    pw_moments *one = moments_of(f, 0, n), *merged = NULL;
    pw_moments_alloc(N_VARS, &merged);
    for (int s = 0; s < 4; s++) {
        pw_moments *part = moments_of(f, cut[s], cut[s + 1]);
        gsl_test_int(pw_moments_merge(merged, part), PW_OK, "summary: shard %d merges", s);
        pw_moments_free(part);
    }
    gsl_test_rel(merged->n, (double)n, 0, "summary: 4 shards merged count every run once");
    long double mean[N_VARS] = {0};
    for (size_t v = 0; v < N_VARS; v++) {
        for (size_t i = 0; i < n; i++) mean[v] += f->cols[v][i];
        mean[v] /= (long double)n;
    }
    double worst_merge = 0, worst_direct = 0;
    for (size_t a = 0; a < N_VARS; a++) {
        double s = sqrt(pw_moments_at(one, a, a) / (double)n);
        worst_merge = fmax(worst_merge, fabs(merged->mean[a] - one->mean[a]) / s);
        worst_direct = fmax(worst_direct, fabs((double)(merged->mean[a] - mean[a])) / s);
        for (size_t b = a; b < N_VARS; b++) {
            long double c = 0;
            for (size_t i = 0; i < n; i++)
                c += ((long double)f->cols[a][i] - mean[a]) * ((long double)f->cols[b][i] - mean[b]);
            double sc = scale_of(one, a, b);
            worst_merge = fmax(worst_merge,
                               fabs(pw_moments_at(merged, a, b) - pw_moments_at(one, a, b)) / sc);
            worst_direct = fmax(worst_direct, fabs((double)(pw_moments_at(merged, a, b) - c)) / sc);
        }
    }
    gsl_test(!(worst_merge <= TOL), "summary: 4 shards merged = one pass, every mean and "
             "cross-product within %g of its scale (worst %.2g; Chan, Golub & LeVeque 1983)", TOL,
             worst_merge);
    gsl_test(!(worst_direct <= TOL), "summary: merged moments = direct two-pass sums in long "
             "double within %g of scale (worst %.2g)", TOL, worst_direct);

    /* sd(X | S) of every input given the other inputs, from merged shards against one pass and
     * against GSL's least squares over the runs (gsl_multifit_linear, SVD). */
    double worst_sd = 0, worst_gsl = 0;
    gsl_matrix *A = gsl_matrix_alloc(n, N_IN), *cov = gsl_matrix_alloc(N_IN, N_IN);
    gsl_vector *y = gsl_vector_alloc(n), *coef = gsl_vector_alloc(N_IN);
    gsl_multifit_linear_workspace *w = gsl_multifit_linear_alloc(n, N_IN);
    for (size_t t = 0; t < N_IN; t++) {
        size_t idx[N_IN], k = 0;
        for (size_t v = 0; v < N_IN; v++)
            if (v != t) idx[k++] = v;
        idx[k] = t;
        pw_xfit *f1 = NULL, *f2 = NULL;
        pw_xfit_solve(one, idx, k, 0, &f1);
        pw_xfit_solve(merged, idx, k, 0, &f2);
        double sd1 = sqrt(f1->rss / (double)n), sd2 = sqrt(f2->rss / (double)n);
        worst_sd = fmax(worst_sd, fabs(sd1 - sd2) / sd1);
        for (size_t i = 0; i < n; i++) {
            gsl_matrix_set(A, i, 0, 1.0);
            for (size_t j = 0; j < k; j++) gsl_matrix_set(A, i, j + 1, f->cols[idx[j]][i]);
            gsl_vector_set(y, i, f->cols[t][i]);
        }
        double chisq = NAN;
        gsl_multifit_linear(A, y, coef, cov, &chisq, w);
        worst_gsl = fmax(worst_gsl, fabs(sd2 - sqrt(chisq / (double)n)) / sd2);
        pw_xfit_free(f1);
        pw_xfit_free(f2);
    }
    gsl_test(!(worst_sd <= TOL), "summary: sd(X | S) from 4 merged shards = one pass within %g "
             "(worst %.2g)", TOL, worst_sd);
    gsl_test(!(worst_gsl <= TOL), "summary: sd(X | S) from merged cross-products = GSL "
             "least squares over the runs (gsl_multifit_linear) within %g (worst %.2g)", TOL,
             worst_gsl);
    gsl_matrix_free(A);
    gsl_matrix_free(cov);
    gsl_vector_free(y);
    gsl_vector_free(coef);
    gsl_multifit_linear_free(w);
    pw_moments_free(one);
    pw_moments_free(merged);
}

/* The support of every claim with 1, 2 and 3 threads: the same figures, bit for bit. */
static void test_threads(const fixture *f)
{
    cov_graph *g = NULL;
    cov_claims *cl = NULL;
    cov_error err;
    if (cov_graph_parse_text("summary.graph", GRAPH, &g, &err) || cov_claims_derive(g, &cl, &err)) {
        gsl_test(1, "summary: test graph parses (%s %s)", err.where, err.msg);
        return;
    }
    cov_coverage_options opt = {5, 10, 2, 0.5, 20261202UL, 1};
    cov_supports *s[3] = {NULL, NULL, NULL};
    for (int t = 0; t < 3; t++) {
        opt.threads = t + 1;
        gsl_test_int(cov_support_measure(g, cl, &f->d, &opt, &s[t], &err), COV_OK,
                     "summary: support with %d threads", t + 1);
    }
    int same = s[0] && s[1] && s[2], pure = 0;
    for (size_t k = 0; same && k < cl->n; k++)
        for (int t = 1; t < 3; t++) {
            const cov_support *a = &s[0]->items[k], *b = &s[t]->items[k];
            same &= a->n == b->n && a->distinct == b->distinct && a->ok == b->ok
                    && memcmp(&a->spread, &b->spread, sizeof a->spread) == 0
                    && memcmp(&a->spread_resid, &b->spread_resid, sizeof a->spread_resid) == 0
                    && memcmp(&a->runs_per_config, &b->runs_per_config, sizeof(double)) == 0
                    && a->pure_error == b->pure_error;
            pure += a->pure_error;
        }
    gsl_test(!same, "summary: support of %zu claims identical bit for bit with 1, 2, 3 threads",
             cl->n);
    /* The shared distinct counts against the C library's sort of each treatment column (an
     * independent count: adjacent unequal values after qsort). */
    size_t checked = 0, wrong = 0;
    for (size_t k = 0; s[0] != NULL && k < cl->n; k++) {
        size_t t = cl->items[k].treatment;
        if (!s[0]->items[k].ok || f->d.col[t] == NULL || f->d.n_missing[t] > 0) continue;
        double *x = malloc(f->d.n_runs * sizeof *x);
        memcpy(x, f->d.col[t], f->d.n_runs * sizeof *x);
        qsort(x, f->d.n_runs, sizeof *x, cmp_double);
        size_t distinct = f->d.n_runs > 0;
        for (size_t i = 1; i < f->d.n_runs; i++) distinct += x[i] != x[i - 1];
        free(x);
        checked++;
        wrong += s[0]->items[k].distinct != distinct;
    }
    gsl_test(checked == 0 || wrong > 0, "summary: distinct treatment values of %zu claims equal "
             "a sorted count (%zu differ)", checked, wrong);
    /* The replicated configurations show: runs per configuration of claims on inputs only. */
    gsl_test(pure == 0, "summary: replicated configurations found (pure error on %d claims)", pure);
    for (int t = 0; t < 3; t++) cov_supports_free(s[t]);
    cov_claims_free(cl);
    cov_graph_free(g);
}

int main(void)
{
    gsl_set_error_handler_off();
    gsl_test_verbose(1);   /* one PASS line per check, for the runner's count */
    fixture f;
    make_fixture(&f, N_RUNS);
    test_shard_merge(&f);
    test_threads(&f);
    free_fixture(&f);
    return gsl_test_summary();
}
