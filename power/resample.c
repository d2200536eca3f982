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
    double *wc = malloc(n * sizeof *wc), *et = malloc(n * sizeof *et), *u = malloc(n * sizeof *u);
    double *xtu = malloc(p * sizeof *xtu), *bu = malloc(p * sizeof *bu);
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    if (w == NULL || wc == NULL || et == NULL || u == NULL || xtu == NULL || bu == NULL ||
        r == NULL)
        goto fail;
    w->B = B;
    w->n = (double)n;
    w->p = (double)p;
    w->a = malloc(B * sizeof *w->a);
    w->s = malloc(B * sizeof *w->s);
    if (w->a == NULL || w->s == NULL) goto fail;
    gsl_rng_set(r, seed);
    /* w_i = x_i'(X'X)^-1 c: the contrast estimate is sum_i w_i y_i, and its HC3 variance
     * sum_i w_i^2 e_i^2 / (1 - h_ii)^2. cvc = c'(X'X)^-1 c for the classic variance. */
    double cvc = 0;
    for (size_t a = 0; a < p; a++)
        for (size_t b = 0; b < p; b++) cvc += c[a] * f->xtx_inv[a * p + b] * c[b];
    for (size_t i = 0; i < n; i++) {
        const double *xi = X + i * p;
        double s = 0;
        for (size_t a = 0; a < p; a++) {
            double t = 0;
            for (size_t b = 0; b < p; b++) t += f->xtx_inv[a * p + b] * c[b];
            s += xi[a] * t;
        }
        wc[i] = s;
        /* Residuals rescaled by 1 / sqrt(1 - h_ii), so that each keeps its run's error variance
         * (Davidson & Flachaire 2008, sec. 3, the HC2-type transformation). */
        et[i] = f->resid[i] / sqrt(1 - f->lev[i]);
    }
    for (size_t b = 0; b < B; b++) {
        /* y* = (fitted with the effect planted) + e~ v; the contrast's error and the residuals of
         * the refit depend on e~ v alone, since X beta is fitted exactly. */
        double a_b = 0;
        memset(xtu, 0, p * sizeof *xtu);
        for (size_t i = 0; i < n; i++) {
            u[i] = et[i] * wild_weight(r, weights);
            a_b += wc[i] * u[i];
            const double *xi = X + i * p;
            for (size_t a = 0; a < p; a++) xtu[a] += xi[a] * u[i];
        }
        for (size_t a = 0; a < p; a++) {
            double s = 0;
            for (size_t k = 0; k < p; k++) s += f->xtx_inv[a * p + k] * xtu[k];
            bu[a] = s;
        }
        double hc = 0, rss = 0;
        for (size_t i = 0; i < n; i++) {
            const double *xi = X + i * p;
            double fit = 0;
            for (size_t a = 0; a < p; a++) fit += xi[a] * bu[a];
            double e = u[i] - fit;
            rss += e * e;
            double q = wc[i] * e / (1 - f->lev[i]);
            hc += q * q;
        }
        w->a[b] = a_b;
        w->s[b] = robust ? sqrt(hc) : sqrt(rss / f->df * cvc);
    }
    *out = w;
    w = NULL;
    rc = PW_OK;
fail:
    pw_wild_free(w);
    free(wc);
    free(et);
    free(u);
    free(xtu);
    free(bu);
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
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    if (w == NULL || Xb == NULL || yb == NULL || r == NULL) goto fail;
    w->B = B;
    w->n = (double)n;
    w->p = (double)p;
    w->a = malloc(B * sizeof *w->a);
    w->s = malloc(B * sizeof *w->s);
    if (w->a == NULL || w->s == NULL) goto fail;
    gsl_rng_set(r, seed);
    for (size_t b = 0; b < B; b++) {
        /* Resample whole runs (Efron & Tibshirani 1993, sec. 9.5, "bootstrapping pairs"): the
         * outcome keeps its discrete values. In the resampled world the true contrast is the
         * archive's estimate, so the replicate's error is its estimate less that one; the effect
         * of interest is planted by testing against (estimate - effect), which shifts the test,
         * not the data. */
        for (size_t i = 0; i < n; i++) {
            size_t j = (size_t)gsl_rng_uniform_int(r, n);
            memcpy(Xb + i * p, X + j * p, p * sizeof *Xb);
            yb[i] = y[j];
        }
        int frc = pw_hc3_fit(Xb, yb, n, p, &f);
        if (frc == PW_ENOMEM) goto fail;
        if (frc != PW_OK) {
            /* A resample whose design is singular (a treatment that never varies in it) or whose
             * outcome is constant cannot reject: SE 0 marks it. */
            w->a[b] = 0;
            w->s[b] = 0;
            continue;
        }
        double e = -est;
        for (size_t a = 0; a < p; a++) e += c[a] * f->coef[a];
        double v = pw_hc_contrast_var(f, c, robust);
        w->a[b] = e;
        w->s[b] = v > 0 ? sqrt(v) : 0;
        pw_hcfit_free(f);
        f = NULL;
    }
    *out = w;
    w = NULL;
    rc = PW_OK;
fail:
    pw_hcfit_free(f);
    pw_wild_free(w);
    free(Xb);
    free(yb);
    gsl_rng_free(r);
    return rc;
}
