/* Tests of the radix sort of doubles (power/sort.c) against the C library's comparison sort.
 * See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_rng.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_test.h>

#include "power/power.h"

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* Sort a copy by each method and count the positions whose bit patterns differ (after the
 * comparison sort's -0 are written as +0, as the radix sort documents). */
static size_t mismatches(const double *x, size_t n)
{
    double *a = malloc((n ? n : 1) * sizeof *a), *b = malloc((n ? n : 1) * sizeof *b);
    memcpy(a, x, n * sizeof *a);
    memcpy(b, x, n * sizeof *b);
    qsort(a, n, sizeof *a, cmp_double);
    size_t bad = pw_sort_doubles(b, n) != PW_OK ? n + 1 : 0;
    for (size_t i = 0; i < n; i++) {
        if (a[i] == 0) a[i] = 0;
        bad += memcmp(&a[i], &b[i], sizeof a[i]) != 0;
    }
    free(a);
    free(b);
    return bad;
}

int main(void)
{
    gsl_test_verbose(1);
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, 20261205);
    /* Sizes on both sides of the insertion-sort cut (64), and large ones; values as a simulator
     * records them: heavy-tailed (Cauchy), skewed (log-normal), zero-inflated with signed zeros,
     * few distinct levels, subnormal and huge magnitudes, infinities. */
    const size_t sizes[] = {0, 1, 2, 63, 64, 65, 1000, 100003};
    const char *kinds[] = {"Cauchy", "log-normal", "zero-inflated", "five levels", "extremes"};
    for (size_t s = 0; s < sizeof sizes / sizeof sizes[0]; s++)
        for (int k = 0; k < 5; k++) {
            size_t n = sizes[s];
            double *x = malloc((n ? n : 1) * sizeof *x);
            for (size_t i = 0; i < n; i++) {
                double u = gsl_rng_uniform(r);
                switch (k) {
                case 0: x[i] = gsl_ran_cauchy(r, 3.0); break;
                case 1: x[i] = gsl_ran_lognormal(r, 0.0, 2.0); break;
                case 2: x[i] = u < 0.4 ? (u < 0.2 ? -0.0 : 0.0) : gsl_ran_gaussian(r, 1.0); break;
                case 3: x[i] = floor(u * 5) - 2; break;
                default:
                    x[i] = u < 0.2 ? 4.9e-324 * (double)(i % 7) : u < 0.4 ? -1e300 * u
                           : u < 0.45 ? INFINITY : u < 0.5 ? -INFINITY : gsl_rng_uniform(r);
                }
            }
            gsl_test_int((int)mismatches(x, n), 0, "radix sort of %zu %s values matches qsort "
                         "bit for bit", n, kinds[k]);
            free(x);
        }
    gsl_rng_free(r);
    return gsl_test_summary();
}
