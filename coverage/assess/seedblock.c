/* Seed blocks: how much of a claim's residual variance shared seeds explain, and when its test
 * uses them (README.md, "Seed blocks"). See LICENSE. */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/assess/assess.h"

/* The seed blocks stand in for the claim's test only when both hold:
 * - their F test is significant at the claim's own level, so the blocks' sum of squares is more
 *   than G - 1 dummies fitted to noise would give; and
 * - the residual variance estimate drops by at least this share, the degrees of freedom the
 *   blocks cost counted. Runs needed scale with the residual variance, so below 10% the blocked
 *   test would save under a tenth of the runs, less than sigma's own 95% interval moves them at
 *   most archive sizes, and not worth binding every further run to the archive's seeds. */
#define COV_SEED_MIN_DROP 0.10

typedef struct {
    long long seed;
    size_t run;
} seed_run;

static int cmp_seed(const void *a, const void *b)
{
    const seed_run *x = a, *y = b;
    if (x->seed != y->seed) return x->seed < y->seed ? -1 : 1;
    return x->run < y->run ? -1 : x->run > y->run;
}

int cov_seed_groups_init(const cov_data *d, cov_seed_groups *out)
{
    memset(out, 0, sizeof *out);
    if (d->seed == NULL || d->n_runs < 2) return COV_OK;
    size_t n = d->n_runs, m = 0;
    seed_run *s = malloc(n * sizeof *s);
    if (s == NULL) return COV_ENOMEM;
    for (size_t i = 0; i < n; i++)
        if (d->seed[i] != COV_SEED_NONE) s[m++] = (seed_run){d->seed[i], i};
    qsort(s, m, sizeof *s, cmp_seed);
    size_t shared = 0;
    for (size_t i = 0; i < m;) {
        size_t j = i;
        while (j < m && s[j].seed == s[i].seed) j++;
        shared += j - i >= 2;
        i = j;
    }
    if (shared == 0) {
        free(s);
        return COV_OK;
    }
    out->group = malloc(n * sizeof *out->group);
    if (out->group == NULL) {
        free(s);
        return COV_ENOMEM;
    }
    out->n_groups = shared + 1;
    for (size_t i = 0; i < n; i++) out->group[i] = shared;   /* a block of its own until shown */
    size_t b = 0;
    for (size_t i = 0; i < m;) {
        size_t j = i;
        while (j < m && s[j].seed == s[i].seed) j++;
        if (j - i >= 2) {
            for (size_t r = i; r < j; r++) out->group[s[r].run] = b;
            b++;
        }
        i = j;
    }
    free(s);
    return COV_OK;
}

void cov_seed_groups_free(cov_seed_groups *s)
{
    if (s == NULL) return;
    free(s->group);
    s->group = NULL;
    s->n_groups = 0;
}

typedef struct {
    const cov_seed_groups *s;
    const unsigned char *block;   /* per group: 1 when it holds two or more of the claim's rows */
    cov_row_fn fill;
    void *ctx;
} fill_ctx;

/* A row in a block of its own demeans to zero: it adds nothing to the cross-products. */
static int row_at(void *c, size_t i, double *row, size_t *group)
{
    fill_ctx *f = c;
    if (!f->block[f->s->group[i]] || !f->fill(f->ctx, i, row)) return 0;
    *group = f->s->group[i];
    return 1;
}

