/* Optimal-design arithmetic for planning runs: rank-one inverse updates and greedy augmentation.
 * See LICENSE. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>
#include <gsl/gsl_roots.h>

#include "power/power.h"

/* Brent search on log q for the q that reaches the target: relative tolerance far below any change
 * that moves a power figure printed to three digits, and an iteration cap well above what Brent's
 * method needs on a monotone function over a bracket of 40 decades. */
#define Q_REL_TOL 1e-7
#define Q_MAX_ITER 200
/* The bracket widens by this factor per step, at most Q_MAX_WIDEN times (4^30 is ~1e18). */
#define Q_WIDEN 4.0
#define Q_MAX_WIDEN 30

int pw_spd_inverse(const double *a, size_t p, double *ainv)
{
    if (p == 0) return PW_OK;
    gsl_matrix *m = gsl_matrix_alloc(p, p);
    if (m == NULL) return PW_ENOMEM;
    memcpy(m->data, a, p * p * sizeof *a);
    int rc = PW_OK;
    /* Cholesky (Golub & Van Loan 2013, sec. 4.2); decomp1 reports a non-positive pivot as EDOM. */
    if (gsl_linalg_cholesky_decomp1(m) != GSL_SUCCESS || gsl_linalg_cholesky_invert(m) != GSL_SUCCESS)
        rc = PW_ESING;
    else
        for (size_t i = 0; i < p; i++)
            for (size_t j = 0; j < p; j++) ainv[i * p + j] = gsl_matrix_get(m, i, j);
    gsl_matrix_free(m);
    return rc;
}

void pw_sm_direction(const double *ainv, size_t p, const double *x, double *u, double *xu)
{
    double s = 0.0;
    for (size_t i = 0; i < p; i++) {
        const double *r = ainv + i * p;
        double t = 0.0;
        for (size_t j = 0; j < p; j++) t += r[j] * x[j];
        u[i] = t;
        s += x[i] * t;
    }
    *xu = s;
}

int pw_sm_update(double *ainv, size_t p, const double *x, double w, double *u)
{
    double xu;
    pw_sm_direction(ainv, p, x, u, &xu);
    double denom = 1.0 + w * xu;
    if (!(w > 0.0) || !(denom > 0.0) || !isfinite(denom)) return PW_EDOM;
    double f = w / denom;
    /* Sherman & Morrison (1950): (A + w x x')^-1 = A^-1 - w u u' / (1 + w x' u). */
    for (size_t i = 0; i < p; i++) {
        double fi = f * u[i];
        double *r = ainv + i * p;
        for (size_t j = 0; j < p; j++) r[j] -= fi * u[j];
    }
    return PW_OK;
}

/* Largest variance among the block's coefficients and their pairwise differences. With u != NULL,
 * the variances are those after adding w x x': c'Vc - w (c'u)^2 / (1 + w xu). */
static double block_worst_var(const double *v, size_t p, size_t first, size_t k, const double *u,
                              double xu, double w)
{
    double f = u != NULL ? w / (1.0 + w * xu) : 0.0;
    double worst = 0.0;
    for (size_t a = first; a < first + k; a++) {
        double va = v[a * p + a] - (u != NULL ? f * u[a] * u[a] : 0.0);
        if (va > worst) worst = va;
        for (size_t b = a + 1; b < first + k; b++) {
            double cu = u != NULL ? u[a] - u[b] : 0.0;
            double vd = v[a * p + a] + v[b * p + b] - 2.0 * v[a * p + b] - f * cu * cu;
            if (vd > worst) worst = vd;
        }
    }
    return worst;
}

double pw_block_info(const double *ainv, size_t p, size_t first, size_t k)
{
    double v = block_worst_var(ainv, p, first, k, NULL, 0.0, 0.0);
    return v > 0.0 ? 1.0 / v : INFINITY;
}

double pw_block_info_after(const double *ainv, size_t p, size_t first, size_t k, const double *u,
                           double xu, double w)
{
    double v = block_worst_var(ainv, p, first, k, u, xu, w);
    return v > 0.0 ? 1.0 / v : INFINITY;
}

/* The F test's information for a level-set block: M = (V_TT)^-1 (the block's information given
 * the other columns, the Schur complement; Searle 1971, sec. 3.5), then the smallest b' M b over
 * the least favourable pairwise patterns, by pw_level_pattern as the assessment computes it. With
 * u != NULL, V is first updated by -w u u' / (1 + w xu) (Sherman & Morrison 1950). */
