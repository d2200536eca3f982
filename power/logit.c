/* Logistic regression by iteratively reweighted least squares, for propensity scores.
 * See LICENSE. */
#include <math.h>
#include <stdlib.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>
#include <gsl/gsl_matrix.h>
#include <gsl/gsl_vector.h>

#include "power/power.h"

/* Convergence: the relative change of the deviance, |D - D_old| / (|D| + 0.1), below this; the
 * criterion of R's glm.fit (whose default is 1e-8), tightened since a step costs little here. */
#define PW_LOGIT_TOL 1e-10
/* IRLS weights mu (1 - mu) are kept at least this large, so rows the fit already predicts to
 * within rounding (separated data) do not make the working response (y - mu) / w overflow. */
#define PW_LOGIT_W_FLOOR 1e-12
/* A diagonal entry of R below this multiple of the largest means an aliased column. */
#define PW_LOGIT_RANK_TOL 1e-10

/* log(1 + exp(x)) without overflow. */
static double log1pexp(double x)
{
    return x > 0 ? x + log1p(exp(-x)) : log1p(exp(x));
}

int pw_logit_fit(const double *X, const double *y, size_t n, size_t p, double *coef, double *prob,
                 int *iter)
{
    if (p == 0 || n <= p) return PW_EFEW;
    for (size_t i = 0; i < n; i++)
        if (y[i] != 0 && y[i] != 1) return PW_EDOM;
    int rc = PW_ENOMEM;
    gsl_matrix *A = gsl_matrix_alloc(n, p);
    gsl_vector *tau = gsl_vector_alloc(p), *z = gsl_vector_alloc(n), *res = gsl_vector_alloc(n);
    gsl_vector *beta = gsl_vector_calloc(p);
    double *eta = calloc(n, sizeof *eta);
    if (A == NULL || tau == NULL || z == NULL || res == NULL || beta == NULL || eta == NULL)
        goto done;

    double dev_old = INFINITY;
    int it;
    rc = PW_ENOCONV;
    for (it = 1; it <= PW_LOGIT_MAX_ITER; it++) {
        /* Working weights and response at the current eta (beta = 0 at the start: mu = 1/2). */
        for (size_t i = 0; i < n; i++) {
            double mu = 1 / (1 + exp(-eta[i]));
            double w = mu * (1 - mu);
            if (w < PW_LOGIT_W_FLOOR) w = PW_LOGIT_W_FLOOR;
            double sw = sqrt(w);
            for (size_t j = 0; j < p; j++) gsl_matrix_set(A, i, j, sw * X[i * p + j]);
            gsl_vector_set(z, i, sw * (eta[i] + (y[i] - mu) / w));
        }
        if (gsl_linalg_QR_decomp(A, tau) != GSL_SUCCESS) {
            rc = PW_ESING;
            goto done;
        }
        double rmax = 0;
        for (size_t j = 0; j < p; j++)
            if (fabs(gsl_matrix_get(A, j, j)) > rmax) rmax = fabs(gsl_matrix_get(A, j, j));
        for (size_t j = 0; j < p; j++)
            if (!(fabs(gsl_matrix_get(A, j, j)) > PW_LOGIT_RANK_TOL * rmax)) {
                rc = PW_ESING;
                goto done;
            }
        if (gsl_linalg_QR_lssolve(A, tau, z, beta, res) != GSL_SUCCESS) {
            rc = PW_ESING;
            goto done;
        }
        /* New linear predictor and the binomial deviance -2 sum log L (McCullagh & Nelder, 4.4). */
        double dev = 0;
        for (size_t i = 0; i < n; i++) {
            double e = 0;
            for (size_t j = 0; j < p; j++) e += X[i * p + j] * gsl_vector_get(beta, j);
            eta[i] = e;
            dev += 2 * (y[i] == 1 ? log1pexp(-e) : log1pexp(e));
        }
        if (!isfinite(dev)) {
            rc = PW_ENOCONV;
            break;
        }
        if (fabs(dev - dev_old) / (fabs(dev) + 0.1) < PW_LOGIT_TOL) {
            rc = PW_OK;
            break;
        }
        dev_old = dev;
    }
    if (iter != NULL) *iter = it > PW_LOGIT_MAX_ITER ? PW_LOGIT_MAX_ITER : it;
    if (coef != NULL)
        for (size_t j = 0; j < p; j++) coef[j] = gsl_vector_get(beta, j);
    if (prob != NULL)
        for (size_t i = 0; i < n; i++) prob[i] = 1 / (1 + exp(-eta[i]));
done:
    gsl_matrix_free(A);
    gsl_vector_free(tau);
    gsl_vector_free(z);
    gsl_vector_free(res);
    gsl_vector_free(beta);
    free(eta);
    return rc;
}
