/* Heteroscedasticity-consistent (HC3) standard errors of a least-squares fit.
 * See LICENSE. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "power/power.h"

void pw_hcfit_free(pw_hcfit *f)
{
    if (f == NULL) return;
    free(f->coef);
    free(f->xtx_inv);
    free(f->resid);
    free(f->lev);
    free(f->cov_hc3);
    free(f->cov_classic);
    free(f);
}

int pw_hc3_fit(const double *X, const double *y, size_t n, size_t p, pw_hcfit **out)
{
    *out = NULL;
    pw_ols *ols = NULL;
    int rc = pw_ols_fit(X, y, n, p, &ols);
    if (rc != PW_OK) return rc;
    rc = PW_ENOMEM;
    pw_hcfit *f = calloc(1, sizeof *f);
    double *meat = NULL, *tmp = NULL;
    if (f == NULL) goto fail;
    f->n = n;
    f->p = p;
    f->df = ols->df;
    f->sigma = ols->sigma;
    f->coef = malloc(p * sizeof *f->coef);
    f->xtx_inv = malloc(p * p * sizeof *f->xtx_inv);
    f->resid = malloc(n * sizeof *f->resid);
    f->lev = malloc(n * sizeof *f->lev);
    f->cov_hc3 = calloc(p * p, sizeof *f->cov_hc3);
    f->cov_classic = malloc(p * p * sizeof *f->cov_classic);
    meat = calloc(p * p, sizeof *meat);
    tmp = malloc(p * p * sizeof *tmp);
    if (f->coef == NULL || f->xtx_inv == NULL || f->resid == NULL || f->lev == NULL ||
        f->cov_hc3 == NULL || f->cov_classic == NULL || meat == NULL || tmp == NULL)
        goto fail;
    memcpy(f->coef, ols->coef, p * sizeof *f->coef);
    memcpy(f->xtx_inv, ols->cov_unscaled, p * p * sizeof *f->xtx_inv);
    double s2 = ols->sigma * ols->sigma;
    for (size_t j = 0; j < p * p; j++) f->cov_classic[j] = s2 * f->xtx_inv[j];
    /* HC3 (MacKinnon & White 1985, eq. 13; Long & Ervin 2000, eq. 6):
     * (X'X)^-1 [sum_i x_i x_i' e_i^2 / (1 - h_ii)^2] (X'X)^-1, h_ii = x_i'(X'X)^-1 x_i. */
    for (size_t i = 0; i < n; i++) {
        const double *xi = X + i * p;
        double fit = 0, h = 0;
        for (size_t a = 0; a < p; a++) {
            fit += xi[a] * f->coef[a];
            double s = 0;
            for (size_t b = 0; b < p; b++) s += f->xtx_inv[a * p + b] * xi[b];
            h += xi[a] * s;
        }
        f->resid[i] = y[i] - fit;
        f->lev[i] = h;
        if (!(h < 1)) {
            /* A run that alone fixes a coefficient: HC3 is undefined (division by zero). */
            rc = PW_ESING;
            goto fail;
        }
        double w = f->resid[i] / (1 - h);
        w *= w;
        for (size_t a = 0; a < p; a++)
            for (size_t b = a; b < p; b++) meat[a * p + b] += w * xi[a] * xi[b];
    }
    for (size_t a = 0; a < p; a++)
        for (size_t b = 0; b < a; b++) meat[a * p + b] = meat[b * p + a];
    /* tmp = (X'X)^-1 meat, then cov = tmp (X'X)^-1. */
    for (size_t a = 0; a < p; a++)
        for (size_t b = 0; b < p; b++) {
            double s = 0;
            for (size_t c = 0; c < p; c++) s += f->xtx_inv[a * p + c] * meat[c * p + b];
            tmp[a * p + b] = s;
        }
    for (size_t a = 0; a < p; a++)
        for (size_t b = 0; b < p; b++) {
            double s = 0;
            for (size_t c = 0; c < p; c++) s += tmp[a * p + c] * f->xtx_inv[c * p + b];
            f->cov_hc3[a * p + b] = s;
        }
    *out = f;
    f = NULL;
    rc = PW_OK;
fail:
    pw_ols_free(ols);
    pw_hcfit_free(f);
    free(meat);
    free(tmp);
    return rc;
}

double pw_hc_contrast_var(const pw_hcfit *f, const double *c, int robust)
{
    const double *V = robust ? f->cov_hc3 : f->cov_classic;
    double s = 0;
    for (size_t a = 0; a < f->p; a++)
        for (size_t b = 0; b < f->p; b++) s += c[a] * V[a * f->p + b] * c[b];
    return s;
}
