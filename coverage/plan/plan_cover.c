/* The coverage bonus of a candidate run in `shoal plan`: 2-way cells short of runs, gaps to runs.
 * See LICENSE. */
#include <math.h>
#include <stdlib.h>

#include <gsl/gsl_rng.h>

#include "coverage/plan/plan.h"

/* Runs of the archive the distance bonus measures against (a fixed-seed sample beyond that). */
#define PLAN_GAP_SAMPLE 2000

struct cov_plan_cover {
    const cov_graph *g;
    const double *cand_vals;  /* borrowed: n_cand * n_vars */
    size_t n_cand;
    size_t *pair_a, *pair_b, n_pairs;
    size_t *pair_nb;          /* bins of b */
    size_t **pair_count;
    long *cand_bin;           /* n_cand * n_vars */
    size_t min_runs;
    size_t *gap_vars, n_gap_vars;
    double *cand_gap;         /* n_cand: distance to the nearest run in the unit cube */
};

static int cover_init(cov_plan_cover *cv, const cov_data *d, const cov_coverage_options *copt,
                      unsigned long seed)
{
    const cov_graph *g = cv->g;
    size_t nv = g->n_vars, bins = copt != NULL && copt->bins > 0 ? copt->bins : 10;
    cv->min_runs = copt != NULL && copt->min_runs > 0 ? copt->min_runs : 5;
    size_t n_free = 0;
    for (size_t v = 0; v < nv; v++)
        if (g->vars[v].role == COV_INPUT && !g->vars[v].held) n_free++;
    size_t max_pairs = n_free * (n_free > 0 ? n_free - 1 : 0) / 2;
    cv->pair_a = malloc((max_pairs + 1) * sizeof(size_t));
    cv->pair_b = malloc((max_pairs + 1) * sizeof(size_t));
    cv->pair_nb = malloc((max_pairs + 1) * sizeof(size_t));
    cv->pair_count = calloc(max_pairs + 1, sizeof(size_t *));
    cv->cand_bin = malloc((cv->n_cand * nv + 1) * sizeof(long));
    cv->gap_vars = malloc((nv + 1) * sizeof(size_t));
    cv->cand_gap = malloc((cv->n_cand + 1) * sizeof(double));
    if (cv->pair_a == NULL || cv->pair_b == NULL || cv->pair_nb == NULL || cv->pair_count == NULL ||
        cv->cand_bin == NULL || cv->gap_vars == NULL || cv->cand_gap == NULL)
        return COV_ENOMEM;
    for (size_t c = 0; c < cv->n_cand; c++)
        for (size_t v = 0; v < nv; v++)
            cv->cand_bin[c * nv + v] = g->vars[v].role == COV_INPUT
                                           ? cov_bin_of(&g->vars[v], bins, cv->cand_vals[c * nv + v])
                                           : -1;
    for (size_t a = 0; a < nv; a++) {
        const cov_var *va = &g->vars[a];
        if (va->role != COV_INPUT || va->held) continue;
        if (cov_plan_is_numeric(va)) cv->gap_vars[cv->n_gap_vars++] = a;
        for (size_t b = a + 1; b < nv; b++) {
            const cov_var *vb = &g->vars[b];
            if (vb->role != COV_INPUT || vb->held) continue;
            size_t na = cov_bin_count(va, bins), nb = cov_bin_count(vb, bins);
            size_t *cnt = calloc(na * nb + 1, sizeof *cnt);
            if (cnt == NULL) return COV_ENOMEM;
            for (size_t i = 0; d != NULL && i < d->n_runs; i++) {
                long ba = cov_bin_of(va, bins, d->col[a][i]), bb = cov_bin_of(vb, bins, d->col[b][i]);
                if (ba >= 0 && bb >= 0) cnt[(size_t)ba * nb + (size_t)bb]++;
            }
            cv->pair_a[cv->n_pairs] = a;
            cv->pair_b[cv->n_pairs] = b;
            cv->pair_nb[cv->n_pairs] = nb;
            cv->pair_count[cv->n_pairs++] = cnt;
        }
    }
    /* Distance in the unit cube of the numeric inputs from each candidate to the nearest run of a
     * fixed-seed sample of the archive (the fill-distance idea of coverage, per candidate). */
    size_t dn = cv->n_gap_vars;
    double diag = sqrt((double)dn);
    for (size_t c = 0; c < cv->n_cand; c++) cv->cand_gap[c] = diag;
    if (d == NULL || dn == 0 || d->n_runs == 0) return COV_OK;
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    if (r == NULL) return COV_ENOMEM;
    gsl_rng_set(r, seed + 1);
    size_t n_sample = d->n_runs < PLAN_GAP_SAMPLE ? d->n_runs : PLAN_GAP_SAMPLE;
    for (size_t s = 0; s < n_sample; s++) {
        size_t i = n_sample == d->n_runs ? s : (size_t)gsl_rng_uniform_int(r, d->n_runs);
        int ok = 1;
        for (size_t k = 0; ok && k < dn; k++) ok = cov_plan_var_present(d, cv->gap_vars[k], i);
        if (!ok) continue;
        for (size_t c = 0; c < cv->n_cand; c++) {
            double s2 = 0.0;
            for (size_t k = 0; k < dn; k++) {
                const cov_var *var = &g->vars[cv->gap_vars[k]];
                double t = (cv->cand_vals[c * nv + cv->gap_vars[k]] - d->col[cv->gap_vars[k]][i]) /
                           (var->hi - var->lo);
                s2 += t * t;
            }
            if (sqrt(s2) < cv->cand_gap[c]) cv->cand_gap[c] = sqrt(s2);
        }
    }
    gsl_rng_free(r);
    return COV_OK;
}

