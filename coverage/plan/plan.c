/* The next runs: greedy augmentation over the claims' designs (the claims' part: plan_claims.c).
 * See LICENSE. */
#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/plan/plan.h"

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
            pw_aug_set_need(st->aug, w->target, cov_plan_need_at(st->dc, w, w->n_base + added));
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
        cov_plan_code_row(g, &st->L, vals, rows + n * nc);
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
    if ((rc = cov_plan_setup_claims(&st, a, p)) != COV_OK) goto fail;
    if ((rc = plan_candidates(&st, seed)) != COV_OK) goto fail;
    rc = COV_ENOMEM;
    p->n_candidates = st.n_cand;
    st.cand_rows = malloc((st.n_cand * st.L.n_cols + 1) * sizeof *st.cand_rows);
    bound = malloc((st.n_cand + 1) * sizeof *bound);
    part = malloc((st.n_cand + 1) * sizeof *part);
    fresh = malloc(st.n_cand + 1);
    if (st.cand_rows == NULL || bound == NULL || part == NULL || fresh == NULL) goto fail;
    for (size_t k = 0; k < st.n_cand; k++)
        cov_plan_code_row(g, &st.L, st.cand_vals + k * g->n_vars, st.cand_rows + k * st.L.n_cols);
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
                rc = cov_plan_predict(&st, it, (double)planned * k_rep, &pw);
                if (rc != COV_OK) goto fail;
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
        if ((rc = cov_plan_predict(&st, it, added, &it->power_after)) != COV_OK) goto fail;
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
