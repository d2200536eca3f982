/* The next runs: claim design groups, greedy augmentation over the claims' designs, predicted power.
 * See LICENSE. */
#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/plan/plan.h"

/* Added to the diagonal of every claim's cross-products so that an empty or rank-deficient start
 * stays invertible: a millionth of what one run at a domain end adds to a coded column (|z| <= 1),
 * far below anything that moves a printed power. */
#define PLAN_RIDGE 1e-6
/* Weight of the coverage bonus (share of 2-way cells still under min_runs that a run would fall in,
 * distance to the nearest run): it raises a claim score by at most 5%, so coverage breaks near-ties
 * while some claim is short, and leads alone once none is. */
#define PLAN_COVER_WEIGHT 0.05
/* Rescore every candidate after each added run when that costs at most this many floating-point
 * operations (about a millisecond); beyond it, rescore lazily. */
#define PLAN_FULL_FLOPS 2e6
/* --budget auto: a need is recomputed at the current run count once that count has grown by this
 * factor (the run count changes the test's degrees of freedom, so the need falls slowly). */
#define PLAN_NEED_REFRESH 1.5
/* --budget auto: when the exact power of a claim whose need was met is still short, its need is
 * raised by this factor and the search goes on; at most PLAN_MAX_BUMPS times in all. */
#define PLAN_NEED_BUMP 1.02
#define PLAN_MAX_BUMPS 200

/* The coded column layout of the inputs: column 0 is the intercept; numeric inputs are scaled to
 * [-1, 1]; bools are 0/1; a level set has L - 1 dummies against its first level. */
typedef struct {
    size_t n_cols;
    size_t *first, *count;    /* per variable; count 0 for non-inputs */
    size_t *slot;             /* per level-set input: its first level's index in a presence map */
    size_t n_slots;           /* levels over all level-set inputs */
} layout;

int cov_plan_is_numeric(const cov_var *v) { return v->type == COV_REAL || v->type == COV_INTEGER; }

static void code_row(const cov_graph *g, const layout *L, const double *vals, double *row)
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

typedef struct {
    size_t *cols;
    size_t p;
    long outcome;             /* the outcome whose missing cells narrow the rows, or -1 */
    size_t group;             /* in the pw_aug */
    size_t n_rows;
    unsigned char *present;   /* n_slots: the levels that occur in the group's archive rows */
} plan_group;

/* Per-claim working state. */
typedef struct {
    pw_design pd;
    int have_pd;
    double q_mul;             /* q^2 = info * q_mul (coded information to the test's q^2) */
    size_t target;            /* in the pw_aug, for steered claims */
    int steered;
    double n_base;            /* runs the current figures rest on */
    double runs_needed;       /* assumed claims: total runs for the target */
    /* Predictions code the design as the assessment does (coverage/archive/design.c): a level-set input
     * has dummies only for the levels present in the rows. pd0 is the test on the archive's rows
     * in that coding (or sized from declared noise), q_mul0 its coded information to q^2. */
    pw_design pd0;
    double q_mul0;
    size_t gi;                /* the claim's plan_group */
} claim_work;

struct plan_state {
    const cov_graph *g;
    const cov_claims *c;
    const cov_data *d;
    const cov_power_options *opt;
    layout L;
    plan_group *groups;
    size_t n_groups;
    claim_work *w;
    pw_aug *aug;
    size_t n_cand;
    double *cand_vals;        /* n_cand * n_vars */
    double *cand_rows;        /* n_cand * n_cols */
    cov_plan_cover *cover;    /* the coverage bonus of each candidate */
    struct delta_cache *dc;
    unsigned char *planned;   /* n_slots: the levels the planned runs so far set */
    cov_plan_noise *nz;       /* the residual variance each claim will see, or NULL */
    double *scale_after;      /* per pw_aug target: scratch for cov_plan_noise_scales_after */
    double *cand_cost;        /* per candidate: fitted cost of one run (1 without a cost model) */
    double cost_ref;          /* the mean candidate cost: scores are per this much cost */
    unsigned char *excluded;  /* per candidate: beyond the runs' range while a model is uncertain */
};

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
        code_row(g, L, vals, row);
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

