/* The claims of a plan: their design groups, the runs they need and their predicted power after
 * the planned runs so far. See LICENSE. */
#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/plan/plan.h"

/* Added to the diagonal of every claim's cross-products so that an empty or rank-deficient start
 * stays invertible: a millionth of what one run at a domain end adds to a coded column (|z| <= 1),
 * far below anything that moves a printed power. */
#define PLAN_RIDGE 1e-6

int cov_plan_is_numeric(const cov_var *v) { return v->type == COV_REAL || v->type == COV_INTEGER; }

void cov_plan_code_row(const cov_graph *g, const layout *L, const double *vals, double *row)
{
    row[0] = 1.0;
    for (size_t v = 0; v < g->n_vars; v++) {
        const cov_var *var = &g->vars[v];
        if (L->count[v] == 0) continue;
        double x = vals[v];
        double *r = row + L->first[v];
        if (cov_plan_is_numeric(var)) r[0] = 2.0 * (x - var->lo) / (var->hi - var->lo) - 1.0;
        else if (var->type == COV_BOOL) r[0] = x;
        else
            for (size_t k = 1; k < var->n_levels; k++) r[k - 1] = (size_t)x == k ? 1.0 : 0.0;
    }
}

int cov_plan_var_present(const cov_data *d, size_t v, size_t i)
{
    return d->col[v] != NULL && !isnan(d->col[v][i]);
}

/* The design group of a steered claim: intercept, treatment and adjustment-set columns in ascending
 * order; claims with the same columns (and, when the outcome has missing cells, the same outcome)
 * share one inverse. */
static int find_group(struct plan_state *st, const cov_claim *cl, size_t *gi, size_t *first,
                      size_t *k)
{
    const cov_graph *g = st->g;
    const layout *L = &st->L;
    size_t *cols = malloc(L->n_cols * sizeof *cols);
    unsigned char *use = calloc(L->n_cols, 1);
    if (cols == NULL || use == NULL) {
        free(cols);
        free(use);
        return COV_ENOMEM;
    }
    use[0] = 1;
    for (size_t m = 0; m <= cl->n_cond; m++) {
        size_t v = m < cl->n_cond ? cl->cond[m] : cl->treatment;
        for (size_t j = 0; j < L->count[v]; j++) use[L->first[v] + j] = 1;
    }
    size_t p = 0;
    for (size_t j = 0; j < L->n_cols; j++)
        if (use[j]) cols[p++] = j;
    free(use);
    *k = L->count[cl->treatment];
    for (size_t j = 0; j < p; j++)
        if (cols[j] == L->first[cl->treatment]) *first = j;
    long outcome = st->d != NULL && st->d->n_missing[cl->outcome] > 0 ? (long)cl->outcome : -1;
    for (size_t i = 0; i < st->n_groups; i++) {
        plan_group *gr = &st->groups[i];
        if (gr->p == p && gr->outcome == outcome && memcmp(gr->cols, cols, p * sizeof *cols) == 0) {
            free(cols);
            *gi = i;
            return COV_OK;
        }
    }
    /* A new group: its cross-products over the runs with all its variables present. */
    double *gram = calloc(p * p, sizeof *gram);
    double *vals = malloc(g->n_vars * sizeof *vals), *row = malloc(L->n_cols * sizeof *row);
    unsigned char *present = calloc(L->n_slots + 1, 1);
    plan_group *ng = realloc(st->groups, (st->n_groups + 1) * sizeof *ng);
    if (ng != NULL) st->groups = ng;
    if (gram == NULL || vals == NULL || row == NULL || present == NULL || ng == NULL) {
        free(cols);
        free(gram);
        free(vals);
        free(row);
        free(present);
        return COV_ENOMEM;
    }
    size_t n_rows = 0;
    const cov_data *d = st->d;
    for (size_t i = 0; d != NULL && i < d->n_runs; i++) {
        int ok = outcome < 0 || cov_plan_var_present(d, (size_t)outcome, i);
        for (size_t m = 0; ok && m <= cl->n_cond; m++)
            ok = cov_plan_var_present(d, m < cl->n_cond ? cl->cond[m] : cl->treatment, i);
        if (!ok) continue;
        for (size_t v = 0; v < g->n_vars; v++)
            vals[v] = L->count[v] && d->col[v] != NULL && !isnan(d->col[v][i]) ? d->col[v][i]
                                                                                : g->vars[v].lo;
        for (size_t m = 0; m <= cl->n_cond; m++) {
            size_t v = m < cl->n_cond ? cl->cond[m] : cl->treatment;
            if (g->vars[v].type == COV_LEVELS && vals[v] >= 0 &&
                vals[v] < (double)g->vars[v].n_levels)
                present[L->slot[v] + (size_t)vals[v]] = 1;
        }
        cov_plan_code_row(g, L, vals, row);
        for (size_t a = 0; a < p; a++)
            for (size_t b = 0; b < p; b++) gram[a * p + b] += row[cols[a]] * row[cols[b]];
        n_rows++;
    }
    free(vals);
    free(row);
    size_t ag;
    int prc = pw_aug_add_group(st->aug, cols, p, gram, PLAN_RIDGE, &ag);
    free(gram);
    if (prc != PW_OK) {
        free(cols);
        free(present);
        return prc == PW_ENOMEM ? COV_ENOMEM : COV_ENUMERIC;
    }
    plan_group *gr = &st->groups[st->n_groups];
    gr->cols = cols;
    gr->p = p;
    gr->outcome = outcome;
    gr->group = ag;
    gr->n_rows = n_rows;
    gr->present = present;
    *gi = st->n_groups++;
    return COV_OK;
}

