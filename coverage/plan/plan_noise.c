/* The residual variance each claim's test will see after the planned runs: the outcome models'
 * noise and bend, projected on the claim's straight-line design. Only the bent part of the mean
 * enters: the straight part (other inputs' effects left in the residual) is taken to stay as in the
 * archive, as the plan assumed before, so a straight response with constant noise is planned as
 * without these models. See LICENSE. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/plan/plan.h"

typedef struct {
    size_t outcome;           /* index into nz->models */
    size_t *cols;             /* the claim's coded columns */
    size_t p;
    double sigma2_now;        /* expected residual variance over the archive's rows alone */
    double rss, n;            /* expected RSS and rows with the planned runs so far */
    double *beta;             /* p: the straight line the mean projects to */
    int on;
} tracked;

struct cov_plan_noise {
    size_t n_cols;
    const unsigned char *numeric;
    double *rows;             /* archive rows with every input present, coded */
    size_t n_rows;
    size_t *model_var;        /* per model: the outcome variable */
    cov_plan_model **models;
    unsigned char **has_y;    /* per model: which rows have the outcome */
    size_t n_models;
    tracked *t;               /* per pw_aug target */
    size_t n_t;
    double *planned;          /* coded planned rows */
    double *planned_w;
    size_t n_planned, cap_planned;
    double *cand_mean, *cand_var; /* n_models * n_cand */
    const double *cand_rows;
    size_t n_cand;
};

int cov_plan_noise_alloc(size_t n_cols, const unsigned char *numeric, const double *rows,
                         size_t n_rows, size_t n_targets, cov_plan_noise **out)
{
    *out = NULL;
    cov_plan_noise *nz = calloc(1, sizeof *nz);
    if (nz == NULL) return COV_ENOMEM;
    nz->n_cols = n_cols;
    nz->numeric = numeric;
    nz->n_rows = n_rows;
    nz->rows = malloc((n_rows * n_cols + 1) * sizeof *nz->rows);
    nz->t = calloc(n_targets + 1, sizeof *nz->t);
    nz->n_t = nz->t != NULL ? n_targets : 0;
    if (nz->rows == NULL || nz->t == NULL) {
        cov_plan_noise_free(nz);
        return COV_ENOMEM;
    }
    memcpy(nz->rows, rows, n_rows * n_cols * sizeof *rows);
    *out = nz;
    return COV_OK;
}

void cov_plan_noise_free(cov_plan_noise *nz)
{
    if (nz == NULL) return;
    for (size_t i = 0; i < nz->n_models; i++) {
        cov_plan_model_free(nz->models[i]);
        free(nz->has_y[i]);
    }
    for (size_t i = 0; i < nz->n_t; i++) {
        free(nz->t[i].cols);
        free(nz->t[i].beta);
    }
    free(nz->models);
    free(nz->has_y);
    free(nz->model_var);
    free(nz->t);
    free(nz->rows);
    free(nz->planned);
    free(nz->planned_w);
    free(nz->cand_mean);
    free(nz->cand_var);
    free(nz);
}

/* The model of outcome variable v (y: one value per archive row, NAN when missing), fitted once;
 * *mi its index, or (size_t)-1 when it cannot be fitted. */
static int model_of(cov_plan_noise *nz, size_t v, const double *y, size_t *mi)
{
    *mi = (size_t)-1;
    for (size_t i = 0; i < nz->n_models; i++)
        if (nz->model_var[i] == v) {
            *mi = nz->models[i] != NULL ? i : (size_t)-1;
            return COV_OK;
        }
    size_t k = nz->n_models;
    cov_plan_model **nm = realloc(nz->models, (k + 1) * sizeof *nm);
    if (nm == NULL) return COV_ENOMEM;
    nz->models = nm;
    unsigned char **nh = realloc(nz->has_y, (k + 1) * sizeof *nh);
    if (nh == NULL) return COV_ENOMEM;
    nz->has_y = nh;
    size_t *nv = realloc(nz->model_var, (k + 1) * sizeof *nv);
    if (nv == NULL) return COV_ENOMEM;
    nz->model_var = nv;
    nz->models[k] = NULL;
    nz->model_var[k] = v;
    nz->has_y[k] = calloc(nz->n_rows + 1, 1);
    double *rr = malloc((nz->n_rows * nz->n_cols + 1) * sizeof *rr);
    double *yy = malloc((nz->n_rows + 1) * sizeof *yy);
    nz->n_models++;
    if (nz->has_y[k] == NULL || rr == NULL || yy == NULL) {
        free(rr);
        free(yy);
        return COV_ENOMEM;
    }
    size_t n = 0;
    for (size_t i = 0; i < nz->n_rows; i++) {
        if (isnan(y[i])) continue;
        nz->has_y[k][i] = 1;
        memcpy(rr + n * nz->n_cols, nz->rows + i * nz->n_cols, nz->n_cols * sizeof *rr);
        yy[n++] = y[i];
    }
    int rc = cov_plan_model_fit(rr, yy, n, nz->n_cols, nz->numeric, 0, &nz->models[k]);
    free(rr);
    free(yy);
    if (rc == COV_ENOMEM) return rc;
    if (rc == COV_OK) *mi = k;
    return COV_OK;
}