typedef struct {
    int test, sides;
    double alpha, target, n_levels, df, delta;
} delta_entry;

struct delta_cache {
    delta_entry *e;
    size_t n, cap;
};

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
static double need_at(struct delta_cache *dc, const claim_work *w, double n)
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

static void state_free(struct plan_state *st)
{
    for (size_t i = 0; i < st->n_groups; i++) {
        free(st->groups[i].cols);
        free(st->groups[i].present);
    }
    free(st->planned);
    free(st->L.slot);
    free(st->groups);
    free(st->w);
    pw_aug_free(st->aug);
    free(st->cand_vals);
    free(st->cand_rows);
    cov_plan_cover_free(st->cover);
    cov_plan_noise_free(st->nz);
    free(st->scale_after);
    free(st->cand_cost);
    free(st->excluded);
    free(st->L.first);
    free(st->L.count);
    if (st->dc != NULL) free(st->dc->e);
}

void cov_plan_free(cov_plan *p)
{
    if (p == NULL) return;
    free(p->rows);
    free(p->seeds);
    free(p->items);
    free(p->cost);
    free(p);
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
static int predict(const struct plan_state *st, const cov_plan_claim *it, double added,
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
static int setup_claims(struct plan_state *st, const cov_assessments *a, cov_plan *p)
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
        pw_aug_set_need(st->aug, w->target, need_at(st->dc, w, w->n_base));
    }
    return COV_OK;
}

/* The candidate set, with the level combinations of the underpowered claims: only the steered claims still
 * short of their need ask for their combinations. */
static int plan_candidates(struct plan_state *st, unsigned long seed)
{
    unsigned char *under = calloc(st->c->n + 1, 1);
    if (under == NULL) return COV_ENOMEM;
    for (size_t i = 0; i < st->c->n; i++)
        under[i] = st->c->items[i].status == COV_TESTABLE && st->w[i].steered &&
                  pw_aug_active(st->aug, st->w[i].target);
    int rc = cov_plan_candidates(st->g, st->c, under, seed, &st->cand_vals, &st->n_cand);
    free(under);
    return rc;
}

/* ---- the greedy search ------------------------------------------------------------------------- */

static void refresh_needs(struct plan_state *st, const cov_plan *p, double added, int only_active)
{
    for (size_t j = 0; j < p->n; j++) {
        const cov_plan_claim *it = &p->items[j];
        if (it->mode != COV_PLAN_STEERED || it->unreachable) continue;
        const claim_work *w = &st->w[it->claim];
        /* Needs only fall as runs are added, so a claim that has met its need stays met. */
        if (!only_active || pw_aug_active(st->aug, w->target))
            pw_aug_set_need(st->aug, w->target, need_at(st->dc, w, w->n_base + added));
    }
}

/* Score candidate c. While some claim is short, the claims' share-of-need score, raised by at most
 * PLAN_COVER_WEIGHT for filling cells and gaps (so coverage breaks near-ties but never buys a run
 * that no claim needs); once none is short, the coverage bonus alone. Both parts only fall as runs
 * are added. */
static int score_candidate(struct plan_state *st, size_t c, double w, double *claim_part,
                           double *total)
{
    double s = 0.0;
    if (st->excluded != NULL && st->excluded[c]) {
        *claim_part = 0.0;
        *total = -INFINITY;
        return COV_OK;
    }
    const double *scale = NULL;
    if (st->nz != NULL) {
        cov_plan_noise_scales_after(st->nz, c, w, st->scale_after);
        scale = st->scale_after;
    }
    if (pw_aug_score_scaled(st->aug, st->cand_rows + c * st->L.n_cols, w, scale, &s) != PW_OK)
        return COV_ENUMERIC;
    double bonus = cov_plan_cover_bonus(st->cover, c);
    /* Information per unit of cost: the score of a run over its fitted cost relative to the mean
     * candidate's (1 without a cost column). */
    double per_cost = st->cand_cost != NULL ? st->cost_ref / st->cand_cost[c] : 1.0;
    *claim_part = s * per_cost;
    *total = pw_aug_n_active(st->aug) > 0 ? s * (1.0 + PLAN_COVER_WEIGHT * bonus) * per_cost
                                          : bonus * per_cost;
    return COV_OK;
}