/* Whether claim cl's treatment is an ordered level set that the assessment tests by its linear
 * trend (coverage/assess/assess.c, shape.c): ordered, with positions, not expected to turn. The
 * plan then measures it by the trend contrast's own information (trend_weights). */
static int trend_claim(const cov_graph *g, const cov_claim *cl)
{
    const cov_var *x = &g->vars[cl->treatment];
    return x->type == COV_LEVELS && x->ordered && x->positions != NULL && x->n_levels >= 2 &&
           cl->shape != COV_SHAPE_TURNING;
}

/* The trend contrast over the levels l with here[l] set, as weights c[l - 1] on the dummies of
 * levels 1 .. L - 1: (x_l - mean) / S_xx over those levels (the orthogonal-polynomial linear
 * contrast of shape.c, scaled so that 1 / (c' V c) is the test's q^2 = S_xx^2 / (c' M^-1 c), the
 * square of the trend's sd_eq sqrt(n)). Weights of levels not marked are 0; so is a reference
 * level's, whose coefficient is 0 by the coding. Returns 0 when S_xx is 0 (fewer than two levels). */
static int trend_weights(const cov_var *x, const unsigned char *here, double *c)
{
    size_t L = x->n_levels, m = 0;
    double mean = 0.0, sxx = 0.0;
    for (size_t l = 0; l < L; l++)
        if (here[l]) {
            mean += x->positions[l];
            m++;
        }
    if (m < 2) return 0;
    mean /= (double)m;
    for (size_t l = 0; l < L; l++)
        if (here[l]) sxx += (x->positions[l] - mean) * (x->positions[l] - mean);
    if (!(sxx > 0.0)) return 0;
    for (size_t l = 1; l < L; l++) c[l - 1] = here[l] ? (x->positions[l] - mean) / sxx : 0.0;
    return 1;
}