int cov_seed_within(const cov_seed_groups *s, size_t n, size_t kk, cov_row_fn fill, void *ctx,
                    cov_seed_fit *out)
{
    memset(out, 0, sizeof *out);
    if (s->group == NULL || kk == 0) return COV_OK;
    pw_within *w = NULL;
    double *row = malloc(kk * sizeof *row);
    unsigned char *block = calloc(s->n_groups, 1);
    int rc = COV_ENOMEM;
    if (row == NULL || block == NULL || pw_within_alloc(kk, s->n_groups, &w) != PW_OK) goto fail;
    size_t own = s->n_groups - 1;
    for (size_t i = 0; i < n; i++)
        if (fill(ctx, i, row)) pw_within_add_mean(w, s->group[i], row);
    /* A seed that only one of the claim's runs used, like a run without a seed, is a block of its
     * own: with one effect per seed in the model that run is fitted exactly, adds nothing to the
     * test and costs a degree of freedom. */
    for (size_t b = 0; b < own; b++) {
        double c = pw_within_count(w, b);
        if (c >= 2) {
            block[b] = 1;
            out->blocks++;
        } else {
            out->unblocked += (size_t)c;
        }
    }
    out->unblocked += (size_t)pw_within_count(w, own);
    out->n_groups = out->blocks;
    if (out->blocks == 0) {
        rc = COV_OK;
        goto fail;
    }
    if (pw_moments_alloc(kk, &out->m) != PW_OK) goto fail;
    fill_ctx fc = {s, block, fill, ctx};
    if (pw_within_accumulate(w, n, kk, row_at, &fc, out->m) != PW_OK) goto fail;
    rc = COV_OK;
fail:
    if (rc != COV_OK || out->blocks == 0) {
        pw_moments_free(out->m);
        out->m = NULL;
        out->blocks = 0;
    }
    free(row);
    free(block);
    pw_within_free(w);
    return rc;
}

void cov_seed_fit_free(cov_seed_fit *f)
{
    if (f == NULL) return;
    pw_moments_free(f->m);
    f->m = NULL;
}

static void share_init(cov_seed_share *sh)
{
    memset(sh, 0, sizeof *sh);
    sh->share = sh->var_drop = sh->f = sh->df1 = sh->df2 = sh->p = NAN;
}

int cov_seed_measure(const cov_seed_fit *sf, const pw_moments *raw, const size_t *idx, size_t k,
                     size_t t, const pw_xfit *fit, cov_seed_share *out, pw_xfit **blocked)
{
    share_init(out);
    *blocked = NULL;
    if (sf == NULL || sf->m == NULL || sf->blocks == 0 || fit == NULL) return COV_OK;
    pw_xfit *b = NULL;
    int rc = pw_within_fit(sf->m, raw, idx, k, t, sf->n_groups, &b);
    if (rc == PW_ENOMEM) return COV_ENOMEM;
    if (rc != PW_OK) return COV_OK;
    /* The rows in blocks of their own were left out of the moments, and rightly: each is fitted
     * exactly by its own seed's effect, so the residual df, n - (blocks + those rows) - rank, is
     * already the df of the moments' rows less their blocks. Each still counts as a run of the
     * claim: sd(X | S, blocks) has divisor n, as every sd(X | S) in shoal. */
    b->n = fit->n;
    pw_within_test wt;
    if (pw_within_ftest(fit->rss, fit->df, b->rss, b->df, &wt) != PW_OK) {
        pw_xfit_free(b);
        return COV_OK;
    }
    out->blocks = sf->blocks;
    out->unblocked = sf->unblocked;
    out->share = wt.partial_r2;
    out->var_drop = wt.var_drop;
    out->f = wt.f;
    out->df1 = wt.df1;
    out->df2 = wt.df2;
    out->p = wt.p;
    *blocked = b;
    return COV_OK;
}

int cov_seed_material(const cov_seed_share *sh, double alpha)
{
    return sh->blocks > 0 && sh->p < alpha && sh->var_drop >= COV_SEED_MIN_DROP;
}

double cov_seed_n_params(const pw_xfit *blocked, const cov_seed_share *sh)
{
    /* Intercept and the kept adjustment columns, then one effect per block beyond the first and
     * one per run in a block of its own: df = n - n_params - 1 is the blocked fit's df. */
    return 1.0 + (double)(blocked->rank - blocked->t_rank) + (double)(sh->blocks - 1) +
           (double)sh->unblocked;
}

