/* Probe for tests/ref_hc3.py: HC3 and classic standard errors of a least-squares fit.
 * See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include <gsl/gsl_errno.h>

#include "power/power.h"

/* Reads "N P" and then N lines "y x1 .. x(P-1)" (an intercept column is added first); writes the
 * P coefficients, the P HC3 SEs and the P classic SEs, one per line with 17 digits, intercept
 * first. Errors print "error <status text>". */
int main(void)
{
    gsl_set_error_handler_off();
    size_t n = 0, p = 0;
    if (scanf("%zu %zu", &n, &p) != 2 || n == 0 || p == 0) return 2;
    double *X = malloc(n * p * sizeof *X), *y = malloc(n * sizeof *y);
    if (X == NULL || y == NULL) return 2;
    for (size_t i = 0; i < n; i++) {
        if (scanf("%lf", &y[i]) != 1) return 2;
        X[i * p] = 1.0;
        for (size_t j = 1; j < p; j++)
            if (scanf("%lf", &X[i * p + j]) != 1) return 2;
    }
    pw_hcfit *f = NULL;
    int rc = pw_hc3_fit(X, y, n, p, &f);
    if (rc != PW_OK) {
        printf("error %s\n", pw_strerror(rc));
    } else {
        for (size_t j = 0; j < p; j++) printf("%.17g\n", f->coef[j]);
        for (size_t j = 0; j < p; j++) printf("%.17g\n", sqrt(f->cov_hc3[j * p + j]));
        for (size_t j = 0; j < p; j++) printf("%.17g\n", sqrt(f->cov_classic[j * p + j]));
    }
    pw_hcfit_free(f);
    free(X);
    free(y);
    return 0;
}
