/* Centred cross-products and regressions solved from them (the fast path for large archives).
 * See LICENSE. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "power/power.h"

int pw_moments_alloc(size_t k, pw_moments **out)
{
    *out = NULL;
    if (k == 0) return PW_EDOM;
    pw_moments *m = calloc(1, sizeof *m);
    if (m == NULL) return PW_ENOMEM;
    m->k = k;
    m->mean = calloc(k, sizeof *m->mean);
    m->xprod = calloc(k * k, sizeof *m->xprod);
    if (m->mean == NULL || m->xprod == NULL) {
        pw_moments_free(m);
        return PW_ENOMEM;
    }
    *out = m;
    return PW_OK;
}

void pw_moments_free(pw_moments *m)
{
    if (m == NULL) return;
    free(m->mean);
    free(m->xprod);
    free(m);
}

/* Welford's (1962) update generalised to co-moments: with d = x - mean_old,
 * C += (n - 1)/n d d' and mean += d / n (Chan, Golub & LeVeque 1983, eq. 1.5). The deviations
 * are taken from the running mean, so no large sums of squares are ever subtracted. */
/* The update is the inner loop of reading a large archive; GCC vectorises it only when asked
 * (-O2 in GCC 12 does not), which makes it about four times faster. */
#if defined(__GNUC__) && !defined(__clang__)
__attribute__((optimize("O3")))
#endif
void pw_moments_add(pw_moments *m, const double *row)
{
    size_t k = m->k;
    double n1 = m->n + 1.0;
    double f = m->n / n1;
    double d[k > 0 ? k : 1];
    for (size_t i = 0; i < k; i++) d[i] = row[i] - m->mean[i];
    for (size_t i = 0; i < k; i++) {
        double fi = f * d[i];
        double *ci = m->xprod + i * k;
        for (size_t j = i; j < k; j++) ci[j] += fi * d[j];
    }
    for (size_t i = 0; i < k; i++) m->mean[i] += d[i] / n1;
    m->n = n1;
}

/* Register tile of the block cross-product: this many columns j are accumulated at once while
 * the rows stream past, so the running sums stay in registers instead of the k x k matrix. */
#define TILE 8
/* Rows i of the product accumulated together over each tile, so each loaded tile of deviations
 * serves all of them: 4 with AVX2 (8 accumulators of 4 doubles), 2 with the baseline SSE2 (8 of
 * 2). Every product is still the sum of dev_ri dev_rj over r in row order from 0, so the figures
 * are the same bit for bit whichever is used (no fused multiply-add: -std=c11 does not
 * contract, and neither target enables FMA). */
#define ROWS_AVX2 4
#define ROWS_BASE 2

/* The upper triangle of dev' dev (nb rows of k deviations) into xprod. */
static inline __attribute__((always_inline)) void block_products(const double *dev, size_t nb,
                                                                  size_t k, double *xprod,
                                                                  const size_t rows)
{
    size_t i = 0;
    for (; i + rows <= k; i += rows) {
        size_t j0 = i;
        for (; j0 + TILE <= k; j0 += TILE) {
            double acc[ROWS_AVX2][TILE] = {{0}};
            for (size_t r = 0; r < nb; r++) {
                const double *dr = dev + r * k;
                for (size_t u = 0; u < rows; u++) {
                    double a = dr[i + u];
                    for (size_t t = 0; t < TILE; t++) acc[u][t] += a * dr[j0 + t];
                }
            }
            for (size_t u = 0; u < rows; u++)
                for (size_t t = 0; t < TILE; t++)
                    if (j0 + t >= i + u) xprod[(i + u) * k + j0 + t] = acc[u][t];
        }
        for (size_t u = 0; u < rows; u++)
            for (size_t j = j0 > i + u ? j0 : i + u; j < k; j++) {
                double s = 0;
                for (size_t r = 0; r < nb; r++) s += dev[r * k + i + u] * dev[r * k + j];
                xprod[(i + u) * k + j] = s;
            }
    }
    for (; i < k; i++)
        for (size_t j = i; j < k; j++) {
            double s = 0;
            for (size_t r = 0; r < nb; r++) s += dev[r * k + i] * dev[r * k + j];
            xprod[i * k + j] = s;
        }
}