double pw_block_pattern_info(const double *ainv, size_t p, size_t first, size_t k, const double *u,
                             double xu, double w)
{
    if (k == 1 || k > PW_PATTERN_MAX_COLS) {
        double v = block_worst_var(ainv, p, first, k, u, xu, w);
        return v > 0.0 ? 1.0 / v : INFINITY;
    }
    double vb[PW_PATTERN_MAX_COLS * PW_PATTERN_MAX_COLS];
    double f = u != NULL ? w / (1.0 + w * xu) : 0.0;
    for (size_t a = 0; a < k; a++)
        for (size_t b = 0; b < k; b++)
            vb[a * k + b] = ainv[(first + a) * p + first + b] -
                            (u != NULL ? f * u[first + a] * u[first + b] : 0.0);
    double m[PW_PATTERN_MAX_COLS * PW_PATTERN_MAX_COLS];
    if (pw_spd_inverse(vb, k, m) != PW_OK) return 0.0;
    double q_min = 0.0, v_max = 0.0;
    size_t wi = 0, wj = 1;
    if (pw_level_pattern(m, k, &q_min, &v_max, &wi, &wj) != PW_OK) return 0.0;
    return q_min;
}

int pw_design_with_q(const pw_design *d, double n_new, double q_new, pw_design *out)
{
    if (!(n_new > 0.0) || !(q_new >= 0.0)) return PW_EDOM;
    *out = *d;
    out->n = n_new;
    out->sd_x_resid = q_new / sqrt(n_new);
    /* The level-set F test reads its information as ncp_per_run n; two proportions read
     * sd_x_resid^2 n (n s (1 - s) for a bool treatment, the harmonic-mean group size behind Cohen's
     * h with unequal groups, Cohen 1988 sec. 6.3), so setting sd_x_resid covers them. */
    if (d->test == PW_TEST_LEVELS_F || d->test == PW_TEST_BASIS_F)
        out->ncp_per_run = q_new * q_new / n_new;
    return PW_OK;
}

double pw_design_q(const pw_design *d)
{
    if (d->test == PW_TEST_LEVELS_F || d->test == PW_TEST_BASIS_F) {
        double unit = d->ncp_per_run > 0 ? d->ncp_per_run : 1.0 / (2.0 * d->n_levels);
        return sqrt(unit * d->n);
    }
    if (d->test == PW_TEST_TWO_PROP && !(d->sd_x_resid > 0))
        return sqrt(d->n * d->share_treated * (1.0 - d->share_treated));
    return d->sd_x_resid * sqrt(d->n);
}

typedef struct {
    const pw_design *d;
    double n_new;
    int status;
} q_ctx;

static double q_gap(double log_q, void *arg)
{
    q_ctx *c = arg;
    pw_design t;
    double pw = NAN;
    int rc = pw_design_with_q(c->d, c->n_new, exp(log_q), &t);
    if (rc == PW_OK) rc = pw_power(&t, &pw);
    if (rc != PW_OK && c->status == PW_OK) c->status = rc;
    return pw - c->d->target;
}