/* Expected RSS of claim t's straight-line fit over the archive rows with its outcome and (with
 * planned 1) the planned runs. */
static int exact(cov_plan_noise *nz, tracked *t, int planned, double *rss, double *n_out)
{
    const cov_plan_model *m = nz->models[t->outcome];
    size_t n = 0, p = t->p, cap = 0;
    for (size_t i = 0; i < nz->n_rows; i++) cap += nz->has_y[t->outcome][i];
    size_t extra = 0;
    for (size_t j = 0; planned && j < nz->n_planned; j++) extra += (size_t)lround(nz->planned_w[j]);
    cap += extra;
    double *X = malloc((cap * p + 1) * sizeof *X), *mu = malloc((cap + 1) * sizeof *mu);
    double *v = malloc((cap + 1) * sizeof *v);
    int rc = COV_ENOMEM;
    if (X == NULL || mu == NULL || v == NULL) goto done;
    for (size_t i = 0; i < nz->n_rows; i++) {
        if (!nz->has_y[t->outcome][i]) continue;
        const double *row = nz->rows + i * nz->n_cols;
        for (size_t j = 0; j < p; j++) X[n * p + j] = row[t->cols[j]];
        mu[n] = cov_plan_model_bend(m, row);
        v[n++] = cov_plan_model_var(m, row);
    }
    for (size_t r = 0; planned && r < nz->n_planned; r++) {
        const double *row = nz->planned + r * nz->n_cols;
        double mr = cov_plan_model_bend(m, row), vr = cov_plan_model_var(m, row);
        for (long k = 0; k < lround(nz->planned_w[r]); k++) {
            for (size_t j = 0; j < p; j++) X[n * p + j] = row[t->cols[j]];
            mu[n] = mr;
            v[n++] = vr;
        }
    }
    int prc = pw_expected_rss(X, mu, v, n, p, rss, t->beta);
    rc = prc == PW_OK ? COV_OK : prc == PW_ENOMEM ? COV_ENOMEM : COV_ENUMERIC;
    *n_out = (double)n;
done:
    free(X);
    free(mu);
    free(v);
    return rc;
}

int cov_plan_noise_add_claim(cov_plan_noise *nz, size_t target, size_t outcome, const double *y,
                             const size_t *cols, size_t p)
{
    if (target >= nz->n_t) return COV_OK;
    size_t mi;
    int rc = model_of(nz, outcome, y, &mi);
    if (rc != COV_OK || mi == (size_t)-1) return rc;
    /* A straight mean with constant noise leaves the scale at 1: nothing to track. */
    if (!cov_plan_model_curved(nz->models[mi]) && !cov_plan_model_hetero(nz->models[mi]))
        return COV_OK;
    tracked *t = &nz->t[target];
    t->cols = malloc(p * sizeof *t->cols);
    t->beta = calloc(p, sizeof *t->beta);
    if (t->cols == NULL || t->beta == NULL) return COV_ENOMEM;
    memcpy(t->cols, cols, p * sizeof *cols);
    t->p = p;
    t->outcome = mi;
    double rss = NAN, n = 0;
    rc = exact(nz, t, 0, &rss, &n);
    if (rc == COV_ENOMEM) return rc;
    if (rc != COV_OK || !(n > (double)p) || !(rss > 0)) return COV_OK;   /* left untracked */
    t->sigma2_now = rss / (n - (double)p);
    t->rss = rss;
    t->n = n;
    t->on = 1;
    return COV_OK;
}

int cov_plan_noise_tracked(const cov_plan_noise *nz, size_t target)
{
    return nz != NULL && target < nz->n_t && nz->t[target].on;
}

int cov_plan_noise_candidates(cov_plan_noise *nz, const double *cand_rows, size_t n_cand)
{
    nz->cand_rows = cand_rows;
    nz->n_cand = n_cand;
    nz->cand_mean = malloc((nz->n_models * n_cand + 1) * sizeof *nz->cand_mean);
    nz->cand_var = malloc((nz->n_models * n_cand + 1) * sizeof *nz->cand_var);
    if (nz->cand_mean == NULL || nz->cand_var == NULL) return COV_ENOMEM;
    for (size_t k = 0; k < nz->n_models; k++)
        for (size_t c = 0; c < n_cand && nz->models[k] != NULL; c++) {
            nz->cand_mean[k * n_cand + c] = cov_plan_model_bend(nz->models[k], cand_rows + c * nz->n_cols);
            nz->cand_var[k * n_cand + c] = cov_plan_model_var(nz->models[k], cand_rows + c * nz->n_cols);
        }
    return COV_OK;
}

