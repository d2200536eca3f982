/* Ordinary least squares by Householder QR, for small designs and reference checks.
 * See LICENSE. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "power/power.h"

/* A column whose R diagonal is this small against the largest one is taken as a linear function
 * of the earlier columns: it sits within a few hundred rounding units of the data's precision. */
#define OLS_RANK_TOL 1e-13

void pw_ols_free(pw_ols *fit)
{
    if (fit == NULL) return;
    free(fit->coef);
    free(fit->se);
    free(fit->cov_unscaled);
    free(fit);
}

/* Householder QR without pivoting (Golub & Van Loan 2013, Algorithm 5.2.1), applied to the
 * n-by-p matrix A (column-major, overwritten by R in its upper triangle) and to the vector b
 * (overwritten by Q'b; may be NULL). v is scratch of n entries. When keep is not NULL, reflector
 * j's vector is kept in keep->v[j n + j .. j n + n - 1] and v'v in keep->vtv[j], so that Q'b of
 * any later b repeats these very operations (pw_ols_reflect). Returns PW_ESING when a column is
 * aliased. */
static int householder_qr(double *A, double *b, size_t n, size_t p, double *v, pw_reflectors *keep)
{
    double rmax = 0.0;
    for (size_t j = 0; j < p; j++) {
        double *aj = A + j * n;
        double norm = 0.0, scale = 0.0;
        for (size_t i = j; i < n; i++) scale = fmax(scale, fabs(aj[i]));
        if (scale > 0.0) {
            for (size_t i = j; i < n; i++) norm += (aj[i] / scale) * (aj[i] / scale);
            norm = scale * sqrt(norm);
        }
        if (norm == 0.0 || norm <= OLS_RANK_TOL * rmax) return PW_ESING;
        double alpha = aj[j] > 0 ? -norm : norm;
        /* v = x - alpha e1, normalised so that H = I - 2 v v' / (v'v). */
        double vtv = 0.0;
        for (size_t i = j; i < n; i++) v[i] = aj[i];
        v[j] -= alpha;
        for (size_t i = j; i < n; i++) vtv += v[i] * v[i];
        if (keep != NULL) {
            memcpy(keep->v + j * n + j, v + j, (n - j) * sizeof *v);
            keep->vtv[j] = vtv;
        }
        for (size_t c = j; c < p; c++) {
            double *ac = A + c * n;
            double s = 0.0;
            for (size_t i = j; i < n; i++) s += v[i] * ac[i];
            s = 2.0 * s / vtv;
            for (size_t i = j; i < n; i++) ac[i] -= s * v[i];
        }
        if (b != NULL) {
            double s = 0.0;
            for (size_t i = j; i < n; i++) s += v[i] * b[i];
            s = 2.0 * s / vtv;
            for (size_t i = j; i < n; i++) b[i] -= s * v[i];
        }
        aj[j] = alpha;
        rmax = fmax(rmax, fabs(alpha));
    }
    return PW_OK;
}