/* The test of a claim sized from the graph's declared noise SD of its outcome (no usable runs). */
static int design_from_noise(const cov_graph *g, const cov_claim *cl, const cov_power_options *opt,
                             size_t n_testable, const layout *L, pw_design *pd)
{
    const cov_var *y = &g->vars[cl->outcome], *x = &g->vars[cl->treatment];
    if (!(y->noise_sd > 0)) return -1;
    memset(pd, 0, sizeof *pd);
    pd->sigma = y->noise_sd;
    pd->effect = cl->effect.value * (cl->effect.unit == COV_UNIT_SD ? y->noise_sd : 1.0);
    /* Per unit of treatment, as the assessment counts it (`per STEP`, `over range`). */
    double per_unit = cov_amount_per_unit_factor(&cl->effect, x);
    if (isfinite(per_unit)) pd->effect *= per_unit;
    pd->target = opt->target;
    pd->alpha = cov_family_alpha(opt, n_testable);
    pd->sides = cov_claim_sides(opt, cl);
    double params = 1;
    for (size_t m = 0; m < cl->n_cond; m++) params += L->count[cl->cond[m]] ? L->count[cl->cond[m]] : 1;
    pd->n_params = params;
    pd->ncp_per_run = NAN;
    pd->test = cov_claim_test(g, cl, 0, 0);
    if (pd->test == PW_TEST_LEVELS_F || trend_claim(g, cl)) pd->n_levels = (double)x->n_levels;
    /* Expected to turn: the basis F at the turn's height over the declared range. */
    if (pd->test == PW_TEST_BASIS_F && cov_turning_planned(x, pd, &pd->effect, NULL) != COV_OK)
        return -1;
    return 0;
}

/* The standardised noncentrality delta = effect q / sigma a test needs, cached by what else it
 * depends on (test, level, sides, target, levels and residual degrees of freedom): claims of one
 * family share it, and the exact search (a few dozen power evaluations, each an Owen's Q quadrature
 * for equivalence tests) then runs once per distinct key instead of once per claim. Degrees of
 * freedom above PLAN_DF_EXACT are rounded down to a grid of ratio PLAN_DF_RATIO: fewer degrees of
 * freedom need a larger delta, so the rounding errs on the safe side, by well under 0.1% in delta
 * there. */
#define PLAN_DF_EXACT 100.0
#define PLAN_DF_RATIO 1.01

static double delta_needed(struct delta_cache *dc, const pw_design *pd, double n)
{
    /* The treatment's columns, as power/sizing.c counts them (the trend and equivalence tests of
     * an ordered level set keep its L - 1 columns too). */
    double k = pd->n_levels >= 2 ? pd->n_levels - 1.0 : 1.0;
    double df = n - pd->n_params - k;
    if (!(df >= 1.0)) df = 1.0;
    if (df > PLAN_DF_EXACT)
        df = PLAN_DF_EXACT * pow(PLAN_DF_RATIO, floor(log(df / PLAN_DF_EXACT) / log(PLAN_DF_RATIO)));
    else df = floor(df);
    double nl = pd->n_levels >= 2 ? pd->n_levels : 0.0;
    for (size_t i = 0; i < dc->n; i++) {
        const delta_entry *e = &dc->e[i];
        if (e->test == (int)pd->test && e->sides == pd->sides && e->alpha == pd->alpha &&
            e->target == pd->target && e->n_levels == nl && e->df == df)
            return e->delta;
    }
    pw_design unit = *pd;
    unit.effect = 1.0;
    unit.sigma = 1.0;
    double q = NAN;
    if (pw_design_q_needed(&unit, df + pd->n_params + k, &q) != PW_OK) q = INFINITY;
    if (dc->n == dc->cap) {
        size_t nc = dc->cap ? 2 * dc->cap : 32;
        delta_entry *ne = realloc(dc->e, nc * sizeof *ne);
        if (ne == NULL) return q;
        dc->e = ne;
        dc->cap = nc;
    }
    dc->e[dc->n++] = (delta_entry){(int)pd->test, pd->sides, pd->alpha, pd->target, nl, df, q};
    return q;
}