static int push_row(cov_plan *p, size_t *cap, const double *vals)
{
    if (p->n_configs == *cap) {
        size_t nc = *cap ? 2 * *cap : 64;
        /* At least one slot per row: realloc to 0 bytes frees the block and returns NULL. */
        double *nr = realloc(p->rows, nc * (p->n_vars ? p->n_vars : 1) * sizeof *nr);
        if (nr == NULL) return COV_ENOMEM;
        p->rows = nr;
        *cap = nc;
    }
    memcpy(p->rows + p->n_configs * p->n_vars, vals, p->n_vars * sizeof *vals);
    p->n_configs++;
    return COV_OK;
}

/* Distinct seeds: an affine map with an odd multiplier is a bijection of the integers mod 2^31
 * (Knuth, TAOCP vol. 2, sec. 3.2.1.2), so seeds for distinct run numbers never collide. */
#define SEED_MUL 1103515245UL
#define SEED_MOD 2147483648UL

static int cmp_seed(const void *a, const void *b)
{
    long long x = *(const long long *)a, y = *(const long long *)b;
    return (x > y) - (x < y);
}

/* Seeds never used in the archive (d->seed, when the graph declares a seed column): the affine
 * sequence skips every seed a stored run used, so a new round never shares a random stream with
 * an earlier one by accident, and no (configuration, seed) of the archive comes back. */
static int make_seeds(cov_plan *p, const cov_data *d, unsigned long seed)
{
    size_t n = p->n_configs * (size_t)p->replicates, n_used = 0;
    long long *used = NULL;
    if (d != NULL && d->seed != NULL && d->n_runs > 0) {
        used = malloc(d->n_runs * sizeof *used);
        if (used == NULL) return -1;
        for (size_t i = 0; i < d->n_runs; i++)
            if (d->seed[i] != COV_SEED_NONE) used[n_used++] = d->seed[i];
        qsort(used, n_used, sizeof *used, cmp_seed);
    }
    unsigned long base = (seed * 2654435761UL + 12345UL) % SEED_MOD;
    /* A bijection of [0, 2^31): at most n_used values are skipped before n fresh ones appear. */
    for (size_t i = 0, j = 0; i < n; j++) {
        long long s = (long long)((SEED_MUL * ((base + j) % SEED_MOD) + 12345UL) % SEED_MOD);
        if (n_used > 0 && bsearch(&s, used, n_used, sizeof *used, cmp_seed) != NULL) continue;
        p->seeds[i++] = (unsigned long)s;
    }
    free(used);
    return 0;
}

int cov_plan_check_limits(long budget, int replicates, cov_error *err)
{
    if (budget < -1 || budget > COV_PLAN_AUTO_CAP)
        return cov_fail(err, COV_EINPUT, "", "found --budget %ld, expected a whole number from 0 "
                        "to %d (the limit on configurations in a plan) or 'auto'", budget,
                        COV_PLAN_AUTO_CAP);
    if (replicates < 1 || replicates > COV_PLAN_MAX_REPLICATES)
        return cov_fail(err, COV_EINPUT, "", "found --replicates %d, expected a whole number from "
                        "1 to %d (the limit on replicates)", replicates, COV_PLAN_MAX_REPLICATES);
    long configs = budget < 0 ? COV_PLAN_AUTO_CAP : budget;
    if ((double)configs * replicates > COV_PLAN_MAX_RUNS)
        return cov_fail(err, COV_EINPUT, "", "found up to %ld configurations x %d replicates = "
                        "%.0f runs, expected at most %d (the limit on runs in a plan)%s", configs,
                        replicates, (double)configs * replicates, COV_PLAN_MAX_RUNS,
                        budget < 0 ? "; --budget auto may plan up to its cap" : "");
    return COV_OK;
}

