/* Design dependence between inputs: |Pearson r| for numeric pairs, Cramer's V otherwise.
 * See LICENSE. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_rng.h>

#include "coverage/measure/measure.h"

/* Rows per block of the correlation pass: the block's columns (inputs x rows x 8 bytes) stay in
 * cache while every pair's sums are updated. */
#define COV_DEP_BLOCK 256
/* |r| costs K^2/2 multiply-adds a run; above this many runs it is computed on a fixed-seed random
 * subsample of this size, whose standard error (about (1 - r^2) / sqrt(n), under 0.0032) is far
 * below any sensible flagging threshold. Cramer's V always uses every run (its tables are free). */
#define COV_DEP_MAX_RUNS 100000

double cov_cramer_v(const size_t *count, size_t na, size_t nb)
{
    /* Cramer (1946), "Mathematical Methods of Statistics", sec. 21.9: V = sqrt(chi2 / (n (k - 1)))
     * with k the smaller of the numbers of rows and columns; Pearson's chi2 without continuity
     * correction and without the bias correction of Bergsma (2013). Empty rows and columns carry
     * no information and would make expected counts zero, so they are dropped. */
    double *row = calloc(na ? na : 1, sizeof *row), *col = calloc(nb ? nb : 1, sizeof *col);
    double v = NAN;
    if (row == NULL || col == NULL) goto done;
    double n = 0;
    for (size_t i = 0; i < na; i++)
        for (size_t j = 0; j < nb; j++) {
            double x = (double)count[i * nb + j];
            row[i] += x;
            col[j] += x;
            n += x;
        }
    size_t r = 0, c = 0;
    for (size_t i = 0; i < na; i++) r += row[i] > 0;
    for (size_t j = 0; j < nb; j++) c += col[j] > 0;
    if (r < 2 || c < 2) goto done;
    double chi2 = 0;
    for (size_t i = 0; i < na; i++) {
        if (row[i] == 0) continue;
        for (size_t j = 0; j < nb; j++) {
            if (col[j] == 0) continue;
            double e = row[i] * col[j] / n, o = (double)count[i * nb + j];
            chi2 += (o - e) * (o - e) / e;
        }
    }
    size_t k = r < c ? r : c;
    v = sqrt(chi2 / (n * (double)(k - 1)));
    if (v > 1) v = 1;   /* rounding only */
done:
    free(row);
    free(col);
    return v;
}

/* Pearson's product-moment correlation from centred sums (two passes: mean, then co-moments),
 * over the indices where both values are finite. */
double cov_abs_pearson(const double *x, const double *y, size_t n)
{
    double sx = 0, sy = 0, m = 0;
    for (size_t i = 0; i < n; i++)
        if (isfinite(x[i]) && isfinite(y[i])) sx += x[i], sy += y[i], m++;
    if (m < 2) return NAN;
    double mx = sx / m, my = sy / m, sxx = 0, syy = 0, sxy = 0;
    for (size_t i = 0; i < n; i++)
        if (isfinite(x[i]) && isfinite(y[i])) {
            double a = x[i] - mx, b = y[i] - my;
            sxx += a * a, syy += b * b, sxy += a * b;
        }
    if (sxx == 0 || syy == 0) return NAN;
    double r = fabs(sxy / sqrt(sxx * syy));
    return r > 1 ? 1 : r;
}

/* Sums of one numeric pair over the rows where both are present. */
typedef struct {
    double n, sa, sb, saa, sbb, sab;
} pair_sums;

/* All numeric pairs in one blocked pass. The values are shifted by the middle of their declared
 * domain and divided by its width (r is unchanged by such maps), which keeps the one-pass
 * co-moments well conditioned for data that spread over the domain. */