int pw_design_q_needed(const pw_design *d, double n_new, double *q)
{
    *q = NAN;
    if (!(n_new > 0.0) || !(d->effect > 0.0) || !(d->sigma > 0.0)) return PW_EDOM;
    q_ctx c = {d, n_new, PW_OK};
    double q_cap = d->test == PW_TEST_TWO_PROP ? sqrt(0.25 * n_new) : PW_Q_MAX;
    /* A bracket around Bloom's (1995) normal-limit guess (z_{1-a/2} + z_{power}) sigma / effect,
     * widened by factors of Q_WIDEN: a far bracket would make the noncentral t work at absurd
     * noncentralities. */
    double guess = (gsl_cdf_ugaussian_Qinv(d->alpha / 2.0) + gsl_cdf_ugaussian_Pinv(d->target)) *
                   d->sigma / d->effect;
    if (!(guess > 0.0) || !isfinite(guess)) guess = 1.0;
    double lo = log(guess / Q_WIDEN), hi = log(fmin(guess * Q_WIDEN, q_cap));
    double f_hi = q_gap(hi, &c);
    for (int k = 0; c.status == PW_OK && !(f_hi >= 0.0) && hi < log(q_cap) && k < Q_MAX_WIDEN; k++) {
        lo = hi;
        hi = fmin(hi + log(Q_WIDEN), log(q_cap));
        f_hi = q_gap(hi, &c);
    }
    if (c.status != PW_OK) return c.status;
    if (!(f_hi >= 0.0)) {
        *q = INFINITY;
        return PW_OK;
    }
    double f_lo = q_gap(lo, &c);
    for (int k = 0; c.status == PW_OK && f_lo >= 0.0 && k < Q_MAX_WIDEN; k++) {
        hi = lo;
        lo -= log(Q_WIDEN);
        f_lo = q_gap(lo, &c);
    }
    if (c.status != PW_OK) return c.status;
    if (f_lo >= 0.0) {
        *q = exp(lo);
        return PW_OK;
    }
    gsl_function fn = {q_gap, &c};
    gsl_root_fsolver *s = gsl_root_fsolver_alloc(gsl_root_fsolver_brent);
    if (s == NULL) return PW_ENOMEM;
    int rc = PW_ENOCONV;
    if (gsl_root_fsolver_set(s, &fn, lo, hi) == GSL_SUCCESS) {
        for (int it = 0; it < Q_MAX_ITER; it++) {
            if (gsl_root_fsolver_iterate(s) != GSL_SUCCESS || c.status != PW_OK) break;
            double a = gsl_root_fsolver_x_lower(s), b = gsl_root_fsolver_x_upper(s);
            if (gsl_root_test_interval(a, b, 0.0, Q_REL_TOL) == GSL_SUCCESS) {
                /* The upper end of the bracket: power there is at least the target. */
                *q = exp(b);
                rc = PW_OK;
                break;
            }
        }
    }
    gsl_root_fsolver_free(s);
    if (c.status != PW_OK) return c.status;
    return rc;
}

/* ---- greedy augmentation ----------------------------------------------------------------------- */

typedef struct {
    size_t p;
    size_t *cols;
    double *gram;      /* p * p: X'X + ridge I, kept exactly */
    double *inv;       /* p * p: its inverse, updated by Sherman-Morrison */
    size_t n_active;   /* active targets in this group */
    size_t *tg;        /* the group's targets */
    size_t n_tg, cap_tg;
} aug_group;

typedef struct {
    size_t group, first, k;
    int pattern;       /* 1: the F test's least favourable pattern; 0: the worst contrast */
    double info, need;
    double scale;      /* the information counts info * scale against need (1 unless the caller
                          sets a noise ratio with pw_aug_set_scale) */
    double *contrast;  /* k weights (pw_aug_set_contrast): measured by this one contrast; NULL */
} aug_target;

/* c'Vc over the block's columns first .. first + k - 1 of v (p-by-p), only where on (block
 * positions; NULL: all) is set; with u != NULL, after adding w x x': c'Vc - w (c'u)^2 / (1 + w xu)
 * (Sherman & Morrison 1950). */
static double contrast_var(const double *v, size_t p, size_t first, size_t k, const double *c,
                           const unsigned char *on, const double *u, double xu, double w)
{
    double s = 0.0, cu = 0.0;
    for (size_t a = 0; a < k; a++) {
        if (on != NULL && !on[a]) continue;
        if (u != NULL) cu += c[a] * u[first + a];
        for (size_t b = 0; b < k; b++)
            if (on == NULL || on[b]) s += c[a] * v[(first + a) * p + first + b] * c[b];
    }
    if (u != NULL) s -= w * cu * cu / (1.0 + w * xu);
    return s;
}

static double target_info(const aug_target *t, const aug_group *gr, const double *u, double xu,
                          double w)
{
    if (t->contrast != NULL) {
        double v = contrast_var(gr->inv, gr->p, t->first, t->k, t->contrast, NULL, u, xu, w);
        return v > 0.0 ? 1.0 / v : INFINITY;
    }
    if (t->pattern) return pw_block_pattern_info(gr->inv, gr->p, t->first, t->k, u, xu, w);
    return u != NULL ? pw_block_info_after(gr->inv, gr->p, t->first, t->k, u, xu, w)
                     : pw_block_info(gr->inv, gr->p, t->first, t->k);
}

struct pw_aug {
    size_t n_cols;
    aug_group *groups;
    size_t n_groups, cap_groups;
    aug_target *targets;
    size_t n_targets, cap_targets;
    double *x, *u;     /* scratch of the largest group's size */
    size_t scratch;
    size_t commits;
};

int pw_aug_alloc(size_t n_cols, pw_aug **out)
{
    *out = NULL;
    pw_aug *a = calloc(1, sizeof *a);
    if (a == NULL) return PW_ENOMEM;
    a->n_cols = n_cols;
    *out = a;
    return PW_OK;
}