int cov_seed_choose(const cov_seed_share *sh, const pw_design *base, const pw_xfit *fit,
                    const pw_xfit *blocked, double *power_unblocked, pw_design *unblocked)
{
    *power_unblocked = NAN;
    if (blocked == NULL || fit->t != 1 || fit->t_rank != 1 || blocked->t_rank != 1 ||
        !(blocked->df >= 1) || !(blocked->sigma > 0) ||
        (base->test != PW_TEST_COEF_T && base->test != PW_TEST_TOST) ||
        !cov_seed_material(sh, base->alpha))
        return 0;
    pw_design u = *base, b = *base;
    u.sigma = fit->sigma;
    u.sd_x_resid = pw_xfit_sd_treatment(fit);
    u.n_params = 1.0 + (double)(fit->rank - fit->t_rank);
    b.sigma = blocked->sigma;
    b.sd_x_resid = pw_xfit_sd_treatment(blocked);
    b.n_params = cov_seed_n_params(blocked, sh);
    double pu = NAN, pb = NAN;
    if (pw_power(&u, &pu) != PW_OK || pw_power(&b, &pb) != PW_OK) return 0;
    /* Runs in blocks of their own add nothing to the blocked test: with many of them it can be
     * weaker than the test without blocks even when the seed matters. Keep the stronger. */
    if (!(pb >= pu)) return 0;
    *power_unblocked = pu;
    *unblocked = u;
    return 1;
}

void cov_seed_note(const cov_assessment *a, char *buf, size_t size)
{
    const cov_seed_share *sh = &a->seed;
    buf[0] = '\0';
    if (sh->blocks == 0 || isnan(sh->share)) return;
    int at = snprintf(buf, size, "the seed explains %.0f%% of the residual variation (%zu seed "
                      "block%s, %zu run%s on a seed of %s own; F = %.3g on %.0f and %.0f df, "
                      "p = %.2g)",
                      100 * sh->share, sh->blocks, sh->blocks == 1 ? "" : "s", sh->unblocked,
                      sh->unblocked == 1 ? "" : "s", sh->unblocked == 1 ? "its" : "their", sh->f,
                      sh->df1, sh->df2, sh->p);
    if (at < 0 || (size_t)at >= size) return;
    if (a->seed_blocks_used)
        snprintf(buf + at, size - (size_t)at, ": the test uses the seed blocks (power %.2f, %.2f "
                 "without); power, MDE and runs needed assume further runs reuse these %zu seeds, "
                 "with seed effects additive and the same in every configuration",
                 a->power, a->power_unblocked, sh->blocks);
}

/* The outcome given every input: the global columns of each complete input, then the outcome. */
int cov_seed_outcomes(const cov_graph *g, const pw_moments *raw, const cov_seed_fit *sf,
                      const size_t *base, const size_t *index_col, cov_seed_share **out)
{
    *out = NULL;
    if (sf == NULL || sf->m == NULL) return COV_OK;
    cov_seed_share *sh = malloc(g->n_vars * sizeof *sh);
    size_t *idx = malloc((raw->k + 1) * sizeof *idx);
    int rc = COV_ENOMEM;
    if (sh == NULL || idx == NULL) goto fail;
    size_t k = 0;
    for (size_t v = 0; v < g->n_vars; v++) {
        if (g->vars[v].role != COV_INPUT || base[v] == SIZE_MAX) continue;
        size_t cols = g->vars[v].type == COV_LEVELS && g->vars[v].n_levels >= 2
                          ? g->vars[v].n_levels - 1 : 1;
        for (size_t c = 0; c < cols; c++) idx[k++] = base[v] + c;
    }
    for (size_t v = 0; v < g->n_vars; v++) {
        share_init(&sh[v]);
        if (g->vars[v].role != COV_OUTPUT || base[v] == SIZE_MAX) continue;
        idx[k] = index_col[v] != SIZE_MAX ? index_col[v] : base[v];
        pw_xfit *fit = NULL, *b = NULL;
        int prc = pw_xfit_solve(raw, idx, k, 0, &fit);
        if (prc == PW_OK) rc = cov_seed_measure(sf, raw, idx, k, 0, fit, &sh[v], &b);
        else rc = prc == PW_ENOMEM ? COV_ENOMEM : COV_OK;
        pw_xfit_free(fit);
        pw_xfit_free(b);
        if (rc != COV_OK) goto fail;
    }
    *out = sh;
    sh = NULL;
    rc = COV_OK;
fail:
    free(sh);
    free(idx);
    return rc;
}
