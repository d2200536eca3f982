/* The shape of a claim's effect: the linear trend of an ordered level set with the omnibus F beside
 * it, levels never run, and the lack of fit of a numeric treatment's straight line. See LICENSE. */
#include <math.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_cdf.h>

#include "coverage/assess/assess.h"

void cov_trend_free(cov_trend *t)
{
    if (t == NULL) return;
    free(t->unrun);
    t->unrun = NULL;
}


int cov_trend_compute(const cov_var *xv, const pw_xfit *fit, const pw_moments *m,
                      const size_t *idx, size_t k, size_t t, cov_trend *out)
{
    memset(out, 0, sizeof *out);
    out->sd_eq = out->slope = out->slope_se_factor = out->ss_levels = out->q_linear = NAN;
    out->ss_trend = NAN;
    size_t L = xv->n_levels;
    if (xv->type != COV_LEVELS || L < 2 || t != L - 1) return COV_OK;
    double n = m->n;
    /* The share of each level among the runs used: the dummies' means, level 0 the rest. */
    unsigned char *present = calloc(L, 1);
    int *col_of = malloc(L * sizeof *col_of);   /* kept column (0 .. t_rank - 1) or -1 */
    double *minv = NULL, *ck = NULL, *dk = NULL;
    int rc = COV_ENOMEM;
    if (present == NULL || col_of == NULL) goto fail;
    double rest = 1.0;
    for (size_t l = 1; l < L; l++) {
        double share = m->mean[idx[k - t + l - 1]];
        rest -= share;
        present[l] = share * n > 0.5;
    }
    present[0] = rest * n > 0.5;
    size_t kept = 0;
    for (size_t l = 0; l < L; l++) col_of[l] = -1;
    for (size_t l = 1; l < L; l++)
        if (fit->kept[k - t + l - 1]) col_of[l] = (int)kept++;
    for (size_t l = 0; l < L; l++) {
        out->n_present += present[l];
        if (!present[l] && cov_text_append(&out->unrun, ", ", "%s", xv->levels[l]) != COV_OK) goto fail;
    }
    /* The reference is the one level run without a column of its own: level 0 when it was run,
     * else the level whose dummy the intercept aliased. Any other pattern means the separating
     * set fixes part of the level set; the trend is then not computed. */
    size_t ref = L, n_ref = 0;
    for (size_t l = 0; l < L; l++)
        if (present[l] && col_of[l] < 0) {
            ref = l;
            n_ref++;
        }
    rc = COV_OK;
    if (!xv->ordered || xv->positions == NULL) goto fail;   /* unordered: the unrun list only */
    if (n_ref != 1 || kept != fit->t_rank || kept + 1 != out->n_present || kept == 0) goto fail;
    rc = COV_ENOMEM;
    minv = malloc(kept * kept * sizeof *minv);
    ck = malloc(kept * sizeof *ck);
    dk = malloc(kept * sizeof *dk);
    if (minv == NULL || ck == NULL || dk == NULL) goto fail;
    rc = pw_spd_inverse(fit->treat_info, kept, minv);
    if (rc == PW_ENOMEM) {
        rc = COV_ENOMEM;
        goto fail;
    }
    if (rc != PW_OK) {
        rc = COV_OK;
        goto fail;
    }
    /* The linear orthogonal-polynomial contrast over the levels run, c_l = x_l - mean(x) with
     * equal weights (Fisher & Yates 1963, Statistical Tables, Table XXIII, whose equally spaced
     * coefficients are these scaled to integers; for any positions, Kirk 2013, Experimental
     * Design, 4th ed., sec. 6.4 [recalled]). It sums to 0, so on the level means it is
     * sum_l c_l b_l with b the coefficients against the reference. Under a straight line of slope
     * beta per position unit, mu_l = mu_ref + beta (x_l - x_ref): the contrast is beta S_xx. */
    const double *x = xv->positions;
    double mean = 0, sxx = 0;
    for (size_t l = 0; l < L; l++)
        if (present[l]) mean += x[l] / (double)out->n_present;
    for (size_t l = 0; l < L; l++)
        if (present[l]) sxx += (x[l] - mean) * (x[l] - mean);
    for (size_t l = 0; l < L; l++)
        if (col_of[l] >= 0) {
            ck[col_of[l]] = x[l] - mean;
            dk[col_of[l]] = x[l] - x[ref];
        }
    double v = 0, q = 0, psi = 0, ss = 0;
    for (size_t i = 0; i < kept; i++) {
        psi += ck[i] * fit->treat_coef[i];
        for (size_t j = 0; j < kept; j++) {
            v += ck[i] * minv[i * kept + j] * ck[j];
            q += dk[i] * fit->treat_info[i * kept + j] * dk[j];
            ss += fit->treat_coef[i] * fit->treat_info[i * kept + j] * fit->treat_coef[j];
        }
    }
    if (!(v > 0) || !(sxx > 0)) {
        rc = COV_OK;
        goto fail;
    }
    /* Var(contrast) = sigma^2 c' M^-1 c, so the t noncentrality at slope beta is
     * beta S_xx / (sigma sqrt(c' M^-1 c)) = beta sd_eq sqrt(n) / sigma. */
    out->sd_eq = sxx / sqrt(n * v);
    out->slope = psi / sxx;
    out->slope_se_factor = sqrt(v) / sxx;
    out->ss_levels = ss;        /* b' M b: the level set's sum of squares given the rest */
    out->q_linear = q;          /* the F noncentrality per (beta / sigma)^2 under a straight line */
    out->ss_trend = psi * psi / v;
    out->ok = 1;
    rc = COV_OK;
fail:
    free(present);
    free(col_of);
    free(minv);
    free(ck);
    free(dk);
    return rc;
}

