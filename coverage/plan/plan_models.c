/* The plan's models of the archive: each outcome's mean (straight, or bent where lack of fit shows),
 * its noise over the inputs (Harvey 1976), and a run's cost. See LICENSE. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/plan/plan.h"

/* Lack of fit: the quadratic mean replaces the straight one when the extra-sum-of-squares F test
 * rejects at this level; the noise model is used when Koenker's test of constant spread rejects at
 * it. 1%, not the usual 5%: a model fitted to chance would steer runs to where the noise merely
 * looked small and promise power that then fails to come. */
#define MODEL_LOF_ALPHA 0.01
/* Extra rows a fit needs beyond its columns, so that a model is not fitted to a handful of runs. */
#define MODEL_SPARE_ROWS 10
/* Predicted variances stay within this factor of the archive's mean residual variance either way:
 * the real case that motivated the noise model spanned about 400 (SDs 2 to 20 times). */
#define MODEL_VAR_RANGE 1000.0
/* Products of numeric inputs enter the bent mean only with this many rows per column. */
#define MODEL_ROWS_PER_PRODUCT 3

struct cov_plan_model {
    int is_cost;
    size_t n_cols;        /* coded linear columns, intercept first */
    unsigned char *act;   /* per linear column: varies in the runs (else left out) */
    size_t *num;          /* numeric columns with three or more distinct values */
    size_t n_num;
    int quad;             /* 0 straight; 1 squares; 2 squares and products */
    size_t p;             /* basis size */
    double *coef;         /* p: the mean (cost: log-linear gamma over the linear columns) */
    double smear;         /* cost: Duan's factor */
    int curved;
    double lof_f, lof_p;
    int hetero;
    double *gamma;        /* n_cols: log variance (Harvey) */
    double sigma2;
    double *zlo, *zhi;    /* the runs' range per column */
    size_t n;
};

void cov_plan_model_free(cov_plan_model *m)
{
    if (m == NULL) return;
    free(m->act);
    free(m->num);
    free(m->coef);
    free(m->gamma);
    free(m->zlo);
    free(m->zhi);
    free(m);
}

/* The basis of row clamped to the runs' range: active linear columns (left out ones as 0), then
 * the squares and (quad 2) products of the numeric columns. Returns the basis size. */
static size_t basis(const cov_plan_model *m, const double *row, int quad, double *out)
{
    size_t k = 0;
    for (size_t j = 0; j < m->n_cols; j++) {
        double x = fmin(fmax(row[j], m->zlo[j]), m->zhi[j]);
        out[k++] = m->act[j] ? x : 0.0;
    }
    if (quad >= 1)
        for (size_t a = 0; a < m->n_num; a++) {
            double x = out[m->num[a]];
            out[k++] = x * x;
        }
    if (quad >= 2)
        for (size_t a = 0; a < m->n_num; a++)
            for (size_t b = a + 1; b < m->n_num; b++) out[k++] = out[m->num[a]] * out[m->num[b]];
    return k;
}

static size_t basis_size(const cov_plan_model *m, int quad)
{
    size_t p = m->n_cols;
    if (quad >= 1) p += m->n_num;
    if (quad >= 2) p += m->n_num * (m->n_num - (m->n_num > 0)) / 2;
    return p;
}

/* Least squares over the basis; columns left out are all zero, so they are dropped from the
 * solve and get coefficient 0. */
static int fit_basis(const cov_plan_model *m, const double *rows, const double *y, size_t n,
                     int quad, double *coef, double *rss, double *resid)
{
    size_t p = basis_size(m, quad), q = 0;
    double *B = malloc((n * p + 1) * sizeof *B), *X = malloc((n * p + 1) * sizeof *X);
    double *tmp = malloc((p + 1) * sizeof *tmp);
    size_t *keep = malloc((p + 1) * sizeof *keep);
    int rc = PW_ENOMEM;
    pw_ols *fit = NULL;
    if (B == NULL || X == NULL || tmp == NULL || keep == NULL) goto done;
    for (size_t i = 0; i < n; i++) basis(m, rows + i * m->n_cols, quad, B + i * p);
    for (size_t j = 0; j < p; j++) {
        int on = j < m->n_cols ? m->act[j] : 1;
        if (on) keep[q++] = j;
    }
    rc = PW_EFEW;
    if (n < q + MODEL_SPARE_ROWS) goto done;
    for (size_t i = 0; i < n; i++)
        for (size_t j = 0; j < q; j++) X[i * q + j] = B[i * p + keep[j]];
    if ((rc = pw_ols_fit(X, y, n, q, &fit)) != PW_OK) goto done;
    for (size_t j = 0; j < p; j++) coef[j] = 0.0;
    for (size_t j = 0; j < q; j++) coef[keep[j]] = fit->coef[j];
    *rss = fit->rss;
    for (size_t i = 0; resid != NULL && i < n; i++) {
        double f = 0.0;
        for (size_t j = 0; j < p; j++) f += coef[j] * B[i * p + j];
        resid[i] = y[i] - f;
    }
    rc = PW_OK;
done:
    pw_ols_free(fit);
    free(B);
    free(X);
    free(tmp);
    free(keep);
    return rc;
}

