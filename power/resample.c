/* Power by resampling: the wild bootstrap of a least-squares fit with the effect of interest
 * planted, and power, MDE and runs needed read off the same replicates.
 * See LICENSE. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_rng.h>

#include "power/power.h"

/* Bisection steps of the MDE and runs searches: 200 halvings reach the resolution of a double
 * from any bracket; the searches stop sooner, at WILD_REL_TOL. */
#define WILD_MAX_STEPS 200
#define WILD_REL_TOL 1e-7

struct pw_wild {
    size_t B;
    double n, p;         /* runs of the fit, its coefficients */
    double *a;           /* B replicate estimation errors of the contrast, c'(beta* - beta) */
    double *s;           /* B replicate standard errors (HC3 or classic) */
};

void pw_wild_free(pw_wild *w)
{
    if (w == NULL) return;
    free(w->a);
    free(w->s);
    free(w);
}

size_t pw_wild_replicates(const pw_wild *w)
{
    return w->B;
}

/* One draw of the wild weight (mean 0, variance 1). Rademacher: +-1 with probability 1/2 each
 * (Liu 1988; Davidson & Flachaire 2008, who recommend it). Mammen (1993): -(sqrt 5 - 1)/2 with
 * probability (sqrt 5 + 1)/(2 sqrt 5), else (sqrt 5 + 1)/2, which also matches a third moment
 * of 1. */
static double wild_weight(gsl_rng *r, int weights)
{
    double u = gsl_rng_uniform(r);
    if (weights == PW_WILD_MAMMEN) {
        double s5 = sqrt(5.0);
        return u < (s5 + 1) / (2 * s5) ? -(s5 - 1) / 2 : (s5 + 1) / 2;
    }
    return u < 0.5 ? -1.0 : 1.0;
}