#if defined(__GNUC__) && !defined(__clang__) && defined(__x86_64__)
__attribute__((optimize("O3"), target("avx2")))
static void block_products_avx2(const double *dev, size_t nb, size_t k, double *xprod)
{
    block_products(dev, nb, k, xprod, ROWS_AVX2);
}
#endif

#if defined(__GNUC__) && !defined(__clang__)
__attribute__((optimize("O3")))
#endif
static void block_products_base(const double *dev, size_t nb, size_t k, double *xprod)
{
    block_products(dev, nb, k, xprod, ROWS_BASE);
}

int pw_moments_of_block(const double *rows, size_t nb, pw_moments *out)
{
    size_t k = out->k;
    if (nb == 0) return PW_EDOM;
    double *dev = malloc(nb * k * sizeof *dev), *mb = out->mean;
    if (dev == NULL) return PW_ENOMEM;
    /* Two passes within the block: its mean, then deviations from it. */
    for (size_t i = 0; i < k; i++) mb[i] = 0;
    for (size_t r = 0; r < nb; r++)
        for (size_t i = 0; i < k; i++) mb[i] += rows[r * k + i];
    for (size_t i = 0; i < k; i++) mb[i] /= (double)nb;
    for (size_t r = 0; r < nb; r++)
        for (size_t i = 0; i < k; i++) dev[r * k + i] = rows[r * k + i] - mb[i];
#if defined(__GNUC__) && !defined(__clang__) && defined(__x86_64__)
    if (__builtin_cpu_supports("avx2")) block_products_avx2(dev, nb, k, out->xprod);
    else block_products_base(dev, nb, k, out->xprod);
#else
    block_products_base(dev, nb, k, out->xprod);
#endif
    out->n = (double)nb;
    free(dev);
    return PW_OK;
}

/* The block's own moments, then merged (Chan, Golub & LeVeque 1983, eq. 2.1): the same arithmetic
 * as pw_moments_merge of pw_moments_of_block's result, by construction. */
int pw_moments_add_block(pw_moments *m, const double *rows, size_t nb)
{
    if (nb == 0) return PW_OK;
    pw_moments *b = NULL;
    int rc = pw_moments_alloc(m->k, &b);
    if (rc == PW_OK) rc = pw_moments_of_block(rows, nb, b);
    if (rc == PW_OK) rc = pw_moments_merge(m, b);
    pw_moments_free(b);
    return rc;
}

double pw_moments_at(const pw_moments *m, size_t i, size_t j)
{
    return i <= j ? m->xprod[i * m->k + j] : m->xprod[j * m->k + i];
}

void pw_xfit_free(pw_xfit *f)
{
    if (f == NULL) return;
    free(f->kept);
    free(f->coef);
    free(f->se);
    free(f->treat_info);
    free(f->treat_coef);
    free(f);
}

