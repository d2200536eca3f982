/* Tests of each claim's support counts where claims have a switch or a level set: the distinct
 * treatment values and the runs per configuration, however shoal settles them (level indices,
 * the shared summaries' distinct counts, a member distinct in every run, or hashing the rows),
 * against an independent count by sorting. See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include <gsl/gsl_test.h>

#include "coverage/measure/measure.h"

/* Invented data only (fixed seed), shaped like a simulator's archive: a switch, a level set with
 * a declared level never run, a small integer input, replicated configurations, an input and an
 * output with missing cells, continuous inputs (each names its configuration), a skewed output
 * whose noise grows with load (zero where the run stayed idle), a zero-inflated, heavy-tailed one
 * and one that bends. */
#define N_RUNS 30011
enum { SW, MODE, K, A, G, U, H, LOAD, WAIT, HEAT, N_VARS };

static const char *GRAPH =
    "# Invented test graph.\n"
    "default effect 0.2 sd\ndefault margin 0.1 sd\ndesign independent\nnoise independent\n"
    "input sw bool\ninput mode levels {low, mid, high, idle}\ninput k integer [1, 4]\n"
    "input a real [0, 10]\ninput g real [0, 1]\ninput u real [0, 1]\ninput h real [0, 1]\n"
    "output load real\noutput wait real\noutput heat real\n"
    "sw -> load\nmode -> load\nk -> load\na -> load\ng -> load\nload -> wait\nu -> wait\n"
    "mode -> wait\nh -> wait\nload -> heat\n";

typedef struct {
    cov_data d;
    double *cols[N_VARS];
    size_t n_missing[N_VARS], n_outside[N_VARS];
} fixture;

/* idle: the share of runs whose load stays 0 (the system idled): a load that repeats. */
static void make_fixture(fixture *f, size_t n, double idle)
{
    memset(f, 0, sizeof *f);
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, 20261206UL);
    for (size_t v = 0; v < N_VARS; v++) f->cols[v] = malloc(n * sizeof(double));
    double **c = f->cols;
    for (size_t i = 0; i < n; i++) {
        /* Every third run replicates the configuration before it. */
        if (i > 0 && i % 3 == 0) {
            for (int v = SW; v <= H; v++) c[v][i] = c[v][i - 1];
        } else {
            c[SW][i] = gsl_rng_uniform(r) < 0.25;
            c[MODE][i] = (double)gsl_rng_uniform_int(r, 3);   /* "idle" (3) is never run */
            c[K][i] = (double)(1 + gsl_rng_uniform_int(r, 4));
            c[A][i] = 10 * gsl_rng_uniform(r);
            c[G][i] = gsl_rng_uniform(r);
            c[U][i] = gsl_rng_uniform(r);
            c[H][i] = gsl_rng_uniform(r) < 0.03 ? NAN : gsl_rng_uniform(r);
        }
        double load = 2 * c[SW][i] + 0.5 * c[MODE][i] + 0.3 * c[K][i] + 0.4 * c[A][i] + c[G][i];
        load += gsl_ran_lognormal(r, 0, 0.8) * (1 + 0.2 * c[A][i]);
        c[LOAD][i] = gsl_rng_uniform(r) < idle ? 0 : load;
        c[WAIT][i] = gsl_rng_uniform(r) < 0.3 ? 0
                     : load + c[U][i] + 0.3 * c[MODE][i] + gsl_ran_cauchy(r, 0.2);
        if (gsl_rng_uniform(r) < 0.02) c[WAIT][i] = NAN;   /* a run that failed to report it */
        else if (!isnan(c[H][i])) c[WAIT][i] += c[H][i];
        c[HEAT][i] = 0.1 * load * load + gsl_ran_gamma(r, 2, 0.5);
    }
    for (size_t i = 0; i < n; i++)
        for (size_t v = 0; v < N_VARS; v++) f->n_missing[v] += isnan(c[v][i]);
    gsl_rng_free(r);
    f->d.n_runs = n;
    f->d.n_vars = N_VARS;
    f->d.col = f->cols;
    f->d.n_missing = f->n_missing;
    f->d.n_outside = f->n_outside;
}

static size_t row_width;   /* qsort's comparison has no context argument */

static int cmp_rows(const void *pa, const void *pb)
{
    const double *a = pa, *b = pb;
    for (size_t j = 0; j < row_width; j++)
        if (a[j] != b[j]) return a[j] < b[j] ? -1 : 1;
    return 0;
}

/* Distinct rows of an n x k table, by sorting a copy and counting changes. */
static size_t sorted_distinct(double *t, size_t n, size_t k)
{
    row_width = k;
    qsort(t, n, k * sizeof *t, cmp_rows);
    size_t m = n > 0;
    for (size_t i = 1; i < n; i++) m += cmp_rows(t + (i - 1) * k, t + i * k) != 0;
    return m;
}

/* How many claims took each way of settling the counts, over the fixtures. */
typedef struct {
    size_t checked, categorical, partial, all_distinct, replicated, inputs;
} reach;

