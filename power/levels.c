/* The least favourable patterns of a level-set treatment, for its F test and its equivalence test.
 * See LICENSE. */
#include <math.h>
#include <stdlib.h>

#include "power/power.h"

/* The contrast between levels i and j (0 = the reference) as a vector over the dummies. */
static void contrast(size_t i, size_t j, size_t t, double *c)
{
    for (size_t a = 0; a < t; a++) c[a] = 0;
    if (j > 0) c[j - 1] += 1;
    if (i > 0) c[i - 1] -= 1;
}

/* Level-set treatment: the least favourable pattern of level means. For every pair (i, j) the two
 * levels differ by one unit and the others sit at their midpoint; the F noncentrality per unit of
 * (effect / sigma)^2 is b' M b with b the dummy coefficients (level mean minus the reference's)
 * and M = X_T'(I - H)X_T (Searle 1971, sec. 3.5). *q_min is the smallest over pairs. *v_max is
 * the largest variance factor c' M^-1 c of a pairwise contrast (the least favourable equivalence
 * contrast), with that pair in *wi, *wj. */
int pw_level_pattern(const double *M, size_t t, double *q_min, double *v_max, size_t *wi,
                     size_t *wj)
{
    double *Minv = malloc(t * t * sizeof *Minv), *L = calloc(t * t, sizeof *L);
    double *b = malloc(t * sizeof *b), *c = malloc(t * sizeof *c), *w = malloc(t * sizeof *w);
    int rc = PW_ENOMEM;
    if (Minv == NULL || L == NULL || b == NULL || c == NULL || w == NULL) goto fail;
    /* Cholesky of M, then M^-1 column by column. */
    rc = PW_ESING;
    for (size_t r = 0; r < t; r++) {
        for (size_t s = 0; s <= r; s++) {
            double v = M[r * t + s];
            for (size_t u = 0; u < s; u++) v -= L[r * t + u] * L[s * t + u];
            if (r == s) {
                if (!(v > 0)) goto fail;
                L[r * t + r] = sqrt(v);
            } else {
                L[r * t + s] = v / L[s * t + s];
            }
        }
    }
    for (size_t col = 0; col < t; col++) {
        for (size_t r = 0; r < t; r++) {   /* forward: L w = e_col */
            double v = r == col ? 1.0 : 0.0;
            for (size_t u = 0; u < r; u++) v -= L[r * t + u] * w[u];
            w[r] = v / L[r * t + r];
        }
        for (size_t r = t; r-- > 0;) {     /* back: L' x = w */
            double v = w[r];
            for (size_t u = r + 1; u < t; u++) v -= L[u * t + r] * Minv[u * t + col];
            Minv[r * t + col] = v / L[r * t + r];
        }
    }
    *q_min = INFINITY;
    *v_max = 0;
    for (size_t i = 0; i <= t; i++)
        for (size_t j = i + 1; j <= t; j++) {
            /* Means: level i at -1/2, level j at +1/2, the rest 0; b = mean - mean of level 0. */
            double mu0 = i == 0 ? -0.5 : 0.0;
            for (size_t a = 0; a < t; a++) {
                double mu = a + 1 == i ? -0.5 : (a + 1 == j ? 0.5 : 0.0);
                b[a] = mu - mu0;
            }
            double q = 0;
            for (size_t a = 0; a < t; a++)
                for (size_t e = 0; e < t; e++) q += b[a] * M[a * t + e] * b[e];
            if (q < *q_min) *q_min = q;
            contrast(i, j, t, c);
            double v = 0;
            for (size_t a = 0; a < t; a++)
                for (size_t e = 0; e < t; e++) v += c[a] * Minv[a * t + e] * c[e];
            if (v > *v_max) {
                *v_max = v;
                *wi = i;
                *wj = j;
            }
        }
    rc = PW_OK;
fail:
    free(Minv);
    free(L);
    free(b);
    free(c);
    free(w);
    return rc;
}

