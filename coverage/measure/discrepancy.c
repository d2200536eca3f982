/* Centred L2 discrepancy of a point set in the unit cube, and its value for random points.
 * See LICENSE. */
#include <math.h>
#include <stdlib.h>

#include "coverage/measure/measure.h"

/* The centred L2 discrepancy (Hickernell 1998, "A generalized discrepancy and quadrature error
 * bound", Math. Comp. 67:299-322, eq. 5.1b), squared, as scipy.stats.qmc.discrepancy(method='CD')
 * returns it:
 *   CD^2 = (13/12)^d - (2/n) sum_i prod_k [1 + |x_ik - 1/2|/2 - |x_ik - 1/2|^2/2]
 *        + (1/n^2) sum_i sum_j prod_k [1 + |x_ik - 1/2|/2 + |x_jk - 1/2|/2 - |x_ik - x_jk|/2].
 * The double sum is symmetric, so it is the diagonal plus twice the upper triangle. */
double cov_cd2(const double *x, size_t n, size_t d)
{
    if (n == 0 || d == 0) return NAN;
    double *half = malloc(n * d * sizeof *half);   /* |x_ik - 1/2| / 2, computed once */
    if (half == NULL) return NAN;
    for (size_t t = 0; t < n * d; t++) half[t] = fabs(x[t] - 0.5) / 2;

    double single = 0, diag = 0, upper = 0;
    for (size_t i = 0; i < n; i++) {
        const double *hi = half + i * d, *xi = x + i * d;
        double p1 = 1, pd = 1;
        for (size_t k = 0; k < d; k++) {
            double a = 2 * hi[k];
            p1 *= 1 + a / 2 - a * a / 2;
            pd *= 1 + 2 * hi[k];             /* i == j: |x_ik - x_ik| = 0 */
        }
        single += p1;
        diag += pd;
        double row = 0;
        for (size_t j = i + 1; j < n; j++) {
            const double *hj = half + j * d, *xj = x + j * d;
            double p = 1;
            for (size_t k = 0; k < d; k++) p *= 1 + hi[k] + hj[k] - fabs(xi[k] - xj[k]) / 2;
            row += p;
        }
        upper += row;
    }
    free(half);
    double dn = (double)n;
    return pow(13.0 / 12.0, (double)d) - 2.0 / dn * single + (diag + 2 * upper) / (dn * dn);
}

/* E[CD^2] for n independent points uniform on [0,1]^d. Our derivation from the formula above:
 * for independent uniform coordinates, E prod_k [1 + a/2 - a^2/2] = (1 + 1/8 - 1/24)^d = (13/12)^d
 * (E a = 1/4, E a^2 = 1/12 with a = |x - 1/2|); for i != j the kernel's mean is
 * (1 + 1/8 + 1/8 - 1/6)^d = (13/12)^d (E|x - y| = 1/3); on the diagonal it is (1 + 1/4)^d. So
 *   E[CD^2] = (13/12)^d - 2 (13/12)^d + [n (5/4)^d + n (n - 1) (13/12)^d] / n^2
 *           = ((5/4)^d - (13/12)^d) / n.
 * tests/test_coverage.c checks it by Monte Carlo. */
double cov_cd2_random(size_t n, size_t d)
{
    if (n == 0 || d == 0) return NAN;
    return (pow(1.25, (double)d) - pow(13.0 / 12.0, (double)d)) / (double)n;
}
