/* Block fixed effects by the within transformation: group means, demeaned cross-products, the
 * blocked regression and the F test of the blocks. See LICENSE. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_cdf.h>

#include "power/power.h"

/* Rows demeaned at a time before they enter the moments: pw_moments_add_block's cache size. */
#define WITHIN_BLOCK 128

struct pw_within {
    size_t k, n_groups;
    double *count;     /* rows per group */
    double *mean;      /* n_groups * k running means */
};

int pw_within_alloc(size_t k, size_t n_groups, pw_within **out)
{
    *out = NULL;
    if (k == 0 || n_groups == 0) return PW_EDOM;
    pw_within *w = calloc(1, sizeof *w);
    if (w == NULL) return PW_ENOMEM;
    w->k = k;
    w->n_groups = n_groups;
    w->count = calloc(n_groups, sizeof *w->count);
    w->mean = calloc(n_groups * k, sizeof *w->mean);
    if (w->count == NULL || w->mean == NULL) {
        pw_within_free(w);
        return PW_ENOMEM;
    }
    *out = w;
    return PW_OK;
}

void pw_within_free(pw_within *w)
{
    if (w == NULL) return;
    free(w->count);
    free(w->mean);
    free(w);
}

/* Welford's (1962) running mean per group: no large sums are formed and subtracted. */
void pw_within_add_mean(pw_within *w, size_t group, const double *row)
{
    double n1 = ++w->count[group];
    double *mu = w->mean + group * w->k;
    for (size_t j = 0; j < w->k; j++) mu[j] += (row[j] - mu[j]) / n1;
}

double pw_within_count(const pw_within *w, size_t group)
{
    return group < w->n_groups ? w->count[group] : 0.0;
}


void pw_within_demean(const pw_within *w, size_t group, const double *row, double *out)
{
    const double *mu = w->mean + group * w->k;
    for (size_t j = 0; j < w->k; j++) out[j] = row[j] - mu[j];
}

int pw_within_fit(const pw_moments *within, const pw_moments *raw, const size_t *idx, size_t k,
                  size_t t, size_t n_groups, pw_xfit **out)
{
    *out = NULL;
    if (within == NULL || raw == NULL || idx == NULL || within->k != raw->k || n_groups == 0)
        return PW_EDOM;
    /* A column with no variance left within the groups up to rounding (it is a function of the
     * group, as a treatment set once per seed would be) is zeroed, so that the solver drops it as
     * constant instead of scaling rounding noise up to a correlation. */
    pw_moments *w = NULL;
    int rc = pw_moments_alloc(within->k, &w);
    if (rc != PW_OK) return rc;
    size_t K = within->k;
    w->n = within->n;
    memcpy(w->mean, within->mean, K * sizeof *w->mean);
    memcpy(w->xprod, within->xprod, K * K * sizeof *w->xprod);
    for (size_t a = 0; a <= k; a++) {
        size_t c = idx[a];
        if (c >= K) {
            pw_moments_free(w);
            return PW_EDOM;
        }
        double total = pw_moments_at(raw, c, c), left = pw_moments_at(within, c, c);
        if (left > PW_ALIAS_TOL * total && left > 0) continue;
        for (size_t j = 0; j < K; j++) {
            if (j >= c) w->xprod[c * K + j] = 0.0;
            else w->xprod[j * K + c] = 0.0;
        }
    }
    pw_xfit *f = NULL;
    rc = pw_xfit_solve(w, idx, k, t, &f);
    pw_moments_free(w);
    if (rc != PW_OK) return rc;
    /* Frisch & Waugh (1933), Lovell (1963): the slopes of y on X with one dummy per group equal
     * those of the group-demeaned y on the group-demeaned X, and so do the residuals; only the
     * degrees of freedom differ, since the n_groups group means were estimated too (Wooldridge,
     * "Econometric Analysis of Cross Section and Panel Data", 2nd ed. 2010, sec. 10.5.1: the
     * within estimator's variance uses N T - N - K). pw_xfit_solve counted one mean (its
     * intercept), so n_groups - 1 more are taken from df, and sigma and every SE rescaled. */
    double df = f->df - (double)(n_groups - 1);
    double scale = df > 0 && f->df > 0 ? sqrt(f->df / df) : NAN;
    f->df = df;
    f->sigma = df > 0 ? sqrt(f->rss / df) : NAN;
    for (size_t a = 0; a < k; a++)
        if (f->kept[a]) f->se[a] *= scale;
    *out = f;
    return PW_OK;
}

int pw_within_ftest(double rss_r, double df_r, double rss_u, double df_u, pw_within_test *out)
{
    out->f = out->p = out->partial_r2 = out->var_drop = NAN;
    out->df1 = df_r - df_u;
    out->df2 = df_u;
    if (!(out->df1 >= 1) || !(df_u >= 1) || !(rss_r >= 0) || !(rss_u >= 0)) return PW_EFEW;
    /* Rounding can leave rss_u a hair above rss_r when the blocks explain nothing. */
    double extra = rss_r - rss_u > 0 ? rss_r - rss_u : 0.0;
    out->partial_r2 = rss_r > 0 ? extra / rss_r : 0.0;
    double s2_r = rss_r / df_r, s2_u = rss_u / df_u;
    out->var_drop = s2_r > 0 ? 1.0 - s2_u / s2_r : 0.0;
    if (!(rss_u > 0)) {
        out->f = INFINITY;
        out->p = 0.0;
        return PW_OK;
    }
    /* The extra-sum-of-squares F of the nested models (e.g. Seber & Lee, "Linear Regression
     * Analysis", 2nd ed. 2003, sec. 4.3), upper tail directly. */
    out->f = (extra / out->df1) / s2_u;
    out->p = gsl_cdf_fdist_Q(out->f, out->df1, out->df2);
    return PW_OK;
}

int pw_within_accumulate(const pw_within *w, size_t n, size_t kk,
                         int (*row_at)(void *ctx, size_t i, double *row, size_t *group),
                         void *ctx, pw_moments *m)
{
    if (kk != w->k || m->k != kk) return PW_EDOM;
    double *rows = malloc(WITHIN_BLOCK * kk * sizeof *rows), *raw = malloc(kk * sizeof *raw);
    int rc = rows != NULL && raw != NULL ? PW_OK : PW_ENOMEM;
    size_t nb = 0;
    for (size_t i = 0; rc == PW_OK && i < n; i++) {
        size_t g;
        if (!row_at(ctx, i, raw, &g)) continue;
        pw_within_demean(w, g, raw, rows + nb * kk);
        if (++nb == WITHIN_BLOCK) {
            rc = pw_moments_add_block(m, rows, nb);
            nb = 0;
        }
    }
    if (rc == PW_OK && nb > 0) rc = pw_moments_add_block(m, rows, nb);
    free(rows);
    free(raw);
    return rc;
}