double cov_plan_cover_bonus(const cov_plan_cover *cv, size_t c)
{
    size_t nv = cv->g->n_vars;
    double cells = 0.0, gap = 0.0;
    if (cv->n_pairs > 0) {
        size_t hit = 0;
        for (size_t k = 0; k < cv->n_pairs; k++) {
            long ba = cv->cand_bin[c * nv + cv->pair_a[k]], bb = cv->cand_bin[c * nv + cv->pair_b[k]];
            if (ba >= 0 && bb >= 0 &&
                cv->pair_count[k][(size_t)ba * cv->pair_nb[k] + (size_t)bb] < cv->min_runs)
                hit++;
        }
        cells = (double)hit / (double)cv->n_pairs;
    }
    if (cv->n_gap_vars > 0) gap = cv->cand_gap[c] / sqrt((double)cv->n_gap_vars);
    return 0.5 * (cells + gap);
}

void cov_plan_cover_commit(cov_plan_cover *cv, size_t chosen, int replicates)
{
    size_t nv = cv->g->n_vars, dn = cv->n_gap_vars;
    for (size_t k = 0; k < cv->n_pairs; k++) {
        long ba = cv->cand_bin[chosen * nv + cv->pair_a[k]];
        long bb = cv->cand_bin[chosen * nv + cv->pair_b[k]];
        if (ba >= 0 && bb >= 0) cv->pair_count[k][(size_t)ba * cv->pair_nb[k] + (size_t)bb] +=
            (size_t)replicates;
    }
    for (size_t c = 0; c < cv->n_cand; c++) {
        double s2 = 0.0;
        for (size_t k = 0; k < dn; k++) {
            const cov_var *var = &cv->g->vars[cv->gap_vars[k]];
            double t = (cv->cand_vals[c * nv + cv->gap_vars[k]] -
                        cv->cand_vals[chosen * nv + cv->gap_vars[k]]) / (var->hi - var->lo);
            s2 += t * t;
        }
        if (sqrt(s2) < cv->cand_gap[c]) cv->cand_gap[c] = sqrt(s2);
    }
}

int cov_plan_cover_alloc(const cov_graph *g, const cov_data *d, const double *cand_vals,
                         size_t n_cand, const cov_coverage_options *copt, unsigned long seed,
                         cov_plan_cover **out)
{
    *out = NULL;
    cov_plan_cover *cv = calloc(1, sizeof *cv);
    if (cv == NULL) return COV_ENOMEM;
    cv->g = g;
    cv->cand_vals = cand_vals;
    cv->n_cand = n_cand;
    int rc = cover_init(cv, d, copt, seed);
    if (rc != COV_OK) {
        cov_plan_cover_free(cv);
        return rc;
    }
    *out = cv;
    return COV_OK;
}

double cov_plan_cover_cost(const cov_plan_cover *cv) { return (double)cv->n_pairs; }

void cov_plan_cover_free(cov_plan_cover *cv)
{
    if (cv == NULL) return;
    for (size_t k = 0; cv->pair_count != NULL && k < cv->n_pairs; k++) free(cv->pair_count[k]);
    free(cv->pair_a);
    free(cv->pair_b);
    free(cv->pair_nb);
    free(cv->pair_count);
    free(cv->cand_bin);
    free(cv->gap_vars);
    free(cv->cand_gap);
    free(cv);
}