/* What the lack-of-fit check needs of a treatment's values on the diagnostic rows, whatever the
 * residuals: the count of distinct values and, with few, each row's value group; with many, the
 * reflectors of the cubic basis' QR. */
typedef struct {
    int ready;
    size_t distinct;
    size_t *group;             /* levels: the group of each row, groups in ascending value */
    pw_reflectors *cubic;      /* cubic: NULL when the basis is rank-deficient or too short */
} shape_basis;

struct cov_shape_cache {
    size_t n_keys, m;
    shape_basis *basis;
    pthread_mutex_t *lock;     /* one per key: the claims of several threads share the cache */
};

static void basis_free(shape_basis *b)
{
    free(b->group);
    pw_reflectors_free(b->cubic);
    memset(b, 0, sizeof *b);
}

static int basis_make(const double *x, size_t m, shape_basis *b)
{
    memset(b, 0, sizeof *b);
    b->ready = 1;
    if (m == 0) return COV_OK;
    double *sx = malloc(m * sizeof *sx);
    if (sx == NULL) return COV_ENOMEM;
    memcpy(sx, x, m * sizeof *sx);
    if (pw_sort_doubles(sx, m) != PW_OK) {
        free(sx);
        return COV_ENOMEM;
    }
    size_t distinct = 1;
    for (size_t i = 1; i < m; i++) distinct += sx[i] != sx[i - 1];
    b->distinct = distinct;
    int rc = COV_OK;
    if (distinct < 3) goto done;
    if (distinct <= COV_SHAPE_LEVELS_MAX) {
        b->group = malloc(m * sizeof *b->group);
        if (b->group == NULL) {
            rc = COV_ENOMEM;
            goto done;
        }
        double *vals = sx;   /* sorted; the distinct values are its runs */
        size_t nv = 0;
        for (size_t i = 0; i < m; i++)
            if (i == 0 || vals[i] != vals[i - 1]) vals[nv++] = vals[i];
        for (size_t i = 0; i < m; i++) {
            size_t lo = 0, hi = nv;
            while (hi - lo > 1) {
                size_t mid = (lo + hi) / 2;
                if (vals[mid] <= x[i]) lo = mid;
                else hi = mid;
            }
            b->group[i] = lo;
        }
    } else {
        /* Many values: the quadratic and cubic terms of the standardised treatment (a cubic
         * polynomial basis), fitted to the residuals by least squares. */
        double mean = 0, var = 0;
        for (size_t i = 0; i < m; i++) mean += x[i] / (double)m;
        for (size_t i = 0; i < m; i++) var += (x[i] - mean) * (x[i] - mean) / (double)m;
        double sd = var > 0 ? sqrt(var) : 1;
        double *X = malloc(m * 4 * sizeof *X);
        if (X == NULL) {
            rc = COV_ENOMEM;
            goto done;
        }
        for (size_t i = 0; i < m; i++) {
            double z = (x[i] - mean) / sd;
            X[4 * i] = 1;
            X[4 * i + 1] = z;
            X[4 * i + 2] = z * z;
            X[4 * i + 3] = z * z * z;
        }
        int prc = pw_ols_reflectors(X, m, 4, &b->cubic);
        free(X);
        if (prc == PW_ENOMEM) rc = COV_ENOMEM;
    }
done:
    free(sx);
    if (rc != COV_OK) basis_free(b);
    return rc;
}