int pw_wild_draw(const pw_hcfit *f, const double *X, const double *c, int robust, int weights,
                 size_t B, unsigned long seed, pw_wild **out)
{
    *out = NULL;
    if (f == NULL || X == NULL || c == NULL || B == 0) return PW_EDOM;
    size_t n = f->n, p = f->p;
    if (!(f->df >= 1)) return PW_EFEW;
    int rc = PW_ENOMEM;
    pw_wild *w = calloc(1, sizeof *w);
    /* cols: 2p columns of n, x_ia e~_i and then q_i^2 e~_i x_ia; e2 and qe2: e~_i^2, q_i^2 e~_i^2;
     * v: one replicate's weights; sign: the weights of the 8 rows a byte of random bits sets. */
    double *cols = malloc(2 * p * n * sizeof *cols), *v = malloc(n * sizeof *v);
    double *e2 = malloc(n * sizeof *e2), *qe2 = malloc(n * sizeof *qe2);
    double *mq = malloc(p * p * sizeof *mq), *xtu = malloc(2 * p * sizeof *xtu);
    double *bu = malloc(p * sizeof *bu), *sign = malloc(256 * 8 * sizeof *sign);
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    if (w == NULL || cols == NULL || v == NULL || e2 == NULL || qe2 == NULL || mq == NULL ||
        xtu == NULL || bu == NULL || sign == NULL || r == NULL)
        goto fail;
    w->B = B;
    w->n = (double)n;
    w->p = (double)p;
    w->a = malloc(B * sizeof *w->a);
    w->s = malloc(B * sizeof *w->s);
    if (w->a == NULL || w->s == NULL) goto fail;
    gsl_rng_set(r, seed);
    for (size_t k = 0; k < 256; k++)
        for (size_t j = 0; j < 8; j++) sign[k * 8 + j] = (k >> j) & 1 ? 1.0 : -1.0;
    /* w_i = x_i'(X'X)^-1 c: the contrast estimate is sum_i w_i y_i, and its HC3 variance
     * sum_i q_i^2 e_i^2 with q_i = w_i / (1 - h_ii). cvc = c'(X'X)^-1 c for the classic
     * variance. */
    double cvc = 0, c0 = 0, c1 = 0;
    for (size_t a = 0; a < p; a++)
        for (size_t b = 0; b < p; b++) cvc += c[a] * f->xtx_inv[a * p + b] * c[b];
    memset(mq, 0, p * p * sizeof *mq);
    for (size_t i = 0; i < n; i++) {
        const double *xi = X + i * p;
        double wi = 0;
        for (size_t a = 0; a < p; a++) {
            double t = 0;
            for (size_t b = 0; b < p; b++) t += f->xtx_inv[a * p + b] * c[b];
            wi += xi[a] * t;
        }
        double q = wi / (1 - f->lev[i]), q2 = q * q;
        /* Residuals rescaled by 1 / sqrt(1 - h_ii), so that each keeps its run's error variance
         * (Davidson & Flachaire 2008, sec. 3, the HC2-type transformation). */
        double et = f->resid[i] / sqrt(1 - f->lev[i]);
        for (size_t a = 0; a < p; a++) {
            cols[a * n + i] = xi[a] * et;
            cols[(p + a) * n + i] = q2 * et * xi[a];
            for (size_t b = 0; b < p; b++) mq[a * p + b] += q2 * xi[a] * xi[b];
        }
        e2[i] = et * et;
        qe2[i] = q2 * et * et;
        c1 += e2[i];
        c0 += qe2[i];
    }
    for (size_t b = 0; b < B; b++) {
        /* y* = (fitted with the effect planted) + u, u_i = e~_i v_i; the contrast's error and
         * the refit's residuals depend on u alone, since X beta is fitted exactly. */
        if (weights == PW_WILD_MAMMEN) {
            for (size_t i = 0; i < n; i++) v[i] = wild_weight(r, weights);
        } else {
            /* Rademacher signs 32 at a time: each call of mt19937 gives 32 independent,
             * uniformly distributed bits (Matsumoto & Nishimura 1998), each a fair coin; bit j
             * of a word signs row i + j, a byte's 8 signs copied from the table at once. */
            for (size_t i = 0; i < n; i += 32) {
                unsigned long bits = gsl_rng_get(r);
                for (size_t j = 0; j < 32 && i + j < n; j += 8) {
                    size_t m = n - (i + j) < 8 ? n - (i + j) : 8;
                    memcpy(v + i + j, sign + ((bits >> j) & 0xff) * 8, m * sizeof *v);
                }
            }
        }
        /* The refit by its sums alone (each a pass over the runs, none over rows of X): with
         * X'u and g = sum_i q_i^2 u_i x_i, bu = (X'X)^-1 X'u is the refit's coefficient error,
         * the contrast's error is c'bu, the residuals are e = u - X bu, so that
         *   sum_i q_i^2 e_i^2 = sum_i q_i^2 u_i^2 - 2 bu'g + bu' (sum_i q_i^2 x_i x_i') bu,
         *   e'e = u'u - (X'u)'bu,
         * where u_i^2 = e~_i^2 for Rademacher weights (v_i^2 = 1). */
        for (size_t a = 0; a < 2 * p; a++) xtu[a] = pw_dot(cols + a * n, v, n);
        double uu = c1, quu = c0;
        if (weights == PW_WILD_MAMMEN) {
            uu = quu = 0;
            for (size_t i = 0; i < n; i++) {
                uu += e2[i] * v[i] * v[i];
                quu += qe2[i] * v[i] * v[i];
            }
        }
        double a_b = 0, xb = 0, gb = 0, bmb = 0;
        for (size_t a = 0; a < p; a++) {
            double s = 0;
            for (size_t k = 0; k < p; k++) s += f->xtx_inv[a * p + k] * xtu[k];
            bu[a] = s;
            a_b += c[a] * s;
            xb += xtu[a] * s;
            gb += xtu[p + a] * s;
        }
        for (size_t a = 0; a < p; a++)
            for (size_t k = 0; k < p; k++) bmb += bu[a] * mq[a * p + k] * bu[k];
        double hc = quu - 2 * gb + bmb, rss = uu - xb;
        w->a[b] = a_b;
        /* Both are sums of squares; rounding can take an exact zero a hair below it. */
        w->s[b] = robust ? sqrt(fmax(hc, 0)) : sqrt(fmax(rss, 0) / f->df * cvc);
    }
    *out = w;
    w = NULL;
    rc = PW_OK;
fail:
    pw_wild_free(w);
    free(cols);
    free(v);
    free(e2);
    free(qe2);
    free(mq);
    free(xtu);
    free(bu);
    free(sign);
    gsl_rng_free(r);
    return rc;
}

