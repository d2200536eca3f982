/* A turning effect's test: the Legendre polynomial basis, the reference turn, the basis's partial F
 * and its noncentrality per run. See LICENSE. */
#include <math.h>
#include <stdlib.h>

#include <gsl/gsl_cdf.h>

#include "power/power.h"

size_t pw_turn_degree(size_t distinct)
{
    if (distinct < PW_TURN_DEGREE_MIN + 2) return 0;
    size_t d = distinct - 2;
    return d > PW_TURN_DEGREE_MAX ? PW_TURN_DEGREE_MAX : d;
}

void pw_turn_basis(double z, size_t degree, double *out)
{
    /* Bonnet's recurrence (k + 1) P_{k+1} = (2k + 1) z P_k - k P_{k-1}, P_0 = 1, P_1 = z
     * (Abramowitz & Stegun 1964, 22.7.10). The polynomials are orthogonal on [-1, 1], so the
     * columns of evenly spread runs are nearly uncorrelated; they span the same space as
     * 1, z, ..., z^degree, so every F test below is the raw polynomial's. */
    double p0 = 1.0, p1 = z;
    for (size_t k = 1; k <= degree; k++) {
        out[k - 1] = p1;
        double p2 = ((double)(2 * k + 1) * z * p1 - (double)k * p0) / (double)(k + 1);
        p0 = p1;
        p1 = p2;
    }
}

double pw_turn_z(double x, double lo, double hi)
{
    return (2.0 * x - lo - hi) / (hi - lo);
}

double pw_turn_shape(double z)
{
    return 1.0 - z * z;
}

void pw_turn_shape_coef(size_t degree, double *u)
{
    /* 1 - z^2 = 2/3 - (2/3) P_2(z), since P_2 = (3 z^2 - 1) / 2 (A&S 22.3.8); the constant is
     * absorbed by the intercept. */
    for (size_t k = 0; k < degree; k++) u[k] = 0.0;
    if (degree >= 2) u[1] = -2.0 / 3.0;
}

int pw_basis_test(const pw_xfit *fit, const double *u, pw_basis_figures *out)
{
    out->f = out->p = out->df1 = out->df2 = out->ncp_per_run = NAN;
    out->turn = out->turn_se = NAN;
    size_t t = fit->t_rank;
    if (t == 0 || t != fit->t) return PW_ESING;
    if (!(fit->df >= 1) || !(fit->n > 0)) return PW_EFEW;
    double *minv = malloc(t * t * sizeof *minv);
    if (minv == NULL) return PW_ENOMEM;
    int rc = pw_spd_inverse(fit->treat_info, t, minv);
    if (rc != PW_OK) goto done;
    /* The extra sum of squares of the basis given the intercept and the adjustment set is
     * b' M b with M = X_B'(I - H_S)X_B and b the basis coefficients (Searle 1971, Linear Models,
     * sec. 3.6); F = (b' M b / t) / sigma^2 on t and df degrees of freedom. */
    double ss = 0, q = 0;
    for (size_t i = 0; i < t; i++)
        for (size_t j = 0; j < t; j++) {
            ss += fit->treat_coef[i] * fit->treat_info[i * t + j] * fit->treat_coef[j];
            q += u[i] * fit->treat_info[i * t + j] * u[j];
        }
    out->df1 = (double)t;
    out->df2 = fit->df;
    if (fit->sigma > 0) {
        out->f = (ss > 0 ? ss : 0) / (double)t / (fit->sigma * fit->sigma);
        out->p = gsl_cdf_fdist_Q(out->f, out->df1, out->df2);
    }
    /* Under a true mean h u'B + S g, the F is noncentral with lambda = h^2 u' M u / sigma^2
     * (Searle 1971, sec. 5.5; Scheffe 1959, sec. 2.8): the exact noncentrality of this design,
     * per run and per (h / sigma)^2. Cohen's (1988, ch. 9) f^2 is lambda / n in this form. */
    out->ncp_per_run = q / fit->n;
    /* The estimated height of the turn: the P_2 coefficient is -(2/3) h, with variance
     * sigma^2 (M^-1)_22. */
    if (t >= 2) {
        out->turn = -1.5 * fit->treat_coef[1];
        out->turn_se = 1.5 * fit->sigma * sqrt(minv[1 * t + 1]);
    }
done:
    free(minv);
    return rc;
}

int pw_turn_ncp_points(const double *z, const double *w, size_t m, double *ncp_per_run)
{
    /* Without an adjustment set, M = X_B'(I - 11'/n)X_B and u'M u / n is the weighted variance
     * of the turn's basis part, i.e. of 1 - z^2 over the design points. */
    double sw = 0, mean = 0, var = 0;
    for (size_t i = 0; i < m; i++) {
        if (!(w[i] >= 0) || !isfinite(z[i])) return PW_EDOM;
        sw += w[i];
    }
    if (!(sw > 0)) return PW_EDOM;
    for (size_t i = 0; i < m; i++) mean += w[i] * pw_turn_shape(z[i]) / sw;
    for (size_t i = 0; i < m; i++) var += w[i] * pow(pw_turn_shape(z[i]) - mean, 2) / sw;
    *ncp_per_run = var;
    return PW_OK;
}
