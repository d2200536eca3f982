/* A numeric treatment expected to turn (`expect turning`): its claim tested by the omnibus F over a
 * Legendre polynomial basis given the adjustment set, sized at the declared turn. See LICENSE. */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/assess/assess.h"

/* Rows per block of cross-products, as in assess.c: a block of a few dozen columns fits in cache. */
#define TURN_BLOCK 128
/* An integer range with more values than this is planned as continuous (its discrete variance of
 * 1 - z^2 is within 1e-6 relative of the continuous 4/45 by then). */
#define TURN_PLAN_POINTS_MAX 100000

int cov_claim_turns(const cov_graph *g, const cov_claim *c)
{
    const cov_var *x = &g->vars[c->treatment];
    return c->kind == COV_CLAIM_EFFECT && c->shape == COV_SHAPE_TURNING &&
           (x->type == COV_REAL || x->type == COV_INTEGER);
}

/* Append printf-style text to a heap string, "; "-separated; COV_ENOMEM keeps the old text. */
static int text_add(char **s, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static int text_add(char **s, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    int rc = cov_text_vappend(s, "; ", fmt, ap);
    va_end(ap);
    return rc;
}

/* Untestable on these runs, with one reason (the old reason, if any, is kept after it). */
static int untestable(cov_assessment *a, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static int untestable(cov_assessment *a, const char *fmt, ...)
{
    char buf[512];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(buf, sizeof buf, fmt, ap);
    va_end(ap);
    a->verdict = COV_BLIND;
    return text_add(&a->reason, "%s", buf);
}

static int cmp_double(const void *p, const void *q)
{
    double x = *(const double *)p, y = *(const double *)q;
    return (x > y) - (x < y);
}

/* Columns a variable of the adjustment set takes: L - 1 dummies for a level set, else one. */
static size_t cond_cols(const cov_var *v)
{
    return v->type == COV_LEVELS && v->n_levels >= 2 ? v->n_levels - 1 : 1;
}

int cov_turning_fitted(const cov_graph *g, const cov_claim *c, const cov_data *d,
                       cov_assessment *a, pw_design *dz)
{
    const cov_var *xv = &g->vars[c->treatment];
    const double *xc = d->col[c->treatment], *yc = d->col[c->outcome];
    size_t ks = 0;
    for (size_t j = 0; j < c->n_cond; j++) ks += cond_cols(&g->vars[c->cond[j]]);
    double *xs = NULL, *block = NULL;
    size_t *idx = NULL;
    pw_moments *m = NULL;
    pw_xfit *fit = NULL;
    int rc = COV_ENOMEM;
    /* The claim's complete rows: every adjusted variable, the treatment and the outcome known. */
    xs = malloc((d->n_runs ? d->n_runs : 1) * sizeof *xs);
    if (xs == NULL) goto fail;
    size_t n = 0;
    for (size_t i = 0; i < d->n_runs; i++) {
        int ok = !isnan(xc[i]) && !isnan(yc[i]);
        for (size_t j = 0; ok && j < c->n_cond; j++) ok = !isnan(d->col[c->cond[j]][i]);
        if (ok) xs[n++] = xc[i];
    }
    if (n == 0) {
        rc = COV_OK;
        goto fail;
    }
    qsort(xs, n, sizeof *xs, cmp_double);
    size_t distinct = 1;
    for (size_t i = 1; i < n; i++) distinct += xs[i] != xs[i - 1];
    a->distinct = distinct;
    /* The reference range of the turn: the declared range (the one `over range` counts over),
     * else the range the runs span. */
    double lo = xv->lo, hi = xv->hi;
    if (!(isfinite(lo) && isfinite(hi) && hi > lo)) {
        lo = xs[0];
        hi = xs[n - 1];
    }
    size_t deg = pw_turn_degree(distinct);
    if (deg == 0) {
        rc = untestable(a, "untestable on these runs: '%s' is expected to turn, which is tested "
                        "over a polynomial basis of degree %d or more and needs at least %d "
                        "distinct values of it; these runs have %zu", xv->name,
                        PW_TURN_DEGREE_MIN, PW_TURN_DEGREE_MIN + 2, distinct);
        goto fail;
    }
    /* Cross-products of (adjustment set, P_1 .. P_deg, outcome) over the complete rows. */
    size_t k = ks + deg, w = k + 1;
    block = malloc(TURN_BLOCK * w * sizeof *block);
    idx = malloc(w * sizeof *idx);
    if (block == NULL || idx == NULL || pw_moments_alloc(w, &m) != PW_OK) goto fail;
    for (size_t j = 0; j < w; j++) idx[j] = j;
    size_t nb = 0;
    for (size_t i = 0; i < d->n_runs; i++) {
        int ok = !isnan(xc[i]) && !isnan(yc[i]);
        for (size_t j = 0; ok && j < c->n_cond; j++) ok = !isnan(d->col[c->cond[j]][i]);
        if (!ok) continue;
        double *row = block + nb * w;
        size_t col = 0;
        for (size_t j = 0; j < c->n_cond; j++) {
            const cov_var *sv = &g->vars[c->cond[j]];
            double v = d->col[c->cond[j]][i];
            if (sv->type == COV_LEVELS && sv->n_levels >= 2)
                for (size_t l = 1; l < sv->n_levels; l++) row[col++] = v == (double)l ? 1.0 : 0.0;
            else row[col++] = v;
        }
        pw_turn_basis(pw_turn_z(xc[i], lo, hi), deg, row + col);
        row[k] = yc[i];
        if (++nb == TURN_BLOCK) {
            if (pw_moments_add_block(m, block, nb) != PW_OK) goto fail;
            nb = 0;
        }
    }
    if (nb > 0 && pw_moments_add_block(m, block, nb) != PW_OK) goto fail;
    if (pw_xfit_solve(m, idx, k, deg, &fit) != PW_OK) goto fail;
    double u[PW_TURN_DEGREE_MAX];
    pw_turn_shape_coef(deg, u);
    pw_basis_figures bf;
    int prc = pw_basis_test(fit, u, &bf);
    if (prc == PW_ENOMEM) goto fail;
    if (prc == PW_ESING) {
        rc = untestable(a, "untestable on these runs: the adjustment set fixes part of the "
                        "polynomial basis over which the turn of '%s' is tested", xv->name);
        goto fail;
    }
    if (prc != PW_OK || !(bf.ncp_per_run > 0)) {
        rc = untestable(a, "untestable on these runs: too few runs (%zu) to fit the turn of '%s' "
                        "over a polynomial basis of degree %zu beside the adjustment set", n,
                        xv->name, deg);
        goto fail;
    }
    a->sigma = dz->sigma = fit->sigma;
    a->df = fit->df;
    a->omnibus_f = bf.f;
    a->omnibus_p = bf.p;
    a->omnibus_df1 = bf.df1;
    a->estimate = bf.turn;
    a->se = bf.turn_se;
    a->vif = NAN;
    dz->test = PW_TEST_BASIS_F;
    dz->n = fit->n;
    dz->n_params = 1.0 + (double)(fit->rank - fit->t_rank);
    dz->n_levels = (double)deg + 1.0;
    dz->ncp_per_run = bf.ncp_per_run;
    /* The equivalent spread with which the noncentrality reads (effect sd sqrt(n) / sigma)^2, so
     * that plots and the plan that measure information by sd_x_resid see the basis's. */
    dz->sd_x_resid = a->sd_treatment_resid = sqrt(bf.ncp_per_run);
    a->effect_raw *= hi - lo;
    a->turn_lo = lo;
    a->turn_hi = hi;
    rc = COV_OK;
fail:
    free(xs);
    free(block);
    free(idx);
    pw_moments_free(m);
    pw_xfit_free(fit);
    return rc;
}

int cov_turning_planned(const cov_var *x, pw_design *d, double *effect, size_t *distinct)
{
    if (distinct) *distinct = 0;
    if (!(isfinite(x->lo) && isfinite(x->hi) && x->hi > x->lo)) return COV_EINPUT;
    double width = x->hi - x->lo, ncp = 0.0;
    size_t values = SIZE_MAX;
    if (x->type == COV_INTEGER && width + 1 <= TURN_PLAN_POINTS_MAX) values = (size_t)width + 1;
    if (distinct) *distinct = values;
    size_t deg = pw_turn_degree(values);
    if (deg == 0) return COV_EINPUT;
    if (values == SIZE_MAX) {
        /* z uniform on [-1, 1]: Var(1 - z^2) = E z^4 - (E z^2)^2 = 1/5 - 1/9 = 4/45. */
        ncp = 4.0 / 45.0;
    } else {
        double *z = malloc(values * sizeof *z), *wt = malloc(values * sizeof *wt);
        int prc = z && wt ? PW_OK : PW_ENOMEM;
        for (size_t i = 0; prc == PW_OK && i < values; i++) {
            z[i] = pw_turn_z(x->lo + (double)i, x->lo, x->hi);
            wt[i] = 1.0;
        }
        if (prc == PW_OK) prc = pw_turn_ncp_points(z, wt, values, &ncp);
        free(z);
        free(wt);
        if (prc == PW_ENOMEM) return COV_ENOMEM;
        if (prc != PW_OK) return COV_EINPUT;
    }
    d->test = PW_TEST_BASIS_F;
    d->n_levels = (double)deg + 1.0;
    d->ncp_per_run = ncp;
    d->sd_x_resid = sqrt(ncp);
    *effect *= width;
    d->effect = *effect;
    return COV_OK;
}