/* The scale (archive residual variance over the predicted one) with rss and n rows, at most 1:
 * runs in a quieter region than the archive's are not credited with the quiet. Crediting it drew
 * the plan into idle regions where the treatment's effect itself fades (the demo's fast track saves
 * no waiting when no one queues), so the power promised at the effect of interest was met on paper
 * while the effect in the runs was far smaller. Noisier regions still count against a run. */
static double scale_of(const tracked *t, double rss, double n)
{
    double s2 = rss / fmax(n - (double)t->p, 1.0);
    return s2 > 0 ? fmin(t->sigma2_now / s2, 1.0) : 1.0;
}

/* The increment k runs at a row with model mean mu and variance v add to claim t's expected RSS:
 * their own variance and their distance from the straight line (Seber & Lee 2003, eq. 9.2, with
 * the fit's leverage on a single new row neglected). */
static double rss_step(const tracked *t, const double *row, double mu, double v, double k)
{
    double f = 0.0;
    for (size_t j = 0; j < t->p; j++) f += t->beta[j] * row[t->cols[j]];
    return k * (v + (mu - f) * (mu - f));
}

void cov_plan_noise_scales_after(const cov_plan_noise *nz, size_t cand, double k, double *scale)
{
    for (size_t i = 0; i < nz->n_t; i++) {
        const tracked *t = &nz->t[i];
        if (!t->on) {
            scale[i] = 1.0;
            continue;
        }
        size_t o = t->outcome * nz->n_cand + cand;
        double step = rss_step(t, nz->cand_rows + cand * nz->n_cols, nz->cand_mean[o],
                               nz->cand_var[o], k);
        scale[i] = scale_of(t, t->rss + step, t->n + k);
    }
}

double cov_plan_noise_scale(const cov_plan_noise *nz, size_t target)
{
    if (!cov_plan_noise_tracked(nz, target)) return 1.0;
    const tracked *t = &nz->t[target];
    return scale_of(t, t->rss, t->n);
}

int cov_plan_noise_commit(cov_plan_noise *nz, const double *row, double k)
{
    if (nz->n_planned == nz->cap_planned) {
        size_t cap = nz->cap_planned ? 2 * nz->cap_planned : 64;
        double *np = realloc(nz->planned, cap * nz->n_cols * sizeof *np);
        if (np == NULL) return COV_ENOMEM;
        nz->planned = np;
        double *nw = realloc(nz->planned_w, cap * sizeof *nw);
        if (nw == NULL) return COV_ENOMEM;
        nz->planned_w = nw;
        nz->cap_planned = cap;
    }
    memcpy(nz->planned + nz->n_planned * nz->n_cols, row, nz->n_cols * sizeof *row);
    nz->planned_w[nz->n_planned++] = k;
    for (size_t i = 0; i < nz->n_t; i++) {
        tracked *t = &nz->t[i];
        if (!t->on) continue;
        const cov_plan_model *m = nz->models[t->outcome];
        t->rss += rss_step(t, row, cov_plan_model_bend(m, row), cov_plan_model_var(m, row), k);
        t->n += k;
    }
    return COV_OK;
}

int cov_plan_noise_refresh(cov_plan_noise *nz)
{
    for (size_t i = 0; i < nz->n_t; i++) {
        tracked *t = &nz->t[i];
        if (!t->on) continue;
        double rss = NAN, n = 0;
        int rc = exact(nz, t, 1, &rss, &n);
        if (rc == COV_ENOMEM) return rc;
        if (rc == COV_OK && rss > 0) {
            t->rss = rss;
            t->n = n;
        }
    }
    return COV_OK;
}

void cov_plan_noise_counts(const cov_plan_noise *nz, size_t *curved, size_t *hetero)
{
    *curved = *hetero = 0;
    for (size_t i = 0; nz != NULL && i < nz->n_models; i++) {
        if (nz->models[i] == NULL) continue;
        *curved += (size_t)cov_plan_model_curved(nz->models[i]);
        *hetero += (size_t)cov_plan_model_hetero(nz->models[i]);
    }
}

int cov_plan_noise_outside(const cov_plan_noise *nz, const double *row, double slack)
{
    for (size_t i = 0; nz != NULL && i < nz->n_models; i++)
        if (nz->models[i] != NULL && cov_plan_model_outside(nz->models[i], row, slack)) return 1;
    return 0;
}
