/* Probe for tests/ref_varmodel.py: the plan's noise and cost models, the expected residual sum of
 * squares, and the plan file's digest, on request. See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include <gsl/gsl_errno.h>

#include "coverage/plan/plan.h"

/* Reads one request from stdin and writes the answer, numbers with 17 digits:
 *   harvey N P        then N lines "e z1 .. z(P-1)" (the intercept is added): gamma, then p value
 *   loglin N P        then N lines "y z1 .. z(P-1)": gamma, then the smearing factor
 *   erss N P          then N lines "m v x1 .. x(P-1)": the expected RSS, then the P coefficients
 *   nestedf RSS0 P0 RSS1 P1 N      F and its p value
 *   sha256 PATH       the digest of the file
 * Errors print "error". */
static int read_rows(size_t n, size_t p, size_t lead, double *a, double *z)
{
    for (size_t i = 0; i < n; i++) {
        for (size_t k = 0; k < lead; k++)
            if (scanf("%lf", &a[i * lead + k]) != 1) return -1;
        z[i * p] = 1.0;
        for (size_t j = 1; j < p; j++)
            if (scanf("%lf", &z[i * p + j]) != 1) return -1;
    }
    return 0;
}

int main(void)
{
    gsl_set_error_handler_off();
    char what[32];
    if (scanf("%31s", what) != 1) return 2;
    if (what[0] == 's') {
        char path[4096], hex[65];
        if (scanf("%4095s", path) != 1 || cov_sha256_file(path, hex, NULL) != COV_OK) {
            puts("error");
            return 1;
        }
        puts(hex);
        return 0;
    }
    if (what[0] == 'n') {
        double r0, p0, r1, p1, n, f, pv;
        if (scanf("%lf %lf %lf %lf %lf", &r0, &p0, &r1, &p1, &n) != 5 ||
            pw_nested_f(r0, p0, r1, p1, n, &f, &pv) != PW_OK) {
            puts("error");
            return 1;
        }
        printf("%.17g\n%.17g\n", f, pv);
        return 0;
    }
    size_t n, p;
    if (scanf("%zu %zu", &n, &p) != 2 || n == 0 || p == 0 || n > 100000 || p > 50) return 2;
    size_t lead = what[0] == 'e' ? 2 : 1;
    double *a = malloc(n * lead * sizeof *a), *z = malloc(n * p * sizeof *z);
    double g[50], extra = NAN, *col = malloc(n * sizeof *col), *v = malloc(n * sizeof *v);
    if (a == NULL || z == NULL || col == NULL || v == NULL || read_rows(n, p, lead, a, z)) return 2;
    int rc;
    for (size_t i = 0; i < n; i++) {
        col[i] = a[i * lead];
        v[i] = lead == 2 ? a[i * lead + 1] : 0.0;
    }
    if (what[0] == 'h') rc = pw_harvey_fit(z, col, n, p, 0.0, g, &extra);
    else if (what[0] == 'l') rc = pw_loglin_fit(z, col, n, p, g, &extra);
    else rc = pw_expected_rss(z, col, v, n, p, &extra, g);
    if (rc != PW_OK) {
        printf("error %s\n", pw_strerror(rc));
        return 1;
    }
    if (what[0] == 'e') printf("%.17g\n", extra);
    for (size_t j = 0; j < p; j++) printf("%.17g\n", g[j]);
    if (what[0] != 'e') printf("%.17g\n", extra);
    free(a);
    free(z);
    free(col);
    free(v);
    return 0;
}