static int shape_from_basis(const shape_basis *b, const double *e, size_t m, double n_coef,
                            double sigma_pure, double df_pe, cov_shape_fit *out)
{
    memset(out, 0, sizeof *out);
    out->f = out->p = out->df1 = out->df2 = NAN;
    if (m == 0) return COV_OK;
    size_t distinct = b->distinct;
    out->distinct = distinct;
    if (distinct < 3) return COV_OK;
    double ss_e = 0, ss_lof = 0;
    for (size_t i = 0; i < m; i++) ss_e += e[i] * e[i];
    if (distinct <= COV_SHAPE_LEVELS_MAX) {
        /* A level basis: one mean per value. The residuals of the straight line are orthogonal
         * to the intercept and the slope, so the sum of squares of their value means is what
         * the means gain over the line (the lack-of-fit sum of squares; Draper & Smith 1998,
         * sec. 2.1), exactly so when the adjustment set is empty. */
        double *sum = calloc(distinct, sizeof *sum), *cnt = calloc(distinct, sizeof *cnt);
        if (sum == NULL || cnt == NULL) {
            free(sum);
            free(cnt);
            return COV_ENOMEM;
        }
        for (size_t i = 0; i < m; i++) {
            sum[b->group[i]] += e[i];
            cnt[b->group[i]] += 1;
        }
        for (size_t g = 0; g < distinct; g++)
            if (cnt[g] > 0) ss_lof += sum[g] * sum[g] / cnt[g];
        free(sum);
        free(cnt);
        out->df1 = (double)distinct - 2.0;
        out->basis = "levels";
    } else {
        if (b->cubic == NULL) return COV_OK;
        double *r = malloc(m * sizeof *r);
        if (r == NULL) return COV_ENOMEM;
        memcpy(r, e, m * sizeof *r);
        ss_lof = ss_e - pw_ols_reflect_rss(b->cubic, r);
        free(r);
        out->df1 = 2.0;
        out->basis = "cubic";
    }
    if (ss_lof < 0) ss_lof = 0;
    if (isfinite(sigma_pure) && sigma_pure > 0 && df_pe >= 1) {
        /* Pure error from replicated configurations where the runs have them. */
        out->df2 = df_pe;
        out->f = (ss_lof / out->df1) / (sigma_pure * sigma_pure);
        out->pure = 1;
    } else {
        out->df2 = (double)m - n_coef - out->df1;
        if (!(out->df2 >= 1) || !(ss_e - ss_lof > 0)) {
            out->df1 = out->df2 = NAN;
            return COV_OK;
        }
        out->f = (ss_lof / out->df1) / ((ss_e - ss_lof) / out->df2);
    }
    out->p = gsl_cdf_fdist_Q(out->f, out->df1, out->df2);
    return COV_OK;
}

int cov_shape_numeric(const double *x, const double *e, size_t m, double n_coef,
                      double sigma_pure, double df_pe, cov_shape_fit *out)
{
    return cov_shape_numeric_cached(NULL, 0, x, e, m, n_coef, sigma_pure, df_pe, out);
}