void pw_aug_free(pw_aug *a)
{
    if (a == NULL) return;
    for (size_t g = 0; g < a->n_groups; g++) {
        free(a->groups[g].cols);
        free(a->groups[g].gram);
        free(a->groups[g].inv);
        free(a->groups[g].tg);
    }
    free(a->groups);
    for (size_t i = 0; i < a->n_targets; i++) free(a->targets[i].contrast);
    free(a->targets);
    free(a->x);
    free(a->u);
    free(a);
}

int pw_aug_add_group(pw_aug *a, const size_t *cols, size_t p, const double *gram, double ridge,
                     size_t *group)
{
    if (p == 0 || !(ridge > 0.0)) return PW_EDOM;
    for (size_t i = 0; i < p; i++)
        if (cols[i] >= a->n_cols) return PW_EDOM;
    if (a->n_groups == a->cap_groups) {
        size_t cap = a->cap_groups ? 2 * a->cap_groups : 16;
        aug_group *ng = realloc(a->groups, cap * sizeof *ng);
        if (ng == NULL) return PW_ENOMEM;
        a->groups = ng;
        a->cap_groups = cap;
    }
    if (p > a->scratch) {
        double *nx = realloc(a->x, p * sizeof *nx);
        if (nx == NULL) return PW_ENOMEM;
        a->x = nx;
        double *nu = realloc(a->u, p * sizeof *nu);
        if (nu == NULL) return PW_ENOMEM;
        a->u = nu;
        a->scratch = p;
    }
    aug_group gr = {p, malloc(p * sizeof(size_t)), malloc(p * p * sizeof(double)),
                    malloc(p * p * sizeof(double)), 0, NULL, 0, 0};
    if (gr.cols == NULL || gr.gram == NULL || gr.inv == NULL) goto nomem;
    memcpy(gr.cols, cols, p * sizeof *cols);
    for (size_t i = 0; i < p * p; i++) gr.gram[i] = gram != NULL ? gram[i] : 0.0;
    for (size_t i = 0; i < p; i++) gr.gram[i * p + i] += ridge;
    int rc = pw_spd_inverse(gr.gram, p, gr.inv);
    if (rc != PW_OK) {
        free(gr.cols);
        free(gr.gram);
        free(gr.inv);
        return rc;
    }
    a->groups[a->n_groups] = gr;
    *group = a->n_groups++;
    return PW_OK;
nomem:
    free(gr.cols);
    free(gr.gram);
    free(gr.inv);
    return PW_ENOMEM;
}

static int target_active(const aug_target *t)
{
    return isfinite(t->need) && t->info * t->scale < t->need;
}

int pw_aug_add_target(pw_aug *a, size_t group, size_t first, size_t k, int pattern, double need,
                      size_t *target)
{
    if (group >= a->n_groups || k == 0 || first + k > a->groups[group].p) return PW_EDOM;
    if (a->n_targets == a->cap_targets) {
        size_t cap = a->cap_targets ? 2 * a->cap_targets : 64;
        aug_target *nt = realloc(a->targets, cap * sizeof *nt);
        if (nt == NULL) return PW_ENOMEM;
        a->targets = nt;
        a->cap_targets = cap;
    }
    aug_group *gr = &a->groups[group];
    if (gr->n_tg == gr->cap_tg) {
        size_t cap = gr->cap_tg ? 2 * gr->cap_tg : 4;
        size_t *ng = realloc(gr->tg, cap * sizeof *ng);
        if (ng == NULL) return PW_ENOMEM;
        gr->tg = ng;
        gr->cap_tg = cap;
    }
    gr->tg[gr->n_tg++] = a->n_targets;
    aug_target t = {group, first, k, pattern != 0, 0.0, need, 1.0, NULL};
    t.info = target_info(&t, gr, NULL, 0.0, 0.0);
    a->targets[a->n_targets] = t;
    if (target_active(&t)) gr->n_active++;
    *target = a->n_targets++;
    return PW_OK;
}

size_t pw_aug_n_targets(const pw_aug *a) { return a->n_targets; }
double pw_aug_info(const pw_aug *a, size_t target) { return a->targets[target].info; }
double pw_aug_need(const pw_aug *a, size_t target) { return a->targets[target].need; }
int pw_aug_active(const pw_aug *a, size_t target) { return target_active(&a->targets[target]); }

size_t pw_aug_n_active(const pw_aug *a)
{
    size_t n = 0;
    for (size_t g = 0; g < a->n_groups; g++) n += a->groups[g].n_active;
    return n;
}