/* Share of replicates in which the test rejects at effect (margin for TOST) with n_new runs: each
 * replicate's error and SE scale by k = sqrt(n / n_new), and the t reference has n_new - p df. */
static int wild_rate(const pw_wild *w, const pw_wild_test *t, double effect, double n_new,
                     double *rate)
{
    double df = n_new - w->p;
    if (!(df >= 1)) return PW_EFEW;
    if (!(t->alpha > 0 && t->alpha < 1)) return PW_EDOM;
    double k = sqrt(w->n / n_new);
    double tc = gsl_cdf_tdist_Qinv(t->tost || t->sides == 1 ? t->alpha : t->alpha / 2, df);
    if (!isfinite(tc)) return PW_EDOM;
    size_t hits = 0;
    for (size_t b = 0; b < w->B; b++) {
        double a = w->a[b] * k, s = w->s[b] * k;
        if (!(s > 0)) continue;
        if (t->tost) {
            /* Two one-sided tests against -+margin at a true effect of 0 (Schuirmann 1987). */
            hits += (a + effect) / s > tc && (a - effect) / s < -tc;
        } else if (t->sides == 1) {
            hits += (effect + a) / s > tc;
        } else {
            hits += fabs(effect + a) / s > tc;
        }
    }
    *rate = (double)hits / (double)w->B;
    return PW_OK;
}

int pw_wild_power(const pw_wild *w, const pw_wild_test *t, double effect, double n_new,
                  double *power, double *mc_se)
{
    double p = NAN;
    int rc = wild_rate(w, t, effect, n_new, &p);
    if (rc != PW_OK) return rc;
    *power = p;
    /* Binomial Monte Carlo standard error of a share of B replicates. */
    if (mc_se) *mc_se = sqrt(p * (1 - p) / (double)w->B);
    return PW_OK;
}

int pw_wild_mde(const pw_wild *w, const pw_wild_test *t, double target, double n_new, double *mde)
{
    /* Power rises with the effect (for TOST, with the margin): bracket, then bisect to the
     * smallest effect whose rate reaches the target, starting from the largest replicate SE. */
    double scale = 0;
    for (size_t b = 0; b < w->B; b++) scale = fmax(scale, w->s[b]);
    scale *= sqrt(w->n / n_new);
    if (!(scale > 0)) return PW_EDOM;
    double lo = 0, hi = scale, rate = 0;
    int rc;
    for (int i = 0; i < WILD_MAX_STEPS; i++) {
        if ((rc = wild_rate(w, t, hi, n_new, &rate)) != PW_OK) return rc;
        if (rate >= target) break;
        lo = hi;
        hi *= 2;
        if (!isfinite(hi)) {
            *mde = INFINITY;
            return PW_OK;
        }
    }
    if (rate < target) {
        *mde = INFINITY;
        return PW_OK;
    }
    for (int i = 0; i < WILD_MAX_STEPS && hi - lo > WILD_REL_TOL * hi; i++) {
        double mid = 0.5 * (lo + hi);
        if ((rc = wild_rate(w, t, mid, n_new, &rate)) != PW_OK) return rc;
        if (rate >= target) hi = mid;
        else lo = mid;
    }
    *mde = hi;
    return PW_OK;
}