/* q_req^2 / q_mul: the coded information at which a claim reaches its target at n runs. */
double cov_plan_need_at(struct delta_cache *dc, const claim_work *w, double n)
{
    /* Below one residual degree of freedom the test has no power at all; size it there instead. */
    double k = w->pd.n_levels >= 2 ? w->pd.n_levels - 1.0 : 1.0;
    if (n < w->pd.n_params + k + 2.0) n = w->pd.n_params + k + 2.0;
    double q = NAN;
    if (w->pd.test == PW_TEST_TWO_PROP) {
        /* Two proportions depend on the base rate, not on effect / sigma alone: no cache. */
        if (pw_design_q_needed(&w->pd, n, &q) != PW_OK) return INFINITY;
    } else {
        q = delta_needed(dc, &w->pd, n) * w->pd.sigma / w->pd.effect;
    }
    return q * q / w->q_mul;
}

/* ---- predictions ------------------------------------------------------------------------------- */

/* Whether level l of level-set input v occurs in group gr's archive rows (or in the planned runs
 * so far, with with_plan). */
static int level_present(const struct plan_state *st, const plan_group *gr, size_t v, size_t l,
                         int with_plan)
{
    size_t s = st->L.slot[v] + l;
    return gr->present[s] || (with_plan && st->planned[s]);
}

/* A claim's test after the planned runs so far, coded as the assessment codes its regression
 * (coverage/archive/design.c): a level-set input has dummies only for the levels present in the rows (the
 * group's archive rows and the planned runs), against the first present level. A level a planned
 * run brings in adds a column: one more parameter for a adjustment-set input, one more level (and
 * from three on the F test, as coverage/assess/assess.c chooses) for the treatment. *t is w->pd0 so
 * adjusted; *info its coded information in that design (PW_TEST_LEVELS_F: the least favourable
 * pattern, power/levels.c), from the Sherman-Morrison inverse when every column is in and else
 * from the kept cross-products of the columns that are. A level-set treatment with fewer than two
 * levels among the rows has no contrast to test yet: *info is then NAN and the status COV_OK (a
 * state of the claim, not a failure). Returns COV_OK, COV_ENOMEM or COV_ENUMERIC. */
static int exact_test(const struct plan_state *st, const cov_claim *cl, const claim_work *w,
                      pw_design *t, double *info)
{
    const cov_graph *g = st->g;
    const plan_group *gr = &st->groups[w->gi];
    *t = w->pd0;
    *info = 0.0;
    unsigned char *on = malloc(gr->p);
    if (on == NULL) return COV_ENOMEM;
    memset(on, 1, gr->p);
    size_t n_treat = 0;
    for (size_t m = 0; m <= cl->n_cond; m++) {
        size_t v = m < cl->n_cond ? cl->cond[m] : cl->treatment;
        const cov_var *var = &g->vars[v];
        if (var->type != COV_LEVELS || st->L.count[v] == 0) continue;
        size_t now = 0, before = 0;
        long ref = -1;
        for (size_t l = 0; l < var->n_levels; l++) {
            int here = level_present(st, gr, v, l, 1);
            now += (size_t)here;
            before += (size_t)level_present(st, gr, v, l, 0);
            if (here && ref < 0) ref = (long)l;
            if (l == 0) continue;
            size_t col = st->L.first[v] + l - 1;
            for (size_t j = 0; j < gr->p; j++)
                if (gr->cols[j] == col) on[j] = (unsigned char)(here && (long)l != ref);
        }
        if (m < cl->n_cond)
            t->n_params += (double)(now > 0 ? now - 1 : 0) - (double)(before > 0 ? before - 1 : 0);
        else n_treat = now;
    }
    int pattern = t->test == PW_TEST_LEVELS_F;
    if (g->vars[cl->treatment].type == COV_LEVELS) {
        if (n_treat < 2) {
            /* One level or none: no contrast to test yet. */
            free(on);
            *info = NAN;
            return COV_OK;
        }
        size_t tr = n_treat - 1;
        if (trend_claim(g, cl)) {
            /* The linear trend (or, for an absence, the equivalence test on it) over the levels
             * present, measured by the trend contrast's own information. */
            const cov_var *x = &g->vars[cl->treatment];
            size_t v = cl->treatment;
            unsigned char *here = malloc(x->n_levels);
            double *c = malloc(x->n_levels * sizeof *c);
            int prc = here && c ? PW_OK : PW_ENOMEM;
            for (size_t l = 0; prc == PW_OK && l < x->n_levels; l++)
                here[l] = (unsigned char)level_present(st, gr, v, l, 1);
            t->test = cl->kind == COV_CLAIM_ABSENCE ? PW_TEST_TOST : PW_TEST_TREND_T;
            t->n_levels = (double)n_treat;
            if (prc == PW_OK && !trend_weights(x, here, c)) *info = NAN;
            else if (prc == PW_OK) prc = pw_aug_contrast_subset(st->aug, w->target, on, c, info);
            free(here);
            free(c);
            free(on);
            if (prc != PW_OK) return prc == PW_ENOMEM ? COV_ENOMEM : COV_ENUMERIC;
            return COV_OK;
        }
        t->test = cov_claim_test(g, cl, 1, tr);
        t->n_levels = tr >= 2 ? (double)(tr + 1) : 0.0;
        pattern = t->test == PW_TEST_LEVELS_F;
    }
    int prc = pw_aug_info_subset(st->aug, w->target, on, pattern, info);
    free(on);
    if (prc == PW_ESING) {
        /* Fewer runs than the claim's parameters (or inputs moved together): no contrast to
         * test yet, as for a level set with one level. */
        *info = NAN;
        return COV_OK;
    }
    if (prc != PW_OK) return prc == PW_ENOMEM ? COV_ENOMEM : COV_ENUMERIC;
    return COV_OK;
}