int cov_plan_make(const cov_graph *g, const cov_claims *c, const cov_data *d,
                  const cov_assessments *a, const cov_power_options *opt,
                  const cov_coverage_options *copt, long budget, int replicates,
                  cov_plan **out, cov_error *err)
{
    return cov_plan_make_ex(g, c, d, a, opt, copt, budget, replicates, NULL, out, err);
}

/* Set every tracked target's scale from the noise tracker. */
static void sync_scales(struct plan_state *st)
{
    if (st->nz == NULL) return;
    for (size_t t = 0; t < pw_aug_n_targets(st->aug); t++)
        if (cov_plan_noise_tracked(st->nz, t))
            pw_aug_set_scale(st->aug, t, cov_plan_noise_scale(st->nz, t));
}

/* Commit replicates runs at candidate best: the designs, the coverage cells, the noise tracker, the
 * plan's rows and costs, the levels planned. */
static int commit_candidate(struct plan_state *st, cov_plan *p, size_t *row_cap, size_t best,
                            double k_rep, cov_error *err)
{
    const cov_graph *g = st->g;
    if (pw_aug_commit(st->aug, st->cand_rows + best * st->L.n_cols, k_rep) != PW_OK)
        return cov_fail(err, COV_ENUMERIC, "", "the planned design became singular");
    cov_plan_cover_commit(st->cover, best, (int)k_rep);
    if (st->nz != NULL) {
        if (cov_plan_noise_commit(st->nz, st->cand_rows + best * st->L.n_cols, k_rep) != COV_OK)
            return COV_ENOMEM;
        sync_scales(st);
    }
    size_t at = p->n_configs;
    int rc = push_row(p, row_cap, st->cand_vals + best * g->n_vars);
    if (rc != COV_OK) return rc;
    double *nc = realloc(p->cost, (*row_cap + 1) * sizeof *nc);
    if (nc == NULL) return COV_ENOMEM;
    p->cost = nc;
    p->cost[at] = st->cand_cost != NULL ? st->cand_cost[best] : 1.0;
    p->total_cost += k_rep * p->cost[at];
    for (size_t v = 0; v < g->n_vars; v++) {
        double lv = st->cand_vals[best * g->n_vars + v];
        if (g->vars[v].role == COV_INPUT && g->vars[v].type == COV_LEVELS && lv >= 0 &&
            lv < (double)g->vars[v].n_levels)
            st->planned[st->L.slot[v] + (size_t)lv] = 1;
    }
    return COV_OK;
}

/* The noise tracker and the cost of each candidate, from the archive's rows with every input
 * present (coverage/plan/plan_noise.c, plan_models.c). Without runs, neither. */
