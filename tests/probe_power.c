/* Probe for tests/ref_pwr.py and tests/ref_longley.py: power and OLS figures on request.
 * See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>

#include "power/power.h"

/* Reads one request per line from stdin and writes one answer line (numbers with 17 digits):
 *   t2n D N1 N2 ALPHA SIDES          power of the two-sample t test (coefficient t, bool X)
 *   f2 U V F2 ALPHA                  pwr.f2.test convention
 *   anova F K NOBS ALPHA             one-way ANOVA F test, lambda = F^2 NOBS (level-set F)
 *   h H N1 N2 ALPHA SIDES            arcsine test of Cohen's h
 *   p2n P1 P2 N1 N2 ALPHA SIDES      two proportions through pw_power
 *   mde D N1 N2 ALPHA SIDES POWER    MDE (in SDs) of the two-sample t test
 *   ols N P                          then N lines "y x1 .. x(P-1)"; answers coefficients, then SEs,
 *                                    then sigma and R^2, intercept first (pw_ols_fit)
 *   xfit N P                         the same rows through the production solver: pw_moments
 *                                    accumulated row by row, then pw_xfit_solve with the last
 *                                    predictor as the treatment; answers coefficients (intercept
 *                                    first), then the slopes' SEs (the intercept's is not formed:
 *                                    "nan"), then sigma and R^2
 * Errors print "error <status text>". */
static void answer(int rc, double x)
{
    if (rc != PW_OK) printf("error %s\n", pw_strerror(rc));
    else printf("%.17g\n", x);
}

static pw_design two_sample(double d, double n1, double n2, double alpha, int sides)
{
    pw_design g;
    memset(&g, 0, sizeof g);
    g.test = PW_TEST_COEF_T;
    g.alpha = alpha;
    g.sides = sides;
    g.target = 0.8;
    g.effect = d;
    g.sigma = 1.0;
    g.n = n1 + n2;
    g.sd_x_resid = sqrt(n1 * n2) / g.n;   /* sqrt(s (1 - s)) of the group indicator */
    g.n_params = 1.0;
    g.ncp_per_run = NAN;
    return g;
}

static int do_ols(size_t n, size_t p)
{
    double *X = malloc(n * p * sizeof *X), *y = malloc(n * sizeof *y);
    pw_ols *fit = NULL;
    int rc = 1;
    if (X == NULL || y == NULL) goto fail;
    for (size_t i = 0; i < n; i++) {
        if (scanf("%lf", &y[i]) != 1) goto fail;
        X[i * p] = 1.0;
        for (size_t j = 1; j < p; j++)
            if (scanf("%lf", &X[i * p + j]) != 1) goto fail;
    }
    int st = pw_ols_fit(X, y, n, p, &fit);
    if (st != PW_OK) {
        printf("error %s\n", pw_strerror(st));
    } else {
        for (size_t j = 0; j < p; j++) printf("%.17g%c", fit->coef[j], j + 1 < p ? ' ' : '\n');
        for (size_t j = 0; j < p; j++) printf("%.17g%c", fit->se[j], j + 1 < p ? ' ' : '\n');
        printf("%.17g %.17g\n", fit->sigma, fit->r2);
    }
    rc = 0;
fail:
    pw_ols_free(fit);
    free(X);
    free(y);
    return rc;
}

static int do_xfit(size_t n, size_t p)
{
    size_t k = p - 1;                  /* slopes; the moments hold x1 .. x(P-1), then y */
    double *row = malloc(p * sizeof *row);
    size_t *idx = malloc(p * sizeof *idx);
    pw_moments *m = NULL;
    pw_xfit *fit = NULL;
    int rc = 1;
    if (row == NULL || idx == NULL || pw_moments_alloc(p, &m) != PW_OK) goto fail;
    for (size_t i = 0; i < n; i++) {
        if (scanf("%lf", &row[k]) != 1) goto fail;
        for (size_t j = 0; j < k; j++)
            if (scanf("%lf", &row[j]) != 1) goto fail;
        pw_moments_add(m, row);
    }
    for (size_t j = 0; j < p; j++) idx[j] = j;
    int st = pw_xfit_solve(m, idx, k, 1, &fit);
    if (st != PW_OK) {
        printf("error %s\n", pw_strerror(st));
    } else {
        printf("%.17g", fit->intercept);
        for (size_t j = 0; j < k; j++) printf(" %.17g", fit->coef[j]);
        printf("\nnan");
        for (size_t j = 0; j < k; j++) printf(" %.17g", fit->se[j]);
        printf("\n%.17g %.17g\n", fit->sigma, fit->r2);
    }
    rc = 0;
fail:
    pw_xfit_free(fit);
    pw_moments_free(m);
    free(row);
    free(idx);
    return rc;
}