double pw_aug_score_cost(const pw_aug *a)
{
    double cost = 0.0;
    for (size_t g = 0; g < a->n_groups; g++)
        if (a->groups[g].n_active > 0)
            cost += (double)(a->groups[g].p * a->groups[g].p + a->groups[g].n_tg * 8);
    return cost;
}

void pw_aug_set_need(pw_aug *a, size_t target, double need)
{
    aug_target *t = &a->targets[target];
    aug_group *gr = &a->groups[t->group];
    if (target_active(t)) gr->n_active--;
    t->need = need;
    if (target_active(t)) gr->n_active++;
}

void pw_aug_set_scale(pw_aug *a, size_t target, double scale)
{
    aug_target *t = &a->targets[target];
    aug_group *gr = &a->groups[t->group];
    if (!(scale > 0.0) || !isfinite(scale)) scale = 1.0;
    if (target_active(t)) gr->n_active--;
    t->scale = scale;
    if (target_active(t)) gr->n_active++;
}

double pw_aug_scale(const pw_aug *a, size_t target) { return a->targets[target].scale; }

int pw_aug_score(pw_aug *a, const double *row, double w, double *score)
{
    return pw_aug_score_scaled(a, row, w, NULL, score);
}

int pw_aug_score_scaled(pw_aug *a, const double *row, double w, const double *scale_after,
                        double *score)
{
    *score = 0.0;
    if (!(w > 0.0)) return PW_EDOM;
    double total = 0.0;
    /* One product u = A^-1 x per group with an active target serves all of its targets. */
    for (size_t g = 0; g < a->n_groups; g++) {
        aug_group *gr = &a->groups[g];
        if (gr->n_active == 0) continue;
        double xu = 0.0;
        for (size_t j = 0; j < gr->p; j++) a->x[j] = row[gr->cols[j]];
        pw_sm_direction(gr->inv, gr->p, a->x, a->u, &xu);
        for (size_t m = 0; m < gr->n_tg; m++) {
            aug_target *t = &a->targets[gr->tg[m]];
            if (!target_active(t)) continue;
            double sa = scale_after != NULL ? scale_after[gr->tg[m]] : t->scale;
            double now = t->info * t->scale;
            double after = target_info(t, gr, a->u, xu, w) * sa;
            double gain = after - now, missing = t->need - now;
            if (!(gain > 0.0)) {
                /* A run that adds more noise than information sets the claim back: count the
                 * share of the missing need it loses (at most all of it), unweighted. */
                if (gain < 0.0 && missing > 0.0) total -= fmin(-gain / missing, 1.0);
                continue;
            }
            double cover = gain < missing ? gain / missing : 1.0;
            total += cover * (1.0 + missing / t->need);
        }
    }
    *score = total;
    return PW_OK;
}

/* Of the group's columns j with on[j] != 0: how many (q), how many lie before target's block
 * (first) and how many inside it (k). */
static void subset_counts(const aug_group *gr, const aug_target *t, const unsigned char *on,
                          size_t *q, size_t *first, size_t *k)
{
    *q = *first = *k = 0;
    for (size_t j = 0; j < gr->p; j++) {
        if (!on[j]) continue;
        if (j < t->first) (*first)++;
        else if (j < t->first + t->k) (*k)++;
        (*q)++;
    }
}

/* The inverse (*inv, q x q, the caller's to free) of the design with only the q columns j with
 * on[j] != 0: leaving columns out of a least-squares design is taking the submatrix of its
 * cross-products (X_S'X_S), so it comes from the kept exact cross-products. PW_OK, PW_ENOMEM or
 * PW_ESING. */
static int subset_inverse(const aug_group *gr, const unsigned char *on, size_t q, double **inv)
{
    double *sub = malloc(q * q * sizeof *sub);
    *inv = malloc(q * q * sizeof **inv);
    int rc = PW_ENOMEM;
    if (sub != NULL && *inv != NULL) {
        size_t r = 0;
        for (size_t i = 0; i < gr->p; i++) {
            if (!on[i]) continue;
            size_t c = 0;
            for (size_t j = 0; j < gr->p; j++)
                if (on[j]) sub[r * q + c++] = gr->gram[i * gr->p + j];
            r++;
        }
        rc = pw_spd_inverse(sub, q, *inv);
    }
    free(sub);
    return rc;
}

