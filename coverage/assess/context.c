/* What the claims of one assessment share: how a claim's variables enter its regression, the
 * global cross-products of every complete variable (the fast path) and the fixed-seed diagnostic
 * sample. See LICENSE. */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_rng.h>

#include "coverage/assess/assess.h"

int cov_assess_is_recorded(const cov_data *d, size_t v)
{
    return d->col[v] != NULL;
}

size_t cov_assess_dummy_cols(const cov_var *v)
{
    return v->type == COV_LEVELS && v->n_levels >= 2 ? v->n_levels - 1 : 1;
}

static void fill_term(const assess_term *tm, double x, double *dst)
{
    if (!tm->dummies) {
        dst[0] = x;
        return;
    }
    for (size_t l = 1; l <= tm->cols; l++) dst[l - 1] = x == (double)l ? 1.0 : 0.0;
}

/* The k + 1 regression values of run i in layout order. */
void cov_assess_fill_row(const cov_data *d, const assess_layout *lay, size_t i, double *row)
{
    size_t c = 0;
    for (size_t j = 0; j < lay->n_terms; j++) {
        fill_term(&lay->terms[j], d->col[lay->terms[j].var][i], row + c);
        c += lay->terms[j].cols;
    }
}

int cov_assess_row_complete(const cov_data *d, const assess_layout *lay, size_t i)
{
    for (size_t j = 0; j < lay->n_terms; j++)
        if (isnan(d->col[lay->terms[j].var][i])) return 0;
    return 1;
}

/* Selection sampling (Knuth, TAOCP vol. 2, sec. 3.4.2, Algorithm S): want of the remaining
 * candidates, each kept with probability want / left, gives a uniform sample in run order. */
int cov_assess_sample_keep(gsl_rng *r, size_t *want, size_t left)
{
    if (*want == 0) return 0;
    if ((double)left * gsl_rng_uniform(r) < (double)*want) {
        (*want)--;
        return 1;
    }
    return 0;
}

void cov_assess_ctx_free(assess_ctx *x)
{
    if (!x->global_borrowed) pw_moments_free(x->global);
    free(x->base);
    free(x->index_col);
    free(x->sample);
    free(x->mode_share);
    if (x->sampled.col != NULL)
        for (size_t v = 0; v < x->sampled.n_vars; v++) free(x->sampled.col[v]);
    free(x->sampled.col);
    free(x->sample_ids);
    free(x->ws_y);
    free(x->ws_fit);
    free(x->ws_keys);
    cov_seed_groups_free(&x->seeds);
    cov_seed_fit_free(&x->seed_global);
    cov_shape_cache_free(x->shape);
}

void cov_assess_ctx_worker(const assess_ctx *x, assess_ctx *w)
{
    *w = *x;
    w->global_borrowed = 1;   /* never the worker's to free; cov_assess_ctx_worker_free frees
                                 only the scratch anyway */
    w->ws_y = w->ws_fit = w->ws_keys = NULL;
    w->ws_rows = w->ws_kk = 0;
}

void cov_assess_ctx_worker_free(assess_ctx *w)
{
    free(w->ws_y);
    free(w->ws_fit);
    free(w->ws_keys);
    w->ws_y = w->ws_fit = w->ws_keys = NULL;
    w->ws_rows = w->ws_kk = 0;
}

/* Make the scratch hold rows x kk keys. */
int cov_assess_ctx_scratch(assess_ctx *x, size_t rows, size_t kk)
{
    if (rows <= x->ws_rows && kk <= x->ws_kk) return COV_OK;
    rows = rows > x->ws_rows ? rows : x->ws_rows;
    kk = kk > x->ws_kk ? kk : x->ws_kk;
    free(x->ws_y);
    free(x->ws_fit);
    free(x->ws_keys);
    x->ws_y = malloc((rows ? rows : 1) * sizeof *x->ws_y);
    x->ws_fit = malloc((rows ? rows : 1) * sizeof *x->ws_fit);
    x->ws_keys = malloc((rows ? rows : 1) * (kk ? kk : 1) * sizeof *x->ws_keys);
    x->ws_rows = x->ws_kk = 0;
    if (x->ws_y == NULL || x->ws_fit == NULL || x->ws_keys == NULL) return COV_ENOMEM;
    x->ws_rows = rows;
    x->ws_kk = kk;
    return COV_OK;
}