/* The test of a steered claim at n > 0 runs after the planned runs so far: *predictable is 0
 * when the claim has no contrast to test yet (exact_test), else 1 with *out set. Returns COV_OK,
 * COV_ENOMEM or COV_ENUMERIC. */
static int exact_design(const struct plan_state *st, const cov_claim *cl, const claim_work *w,
                        double n, pw_design *out, int *predictable)
{
    pw_design t;
    double info = 0.0;
    *predictable = 0;
    int rc = exact_test(st, cl, w, &t, &info);
    if (rc != COV_OK) return rc;
    if (isnan(info) || !(n > 0)) return COV_OK;   /* no contrast yet, or no runs at all */
    if (!(info >= 0.0) || pw_design_with_q(&t, n, sqrt(info * w->q_mul0), out) != PW_OK)
        return COV_ENUMERIC;
    *predictable = 1;
    return COV_OK;
}

/* Predicted power of plan item it after `added` runs: *power is NAN when the claim cannot be sized
 * or has no contrast to test yet (states the plan reports, not failures). Returns COV_OK,
 * COV_ENOMEM or COV_ENUMERIC (a power computation failed). */
int cov_plan_predict(const struct plan_state *st, const cov_plan_claim *it, double added,
                     double *power)
{
    assert(it->claim < st->c->n);
    const claim_work *w = &st->w[it->claim];
    pw_design t;
    *power = NAN;
    if (it->mode == COV_PLAN_UNSIZED || it->mode == COV_PLAN_FIXED) return COV_OK;
    if (it->mode == COV_PLAN_ASSUMED) {
        t = w->pd;
        t.n = w->n_base + added;
    } else {
        int ok = 0;
        int rc = exact_design(st, &st->c->items[it->claim], w, w->n_base + added, &t, &ok);
        if (rc != COV_OK || !ok) return rc;
        if (cov_plan_noise_tracked(st->nz, w->target) && t.test != PW_TEST_TWO_PROP) {
            /* The residual SD the test will see: the archive's, moved by the predicted ratio. */
            t.sigma /= sqrt(cov_plan_noise_scale(st->nz, w->target));
        }
    }
    return pw_power(&t, power) == PW_OK ? COV_OK : COV_ENUMERIC;
}