static int count_distinct_ge3(const double *rows, size_t n, size_t n_cols, size_t j)
{
    double a = NAN, b = NAN;
    for (size_t i = 0; i < n; i++) {
        double x = rows[i * n_cols + j];
        if (isnan(a) || x == a) a = x;
        else if (isnan(b) || x == b) b = x;
        else return 1;
    }
    return 0;
}

int cov_plan_model_fit(const double *rows, const double *y, size_t n, size_t n_cols,
                       const unsigned char *numeric, int is_cost, cov_plan_model **out)
{
    *out = NULL;
    cov_plan_model *m = calloc(1, sizeof *m);
    if (m == NULL) return COV_ENOMEM;
    m->is_cost = is_cost;
    m->n_cols = n_cols;
    m->n = n;
    m->act = calloc(n_cols + 1, 1);
    m->num = calloc(n_cols + 1, sizeof *m->num);
    m->zlo = malloc((n_cols + 1) * sizeof *m->zlo);
    m->zhi = malloc((n_cols + 1) * sizeof *m->zhi);
    m->gamma = calloc(n_cols + 1, sizeof *m->gamma);
    double *resid = malloc((n + 1) * sizeof *resid);
    int rc = COV_ENOMEM;
    if (m->act == NULL || m->num == NULL || m->zlo == NULL || m->zhi == NULL || m->gamma == NULL ||
        resid == NULL)
        goto fail;
    for (size_t j = 0; j < n_cols; j++) {
        m->zlo[j] = INFINITY;
        m->zhi[j] = -INFINITY;
        for (size_t i = 0; i < n; i++) {
            m->zlo[j] = fmin(m->zlo[j], rows[i * n_cols + j]);
            m->zhi[j] = fmax(m->zhi[j], rows[i * n_cols + j]);
        }
        if (n == 0) m->zlo[j] = m->zhi[j] = 0.0;
        m->act[j] = j == 0 || m->zhi[j] > m->zlo[j];
        if (j > 0 && numeric[j] && m->act[j] && count_distinct_ge3(rows, n, n_cols, j))
            m->num[m->n_num++] = j;
    }
    rc = COV_ENUMERIC;
    if (is_cost) {
        size_t q = 0;
        for (size_t j = 0; j < n_cols; j++) q += m->act[j];
        double *Z = malloc((n * q + 1) * sizeof *Z), *gq = malloc((q + 1) * sizeof *gq);
        int prc = PW_ENOMEM;
        if (Z != NULL && gq != NULL) {
            for (size_t i = 0; i < n; i++)
                for (size_t j = 0, k = 0; j < n_cols; j++)
                    if (m->act[j]) Z[i * q + k++] = rows[i * n_cols + j];
            prc = n < q + MODEL_SPARE_ROWS ? PW_EFEW : pw_loglin_fit(Z, y, n, q, gq, &m->smear);
            for (size_t j = 0, k = 0; prc == PW_OK && j < n_cols; j++)
                m->gamma[j] = m->act[j] ? gq[k++] : 0.0;
        }
        free(Z);
        free(gq);
        if (prc == PW_ENOMEM) rc = COV_ENOMEM;
        if (prc == PW_EDOM) rc = COV_EINPUT;
        if (prc != PW_OK) goto fail;
        m->p = n_cols;
        free(resid);
        *out = m;
        return COV_OK;
    }
    /* The mean: straight, then bent (squares, and products when rows allow); the bent one is kept
     * when the F test finds lack of fit in the straight one. */
    size_t pmax = basis_size(m, 2);
    m->coef = calloc(pmax + 1, sizeof *m->coef);
    double *cq = calloc(pmax + 1, sizeof *cq);
    if (m->coef == NULL || cq == NULL) {
        free(cq);
        rc = COV_ENOMEM;
        goto fail;
    }
    double rss_lin = NAN, rss_q = NAN;
    int prc = fit_basis(m, rows, y, n, 0, m->coef, &rss_lin, resid);
    if (prc != PW_OK) {
        free(cq);
        rc = prc == PW_ENOMEM ? COV_ENOMEM : COV_ENUMERIC;
        goto fail;
    }
    m->p = n_cols;
    size_t q_lin = 0;
    for (size_t j = 0; j < n_cols; j++) q_lin += m->act[j];
    int quad = m->n_num == 0 ? 0 : n >= MODEL_ROWS_PER_PRODUCT * basis_size(m, 2) ? 2 : 1;
    if (quad > 0 && fit_basis(m, rows, y, n, quad, cq, &rss_q, NULL) == PW_OK) {
        double extra = (double)(basis_size(m, quad) - n_cols);
        double f = NAN, pv = NAN;
        if (pw_nested_f(rss_lin, (double)q_lin, rss_q, (double)q_lin + extra, (double)n, &f,
                        &pv) == PW_OK) {
            m->lof_f = f;
            m->lof_p = pv;
            if (pv < MODEL_LOF_ALPHA) {
                m->curved = 1;
                m->quad = quad;
                m->p = basis_size(m, quad);
                memcpy(m->coef, cq, m->p * sizeof *cq);
                fit_basis(m, rows, y, n, quad, cq, &rss_q, resid);
                rss_lin = rss_q;
                q_lin += (size_t)extra;
            }
        }
    }
    free(cq);
    m->sigma2 = rss_lin / (double)(n - q_lin);
    /* The noise over the inputs: Harvey's log-linear model on the straight columns. */
    {
        size_t q = 0;
        for (size_t j = 0; j < n_cols; j++) q += m->act[j];
        double *Z = malloc((n * q + 1) * sizeof *Z), *gq = malloc((q + 1) * sizeof *gq);
        if (Z != NULL && gq != NULL && n >= q + MODEL_SPARE_ROWS) {
            for (size_t i = 0; i < n; i++)
                for (size_t j = 0, k = 0; j < n_cols; j++)
                    if (m->act[j]) Z[i * q + k++] = rows[i * n_cols + j];
            double pv = NAN;
            if (pw_harvey_fit(Z, resid, n, q, 0.0, gq, &pv) == PW_OK && pv < MODEL_LOF_ALPHA) {
                m->hetero = 1;
                for (size_t j = 0, k = 0; j < n_cols; j++) m->gamma[j] = m->act[j] ? gq[k++] : 0.0;
            }
        }
        free(Z);
        free(gq);
    }
    free(resid);
    *out = m;
    return COV_OK;
fail:
    free(resid);
    cov_plan_model_free(m);
    return rc;
}