cov_shape_cache *cov_shape_cache_new(size_t n_keys, size_t m)
{
    cov_shape_cache *c = calloc(1, sizeof *c);
    if (c == NULL) return NULL;
    c->basis = calloc(n_keys ? n_keys : 1, sizeof *c->basis);
    c->lock = malloc((n_keys ? n_keys : 1) * sizeof *c->lock);
    if (c->basis == NULL || c->lock == NULL) {
        free(c->basis);
        free(c->lock);
        free(c);
        return NULL;
    }
    for (size_t k = 0; k < n_keys; k++) {
        if (pthread_mutex_init(&c->lock[k], NULL) != 0) {
            while (k-- > 0) pthread_mutex_destroy(&c->lock[k]);
            free(c->basis);
            free(c->lock);
            free(c);
            return NULL;
        }
    }
    c->n_keys = n_keys;
    c->m = m;
    return c;
}

void cov_shape_cache_free(cov_shape_cache *c)
{
    if (c == NULL) return;
    for (size_t k = 0; k < c->n_keys; k++) {
        basis_free(&c->basis[k]);
        pthread_mutex_destroy(&c->lock[k]);
    }
    free(c->basis);
    free(c->lock);
    free(c);
}

int cov_shape_numeric_cached(cov_shape_cache *c, size_t key, const double *x, const double *e,
                             size_t m, double n_coef, double sigma_pure, double df_pe,
                             cov_shape_fit *out)
{
    if (c == NULL || key >= c->n_keys || m != c->m) {
        shape_basis b;
        int rc = basis_make(x, m, &b);
        if (rc == COV_OK) rc = shape_from_basis(&b, e, m, n_coef, sigma_pure, df_pe, out);
        basis_free(&b);
        return rc;
    }
    /* The first claim of a key makes its basis; the others wait for it, then only read it. The
     * basis depends on x alone, so whichever thread makes it, it is the same. */
    pthread_mutex_lock(&c->lock[key]);
    int rc = c->basis[key].ready ? COV_OK : basis_make(x, m, &c->basis[key]);
    pthread_mutex_unlock(&c->lock[key]);
    if (rc != COV_OK) return rc;
    return shape_from_basis(&c->basis[key], e, m, n_coef, sigma_pure, df_pe, out);
}

void cov_assessment_table_shape(FILE *out, const char *label, const cov_claim *c,
                                const cov_assessment *a)
{
    if (isfinite(a->turn_lo) && isfinite(a->effect_raw)) {
        char text[96];
        fprintf(out, "%s: expected to turn: effect of interest %s = a turn of height %.4g over "
                "[%.4g, %.4g] (0 at both ends, the height in the middle); tested by the omnibus F "
                "over a degree-%.0f polynomial basis given the adjustment set", label,
                cov_amount_text(&c->effect, text, sizeof text), a->effect_raw, a->turn_lo,
                a->turn_hi, a->design.n_levels - 1.0);
        if (isfinite(a->omnibus_f))
            fprintf(out, "; observed F = %.3g, p = %.2g; estimated height %.4g (SE %.3g)",
                    a->omnibus_f, a->omnibus_p, a->estimate, a->se);
        fputc('\n', out);
    } else if ((c->effect.per != COV_PER_UNIT || c->effect.unit == COV_UNIT_SD) &&
        isfinite(a->effect_raw)) {
        char text[96];
        fprintf(out, "%s: %s as written: %s = %.4g raw per %s = %.4g per unit\n", label,
                c->kind == COV_CLAIM_ABSENCE ? "margin" : "effect of interest",
                cov_amount_text(&c->effect, text, sizeof text), a->effect_written_raw,
                c->effect.per == COV_PER_STEP ? "step" : c->effect.per == COV_PER_RANGE ? "range"
                                                                                         : "unit",
                a->effect_raw);
    }
    if (a->trend && isfinite(a->omnibus_df1))
        fprintf(out, "%s: ordered levels: trend t test (1 df) power %.2f; omnibus F (%.0f df) "
                "power %.2f at the same straight line; observed F = %.3g, p = %.2g\n", label,
                a->power, a->omnibus_df1, a->omnibus_power, a->omnibus_f, a->omnibus_p);
    if (isfinite(a->shape_f))
        fprintf(out, "%s: shape: %zu distinct values; lack of fit of the straight line F = %.3g "
                "on %.0f and %.0f df, p = %.2g%s\n", label, a->distinct, a->shape_f,
                a->shape_df1, a->shape_df2, a->shape_p, a->shape_pure ? " (pure error)" : "");
}