/* Set up each testable claim: its mode, its test now and, when steered, its design group. */
int cov_plan_setup_claims(struct plan_state *st, const cov_assessments *a, cov_plan *p)
{
    const cov_graph *g = st->g;
    size_t n_testable = 0;
    for (size_t i = 0; i < st->c->n; i++) n_testable += st->c->items[i].status == COV_TESTABLE;
    p->items = calloc(n_testable + 1, sizeof *p->items);
    st->w = calloc(st->c->n + 1, sizeof *st->w);
    if (p->items == NULL || st->w == NULL) return COV_ENOMEM;
    int have_runs = st->d != NULL && st->d->n_runs > 0 && a != NULL;
    for (size_t i = 0; i < st->c->n; i++) {
        const cov_claim *cl = &st->c->items[i];
        if (cl->status != COV_TESTABLE) continue;
        cov_plan_claim *it = &p->items[p->n++];
        claim_work *w = &st->w[i];
        it->claim = i;
        it->power_now = NAN;
        /* An outcome (or output treatment) that never varies: the plan cannot promise variation
         * and sizes nothing for it. A constant input treatment is steered as usual: new runs can
         * set it to other values. */
        if (have_runs && a->items[i].fixed_var != SIZE_MAX &&
            g->vars[a->items[i].fixed_var].role != COV_INPUT) {
            it->mode = COV_PLAN_FIXED;
            continue;
        }
        int steer = g->vars[cl->treatment].role == COV_INPUT;
        for (size_t m = 0; m < cl->n_cond; m++) steer &= g->vars[cl->cond[m]].role == COV_INPUT;
        double pw = NAN;
        int got = have_runs && cov_assess_design(g, st->c, a, i, &w->pd) == COV_OK;
        if (got && a->items[i].seed_blocks_used) {
            /* Planned runs carry seeds the archive never used: each would be a seed block of
             * its own, adding nothing to the blocked test (README.md, "Seed blocks"). */
            w->pd = a->items[i].design_unblocked;
            it->seed_unblocked = 1;
        }
        if (got && pw_power(&w->pd, &pw) == PW_OK && w->pd.n > 0) {
            w->have_pd = 1;
            it->power_now = pw;
            w->n_base = w->pd.n;
            w->pd0 = w->pd;
        }
        if (!steer) {
            it->mode = w->have_pd ? COV_PLAN_ASSUMED : COV_PLAN_UNSIZED;
            if (w->have_pd && pw_runs_needed(&w->pd, &w->runs_needed) != PW_OK)
                w->runs_needed = INFINITY;
            continue;
        }
        size_t gi = 0, first = 0, k = 1;
        int rc = find_group(st, cl, &gi, &first, &k);
        if (rc != COV_OK) return rc;
        size_t n_rows = st->groups[gi].n_rows;
        w->gi = gi;
        /* The pd decides the measure; without one yet, a level-set effect claim is an F test. */
        int pattern = w->have_pd ? w->pd.test == PW_TEST_LEVELS_F
                                 : cl->kind == COV_CLAIM_EFFECT && g->vars[cl->treatment].type == COV_LEVELS;
        if (trend_claim(g, cl)) pattern = 0;
        int prc = pw_aug_add_target(st->aug, st->groups[gi].group, first, k, pattern, INFINITY,
                                    &w->target);
        if (prc != PW_OK) return COV_ENOMEM;
        if (trend_claim(g, cl)) {
            /* An ordered level set is steered by its trend contrast over every declared level
             * (the levels a planned run may bring in), whose information is the trend test's q^2. */
            const cov_var *xt = &g->vars[cl->treatment];
            unsigned char *all = malloc(xt->n_levels);
            double *c = malloc(xt->n_levels * sizeof *c);
            if (all == NULL || c == NULL) prc = PW_ENOMEM;
            else {
                memset(all, 1, xt->n_levels);
                if (trend_weights(xt, all, c)) prc = pw_aug_set_contrast(st->aug, w->target, c);
            }
            free(all);
            free(c);
            if (prc != PW_OK) return prc == PW_ENOMEM ? COV_ENOMEM : COV_ENUMERIC;
        }
        double info0 = pw_aug_info(st->aug, w->target);
        double q_now = w->have_pd ? pw_design_q(&w->pd) : NAN;
        const cov_var *x = &g->vars[cl->treatment];
        double half = cov_plan_is_numeric(x) ? 0.5 * (x->hi - x->lo) : 1.0;
        /* A level the archive never ran is missing from its regression (and carries only the
         * ridge in the steering design), so a ratio to the current information would be
         * meaningless: steer such a claim absolutely, with the archive's sigma and every declared
         * level, so that the search brings the missing levels in. Its predictions (exact_test)
         * count only the levels present, as the assessment does. */
        int levels_missing = x->type == COV_LEVELS && w->have_pd &&
                             w->pd.n_levels != (double)x->n_levels;
        if (levels_missing && w->pd.sigma > 0) {
            w->pd.n_levels = (double)x->n_levels;
            w->q_mul = 1.0;
        } else if (w->have_pd && q_now > 0 && isfinite(q_now) && n_rows > st->groups[gi].p &&
                   info0 > 0) {
            /* The archive's own figures, moved by the ratio of information the runs add. */
            w->q_mul = q_now * q_now / info0;
        } else if (design_from_noise(g, cl, st->opt, n_testable, &st->L, &w->pd) == 0) {
            w->have_pd = 1;
            it->from_noise = 1;
            w->q_mul = half * half;
            /* Expected to turn: the basis F's lambda per run, 4/45 for runs spread evenly, where
             * the slope's coded information per run is 1/3 (turning.c; a stand-in scaling). */
            if (w->pd.test == PW_TEST_BASIS_F) w->q_mul = 3.0 * w->pd.ncp_per_run;
            w->n_base = (double)n_rows;
            /* The predictions' test counts a level-set input's levels present in the rows. */
            w->pd0 = w->pd;
            w->pd0.n_params = 1.0;
            for (size_t m = 0; m < cl->n_cond; m++) {
                size_t v = cl->cond[m], present = 0;
                if (g->vars[v].type != COV_LEVELS) {
                    w->pd0.n_params += 1.0;
                    continue;
                }
                for (size_t l = 0; l < g->vars[v].n_levels; l++)
                    present += (size_t)level_present(st, &st->groups[gi], v, l, 0);
                w->pd0.n_params += present > 0 ? (double)(present - 1) : 0.0;
            }
        } else {
            it->mode = COV_PLAN_UNSIZED;
            continue;
        }
        /* The predictions' coded information to q^2: the archive's own ratio in their coding, or
         * (sized from noise) the scale of the coding: a numeric column was scaled by half its
         * range. */
        pw_design t0;
        double info0e = 0.0;
        w->q_mul0 = it->from_noise ? w->q_mul : half * half;
        int erc = exact_test(st, cl, w, &t0, &info0e);
        if (erc != COV_OK) return erc;
        if (!it->from_noise) {
            double q0 = pw_design_q(&w->pd0);
            if (q0 > 0 && isfinite(q0) && info0e > 0 && isfinite(info0e))
                w->q_mul0 = q0 * q0 / info0e;
        }
        if (it->from_noise && n_rows > 0) {
            pw_design t;
            int ok = 0;
            it->power_now = NAN;
            if ((erc = exact_design(st, cl, w, (double)n_rows, &t, &ok)) != COV_OK) return erc;
            int powrc = ok ? pw_power(&t, &it->power_now) : PW_OK;
            /* Fewer runs than the claim's parameters: no power yet, not a failure. */
            if (powrc == PW_EFEW) it->power_now = 0;
            else if (powrc != PW_OK) return COV_ENUMERIC;
        }
        it->mode = COV_PLAN_STEERED;
        w->steered = 1;
        pw_aug_set_need(st->aug, w->target, cov_plan_need_at(st->dc, w, w->n_base));
    }
    return COV_OK;
}