/* Each testable claim's support counts against sorting the claim's complete rows. */
static void test_counts(fixture *f, const char *label, reach *rc)
{
    cov_graph *g = NULL;
    cov_claims *cl = NULL;
    cov_error err;
    if (cov_graph_parse_text("support.graph", GRAPH, &g, &err) || cov_claims_derive(g, &cl, &err)) {
        gsl_test(1, "support: test graph parses (%s %s)", err.where, err.msg);
        return;
    }
    /* What counts as one run, and the configurations of all inputs (coverage/archive/runs.c). */
    gsl_test_int(cov_runs_identify(&f->d, g, NULL, &err), COV_OK, "support (%s): runs identified",
                 label);
    /* No row repeats another: every run is kept. */
    gsl_test(!(f->d.n_configs > 0 && f->d.n_configs < f->d.n_runs && f->d.n_runs == N_RUNS),
             "support (%s): %zu runs in %zu configurations", label, f->d.n_runs, f->d.n_configs);
    cov_coverage_options opt = {5, 10, 2, 0.5, 20261202UL, 1};
    cov_supports *s = NULL;
    gsl_test_int(cov_support_measure(g, cl, &f->d, &opt, &s, &err), COV_OK,
                 "support (%s): measured", label);
    size_t bad_n = 0, bad_distinct = 0, bad_rpc = 0;
    double *t = malloc(N_RUNS * (2 + N_VARS) * sizeof *t), *x = malloc(N_RUNS * sizeof *x);
    for (size_t c = 0; s != NULL && c < cl->n; c++) {
        const cov_claim *it = &cl->items[c];
        if (it->status != COV_TESTABLE) continue;
        size_t k1 = 1 + it->n_cond, n = 0;
        for (size_t i = 0; i < N_RUNS; i++) {
            int whole = !isnan(f->cols[it->treatment][i]) && !isnan(f->cols[it->outcome][i]);
            for (size_t j = 0; j < it->n_cond; j++) whole &= !isnan(f->cols[it->cond[j]][i]);
            if (!whole) continue;
            x[n] = f->cols[it->treatment][i];
            t[n * k1] = x[n];
            for (size_t j = 0; j < it->n_cond; j++) t[n * k1 + 1 + j] = f->cols[it->cond[j]][i];
            n++;
        }
        size_t distinct = sorted_distinct(x, n, 1), configs = sorted_distinct(t, n, k1);
        const cov_support *sp = &s->items[c];
        rc->checked++;
        int cat = g->vars[it->treatment].type == COV_BOOL ||
                  g->vars[it->treatment].type == COV_LEVELS;
        for (size_t j = 0; j < it->n_cond; j++) cat |= g->vars[it->cond[j]].type == COV_LEVELS;
        rc->categorical += cat;
        rc->partial += n < N_RUNS;
        rc->all_distinct += configs == n;
        rc->replicated += configs < n;
        int only_inputs = g->vars[it->treatment].role == COV_INPUT;
        for (size_t j = 0; j < it->n_cond; j++)
            only_inputs &= g->vars[it->cond[j]].role == COV_INPUT;
        rc->inputs += only_inputs && n == N_RUNS && configs < n;
        bad_n += sp->n != n;
        bad_distinct += sp->distinct != distinct;
        bad_rpc += !(sp->runs_per_config == (double)n / (double)configs);
    }
    free(t);
    free(x);
    gsl_test(bad_n != 0, "support (%s): rows used equal the complete rows (%zu claims differ)",
             label, bad_n);
    gsl_test(bad_distinct != 0, "support (%s): distinct treatment values equal a sorted count (%zu "
             "claims differ)", label, bad_distinct);
    gsl_test(bad_rpc != 0, "support (%s): runs per configuration equal a sorted count of the "
             "configurations (%zu claims differ)", label, bad_rpc);
    cov_supports_free(s);
    cov_claims_free(cl);
    cov_graph_free(g);
}

int main(void)
{
    gsl_set_error_handler_off();
    gsl_test_verbose(1);   /* one PASS line per check, for the runner's count */
    reach rc = {0, 0, 0, 0, 0, 0};
    for (int idle = 0; idle < 2; idle++) {
        fixture f;
        make_fixture(&f, N_RUNS, idle ? 0.2 : 0);
        test_counts(&f, idle ? "load idles in a fifth of the runs" : "load never idles", &rc);
        for (size_t v = 0; v < N_VARS; v++) free(f.cols[v]);
        free(f.d.row_of);
    }
    /* The fixtures reach every way of settling the counts. */
    gsl_test(rc.checked < 40 || rc.categorical < 16 || rc.partial < 6 || rc.all_distinct < 6 ||
             rc.replicated < 6 || rc.inputs < 4,
             "support: %zu claims checked (%zu with a switch or level set, %zu on part of the "
             "runs, %zu with every configuration distinct, %zu with replicates, %zu of them on "
             "inputs only and every run)", rc.checked, rc.categorical, rc.partial,
             rc.all_distinct, rc.replicated, rc.inputs);
    return gsl_test_summary();
}