int main(void)
{
    gsl_set_error_handler_off();
    char cmd[32];
    while (scanf("%31s", cmd) == 1) {
        double a, b, c, d, e, f;
        int sides;
        double x = NAN;
        int rc;
        if (strcmp(cmd, "t2n") == 0 && scanf("%lf %lf %lf %lf %d", &a, &b, &c, &d, &sides) == 5) {
            pw_design g = two_sample(a, b, c, d, sides);
            rc = pw_power(&g, &x);
            answer(rc, x);
        } else if (strcmp(cmd, "f2") == 0 && scanf("%lf %lf %lf %lf", &a, &b, &c, &d) == 4) {
            rc = pw_f2_power(c, a, b, d, &x);
            answer(rc, x);
        } else if (strcmp(cmd, "anova") == 0 && scanf("%lf %lf %lf %lf", &a, &b, &c, &d) == 4) {
            pw_design g;
            memset(&g, 0, sizeof g);
            g.test = PW_TEST_LEVELS_F;
            g.alpha = d;
            g.sides = 2;
            g.target = 0.8;
            g.effect = a;
            g.sigma = 1.0;
            g.sd_x_resid = 1.0;
            g.n = c;
            g.n_params = 1.0;
            g.n_levels = b;
            g.ncp_per_run = 1.0;
            rc = pw_power(&g, &x);
            answer(rc, x);
        } else if (strcmp(cmd, "h") == 0 &&
                   scanf("%lf %lf %lf %lf %d", &a, &b, &c, &d, &sides) == 5) {
            rc = pw_prop_power_h(a, b * c / (b + c), d, sides, &x);
            answer(rc, x);
        } else if (strcmp(cmd, "p2n") == 0 &&
                   scanf("%lf %lf %lf %lf %lf %d", &a, &b, &c, &d, &e, &sides) == 6) {
            pw_design g;
            memset(&g, 0, sizeof g);
            g.test = PW_TEST_TWO_PROP;
            g.alpha = e;
            g.sides = sides;
            g.target = 0.8;
            g.p_base = (a + b) / 2;
            g.effect = b - a;
            g.n = c + d;
            g.share_treated = d / (c + d);
            g.sd_x_resid = sqrt(c * d) / (c + d);
            rc = pw_power(&g, &x);
            answer(rc, x);
        } else if (strcmp(cmd, "mde") == 0 &&
                   scanf("%lf %lf %lf %d %lf", &a, &b, &c, &sides, &f) == 5) {
            pw_design g = two_sample(1.0, a, b, c, sides);
            g.target = f;
            rc = pw_mde(&g, &x);
            answer(rc, x);
        } else if (strcmp(cmd, "ols") == 0 && scanf("%lf %lf", &a, &b) == 2 && a >= 1 && b >= 1) {
            if (do_ols((size_t)a, (size_t)b)) {
                printf("error bad ols input\n");
                return 1;
            }
        } else if (strcmp(cmd, "xfit") == 0 && scanf("%lf %lf", &a, &b) == 2 && a >= 1 && b >= 2) {
            if (do_xfit((size_t)a, (size_t)b)) {
                printf("error bad xfit input\n");
                return 1;
            }
        } else {
            printf("error bad request '%s'\n", cmd);
            return 1;
        }
        fflush(stdout);
    }
    return 0;
}