/* Run i's values in the global columns (K of them); always complete. */
static int global_row(void *ctx, size_t i, double *row)
{
    const assess_ctx *x = ctx;
    for (size_t v = 0; v < x->g->n_vars; v++) {
        if (x->base[v] == SIZE_MAX) continue;
        double val = x->d->col[v][i];
        const cov_var *var = &x->g->vars[v];
        assess_term tm = {v, cov_assess_dummy_cols(var), var->type == COV_LEVELS};
        fill_term(&tm, val, row + x->base[v]);
        if (x->index_col[v] != SIZE_MAX) row[x->index_col[v]] = val;
    }
    return 1;
}

/* Accumulate the global centred cross-products of every recorded variable without missing cells,
 * in one pass over the runs, and draw the fixed-seed diagnostic sample. */
int cov_assess_ctx_init(assess_ctx *x, const cov_graph *g, const cov_data *d,
                        const cov_xshare *shared)
{
    memset(x, 0, sizeof *x);
    x->g = g;
    x->d = d;
    x->base = malloc((g->n_vars ? g->n_vars : 1) * sizeof *x->base);
    x->index_col = malloc((g->n_vars ? g->n_vars : 1) * sizeof *x->index_col);
    if (x->base == NULL || x->index_col == NULL) return COV_ENOMEM;
    size_t K = 0;
    for (size_t v = 0; v < g->n_vars; v++) {
        x->base[v] = x->index_col[v] = SIZE_MAX;
        if (!cov_assess_is_recorded(d, v) || d->n_missing[v] > 0) continue;
        x->base[v] = K;
        K += cov_assess_dummy_cols(&g->vars[v]);
        if (g->vars[v].type == COV_LEVELS && g->vars[v].role == COV_OUTPUT) x->index_col[v] = K++;
    }
    size_t n = d->n_runs;
    size_t m = n < COV_DIAG_MAX_ROWS ? n : COV_DIAG_MAX_ROWS;
    x->sample = malloc((m ? m : 1) * sizeof *x->sample);
    if (x->sample == NULL) return COV_ENOMEM;
    if (n <= COV_DIAG_MAX_ROWS) {
        for (size_t i = 0; i < n; i++) x->sample[i] = i;
    } else {
        gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
        if (r == NULL) return COV_ENOMEM;
        gsl_rng_set(r, COV_DIAG_SEED);
        size_t want = m, got = 0;
        for (size_t i = 0; i < n; i++)
            if (cov_assess_sample_keep(r, &want, n - i)) x->sample[got++] = i;
        gsl_rng_free(r);
    }
    x->n_sample = m;
    if ((x->shape = cov_shape_cache_new(g->n_vars, m)) == NULL) return COV_ENOMEM;
    if (K == 0 || n == 0) return COV_OK;
    /* The share of each complete variable's most common value on the sample: the outcome check
     * of the fast path, and a variable whose values are all distinct rules out replicates. */
    x->mode_share = malloc(g->n_vars * sizeof *x->mode_share);
    x->sampled.col = calloc(g->n_vars, sizeof *x->sampled.col);
    x->sample_ids = malloc(m * sizeof *x->sample_ids);
    if (x->mode_share == NULL || x->sampled.col == NULL || x->sample_ids == NULL) return COV_ENOMEM;
    x->sampled.n_vars = g->n_vars;
    x->sampled.n_runs = m;
    for (size_t r = 0; r < m; r++) x->sample_ids[r] = r;
    for (size_t v = 0; v < g->n_vars; v++) {
        x->mode_share[v] = NAN;
        if (x->base[v] == SIZE_MAX) continue;
        double *sc = x->sampled.col[v] = malloc(m * sizeof *sc);
        if (sc == NULL) return COV_ENOMEM;
        for (size_t r = 0; r < m; r++) sc[r] = d->col[v][x->sample[r]];
        if (pw_mode_share(sc, m, &x->mode_share[v]) == PW_ENOMEM) return COV_ENOMEM;
    }
    /* The shared pass summed the same columns in the same blocks (archive/xshare.c). */
    _Static_assert(COV_MOMENT_BLOCK == COV_XSHARE_BLOCK, "the shared pass's blocks are ours");
    int same = shared != NULL && shared->global != NULL && shared->k == K;
    for (size_t v = 0; same && v < g->n_vars; v++)
        same = shared->base[v] == x->base[v] && shared->index_col[v] == x->index_col[v];
    if (same) {
        x->global = shared->global;
        x->global_borrowed = 1;
    } else if (pw_moments_alloc(K, &x->global) != PW_OK) {
        return COV_ENOMEM;
    }
    double *block = malloc(COV_MOMENT_BLOCK * K * sizeof *block);
    if (block == NULL) return COV_ENOMEM;
    size_t nb = 0;
    for (size_t i = 0; i < n && !same; i++) {
        global_row(x, i, block + nb * K);
        if (++nb == COV_MOMENT_BLOCK || i + 1 == n) {
            if (pw_moments_add_block(x->global, block, nb) != PW_OK) {
                free(block);
                return COV_ENOMEM;
            }
            nb = 0;
        }
    }
    free(block);
    /* Runs that share seeds: the same cross-products demeaned by seed block (seedblock.c). */
    if (cov_seed_groups_init(d, &x->seeds) != COV_OK) return COV_ENOMEM;
    if (x->seeds.group != NULL &&
        cov_seed_within(&x->seeds, n, K, global_row, x, &x->seed_global) != COV_OK)
        return COV_ENOMEM;
    return COV_OK;
}