int pw_ols_fit(const double *X, const double *y, size_t n, size_t p, pw_ols **out)
{
    int rc = PW_ENOMEM;
    double *A = NULL, *b = NULL, *v = NULL, *Rinv = NULL;
    pw_ols *fit = NULL;
    *out = NULL;
    if (X == NULL || y == NULL || p == 0) return PW_EDOM;
    if (n <= p) return PW_EFEW;
    A = malloc(n * p * sizeof *A);
    b = malloc(n * sizeof *b);
    v = malloc(n * sizeof *v);
    Rinv = calloc(p * p, sizeof *Rinv);
    fit = calloc(1, sizeof *fit);
    if (A == NULL || b == NULL || v == NULL || Rinv == NULL || fit == NULL) goto fail;
    fit->coef = calloc(p, sizeof *fit->coef);
    fit->se = calloc(p, sizeof *fit->se);
    fit->cov_unscaled = calloc(p * p, sizeof *fit->cov_unscaled);
    if (fit->coef == NULL || fit->se == NULL || fit->cov_unscaled == NULL) goto fail;

    int has_intercept = 0;
    for (size_t j = 0; j < p; j++) {
        int constant = 1;
        for (size_t i = 0; i < n; i++) {
            A[j * n + i] = X[i * p + j];
            if (X[i * p + j] != X[j]) constant = 0;
        }
        if (constant && X[j] != 0.0) has_intercept = 1;
    }
    memcpy(b, y, n * sizeof *b);
    if ((rc = householder_qr(A, b, n, p, v, NULL)) != PW_OK) goto fail;

    /* Back substitution R coef = (Q'y)[0..p-1]. */
    for (size_t jj = p; jj-- > 0;) {
        double s = b[jj];
        for (size_t c = jj + 1; c < p; c++) s -= A[c * n + jj] * fit->coef[c];
        fit->coef[jj] = s / A[jj * n + jj];
    }
    /* The residual sum of squares is the squared norm of the trailing n - p entries of Q'y, which
     * avoids forming residuals by subtraction. */
    double rss = 0.0;
    for (size_t i = p; i < n; i++) rss += b[i] * b[i];
    fit->n = n;
    fit->p = p;
    fit->df = (double)(n - p);
    fit->rss = rss;
    fit->sigma = sqrt(rss / fit->df);

    /* (X'X)^-1 = R^-1 R^-T: invert the triangle column by column. */
    for (size_t c = 0; c < p; c++) {
        Rinv[c * p + c] = 1.0 / A[c * n + c];
        for (size_t r = c; r-- > 0;) {
            double s = 0.0;
            for (size_t m = r + 1; m <= c; m++) s += A[m * n + r] * Rinv[m * p + c];
            Rinv[r * p + c] = -s / A[r * n + r];
        }
    }
    for (size_t i = 0; i < p; i++)
        for (size_t j = i; j < p; j++) {
            double s = 0.0;
            for (size_t m = j; m < p; m++) s += Rinv[i * p + m] * Rinv[j * p + m];
            fit->cov_unscaled[i * p + j] = s;
            fit->cov_unscaled[j * p + i] = s;
        }
    for (size_t j = 0; j < p; j++) fit->se[j] = fit->sigma * sqrt(fit->cov_unscaled[j * p + j]);

    /* R^2 against the mean (centred) with an intercept column, against zero otherwise. */
    double ybar = 0.0, tss = 0.0;
    if (has_intercept) {
        for (size_t i = 0; i < n; i++) ybar += (y[i] - ybar) / (double)(i + 1);
    }
    for (size_t i = 0; i < n; i++) tss += (y[i] - ybar) * (y[i] - ybar);
    fit->r2 = tss > 0 ? 1.0 - rss / tss : NAN;

    *out = fit;
    fit = NULL;
    rc = PW_OK;
fail:
    free(A);
    free(b);
    free(v);
    free(Rinv);
    pw_ols_free(fit);
    return rc;
}

void pw_reflectors_free(pw_reflectors *q)
{
    if (q == NULL) return;
    free(q->v);
    free(q->vtv);
    free(q);
}

int pw_ols_reflectors(const double *X, size_t n, size_t p, pw_reflectors **out)
{
    *out = NULL;
    if (X == NULL || p == 0) return PW_EDOM;
    if (n <= p) return PW_EFEW;
    int rc = PW_ENOMEM;
    double *A = malloc(n * p * sizeof *A), *v = malloc(n * sizeof *v);
    pw_reflectors *q = calloc(1, sizeof *q);
    if (A == NULL || v == NULL || q == NULL) goto fail;
    q->n = n;
    q->p = p;
    q->v = calloc(n * p, sizeof *q->v);
    q->vtv = calloc(p, sizeof *q->vtv);
    if (q->v == NULL || q->vtv == NULL) goto fail;
    for (size_t j = 0; j < p; j++)
        for (size_t i = 0; i < n; i++) A[j * n + i] = X[i * p + j];
    if ((rc = householder_qr(A, NULL, n, p, v, q)) != PW_OK) goto fail;
    *out = q;
    q = NULL;
fail:
    free(A);
    free(v);
    pw_reflectors_free(q);
    return rc;
}

double pw_ols_reflect_rss(const pw_reflectors *q, double *b)
{
    size_t n = q->n;
    for (size_t j = 0; j < q->p; j++) {
        const double *v = q->v + j * n;
        double s = 0.0;
        for (size_t i = j; i < n; i++) s += v[i] * b[i];
        s = 2.0 * s / q->vtv[j];
        for (size_t i = j; i < n; i++) b[i] -= s * v[i];
    }
    double rss = 0.0;
    for (size_t i = q->p; i < n; i++) rss += b[i] * b[i];
    return rss;
}