int pw_aug_info_subset(const pw_aug *a, size_t target, const unsigned char *on, int pattern,
                       double *info)
{
    *info = 0.0;
    if (target >= a->n_targets) return PW_EDOM;
    const aug_target *t = &a->targets[target];
    const aug_group *gr = &a->groups[t->group];
    size_t q, first, k;
    subset_counts(gr, t, on, &q, &first, &k);
    if (k == 0) return PW_OK;
    if (q == gr->p) {
        /* The common case: every column in, the Sherman-Morrison inverse as it stands. */
        *info = pattern ? pw_block_pattern_info(gr->inv, gr->p, t->first, t->k, NULL, 0.0, 0.0)
                        : pw_block_info(gr->inv, gr->p, t->first, t->k);
        return PW_OK;
    }
    double *inv = NULL;
    int rc = subset_inverse(gr, on, q, &inv);
    if (rc == PW_OK)
        *info = pattern ? pw_block_pattern_info(inv, q, first, k, NULL, 0.0, 0.0)
                        : pw_block_info(inv, q, first, k);
    free(inv);
    return rc;
}

int pw_aug_set_contrast(pw_aug *a, size_t target, const double *c)
{
    if (target >= a->n_targets) return PW_EDOM;
    aug_target *t = &a->targets[target];
    for (size_t j = 0; j < t->k; j++)
        if (!isfinite(c[j])) return PW_EDOM;
    double *copy = realloc(t->contrast, t->k * sizeof *copy);
    if (copy == NULL) return PW_ENOMEM;
    memcpy(copy, c, t->k * sizeof *copy);
    t->contrast = copy;
    aug_group *gr = &a->groups[t->group];
    if (target_active(t)) gr->n_active--;
    t->info = target_info(t, gr, NULL, 0.0, 0.0);
    if (target_active(t)) gr->n_active++;
    return PW_OK;
}

int pw_aug_contrast_subset(const pw_aug *a, size_t target, const unsigned char *on,
                           const double *c, double *info)
{
    *info = 0.0;
    if (target >= a->n_targets) return PW_EDOM;
    const aug_target *t = &a->targets[target];
    const aug_group *gr = &a->groups[t->group];
    size_t q, first, k;
    subset_counts(gr, t, on, &q, &first, &k);
    if (k == 0) return PW_OK;
    /* The block's weights of the columns that are in, in order. */
    double cb[PW_PATTERN_MAX_COLS];
    double *ck = k <= PW_PATTERN_MAX_COLS ? cb : malloc(k * sizeof *ck);
    double *inv = NULL;
    int rc = PW_ENOMEM;
    if (ck == NULL) return rc;
    for (size_t j = 0, m = 0; j < t->k; j++)
        if (on[t->first + j]) ck[m++] = c[j];
    double v;
    if (q == gr->p) {
        v = contrast_var(gr->inv, gr->p, t->first, t->k, ck, NULL, NULL, 0.0, 0.0);
    } else {
        /* The smaller design's inverse from the kept exact cross-products, as pw_aug_info_subset. */
        if ((rc = subset_inverse(gr, on, q, &inv)) != PW_OK) goto fail;
        v = contrast_var(inv, q, first, k, ck, NULL, NULL, 0.0, 0.0);
    }
    *info = v > 0.0 ? 1.0 / v : INFINITY;
    rc = PW_OK;
fail:
    if (ck != cb) free(ck);
    free(inv);
    return rc;
}

int pw_aug_commit(pw_aug *a, const double *row, double w)
{
    if (!(w > 0.0)) return PW_EDOM;
    a->commits++;
    int refresh = a->commits % PW_AUG_REFRESH == 0;
    for (size_t g = 0; g < a->n_groups; g++) {
        aug_group *gr = &a->groups[g];
        for (size_t j = 0; j < gr->p; j++) a->x[j] = row[gr->cols[j]];
        for (size_t i = 0; i < gr->p; i++)
            for (size_t j = 0; j < gr->p; j++) gr->gram[i * gr->p + j] += w * a->x[i] * a->x[j];
        int rc = refresh ? pw_spd_inverse(gr->gram, gr->p, gr->inv)
                         : pw_sm_update(gr->inv, gr->p, a->x, w, a->u);
        if (rc != PW_OK) return rc;
    }
    for (size_t g = 0; g < a->n_groups; g++) a->groups[g].n_active = 0;
    for (size_t i = 0; i < a->n_targets; i++) {
        aug_target *t = &a->targets[i];
        aug_group *gr = &a->groups[t->group];
        t->info = target_info(t, gr, NULL, 0.0, 0.0);
        if (target_active(t)) gr->n_active++;
    }
    return PW_OK;
}