int pw_xfit_solve(const pw_moments *m, const size_t *idx, size_t k, size_t t, pw_xfit **out)
{
    int rc = PW_ENOMEM;
    size_t q = k + 1;          /* predictors and the outcome */
    double *R = NULL, *L = NULL, *Linv = NULL, *scale = NULL, *bs = NULL;
    pw_xfit *f = NULL;
    *out = NULL;
    if (m == NULL || idx == NULL || t > k) return PW_EDOM;
    for (size_t a = 0; a < q; a++)
        if (idx[a] >= m->k) return PW_EDOM;
    R = calloc(q * q, sizeof *R);
    L = calloc(q * q, sizeof *L);
    Linv = calloc(q * q, sizeof *Linv);
    scale = calloc(q, sizeof *scale);
    bs = calloc(q, sizeof *bs);
    f = calloc(1, sizeof *f);
    if (R == NULL || L == NULL || Linv == NULL || scale == NULL || bs == NULL || f == NULL)
        goto fail;
    f->k = k;
    f->t = t;
    f->n = m->n;
    f->kept = calloc(q, 1);
    f->coef = calloc(q, sizeof *f->coef);
    f->se = calloc(q, sizeof *f->se);
    f->treat_info = calloc(t > 0 ? t * t : 1, sizeof *f->treat_info);
    f->treat_coef = calloc(t > 0 ? t : 1, sizeof *f->treat_coef);
    if (f->kept == NULL || f->coef == NULL || f->se == NULL || f->treat_info == NULL ||
        f->treat_coef == NULL)
        goto fail;

    /* Scale to correlations, so that the aliasing test is relative and the factor well scaled. */
    for (size_t a = 0; a < q; a++) {
        double c = pw_moments_at(m, idx[a], idx[a]);
        scale[a] = c > 0 ? sqrt(c) : 0.0;
    }
    for (size_t a = 0; a < q; a++)
        for (size_t b = 0; b < q; b++)
            R[a * q + b] = scale[a] > 0 && scale[b] > 0
                               ? pw_moments_at(m, idx[a], idx[b]) / (scale[a] * scale[b])
                               : (a == b ? 1.0 : 0.0);

    /* Cholesky L L' = R row by row, dropping a predictor whose remaining pivot shows it aliased. */
    for (size_t j = 0; j < q; j++) {
        int usable = j == k || scale[j] > 0;
        if (usable) {
            for (size_t i = 0; i < j; i++) {
                if (!f->kept[i]) continue;
                double s = R[j * q + i];
                for (size_t c = 0; c < i; c++) s -= L[j * q + c] * L[i * q + c];
                L[j * q + i] = s / L[i * q + i];
            }
            double d = R[j * q + j];
            for (size_t c = 0; c < j; c++) d -= L[j * q + c] * L[j * q + c];
            if (j < k && d <= PW_ALIAS_TOL) {
                for (size_t c = 0; c < j; c++) L[j * q + c] = 0.0;
                usable = 0;
            } else {
                L[j * q + j] = sqrt(d > 0 ? d : 0.0);
            }
        }
        f->kept[j] = (unsigned char)usable;
        if (j < k && usable) {
            f->rank++;
            if (j >= k - t) f->t_rank++;
        }
    }
    double yy = scale[k] * scale[k];
    double lyy = L[k * q + k];
    f->rss = lyy * lyy * yy;
    f->r2 = yy > 0 ? 1.0 - lyy * lyy : NAN;
    f->df = m->n - 1.0 - (double)f->rank;
    f->sigma = f->df > 0 ? sqrt(f->rss / f->df) : NAN;

    /* Scaled slopes: L_pred' bs = l_y over the kept predictors. */
    for (size_t jj = k; jj-- > 0;) {
        if (!f->kept[jj]) continue;
        double s = L[k * q + jj];
        for (size_t c = jj + 1; c < k; c++)
            if (f->kept[c]) s -= L[c * q + jj] * bs[c];
        bs[jj] = s / L[jj * q + jj];
    }
    /* L^-1 of the kept predictor block, for diag((L L')^-1) and hence the standard errors. */
    for (size_t c = 0; c < k; c++) {
        if (!f->kept[c]) continue;
        Linv[c * q + c] = 1.0 / L[c * q + c];
        for (size_t r = c + 1; r < k; r++) {
            if (!f->kept[r]) continue;
            double s = 0.0;
            for (size_t mm = c; mm < r; mm++)
                if (f->kept[mm]) s += L[r * q + mm] * Linv[mm * q + c];
            Linv[r * q + c] = -s / L[r * q + r];
        }
    }
    double intercept = m->mean[idx[k]];
    for (size_t a = 0; a < k; a++) {
        if (!f->kept[a]) {
            f->coef[a] = 0.0;
            f->se[a] = NAN;
            continue;
        }
        f->coef[a] = bs[a] * scale[k] / scale[a];
        double dinv = 0.0;   /* [R^-1]_aa = sum over rows r >= a of Linv[r][a]^2 */
        for (size_t r = a; r < k; r++) dinv += Linv[r * q + a] * Linv[r * q + a];
        f->se[a] = f->sigma * sqrt(dinv) / scale[a];
        intercept -= f->coef[a] * m->mean[idx[a]];
    }
    f->intercept = intercept;

    /* Treatment block: the Schur complement of the others in R is L_TT L_TT' (its kept rows). */
    size_t r0 = 0;
    for (size_t a = k - t; a < k; a++) {
        if (!f->kept[a]) continue;
        size_t c0 = 0;
        for (size_t b = k - t; b < k; b++) {
            if (!f->kept[b]) continue;
            double s = 0.0;
            for (size_t c = k - t; c <= (a < b ? a : b); c++) s += L[a * q + c] * L[b * q + c];
            f->treat_info[r0 * f->t_rank + c0] = s * scale[a] * scale[b];
            c0++;
        }
        f->treat_coef[r0] = f->coef[a];
        r0++;
    }
    *out = f;
    f = NULL;
    rc = PW_OK;
fail:
    free(R);
    free(L);
    free(Linv);
    free(scale);
    free(bs);
    pw_xfit_free(f);
    return rc;
}