static int setup_models(struct plan_state *st, const cov_plan *p, const cov_plan_extra *x)
{
    const cov_graph *g = st->g;
    const cov_data *d = st->d;
    size_t nc = st->L.n_cols;
    if (d == NULL) return COV_OK;
    unsigned char *numeric = calloc(nc + 1, 1);
    double *rows = malloc((d->n_runs * nc + 1) * sizeof *rows);
    double *vals = malloc((g->n_vars + 1) * sizeof *vals), *y = malloc((d->n_runs + 1) * sizeof *y);
    size_t *idx = malloc((d->n_runs + 1) * sizeof *idx);
    int rc = COV_ENOMEM;
    if (numeric == NULL || rows == NULL || vals == NULL || y == NULL || idx == NULL) goto done;
    for (size_t v = 0; v < g->n_vars; v++)
        if (st->L.count[v] > 0 && cov_plan_is_numeric(&g->vars[v])) numeric[st->L.first[v]] = 1;
    size_t n = 0;
    for (size_t i = 0; i < d->n_runs; i++) {
        int ok = 1;
        for (size_t v = 0; v < g->n_vars && ok; v++) {
            if (st->L.count[v] == 0) {
                vals[v] = NAN;
                continue;
            }
            ok = cov_plan_var_present(d, v, i);
            vals[v] = ok ? d->col[v][i] : 0.0;
        }
        if (!ok) continue;
        code_row(g, &st->L, vals, rows + n * nc);
        idx[n++] = i;
    }
    size_t n_t = pw_aug_n_targets(st->aug);
    if ((rc = cov_plan_noise_alloc(nc, numeric, rows, n, n_t, &st->nz)) != COV_OK) goto done;
    st->scale_after = malloc((n_t + 1) * sizeof *st->scale_after);
    if (st->scale_after == NULL) {
        rc = COV_ENOMEM;
        goto done;
    }
    for (size_t j = 0; j < p->n; j++) {
        const cov_plan_claim *it = &p->items[j];
        if (it->mode != COV_PLAN_STEERED) continue;
        const claim_work *w = &st->w[it->claim];
        const cov_claim *cl = &st->c->items[it->claim];
        for (size_t i = 0; i < n; i++) y[i] = d->col[cl->outcome] ? d->col[cl->outcome][idx[i]] : NAN;
        const plan_group *gr = &st->groups[w->gi];
        if ((rc = cov_plan_noise_add_claim(st->nz, w->target, cl->outcome, y, gr->cols, gr->p)) !=
            COV_OK)
            goto done;
    }
    if ((rc = cov_plan_noise_candidates(st->nz, st->cand_rows, st->n_cand)) != COV_OK) goto done;
    sync_scales(st);
    /* Cost: fitted where the archive records it; 1 a run otherwise. */
    if (x != NULL && x->run_cost != NULL) {
        size_t m = 0;
        double *cr = malloc((n * nc + 1) * sizeof *cr);
        if (cr == NULL) {
            rc = COV_ENOMEM;
            goto done;
        }
        for (size_t i = 0; i < n; i++) {
            double cost = x->run_cost[idx[i]];
            if (!(cost > 0) || !isfinite(cost)) continue;
            memcpy(cr + m * nc, rows + i * nc, nc * sizeof *cr);
            y[m++] = cost;
        }
        cov_plan_model *cm = NULL;
        rc = cov_plan_model_fit(cr, y, m, nc, numeric, 1, &cm);
        free(cr);
        if (rc == COV_ENOMEM) goto done;
        if (rc == COV_OK) {
            st->cand_cost = malloc((st->n_cand + 1) * sizeof *st->cand_cost);
            if (st->cand_cost == NULL) {
                cov_plan_model_free(cm);
                rc = COV_ENOMEM;
                goto done;
            }
            st->cost_ref = 0.0;
            for (size_t k = 0; k < st->n_cand; k++) {
                st->cand_cost[k] = cov_plan_model_mean(cm, st->cand_rows + k * nc);
                st->cost_ref += st->cand_cost[k] / (double)st->n_cand;
            }
            cov_plan_model_free(cm);
        }
        rc = COV_OK;
    }
    rc = COV_OK;
done:
    free(numeric);
    free(rows);
    free(vals);
    free(y);
    free(idx);
    return rc;
}

/* The share of a numeric input's span beyond the runs' range that candidates may reach while a
 * model bends or its noise varies: the models are fitted on the runs and say nothing far outside. */
#define PLAN_HULL_SLACK 0.10