static int numeric_correlations(const cov_graph *g, const cov_data *d, const size_t *num,
                                size_t nn, const size_t *rows, size_t n_rows, double *r_out)
{
    size_t np = nn * (nn - 1) / 2;
    pair_sums *ps = calloc(np ? np : 1, sizeof *ps);
    double *buf = malloc(nn * COV_DEP_BLOCK * sizeof *buf);
    double *csum = malloc(nn * sizeof *csum), *csq = malloc(nn * sizeof *csq);
    int *has_nan = malloc(nn * sizeof *has_nan);
    int rc = COV_ENOMEM;
    if (ps == NULL || buf == NULL || csum == NULL || csq == NULL || has_nan == NULL) goto done;
    for (size_t i0 = 0; i0 < n_rows; i0 += COV_DEP_BLOCK) {
        size_t m = n_rows - i0 < COV_DEP_BLOCK ? n_rows - i0 : COV_DEP_BLOCK;
        for (size_t k = 0; k < nn; k++) {
            const cov_var *v = &g->vars[num[k]];
            const double *x = d->col[num[k]];
            double mid = (v->lo + v->hi) / 2, w = v->hi - v->lo;
            double *u = buf + k * COV_DEP_BLOCK, s = 0, q = 0;
            has_nan[k] = 0;
            for (size_t i = 0; i < m; i++) {
                u[i] = (x[rows != NULL ? rows[i0 + i] : i0 + i] - mid) / w;
                if (isfinite(u[i])) s += u[i], q += u[i] * u[i];
                else has_nan[k] = 1;
            }
            csum[k] = s;
            csq[k] = q;
        }
        size_t p = 0;
        for (size_t a = 0; a < nn; a++) {
            const double *ua = buf + a * COV_DEP_BLOCK;
            for (size_t b = a + 1; b < nn; b++, p++) {
                const double *ub = buf + b * COV_DEP_BLOCK;
                pair_sums *s = &ps[p];
                if (!has_nan[a] && !has_nan[b]) {
                    s->n += (double)m;
                    s->sa += csum[a], s->saa += csq[a];
                    s->sb += csum[b], s->sbb += csq[b];
                    s->sab += pw_dot(ua, ub, m);
                } else {
                    for (size_t i = 0; i < m; i++)
                        if (isfinite(ua[i]) && isfinite(ub[i])) {
                            s->n++;
                            s->sa += ua[i], s->saa += ua[i] * ua[i];
                            s->sb += ub[i], s->sbb += ub[i] * ub[i];
                            s->sab += ua[i] * ub[i];
                        }
                }
            }
        }
    }
    for (size_t p = 0; p < np; p++) {
        const pair_sums *s = &ps[p];
        double vaa = s->saa - s->sa * s->sa / s->n, vbb = s->sbb - s->sb * s->sb / s->n;
        double vab = s->sab - s->sa * s->sb / s->n;
        double r = (s->n >= 2 && vaa > 0 && vbb > 0) ? fabs(vab / sqrt(vaa * vbb)) : NAN;
        r_out[p] = r > 1 ? 1 : r;
    }
    rc = COV_OK;
done:
    free(ps);
    free(buf);
    free(csum);
    free(csq);
    free(has_nan);
    return rc;
}

int cov_dependence_fill(const cov_graph *g, const cov_data *d, cov_coverage *c)
{
    const size_t K = c->n_inputs;
    c->dependence = malloc((K ? K * K : 1) * sizeof *c->dependence);
    size_t *pos = malloc((K ? K : 1) * sizeof *pos);   /* position among numeric inputs, or K */
    size_t *num = malloc((K ? K : 1) * sizeof *num);
    double *r = NULL;
    size_t *rows = NULL;
    int rc = COV_ENOMEM;
    if (c->dependence == NULL || pos == NULL || num == NULL) goto done;
    size_t nn = 0;
    for (size_t k = 0; k < K; k++) {
        cov_type t = g->vars[c->inputs[k]].type;
        pos[k] = K;
        if (t == COV_REAL || t == COV_INTEGER) {
            pos[k] = nn;
            num[nn++] = c->inputs[k];
        }
    }
    r = malloc((nn > 1 ? nn * (nn - 1) / 2 : 1) * sizeof *r);
    if (r == NULL) goto done;
    c->dep_n = d->n_runs;
    if (nn > 1 && d->n_runs > COV_DEP_MAX_RUNS) {
        /* Knuth's Algorithm S (TAOCP vol. 2, 3.4.2): a fixed-seed sample in run order. */
        rows = malloc(COV_DEP_MAX_RUNS * sizeof *rows);
        gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
        if (rows == NULL || rng == NULL) {
            gsl_rng_free(rng);
            goto done;
        }
        gsl_rng_set(rng, c->opt.seed ^ 0xde9UL);
        size_t m = 0;
        for (size_t i = 0; i < d->n_runs && m < COV_DEP_MAX_RUNS; i++)
            if ((double)(d->n_runs - i) * gsl_rng_uniform(rng) < (double)(COV_DEP_MAX_RUNS - m))
                rows[m++] = i;
        gsl_rng_free(rng);
        c->dep_n = m;
    }
    if (nn > 1 && (rc = numeric_correlations(g, d, num, nn, rows, c->dep_n, r)) != COV_OK)
        goto done;
    for (size_t k = 0; k < K; k++) c->dependence[k * K + k] = 1;
    for (size_t a = 0, p = 0; a < K; a++)
        for (size_t b = a + 1; b < K; b++, p++) {
            double v;
            if (pos[a] < K && pos[b] < K) {
                size_t i = pos[a], j = pos[b];   /* i < j: numeric order follows input order */
                v = r[i * nn - i * (i + 1) / 2 + (j - i - 1)];
            } else {
                const cov_pair *pr = &c->pairs[p];
                v = cov_cramer_v(pr->count, pr->na, pr->nb);
            }
            c->dependence[a * K + b] = c->dependence[b * K + a] = v;
        }
    rc = COV_OK;
done:
    free(pos);
    free(num);
    free(r);
    free(rows);
    return rc;
}