int pw_wild_runs(const pw_wild *w, const pw_wild_test *t, double effect, double target,
                 double *runs)
{
    /* The smallest whole number of runs whose rate reaches the target, by doubling then
     * bisection over run counts (the rate rises with runs up to Monte Carlo error). */
    double lo = w->p + 1, hi = fmax(w->n, w->p + 2), rate = 0;
    int rc;
    for (;;) {
        if ((rc = wild_rate(w, t, effect, hi, &rate)) != PW_OK) return rc;
        if (rate >= target) break;
        lo = hi;
        hi *= 2;
        if (hi > PW_MAX_RUNS) {
            *runs = INFINITY;
            return PW_OK;
        }
    }
    while (hi - lo > 1) {
        double mid = floor(0.5 * (lo + hi));
        if ((rc = wild_rate(w, t, effect, mid, &rate)) != PW_OK) return rc;
        if (rate >= target) hi = mid;
        else lo = mid;
    }
    *runs = hi;
    return PW_OK;
}

/* The inverse of a small symmetric positive definite matrix a (p-by-p, row-major) by Cholesky
 * after scaling to a unit diagonal (Golub & Van Loan 2013, alg. 4.2.1; the scaling, sec. 3.5.2);
 * l (p * p) is work space. Returns 0, or -1 when a pivot of the scaled matrix falls below
 * PAIRS_PIVOT_MIN: the cross-products are then too near singular to trust, and the caller refits
 * by Householder QR instead, which decides singularity as pw_ols_fit does. */
#define PAIRS_PIVOT_MIN 1e-4
/* A copy of a run with leverage within this of 1 fixes a coefficient alone (a treatment level
 * drawn once): HC3 is undefined there (pw_hc3_fit's PW_ESING), whatever rounding makes of it,
 * so the replicate is singular. 1e-8 is far above the rounding of a leverage (about 1e-15) and
 * far below any leverage a resample of more runs than coefficients gives otherwise. */
#define PAIRS_LEV_TOL 1e-8
static int spd_inverse_scaled(const double *a, size_t p, double *ainv, double *l, double *d)
{
    for (size_t i = 0; i < p; i++) {
        if (!(a[i * p + i] > 0)) return -1;
        d[i] = 1 / sqrt(a[i * p + i]);
    }
    /* l: the lower Cholesky factor of D a D, D = diag(d). */
    for (size_t j = 0; j < p; j++) {
        double s = a[j * p + j] * d[j] * d[j];
        for (size_t k = 0; k < j; k++) s -= l[j * p + k] * l[j * p + k];
        /* A pivot below PAIRS_PIVOT_MIN means a scaled condition number above about 1e8, where
         * the cross-products would lose more than half the digits the QR refit keeps. */
        if (!(s > PAIRS_PIVOT_MIN * PAIRS_PIVOT_MIN)) return -1;
        double ljj = sqrt(s);
        l[j * p + j] = ljj;
        for (size_t i = j + 1; i < p; i++) {
            double t = a[i * p + j] * d[i] * d[j];
            for (size_t k = 0; k < j; k++) t -= l[i * p + k] * l[j * p + k];
            l[i * p + j] = t / ljj;
        }
    }
    /* Invert l in place (lower triangular), then (D a D)^-1 = l^-T l^-1 and a^-1 = D (.) D. */
    for (size_t j = 0; j < p; j++) {
        l[j * p + j] = 1 / l[j * p + j];
        for (size_t i = j + 1; i < p; i++) {
            double t = 0;
            for (size_t k = j; k < i; k++) t += l[i * p + k] * l[k * p + j];
            l[i * p + j] = -t / l[i * p + i];
        }
    }
    for (size_t i = 0; i < p; i++)
        for (size_t j = 0; j <= i; j++) {
            double t = 0;
            for (size_t k = i; k < p; k++) t += l[k * p + i] * l[k * p + j];
            ainv[i * p + j] = ainv[j * p + i] = t * d[i] * d[j];
        }
    return 0;
}