int cov_plan_make_ex(const cov_graph *g, const cov_claims *c, const cov_data *d,
                     const cov_assessments *a, const cov_power_options *opt,
                     const cov_coverage_options *copt, long budget, int replicates,
                     const cov_plan_extra *x, cov_plan **out, cov_error *err)
{
    *out = NULL;
    int rc = cov_plan_check_limits(budget, replicates, err);
    if (rc != COV_OK) return rc;
    unsigned long seed = copt != NULL ? copt->seed : 20261202UL;
    struct plan_state st;
    memset(&st, 0, sizeof st);
    st.g = g;
    st.c = c;
    st.d = d != NULL && d->n_runs > 0 ? d : NULL;
    st.opt = opt;
    struct delta_cache dc = {NULL, 0, 0};
    st.dc = &dc;
    rc = COV_ENOMEM;
    double *bound = NULL, *part = NULL;
    unsigned char *fresh = NULL;
    cov_plan *p = calloc(1, sizeof *p);
    st.L.first = calloc(g->n_vars + 1, sizeof(size_t));
    st.L.count = calloc(g->n_vars + 1, sizeof(size_t));
    st.L.slot = calloc(g->n_vars + 1, sizeof(size_t));
    if (p == NULL || st.L.first == NULL || st.L.count == NULL || st.L.slot == NULL) goto fail;
    p->n_vars = g->n_vars;
    p->replicates = replicates;
    st.L.n_cols = 1;
    for (size_t v = 0; v < g->n_vars; v++) {
        const cov_var *var = &g->vars[v];
        if (var->role != COV_INPUT) continue;
        st.L.first[v] = st.L.n_cols;
        st.L.count[v] = var->type == COV_LEVELS ? var->n_levels - 1 : 1;
        st.L.n_cols += st.L.count[v];
        if (var->type == COV_LEVELS) {
            st.L.slot[v] = st.L.n_slots;
            st.L.n_slots += var->n_levels;
        }
    }
    st.planned = calloc(st.L.n_slots + 1, 1);
    if (st.planned == NULL) goto fail;
    if (pw_aug_alloc(st.L.n_cols, &st.aug) != PW_OK) goto fail;
    if ((rc = setup_claims(&st, a, p)) != COV_OK) goto fail;
    if ((rc = plan_candidates(&st, seed)) != COV_OK) goto fail;
    rc = COV_ENOMEM;
    p->n_candidates = st.n_cand;
    st.cand_rows = malloc((st.n_cand * st.L.n_cols + 1) * sizeof *st.cand_rows);
    bound = malloc((st.n_cand + 1) * sizeof *bound);
    part = malloc((st.n_cand + 1) * sizeof *part);
    fresh = malloc(st.n_cand + 1);
    if (st.cand_rows == NULL || bound == NULL || part == NULL || fresh == NULL) goto fail;
    for (size_t k = 0; k < st.n_cand; k++)
        code_row(g, &st.L, st.cand_vals + k * g->n_vars, st.cand_rows + k * st.L.n_cols);
    rc = cov_plan_cover_alloc(g, st.d, st.cand_vals, st.n_cand, copt, seed, &st.cover);
    if (rc != COV_OK) goto fail;
    if ((rc = setup_models(&st, p, x)) != COV_OK) goto fail;
    rc = COV_ENOMEM;
    cov_plan_noise_counts(st.nz, &p->n_curved, &p->n_hetero);
    p->have_cost = st.cand_cost != NULL;
    if (p->n_curved + p->n_hetero > 0) {
        st.excluded = calloc(st.n_cand + 1, 1);
        if (st.excluded == NULL) goto fail;
        for (size_t k = 0; k < st.n_cand; k++) {
            st.excluded[k] = (unsigned char)cov_plan_noise_outside(
                st.nz, st.cand_rows + k * st.L.n_cols, PLAN_HULL_SLACK);
            p->n_kept_inside += st.excluded[k];
        }
    }
    double cost_budget = x != NULL && x->cost_budget > 0 ? x->cost_budget : INFINITY;

    /* Assumed claims need configurations in proportion; beyond the cap they are unreachable. */
    double k_rep = (double)replicates;
    size_t assumed_configs = 0;
    for (size_t j = 0; j < p->n; j++) {
        cov_plan_claim *it = &p->items[j];
        if (it->mode != COV_PLAN_ASSUMED) continue;
        const claim_work *w = &st.w[it->claim];
        double more = ceil((w->runs_needed - w->n_base) / k_rep);
        if (!(more <= (double)COV_PLAN_AUTO_CAP)) it->unreachable = budget < 0;
        else if (more > (double)assumed_configs) assumed_configs = (size_t)more;
    }

    size_t row_cap = 0, last_refresh = 0, bumps = 0;
    for (size_t k = 0; k < st.n_cand; k++) bound[k] = INFINITY, fresh[k] = 0;
    for (;;) {
        size_t planned = p->n_configs;
        if (budget >= 0 && planned >= (size_t)budget) break;
        if (budget < 0 && pw_aug_n_active(st.aug) == 0 && planned >= assumed_configs) {
            /* Needs are met: confirm with the exact power, and raise any need that fell short. */
            if (st.nz != NULL) {
                if ((rc = cov_plan_noise_refresh(st.nz)) != COV_OK) goto fail;
                sync_scales(&st);
            }
            refresh_needs(&st, p, (double)planned * k_rep, 0);
            int short_any = 0;
            for (size_t j = 0; j < p->n; j++) {
                cov_plan_claim *it = &p->items[j];
                if (it->mode != COV_PLAN_STEERED || it->unreachable) continue;
                const claim_work *w = &st.w[it->claim];
                double pw = NAN;
                if ((rc = predict(&st, it, (double)planned * k_rep, &pw)) != COV_OK) goto fail;
                if (pw >= opt->target) continue;
                short_any = 1;
                if (++bumps > PLAN_MAX_BUMPS) it->unreachable = 1;
                else pw_aug_set_need(st.aug, w->target,
                                     fmax(pw_aug_need(st.aug, w->target),
                                          pw_aug_info(st.aug, w->target) *
                                              pw_aug_scale(st.aug, w->target)) * PLAN_NEED_BUMP);
            }
            if (!short_any) break;
            for (size_t k = 0; k < st.n_cand; k++) bound[k] = INFINITY, fresh[k] = 0;
            continue;
        }
        if (budget < 0 && planned >= COV_PLAN_AUTO_CAP) {
            p->capped = 1;
            break;
        }
        /* Lazy greedy (Minoux 1978): the scores only fall as runs are added, so a stale score is an
         * upper bound and only the leader needs rescoring. */
        size_t best = 0;
        for (;;) {
            best = 0;
            for (size_t k = 1; k < st.n_cand; k++)
                if (bound[k] > bound[best]) best = k;
            if (fresh[best]) break;
            if ((rc = score_candidate(&st, best, k_rep, &part[best], &bound[best])) != COV_OK)
                goto fail;
            fresh[best] = 1;
        }
        if (part[best] <= 0.0 && pw_aug_n_active(st.aug) > 0) {
            /* Every candidate's score is bounded by the leader's, which is 0: no run the domains
             * allow moves the claims still short. */
            for (size_t j = 0; j < p->n; j++) {
                cov_plan_claim *it = &p->items[j];
                if (it->mode != COV_PLAN_STEERED || !pw_aug_active(st.aug, st.w[it->claim].target))
                    continue;
                it->unreachable = budget < 0;
                pw_aug_set_need(st.aug, st.w[it->claim].target, INFINITY);
            }
            for (size_t k = 0; k < st.n_cand; k++) bound[k] = INFINITY, fresh[k] = 0;
            continue;
        }
        if (bound[best] == -INFINITY) break;   /* every candidate left is excluded */
        double run_cost = st.cand_cost != NULL ? st.cand_cost[best] : 1.0;
        if (p->total_cost + k_rep * run_cost > cost_budget) break;
        int was_active = pw_aug_n_active(st.aug) > 0;
        if ((rc = commit_candidate(&st, p, &row_cap, best, k_rep, err)) != COV_OK) goto fail;
        for (size_t k = 0; k < st.n_cand; k++) fresh[k] = 0;
        if (pw_aug_n_active(st.aug) == 0 && was_active)
            for (size_t k = 0; k < st.n_cand; k++) bound[k] = INFINITY;
        if ((double)p->n_configs >= PLAN_NEED_REFRESH * (double)(last_refresh + 4)) {
            last_refresh = p->n_configs;
            if (st.nz != NULL) {
                if ((rc = cov_plan_noise_refresh(st.nz)) != COV_OK) goto fail;
                sync_scales(&st);
            }
            refresh_needs(&st, p, (double)p->n_configs * k_rep, 1);
            for (size_t k = 0; k < st.n_cand; k++) bound[k] = INFINITY;
        }
        /* Balance makes claim scores rise as well as fall (a run on the scarce side of a bool gains
         * as the other side fills), so stale scores are not strict bounds while a claim is short:
         * every candidate is rescored after each run when that costs little (exact greedy), and
         * lazily otherwise. Coverage scores alone only fall, so lazy evaluation is exact then. */
        if (pw_aug_n_active(st.aug) > 0 &&
            (double)st.n_cand * (pw_aug_score_cost(st.aug) + cov_plan_cover_cost(st.cover)) <=
                PLAN_FULL_FLOPS)
            for (size_t k = 0; k < st.n_cand; k++) {
                if ((rc = score_candidate(&st, k, k_rep, &part[k], &bound[k])) != COV_OK) goto fail;
                fresh[k] = 1;
            }
    }
    if (budget < 0 && p->capped)
        for (size_t j = 0; j < p->n; j++)
            if (p->items[j].mode == COV_PLAN_STEERED &&
                pw_aug_active(st.aug, st.w[p->items[j].claim].target))
                p->items[j].unreachable = 1;

    /* A first round's learning share: the candidates farthest from every run and in the emptiest
     * cells, where the noise, bend and cost models know least (outside the range included). */
    for (size_t e = 0; x != NULL && e < x->explore && st.n_cand > 0; e++) {
        size_t far = 0;
        double fb = -1.0;
        for (size_t k = 0; k < st.n_cand; k++) {
            double b = cov_plan_cover_bonus(st.cover, k);
            if (b > fb) fb = b, far = k;
        }
        if ((rc = commit_candidate(&st, p, &row_cap, far, k_rep, err)) != COV_OK) goto fail;
        p->n_explore++;
    }
    if (st.nz != NULL) {
        if ((rc = cov_plan_noise_refresh(st.nz)) != COV_OK) goto fail;
        sync_scales(&st);
    }
    double added = (double)p->n_configs * k_rep;
    for (size_t j = 0; j < p->n; j++) {
        cov_plan_claim *it = &p->items[j];
        const claim_work *w = &st.w[it->claim];
        it->n_now = w->n_base;
        it->n_after = w->n_base + added;
        if (it->mode == COV_PLAN_FIXED) {
            /* Its runs now are the assessment's; more of them would not make it testable. */
            it->n_now = (double)a->items[it->claim].n;
            it->n_after = NAN;
        }
        if ((rc = predict(&st, it, added, &it->power_after)) != COV_OK) goto fail;
        it->reaches = it->power_after >= opt->target;
    }
    p->seeds = malloc((p->n_configs * (size_t)replicates + 1) * sizeof *p->seeds);
    if (p->seeds == NULL) {
        rc = COV_ENOMEM;   /* rc holds COV_OK here: say what failed */
        goto fail;
    }
    if (make_seeds(p, st.d, seed)) {
        rc = COV_ENOMEM;
        goto fail;
    }
    *out = p;
    p = NULL;
    rc = COV_OK;
fail:
    if (rc == COV_ENOMEM) cov_fail(err, COV_ENOMEM, "", "out of memory while planning");
    else if (rc == COV_ENUMERIC && err != NULL && err->msg[0] == '\0')
        cov_fail(err, COV_ENUMERIC, "", "a numeric routine failed while planning");
    free(bound);
    free(part);
    free(fresh);
    state_free(&st);
    cov_plan_free(p);
    return rc;
}