double cov_plan_model_mean(const cov_plan_model *m, const double *row)
{
    double b[4096];
    size_t p = basis_size(m, m->is_cost ? 0 : m->quad);
    if (p > sizeof b / sizeof b[0]) return NAN;
    basis(m, row, m->is_cost ? 0 : m->quad, b);
    if (m->is_cost) return m->smear * pw_loglin_eval(m->gamma, b, m->n_cols);
    double s = 0.0;
    for (size_t j = 0; j < p; j++) s += m->coef[j] * b[j];
    return s;
}

double cov_plan_model_bend(const cov_plan_model *m, const double *row)
{
    if (m->is_cost || !m->curved) return 0.0;
    double b[4096];
    size_t p = basis_size(m, m->quad);
    if (p > sizeof b / sizeof b[0]) return 0.0;
    basis(m, row, m->quad, b);
    double s = 0.0;
    for (size_t j = m->n_cols; j < p; j++) s += m->coef[j] * b[j];
    return s;
}

double cov_plan_model_var(const cov_plan_model *m, const double *row)
{
    if (!m->hetero) return m->sigma2;
    double b[4096];
    if (m->n_cols > sizeof b / sizeof b[0]) return m->sigma2;
    basis(m, row, 0, b);
    double v = pw_loglin_eval(m->gamma, b, m->n_cols);
    return fmin(fmax(v, m->sigma2 / MODEL_VAR_RANGE), m->sigma2 * MODEL_VAR_RANGE);
}

int cov_plan_model_outside(const cov_plan_model *m, const double *row, double slack)
{
    for (size_t j = 1; j < m->n_cols; j++) {
        double span = m->zhi[j] - m->zlo[j];
        if (row[j] < m->zlo[j] - slack * span - 1e-12 || row[j] > m->zhi[j] + slack * span + 1e-12)
            return 1;
    }
    return 0;
}

int cov_plan_model_curved(const cov_plan_model *m) { return m->curved; }
int cov_plan_model_hetero(const cov_plan_model *m) { return m->hetero; }
double cov_plan_model_sigma2(const cov_plan_model *m) { return m->sigma2; }
double cov_plan_model_lof_p(const cov_plan_model *m) { return m->lof_p; }