/* One pairs replicate by Householder QR (pw_hc3_fit) on the runs drawn (cnt[j] copies of run j):
 * the route for resamples whose cross-products are near singular. */
static int pairs_refit(const double *X, const double *y, size_t n, size_t p, const double *c,
                       int robust, const unsigned *cnt, double est, double *Xb, double *yb,
                       double *err, double *se)
{
    size_t m = 0;
    for (size_t j = 0; j < n; j++)
        for (unsigned k = 0; k < cnt[j]; k++, m++) {
            memcpy(Xb + m * p, X + j * p, p * sizeof *Xb);
            yb[m] = y[j];
        }
    pw_hcfit *f = NULL;
    int frc = pw_hc3_fit(Xb, yb, n, p, &f);
    if (frc == PW_ENOMEM) return frc;
    *err = 0;
    *se = 0;
    if (frc != PW_OK) return PW_OK;   /* singular: SE 0, never rejects (see pw_pairs_draw) */
    for (size_t i = 0; i < n; i++)
        if (f->lev[i] > 1 - PAIRS_LEV_TOL) {
            pw_hcfit_free(f);
            return PW_OK;
        }
    double e = -est;
    for (size_t a = 0; a < p; a++) e += c[a] * f->coef[a];
    double v = pw_hc_contrast_var(f, c, robust);
    *err = e;
    *se = v > 0 ? sqrt(v) : 0;
    pw_hcfit_free(f);
    return PW_OK;
}