int cov_assess_build_layout(const cov_graph *g, const cov_claim *c, assess_layout *lay)
{
    lay->n_terms = c->n_cond + 2;
    lay->terms = calloc(lay->n_terms, sizeof *lay->terms);
    if (lay->terms == NULL) return COV_ENOMEM;
    lay->k = 0;
    for (size_t j = 0; j < lay->n_terms; j++) {
        size_t v = j < c->n_cond ? c->cond[j] : (j == c->n_cond ? c->treatment : c->outcome);
        assess_term *tm = &lay->terms[j];
        tm->var = v;
        int outcome = j == lay->n_terms - 1;
        tm->dummies = !outcome && g->vars[v].type == COV_LEVELS && g->vars[v].n_levels >= 2;
        tm->cols = tm->dummies ? g->vars[v].n_levels - 1 : 1;
        if (!outcome) lay->k += tm->cols;
    }
    lay->t = lay->terms[c->n_cond].cols;
    return COV_OK;
}

/* Map the layout's columns to the global cross-product columns (fast path). */
void cov_assess_global_index(const assess_ctx *x, const assess_layout *lay, size_t *idx)
{
    size_t c = 0;
    for (size_t j = 0; j < lay->n_terms; j++) {
        const assess_term *tm = &lay->terms[j];
        if (j == lay->n_terms - 1 && x->index_col[tm->var] != SIZE_MAX) {
            idx[c++] = x->index_col[tm->var];
            continue;
        }
        for (size_t l = 0; l < tm->cols; l++) idx[c++] = x->base[tm->var] + l;
    }
}

/* A column whose centred sum of squares is within rounding of zero takes one value: a constant
 * 0.12 summed in binary leaves deviations near 1e-17, so "> 0" alone would call it varying. The
 * cut is 1e-12 of the mean's magnitude in SD, far below any spread a simulator records. */
int cov_assess_moments_constant(const pw_moments *m, size_t i)
{
    double ss = pw_moments_at(m, i, i), scale = 1e-12 * fabs(m->mean[i]);
    return !(ss > m->n * scale * scale);
}