double pw_xfit_sd_treatment(const pw_xfit *f)
{
    if (f == NULL || !(f->n > 0)) return NAN;
    if (f->t_rank == 0) return 0.0;
    if (f->t_rank != 1) return NAN;
    return sqrt(f->treat_info[0] / f->n);
}

int pw_resid_sd(const pw_moments *m, const size_t *idx, size_t k, double *out)
{
    if (m == NULL || idx == NULL) return PW_EDOM;
    size_t *full = malloc((k + 2) * sizeof *full);
    if (full == NULL) return PW_ENOMEM;
    for (size_t a = 0; a <= k; a++) full[a] = idx[a];
    full[k + 1] = idx[k];   /* X as the outcome too: only the treatment block is read */
    pw_xfit *f = NULL;
    int rc = pw_xfit_solve(m, full, k + 1, 1, &f);
    free(full);
    if (rc != PW_OK) return rc;
    *out = pw_xfit_sd_treatment(f);
    pw_xfit_free(f);
    return PW_OK;
}

int pw_moments_merge(pw_moments *a, const pw_moments *b)
{
    if (a->k != b->k) return PW_EDOM;
    if (b->n == 0) return PW_OK;
    size_t k = a->k;
    /* Chan, Golub & LeVeque (1983), eq. 2.1: C = C_a + C_b + (n_a n_b / n) delta delta',
     * delta = mean_b - mean_a; mean = mean_a + delta n_b / n. */
    double na = a->n, n = na + b->n, w = na * b->n / n;
    for (size_t i = 0; i < k; i++) {
        double di = b->mean[i] - a->mean[i];
        for (size_t j = i; j < k; j++)
            a->xprod[i * k + j] += b->xprod[i * k + j] + w * di * (b->mean[j] - a->mean[j]);
    }
    for (size_t i = 0; i < k; i++) a->mean[i] += (b->mean[i] - a->mean[i]) * b->n / n;
    a->n = n;
    return PW_OK;
}

double pw_dot(const double *a, const double *b, size_t n)
{
    double s0 = 0, s1 = 0, s2 = 0, s3 = 0;
    size_t i = 0;
    for (; i + 4 <= n; i += 4) {
        s0 += a[i] * b[i];
        s1 += a[i + 1] * b[i + 1];
        s2 += a[i + 2] * b[i + 2];
        s3 += a[i + 3] * b[i + 3];
    }
    for (; i < n; i++) s0 += a[i] * b[i];
    return (s0 + s1) + (s2 + s3);
}