int pw_pairs_draw(const double *X, const double *y, size_t n, size_t p, const double *c,
                  int robust, size_t B, unsigned long seed, pw_wild **out)
{
    *out = NULL;
    if (X == NULL || y == NULL || c == NULL || B == 0 || p == 0) return PW_EDOM;
    if (n <= p + 1) return PW_EFEW;
    pw_hcfit *f = NULL;
    int rc = pw_hc3_fit(X, y, n, p, &f);
    if (rc != PW_OK) return rc;
    double est = 0;
    for (size_t a = 0; a < p; a++) est += c[a] * f->coef[a];
    pw_hcfit_free(f);
    f = NULL;
    rc = PW_ENOMEM;
    pw_wild *w = calloc(1, sizeof *w);
    double *Xb = malloc(n * p * sizeof *Xb), *yb = malloc(n * sizeof *yb);
    unsigned *cnt = malloc(n * sizeof *cnt);
    size_t *drawn = malloc(n * sizeof *drawn);
    double *xtx = malloc(p * p * sizeof *xtx), *ainv = malloc(p * p * sizeof *ainv);
    double *l = malloc(p * p * sizeof *l), *d = malloc(p * sizeof *d);
    double *xty = malloc(p * sizeof *xty), *beta = malloc(p * sizeof *beta);
    double *wv = malloc(p * sizeof *wv);
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    if (w == NULL || Xb == NULL || yb == NULL || cnt == NULL || drawn == NULL || xtx == NULL ||
        ainv == NULL ||
        l == NULL || d == NULL || xty == NULL || beta == NULL || wv == NULL || r == NULL)
        goto fail;
    w->B = B;
    w->n = (double)n;
    w->p = (double)p;
    w->a = malloc(B * sizeof *w->a);
    w->s = malloc(B * sizeof *w->s);
    if (w->a == NULL || w->s == NULL) goto fail;
    gsl_rng_set(r, seed);
    double df = (double)(n - p);
    for (size_t b = 0; b < B; b++) {
        /* Resample whole runs (Efron & Tibshirani 1993, sec. 9.5, "bootstrapping pairs"): the
         * outcome keeps its discrete values. In the resampled world the true contrast is the
         * archive's estimate, so the replicate's error is its estimate less that one; the effect
         * of interest is planted by testing against (estimate - effect), which shifts the test,
         * not the data. A replicate is the least-squares fit of the runs drawn, each run j
         * counted cnt[j] times: from its weighted cross-products, O(n p^2) with no copy. */
        memset(cnt, 0, n * sizeof *cnt);
        for (size_t i = 0; i < n; i++) cnt[gsl_rng_uniform_int(r, n)]++;
        /* The runs drawn at least once, listed without a branch (a third of the runs are not
         * drawn, at random, which no branch predictor follows). */
        size_t m = 0;
        for (size_t j = 0; j < n; j++) {
            drawn[m] = j;
            m += cnt[j] != 0;
        }
        memset(xtx, 0, p * p * sizeof *xtx);
        memset(xty, 0, p * sizeof *xty);
        double ymin = INFINITY, ymax = -INFINITY;
        for (size_t dj = 0; dj < m; dj++) {
            size_t j = drawn[dj];
            const double *xj = X + j * p;
            double k = (double)cnt[j];
            for (size_t a = 0; a < p; a++) {
                xty[a] += k * xj[a] * y[j];
                for (size_t q = a; q < p; q++) xtx[a * p + q] += k * xj[a] * xj[q];
            }
            ymin = fmin(ymin, y[j]);
            ymax = fmax(ymax, y[j]);
        }
        for (size_t a = 0; a < p; a++)
            for (size_t q = 0; q < a; q++) xtx[a * p + q] = xtx[q * p + a];
        int fast = spd_inverse_scaled(xtx, p, ainv, l, d) == 0;
        double rss = 0, hc = 0, err = 0, cvc = 0;
        int lev1 = 0;
        if (fast) {
            for (size_t a = 0; a < p; a++) {
                double sb = 0, sw = 0;
                for (size_t q = 0; q < p; q++) {
                    sb += ainv[a * p + q] * xty[q];
                    sw += ainv[a * p + q] * c[q];
                }
                beta[a] = sb;
                wv[a] = sw;
                err += c[a] * sb;
                cvc += c[a] * sw;
            }
            err -= est;
            /* HC3 (MacKinnon & White 1985, eq. 13) of the contrast, each drawn copy of run j
             * its own term: sum_j cnt_j (w_j e_j / (1 - h_jj))^2, w_j = x_j'(X'KX)^-1 c and
             * h_jj = x_j'(X'KX)^-1 x_j, the leverage of each copy. */
            for (size_t dj = 0; dj < m; dj++) {
                size_t j = drawn[dj];
                const double *xj = X + j * p;
                double fit = 0, wj = 0, h = 0;
                for (size_t a = 0; a < p; a++) {
                    fit += xj[a] * beta[a];
                    wj += xj[a] * wv[a];
                    double t = 0;
                    for (size_t q = 0; q < p; q++) t += ainv[a * p + q] * xj[q];
                    h += xj[a] * t;
                }
                if (h > 1 - PAIRS_LEV_TOL) {
                    lev1 = 1;
                    break;
                }
                double e = y[j] - fit, k = (double)cnt[j], t = wj * e / (1 - h);
                rss += k * e * e;
                hc += k * t * t;
            }
        }
        if (!fast) {
            rc = pairs_refit(X, y, n, p, c, robust, cnt, est, Xb, yb, &w->a[b], &w->s[b]);
            if (rc != PW_OK) goto fail;
            if (!(ymin < ymax)) w->s[b] = 0;
            continue;
        }
        double v = robust ? hc : rss / df * cvc;
        if (lev1) v = err = 0;
        w->a[b] = err;
        /* A resample whose outcome is constant cannot reject: SE 0 marks it (its residuals are
         * rounding, not noise). */
        w->s[b] = ymin < ymax && v > 0 ? sqrt(v) : 0;
    }
    *out = w;
    w = NULL;
    rc = PW_OK;
fail:
    pw_hcfit_free(f);
    pw_wild_free(w);
    free(Xb);
    free(yb);
    free(cnt);
    free(drawn);
    free(xtx);
    free(ainv);
    free(l);
    free(d);
    free(xty);
    free(beta);
    free(wv);
    gsl_rng_free(r);
    return rc;
}
