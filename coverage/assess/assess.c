/* Per-claim assessment: the adjusted regression, noise checks, power, MDE and runs needed.
 * See LICENSE. */
#include <assert.h>
#include <math.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_rng.h>

#include "coverage/assess/assess.h"

/* One value in at least this share of runs: a mostly-constant outcome, whose residual SD says
 * little about the noise of the rest (a count that is zero in most runs). */
#define COV_MODE_SHARE 0.5
/* Excess kurtosis beyond this: var(s^2) is at least 2.5 times its normal-theory value at large n,
 * and at n = 30 the normal-noise estimate exceeds it with probability well under 1%. */
#define COV_KURTOSIS_FLAG 3.0
/* Strong heteroscedasticity: Koenker's Breusch-Pagan test significant at this level and the
 * residual variance differing by at least this factor between the outer thirds of fitted values
 * (the test alone flags trivial differences in large archives). */
#define COV_HETERO_P 1e-3
#define COV_HETERO_RATIO 3.0
/* Fewer residual degrees of freedom than this: sigma's 95% interval spans a factor above 2. */
#define COV_MIN_DF 10
/* A lack-of-fit test significant at this level is reported in the noise note. */
#define COV_LOF_P 0.01



/* Set when a note could not be stored: cov_assess then fails with COV_ENOMEM rather than hand
 * out an assessment that lacks a caution. One per thread: a claim is assessed on one thread,
 * which clears it before the claim and reads it after. */
static _Thread_local int note_lost;

/* Append printf-style text to a heap string, separated by "; ". Out of memory keeps the old text
 * and sets note_lost. */
static void note_add(char **s, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void note_add(char **s, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    if (cov_text_vappend(s, "; ", fmt, ap) != COV_OK) note_lost = 1;
    va_end(ap);
}

/* A caution about the claim's figures: kept in a->caution and in a->reason, so that every output
 * that shows the reason (the terminal, the report) shows it too. */
static void add_caution(cov_assessment *a, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void add_caution(cov_assessment *a, const char *fmt, ...)
{
    char buf[512];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(buf, sizeof buf, fmt, ap);
    va_end(ap);
    note_add(&a->caution, "%s", buf);
    note_add(&a->reason, "%s", buf);
}

/* The effect of interest in raw outcome units per unit of treatment: SD units times the outcome's
 * SD, then counted per unit of the treatment (README.md, "Effects per a step or over the range").
 * a->effect_written_raw keeps it per the step or range it was written over. */
static double effect_per_unit(const cov_graph *g, const cov_claim *c, double sd_outcome,
                              cov_assessment *a)
{
    double raw = c->effect.unit == COV_UNIT_SD ? c->effect.value * sd_outcome : c->effect.value;
    a->effect_written_raw = raw;
    return raw * cov_amount_per_unit_factor(&c->effect, &g->vars[c->treatment]);
}

static char *text_dup(const char *s)
{
    char *c = malloc(strlen(s) + 1);
    if (c) strcpy(c, s);
    return c;
}

/* The spread a treatment would have if the campaign covered its declared domain evenly and
 * independently of the rest: planning before any run exists. NAN when undeclared. */
static double planned_spread(const cov_var *v)
{
    if (v->type == COV_BOOL) return 0.5;
    if (v->role != COV_INPUT || !isfinite(v->lo) || !isfinite(v->hi)) return NAN;
    double w = v->hi - v->lo;
    if (v->type == COV_INTEGER) return sqrt(((w + 1) * (w + 1) - 1) / 12.0);  /* discrete uniform */
    return w / sqrt(12.0);   /* continuous uniform */
}

static const char *test_word(const pw_design *d)
{
    if (d->test == PW_TEST_TREND_T) return "trend power";
    if (d->test == PW_TEST_BASIS_F) return "turning power";
    return d->test == PW_TEST_TOST ? "equivalence power" : "power";
}

/* Verdict and its one-line reason. */
static void decide(cov_assessment *a, const cov_claim *c, double target)
{
    if (a->power >= target) {
        a->verdict = COV_AMPLE;
        return;
    }
    a->verdict = COV_UNDERPOWERED;
    char runs[160];
    if (isfinite(a->runs_needed))
        snprintf(runs, sizeof runs, "needs %.0f runs in all, %.0f more", a->runs_needed,
                 a->runs_needed > (double)a->n ? a->runs_needed - (double)a->n : 0.0);
    else
        snprintf(runs, sizeof runs, "no number of runs like these reaches %.2f", target);
    note_add(&a->reason, "%s %.2f at %s %.4g (raw); %s", test_word(&a->design), a->power,
             c->kind == COV_CLAIM_ABSENCE ? "margin" : "effect", a->effect_raw, runs);
}

/* Before any usable run: plan from the declared noise SD and the declared treatment domain. */
static int assess_planning(const cov_graph *g, const cov_claim *c, const assess_layout *lay,
                           const cov_power_options *opt, double alpha, cov_assessment *a)
{
    const cov_var *y = &g->vars[c->outcome], *x = &g->vars[c->treatment];
    a->noise_flag = 1;
    a->noise_reasons |= COV_NOISE_OTHER;
    double spread = planned_spread(x);
    if (!(y->noise_sd > 0) || (x->type != COV_LEVELS && !(spread > 0))) {
        note_add(&a->noise_note, "no noise estimate from %zu runs", a->n);
        a->verdict = COV_UNDERPOWERED;
        note_add(&a->reason, "too few complete runs (%zu) to estimate the noise, and %s", a->n,
                 !(y->noise_sd > 0) ? "the graph declares no noise SD for the outcome"
                                    : "the treatment has no declared domain to plan from");
        return COV_OK;
    }
    note_add(&a->noise_note, "no noise estimate from %zu runs: sigma is the declared noise SD",
             a->n);
    a->sigma = y->noise_sd;
    a->effect_raw = effect_per_unit(g, c, y->noise_sd, a);
    pw_design *d = &a->design;
    memset(d, 0, sizeof *d);
    d->alpha = alpha;
    d->target = opt->target;
    d->sides = cov_claim_sides(opt, c);
    d->effect = a->effect_raw;
    d->sigma = a->sigma;
    d->n = (double)a->n;
    d->n_params = 1.0 + (double)(lay->k - lay->t);
    d->ncp_per_run = NAN;
    d->test = cov_claim_test(g, c, 0, 0);
    if (d->test == PW_TEST_BASIS_F) {
        /* Expected to turn: the basis F over the declared range (turning.c). */
        size_t nv = 0;
        int trc = cov_turning_planned(x, d, &a->effect_raw, &nv);
        if (trc == COV_ENOMEM) return trc;
        if (trc != COV_OK) {
            a->verdict = COV_BLIND;
            if (nv == 0)
                note_add(&a->reason, "too few complete runs (%zu) to fit the turn of '%s', and it "
                         "has no declared range to plan from", a->n, x->name);
            else
                note_add(&a->reason, "untestable: '%s' is expected to turn, which needs at least "
                         "%d distinct values; its declared range holds %zu", x->name,
                         PW_TURN_DEGREE_MIN + 2, nv);
            return COV_OK;
        }
        a->turn_lo = x->lo;
        a->turn_hi = x->hi;
    } else if (x->type == COV_LEVELS && x->ordered && c->shape != COV_SHAPE_TURNING) {
        /* Balanced groups: the trend contrast's equivalent spread is the SD of the positions
         * (shape.c: S_xx / sqrt(n c' M^-1 c) with M = (n / L) I). */
        double mean = 0, var = 0;
        for (size_t l = 0; l < x->n_levels; l++) mean += x->positions[l] / (double)x->n_levels;
        for (size_t l = 0; l < x->n_levels; l++)
            var += pow(x->positions[l] - mean, 2) / (double)x->n_levels;
        d->n_levels = (double)x->n_levels;
        d->sd_x_resid = sqrt(var);
        a->trend = 1;
    } else if (x->type == COV_LEVELS) {
        d->n_levels = (double)x->n_levels;
        /* Balanced groups: a pairwise contrast has variance 2 L sigma^2 / n. */
        d->sd_x_resid = 1.0 / sqrt(2.0 * d->n_levels);
    } else {
        d->sd_x_resid = spread;
    }
    a->sd_treatment_resid = d->sd_x_resid;
    a->has_design = 1;
    int rc = cov_size_claim(a, d, NAN, NAN);
    if (rc == PW_ENOMEM) return COV_ENOMEM;
    if (rc != PW_OK) {
        a->verdict = COV_UNDERPOWERED;
        note_add(&a->reason, "the power computation failed (%s)", pw_strerror(rc));
        return COV_OK;
    }
    a->power_lo = a->power_hi = a->power;
    decide(a, c, opt->target);
    if (a->verdict == COV_UNDERPOWERED) {
        free(a->reason);
        a->reason = NULL;
        note_add(&a->reason, "too few complete runs (%zu) to estimate the noise; planning from "
                 "the declared noise SD %g: needs %.0f runs in all", a->n, y->noise_sd,
                 a->runs_needed);
    }
    return COV_OK;
}

/* A claim whose outcome given the treatment and adjustment set was fitted: everything else. */
static int assess_fitted(assess_ctx *x, const cov_claim *c, const assess_layout *lay,
                         const pw_moments *m, const size_t *idx, const cov_data *d,
                         const size_t *rows, size_t n_rows, int fast,
                         const cov_seed_fit *seeds, const cov_power_options *opt, double alpha,
                         cov_assessment *a)
{
    const cov_graph *g = x->g;
    const cov_var *yv = &g->vars[c->outcome], *xv = &g->vars[c->treatment];
    size_t k = lay->k, t = lay->t;
    pw_xfit *fit = NULL, *bfit = NULL;
    double *yy, *fitted, *keys, *row = NULL, *Xd = NULL, *contrast = NULL;
    size_t wi_c = 0, wj_c = 1;
    int rc = COV_ENOMEM;
    if (pw_xfit_solve(m, idx, k, t, &fit) != PW_OK) goto fail;
    double n = m->n;

    /* An outcome or treatment with one value in every run the claim uses: no number of runs
     * like these can test it, so it is untestable on these runs, never ample and never thin. */
    int x_constant = 1;
    for (size_t a0 = k - t; a0 < k; a0++)
        if (!cov_assess_moments_constant(m, idx[a0])) x_constant = 0;
    int y_constant = cov_assess_moments_constant(m, idx[k]);
    if ((y_constant || x_constant) && n_rows > 0) {
        /* A treatment that never varied is named first: an outcome that did not move while
         * nothing moved it says nothing, and new runs can set an input treatment (the plan does). */
        size_t v = x_constant ? c->treatment : c->outcome;
        char val[160];
        a->fixed_var = v;
        a->fixed_value = d->col[v][rows[0]];
        cov_value_text(&g->vars[v], a->fixed_value, val, sizeof val);
        a->verdict = COV_BLIND;
        note_add(&a->reason, "untestable on these runs: %s '%s' never varies: it is %s in all "
                 "%zu runs the claim uses%s", x_constant ? "treatment" : "outcome",
                 g->vars[v].name, val, a->n,
                 y_constant && x_constant ? ", and neither does the outcome" : "");
        rc = COV_OK;
        goto fail;
    }
    /* The treatment must vary apart from the adjustment set. */
    if (fit->t_rank == 0) {
        int constant = x_constant;
        a->verdict = COV_BLIND;
        if (constant)
            note_add(&a->reason, "treatment '%s' never varies in the %zu complete runs", xv->name,
                     a->n);
        else
            note_add(&a->reason, "treatment '%s' is fixed by the adjustment set in the %zu "
                     "complete runs", xv->name, a->n);
        rc = COV_OK;
        goto fail;
    }
    if (!(fit->df >= 1)) {
        pw_xfit_free(fit);
        return assess_planning(g, c, lay, opt, alpha, a);
    }
    /* Seed blocks (seedblock.c): measured whenever runs share seeds; when material, a one-column
     * coefficient or equivalence test takes its figures from the blocked fit tf. */
    if (cov_seed_measure(seeds, m, idx, k, t, fit, &a->seed, &bfit) != COV_OK) goto fail;
    if (bfit != NULL && xv->type != COV_LEVELS) {
        pw_design e = {.test = cov_claim_test(g, c, 1, fit->t_rank), .alpha = alpha,
                       .sides = cov_claim_sides(opt, c), .target = opt->target, .n = n,
                       .ncp_per_run = NAN};
        e.effect = effect_per_unit(g, c, n > 1 ? sqrt(pw_moments_at(m, idx[k], idx[k]) / (n - 1))
                                                : NAN, a);
        a->seed_blocks_used = cov_seed_choose(&a->seed, &e, fit, bfit, &a->power_unblocked,
                                              &a->design_unblocked);
    }
    const pw_xfit *tf = a->seed_blocks_used ? bfit : fit;
    const pw_moments *tm = a->seed_blocks_used ? seeds->m : m;
    a->df = tf->df;
    a->sigma = tf->sigma;
    double syy = pw_moments_at(m, idx[k], idx[k]);
    a->sd_outcome = n > 1 ? sqrt(syy / (n - 1)) : NAN;
    a->effect_raw = effect_per_unit(g, c, a->sd_outcome, a);

    pw_design *dz = &a->design;
    memset(dz, 0, sizeof *dz);
    dz->alpha = alpha;
    dz->target = opt->target;
    dz->sides = cov_claim_sides(opt, c);
    dz->sigma = a->sigma;
    dz->n = n;
    dz->n_params = a->seed_blocks_used ? cov_seed_n_params(tf, &a->seed)
                                       : 1.0 + (double)(tf->rank - tf->t_rank);
    dz->ncp_per_run = NAN;
    size_t tr = fit->t_rank;
    if (tr == 1) {
        size_t col = 0;
        for (size_t a0 = k - t; a0 < k; a0++)
            if (tf->kept[a0]) col = a0;
        double info = tf->treat_info[0];
        a->sd_treatment_resid = pw_xfit_sd_treatment(tf);
        a->vif = pw_moments_at(tm, idx[col], idx[col]) / info;
        a->estimate = tf->coef[col];
        a->se = tf->se[col];
        dz->sd_x_resid = a->sd_treatment_resid;
    } else {
        double q_min, v_max;
        size_t wi = 0, wj = 1;
        if (pw_level_pattern(fit->treat_info, tr, &q_min, &v_max, &wi, &wj) != PW_OK) {
            rc = COV_ENUMERIC;
            goto fail;
        }
        dz->n_levels = (double)(tr + 1);
        dz->ncp_per_run = q_min / n;
        /* The least favourable pairwise contrast as an equivalent spread: its SE is
         * sigma / (sd sqrt(n)). */
        dz->sd_x_resid = 1.0 / sqrt(n * v_max);
        a->sd_treatment_resid = dz->sd_x_resid;
        a->estimate = (wj > 0 ? fit->treat_coef[wj - 1] : 0) - (wi > 0 ? fit->treat_coef[wi - 1] : 0);
        wi_c = wi;
        wj_c = wj;
        a->se = a->sigma * sqrt(v_max);
    }
    int bool_outcome = yv->type == COV_BOOL || (yv->type == COV_LEVELS && yv->n_levels == 2);
    dz->test = cov_claim_test(g, c, 1, tr);
    if (dz->test == PW_TEST_TWO_PROP) {
        dz->p_base = m->mean[idx[k]];
        dz->share_treated = m->mean[idx[k - 1]];
    }
    if (tr >= 2 && dz->test != PW_TEST_LEVELS_F) dz->n_levels = (double)(tr + 1);
    if (tr < 2) dz->n_levels = 0;
    /* A level-set treatment: levels never run are named, never dropped silently; an ordered one
     * is tested by its linear trend (one df), with the level set's F beside it (shape.c). */
    cov_trend trd;
    if (xv->type == COV_LEVELS) {
        if (cov_trend_compute(xv, fit, m, idx, k, t, &trd) != COV_OK) {
            rc = COV_ENOMEM;
            goto fail;
        }
        if (trd.unrun)
            add_caution(a, "declared levels of '%s' never run: %s (the test covers the %zu "
                        "levels run)", xv->name, trd.unrun, trd.n_present);
        if (xv->ordered) a->distinct = trd.n_present;
        if (trd.ok && c->shape != COV_SHAPE_TURNING &&
            (dz->test == PW_TEST_LEVELS_F || dz->test == PW_TEST_COEF_T ||
             dz->test == PW_TEST_TOST)) {
            a->trend = 1;
            dz->test = c->kind == COV_CLAIM_ABSENCE ? PW_TEST_TOST : PW_TEST_TREND_T;
            dz->n_levels = (double)trd.n_present;
            dz->ncp_per_run = NAN;
            dz->sd_x_resid = a->sd_treatment_resid = trd.sd_eq;
            a->estimate = trd.slope;
            a->se = a->sigma * trd.slope_se_factor;
            a->omnibus_df1 = (double)fit->t_rank;
            if (a->sigma > 0) {
                a->omnibus_f = trd.ss_levels / (a->omnibus_df1 * a->sigma * a->sigma);
                a->omnibus_p = gsl_cdf_fdist_Q(a->omnibus_f, a->omnibus_df1, a->df);
            }
            if (fit->t_rank >= 2 && a->sigma > 0) {
                /* Departure from the straight line: the level set's sum of squares less the
                 * trend's, on t_rank - 1 df, against the residual mean square. */
                double dev = trd.ss_levels - trd.ss_trend;
                a->shape_df1 = (double)fit->t_rank - 1.0;
                a->shape_df2 = a->df;
                a->shape_f = (dev > 0 ? dev : 0) / a->shape_df1 / (a->sigma * a->sigma);
                a->shape_p = gsl_cdf_fdist_Q(a->shape_f, a->shape_df1, a->shape_df2);
            }
        }
        double q_lin = trd.q_linear;
        cov_trend_free(&trd);
        if (a->trend && xv->ordered && trd.n_present < 3)
            add_caution(a, "only %zu levels of '%s' were run: the shape of its effect (straight, "
                        "saturating, turning) cannot be checked; the figures assume a straight "
                        "line", trd.n_present, xv->name);
        a->omnibus_power = q_lin;   /* the noncentrality per (effect / sigma)^2, until sized */
    }
    if (dz->test == PW_TEST_BASIS_F) {
        /* A numeric treatment expected to turn: the omnibus F over its basis (turning.c). */
        if ((rc = cov_turning_fitted(g, c, x->d, a, dz)) != COV_OK || a->verdict == COV_BLIND)
            goto fail;
    }
    if (bool_outcome && dz->test != PW_TEST_TWO_PROP)
        note_add(&a->noise_note, "bool outcome: linear-probability %s, whose residuals are "
                 "heteroscedastic by construction", dz->test == PW_TEST_TOST ? "equivalence test"
                                                                              : "test");
    if (yv->type == COV_LEVELS && yv->n_levels > 2) {
        note_add(&a->noise_note, "level-set outcome analysed by its level index");
        a->noise_flag = 1;
        a->noise_reasons |= COV_NOISE_OTHER;
    }

    /* Residual diagnostics on the diagnostic rows. */
    size_t mrows = n_rows, kk = lay->n_terms - 1;
    row = malloc((k + 1) * sizeof *row);
    if (row == NULL || cov_assess_ctx_scratch(x, mrows, kk) != COV_OK) {
        rc = COV_ENOMEM;
        goto fail;
    }
    yy = x->ws_y;
    fitted = x->ws_fit;
    keys = x->ws_keys;
    for (size_t r = 0; r < mrows; r++) {
        size_t i = rows[r];
        cov_assess_fill_row(d, lay, i, row);
        double f = fit->intercept;
        for (size_t a0 = 0; a0 < k; a0++) f += fit->coef[a0] * row[a0];
        fitted[r] = f;
        yy[r] = row[k];
        for (size_t j = 0; j < kk; j++) keys[r * kk + j] = d->col[lay->terms[j].var][i];
    }
    a->n_diag = mrows;
    pw_resid_diag rd;
    pw_lof lof = {0, 0, 0, NAN, NAN, NAN, 0};
    double mode_share = NAN;
    int drc = pw_resid_diagnose(yy, fitted, mrows, &rd), lrc = PW_EFEW, mrc = PW_OK;
    /* Replicates need every key variable to repeat a value; on the fast path a variable whose
     * sampled values are all distinct rules them out without grouping the rows. */
    int may_repeat = 1;
    for (size_t j = 0; fast && j < kk; j++)
        if (x->mode_share[lay->terms[j].var] * (double)mrows <= 1.0) may_repeat = 0;
    if (may_repeat)
        lrc = pw_lack_of_fit(keys, kk, yy, fitted, mrows, 1.0 + (double)fit->rank, &lof);
    if (fast && x->index_col[c->outcome] == SIZE_MAX) mode_share = x->mode_share[c->outcome];
    else mrc = pw_mode_share(yy, mrows, &mode_share);
    if (drc == PW_ENOMEM || lrc == PW_ENOMEM || mrc == PW_ENOMEM) {
        rc = COV_ENOMEM;
        goto fail;
    }
    a->excess_kurtosis = rd.excess_kurtosis;
    if (xv->type == COV_REAL || xv->type == COV_INTEGER) {
        /* The shape of a numeric treatment's effect: fewer than three values cannot show it;
         * with three or more, the straight line's lack of fit (shape.c). */
        double *xs = malloc((mrows ? mrows : 1) * sizeof *xs), *es = malloc((mrows ? mrows : 1) *
                                                                           sizeof *es);
        cov_shape_fit sf;
        int src0 = xs && es ? COV_OK : COV_ENOMEM;
        for (size_t r = 0; src0 == COV_OK && r < mrows; r++) {
            xs[r] = d->col[c->treatment][rows[r]];
            es[r] = yy[r] - fitted[r];
        }
        int pure = lrc == PW_OK && isfinite(lof.sigma_pure);
        if (src0 == COV_OK)
            src0 = cov_shape_numeric_cached(fast ? x->shape : NULL, c->treatment, xs, es, mrows,
                                            1.0 + (double)fit->rank, pure ? lof.sigma_pure : NAN,
                                            pure ? lof.df_pe : 0, &sf);
        free(xs);
        free(es);
        if (src0 != COV_OK) {
            rc = COV_ENOMEM;
            goto fail;
        }
        if (dz->test != PW_TEST_BASIS_F) a->distinct = sf.distinct;   /* else: all rows' */
        a->shape_f = sf.f;
        a->shape_p = sf.p;
        a->shape_df1 = sf.df1;
        a->shape_df2 = sf.df2;
        a->shape_pure = sf.pure;
        if (sf.distinct < 3 && dz->test != PW_TEST_BASIS_F)
            add_caution(a, "'%s' takes only %zu distinct value%s in these runs: the shape of its "
                        "effect (straight, saturating, turning) cannot be checked; the figures "
                        "assume a straight line", xv->name, sf.distinct,
                        sf.distinct == 1 ? "" : "s");
    }
    if (isfinite(a->shape_p) && a->shape_p < COV_LOF_P && dz->test != PW_TEST_BASIS_F)
        add_caution(a, "the effect of '%s' departs from a straight line: lack of fit F = %.3g on "
                    "%.0f and %.0f df, p = %.2g%s", xv->name, a->shape_f, a->shape_df1,
                    a->shape_df2, a->shape_p, a->shape_pure ? " (against pure error)" : "");
    if (lrc == PW_OK && isfinite(lof.sigma_pure)) {
        a->has_pure_error = 1;
        a->sigma_pure = lof.sigma_pure;
        a->lof_f = lof.f;
        a->lof_p = lof.p;
        /* Lack of fit is reported in its own right: it says the linear model misses structure,
         * not that the power figure is off. */
        if (lof.p < COV_LOF_P)
            note_add(&a->fit_note, "lack of fit: F = %.3g, p = %.2g against pure error from "
                     "%zu repeated configuration%s (of %zu distinct in %zu runs); sigma includes "
                     "structure the linear model misses", lof.f, lof.p, lof.repeated,
                     lof.repeated == 1 ? "" : "s", lof.groups, mrows);
    }
    if (mode_share >= COV_MODE_SHARE)
        note_add(&a->noise_note, "one value in %.0f%% of runs", 100 * mode_share);
    if (rd.excess_kurtosis > COV_KURTOSIS_FLAG)
        note_add(&a->noise_note, "heavy-tailed residuals (excess kurtosis %.3g)",
                 rd.excess_kurtosis);
    if (rd.bp_p < COV_HETERO_P && rd.third_ratio >= COV_HETERO_RATIO)
        note_add(&a->noise_note, "residual spread changes with the fitted value (Koenker-Breusch-"
                 "Pagan p = %.2g; variance ratio %.3g between outer thirds)", rd.bp_p,
                 rd.third_ratio);
    if (a->df < COV_MIN_DF) {
        a->noise_flag = 1;
        a->noise_reasons |= COV_NOISE_FEW_DF;
        note_add(&a->noise_note, "only %.0f residual degrees of freedom: sigma is poorly known",
                 a->df);
    }

    if (!(a->effect_raw > 0)) {
        a->verdict = COV_UNDERPOWERED;
        note_add(&a->reason, "the outcome never varies, so an effect in SD units is undefined");
        rc = COV_OK;
        goto fail;
    }
    dz->effect = a->effect_raw;
    if (!(a->sigma > 0)) {
        /* The outcome is an exact function of the regressors: any effect shows at once. */
        a->noise_flag = 1;
        a->noise_reasons |= COV_NOISE_OTHER;
        note_add(&a->noise_note, "the outcome is fitted exactly: no noise left");
        a->power = a->power_lo = a->power_hi = 1;
        a->mde = a->mde_lo = a->mde_hi = 0;
        a->runs_needed = (double)a->n;
        a->verdict = COV_AMPLE;
        a->has_design = 0;
        rc = COV_OK;
        goto fail;
    }
    a->has_design = 1;
    /* The claim's design rows for the HC3 test and resampling: the intercept and the kept
     * predictors of every diagnostic row. */
    size_t p = 1 + fit->rank;
    Xd = malloc(mrows * p * sizeof *Xd);
    contrast = calloc(p, sizeof *contrast);
    if (Xd == NULL || contrast == NULL) {
        rc = COV_ENOMEM;
        goto fail;
    }
    for (size_t r = 0; r < mrows; r++) {
        cov_assess_fill_row(d, lay, rows[r], row);
        double *xr = Xd + r * p;
        size_t q = 0;
        xr[q++] = 1.0;
        for (size_t a0 = 0; a0 < k; a0++)
            if (fit->kept[a0]) xr[q++] = row[a0];
    }
    {
        /* Positions of the kept treatment columns in Xd: the last t_rank. */
        size_t first = p - fit->t_rank;
        if (fit->t_rank == 1) contrast[first] = 1.0;
        else {
            if (wj_c > 0) contrast[first + wj_c - 1] += 1.0;
            if (wi_c > 0) contrast[first + wi_c - 1] -= 1.0;
        }
    }
    cov_claim_rows cr = {Xd, yy, mrows, p, contrast, rd.excess_kurtosis, rd.bp_p,
                         rd.third_ratio, mode_share, bool_outcome, fit->t_rank == 1};
    /* A blocked test (seedblock.c) is the classic t or TOST of the blocked model by formula: the
     * design rows here are the model's without the blocks, so neither HC3 nor the bootstrap would
     * be of the blocked test; and HC standard errors of a fixed-effects (within) regression are
     * inconsistent when each block holds few runs (Stock & Watson 2008, Econometrica 76:155), the
     * common case of a few configurations per seed. Heteroscedasticity still raises the noise
     * flag below (classic_hetero). */
    cov_power_options nopt = *opt;
    if (a->seed_blocks_used) {
        nopt.test = COV_TEST_CLASSIC;
        nopt.power_by = COV_POWER_BY_FORMULA;
    }
    int src = cov_assess_noise(&cr, &nopt, a->claim, a, dz);
    if (a->seed_blocks_used) {
        a->se_robust = NAN;
        if (opt->test == COV_TEST_ROBUST || opt->power_by == COV_POWER_BY_RESAMPLING)
            note_add(&a->noise_note, "seed blocks: the classic test of the blocked model, power "
                     "by formula (HC3 and resampling are not formed with the blocks)");
    }
    if (src == PW_ENOMEM) {
        rc = COV_ENOMEM;
        goto fail;
    }
    if (src != PW_OK) {
        /* One claim's numerics failing should not hide every other claim's figures. */
        a->verdict = COV_UNDERPOWERED;
        note_add(&a->reason, "the power computation failed (%s), so the claim cannot be shown "
                 "ample", pw_strerror(src));
        rc = COV_OK;
        goto fail;
    }
    if (a->trend && a->omnibus_power > 0) {
        /* The level set's F test at the same straight-line effect, for comparison. */
        pw_design om = *dz;
        om.test = PW_TEST_LEVELS_F;
        om.n_levels = a->omnibus_df1 + 1.0;
        om.ncp_per_run = a->omnibus_power / n;
        double p_om = NAN;
        a->omnibus_power = pw_power(&om, &p_om) == PW_OK ? p_om : NAN;
    } else {
        a->omnibus_power = NAN;
    }
    /* Invariants of cov_size_claim and cov_assess_noise: a probability, inside its interval (power falls as sigma grows;
     * 1e-9 allows for the root searches' rounding). */
    assert(!(a->power < 0) && !(a->power > 1));
    assert(isnan(a->power_lo) || (a->power_lo <= a->power + 1e-9 && a->power <= a->power_hi + 1e-9));
    decide(a, c, opt->target);
    if (a->seed_blocks_used) {
        char note[640];
        cov_seed_note(a, note, sizeof note);
        note_add(&a->reason, "%s", note);
    }
    rc = COV_OK;
fail:
    pw_xfit_free(fit);
    pw_xfit_free(bfit);
    free(row);
    free(Xd);
    free(contrast);
    return rc;
}

static void assessment_init(cov_assessment *a, size_t claim)
{
    memset(a, 0, sizeof *a);
    a->claim = claim;
    a->df = a->estimate = a->se = a->sigma = a->sd_treatment_resid = a->vif = NAN;
    a->effect_raw = a->alpha = a->power = a->power_lo = a->power_hi = NAN;
    a->mde = a->mde_lo = a->mde_hi = a->runs_needed = NAN;
    a->sigma_pure = a->lof_f = a->lof_p = NAN;
    a->sd_outcome = a->excess_kurtosis = NAN;
    a->effect_written_raw = a->omnibus_f = a->omnibus_p = a->omnibus_df1 = NAN;
    a->omnibus_power = a->shape_f = a->shape_p = a->shape_df1 = a->shape_df2 = NAN;
    a->fixed_var = SIZE_MAX;
    a->fixed_value = NAN;
    a->turn_lo = a->turn_hi = NAN;
    a->power_formula = a->mc_se = a->se_robust = a->mode_share = a->leave_out_share = NAN;
    a->seed.share = a->seed.var_drop = a->seed.f = a->seed.df1 = a->seed.df2 = NAN;
    a->seed.p = a->power_unblocked = NAN;
}

void cov_value_text(const cov_var *v, double x, char *buf, size_t size)
{
    if (isnan(x)) snprintf(buf, size, "missing");
    else if (v->type == COV_LEVELS && x >= 0 && (size_t)x < v->n_levels)
        snprintf(buf, size, "%s", v->levels[(size_t)x]);
    else if (v->type == COV_BOOL) snprintf(buf, size, "%s", x != 0 ? "true" : "false");
    else snprintf(buf, size, "%.10g", x);
}

/* A claim's complete rows for its seed blocks (seedblock.c). */
typedef struct {
    const cov_data *d;
    const assess_layout *lay;
} claim_rows;

static int claim_row(void *ctx, size_t i, double *row)
{
    const claim_rows *cr = ctx;
    if (!cov_assess_row_complete(cr->d, cr->lay, i)) return 0;
    cov_assess_fill_row(cr->d, cr->lay, i, row);
    return 1;
}

/* One claim: pick the fast path or accumulate its own complete cases, then fit and size it. */
static int assess_claim(assess_ctx *x, const cov_claim *c, const cov_power_options *opt,
                        double alpha, cov_assessment *a)
{
    const cov_graph *g = x->g;
    const cov_data *d = x->d;
    assess_layout lay = {0};
    size_t *idx = NULL, *rows = NULL;
    pw_moments *local = NULL;
    double *row = NULL;
    gsl_rng *r = NULL;
    cov_seed_fit sf = {NULL, 0, 0, 0};
    int rc = cov_assess_build_layout(g, c, &lay);
    if (rc != COV_OK) goto fail;
    for (size_t j = 0; j < lay.n_terms; j++) {
        if (!cov_assess_is_recorded(d, lay.terms[j].var)) {
            a->verdict = COV_BLIND;
            note_add(&a->reason, "'%s' is not in the archive", g->vars[lay.terms[j].var].name);
            goto fail;
        }
    }
    rc = COV_ENOMEM;
    idx = malloc((lay.k + 1) * sizeof *idx);
    if (idx == NULL) goto fail;
    int fast = x->global != NULL;
    for (size_t j = 0; j < lay.n_terms && fast; j++)
        if (x->base[lay.terms[j].var] == SIZE_MAX) fast = 0;
    if (fast && x->index_col[c->outcome] == SIZE_MAX &&
        g->vars[c->outcome].type == COV_LEVELS)
        fast = 0;
    if (fast) {
        cov_assess_global_index(x, &lay, idx);
        a->n = d->n_runs;
        rc = assess_fitted(x, c, &lay, x->global, idx, &x->sampled, x->sample_ids, x->n_sample, 1,
                           &x->seed_global, opt, alpha, a);
        goto fail;
    }
    /* Complete cases of this claim: count them, then accumulate and sample in one more pass. */
    size_t n = 0;
    for (size_t i = 0; i < d->n_runs; i++) n += (size_t)cov_assess_row_complete(d, &lay, i);
    a->n = n;
    if (n < 2) {
        rc = assess_planning(g, c, &lay, opt, alpha, a);
        goto fail;
    }
    for (size_t j = 0; j <= lay.k; j++) idx[j] = j;
    size_t want = n < COV_DIAG_MAX_ROWS ? n : COV_DIAG_MAX_ROWS, n_rows = 0, left = n;
    rows = malloc(want * sizeof *rows);
    row = malloc((lay.k + 1) * sizeof *row);
    r = gsl_rng_alloc(gsl_rng_mt19937);
    if (rows == NULL || row == NULL || r == NULL) goto fail;
    if (pw_moments_alloc(lay.k + 1, &local) != PW_OK) goto fail;
    gsl_rng_set(r, COV_DIAG_SEED);
    for (size_t i = 0; i < d->n_runs; i++) {
        if (!cov_assess_row_complete(d, &lay, i)) continue;
        cov_assess_fill_row(d, &lay, i, row);
        pw_moments_add(local, row);
        if (cov_assess_sample_keep(r, &want, left--)) rows[n_rows++] = i;
    }
    claim_rows cr = {d, &lay};
    if (x->seeds.group != NULL &&
        cov_seed_within(&x->seeds, d->n_runs, lay.k + 1, claim_row, &cr, &sf) != COV_OK) {
        rc = COV_ENOMEM;
        goto fail;
    }
    rc = assess_fitted(x, c, &lay, local, idx, d, rows, n_rows, 0, &sf, opt, alpha, a);
fail:
    cov_seed_fit_free(&sf);
    free(lay.terms);
    free(idx);
    free(rows);
    free(row);
    pw_moments_free(local);
    gsl_rng_free(r);
    return rc;
}

int cov_assess(const cov_graph *g, const cov_claims *c, const cov_data *d,
               const cov_power_options *opt, cov_assessments **out, cov_error *err)
{
    return cov_assess_shared(g, c, d, opt, NULL, out, err);
}

/* What every claim's assessment shares, and one context per thread (worker 0: the caller's). */
typedef struct {
    const cov_claims *c;
    const cov_power_options *opt;
    double alpha;
    cov_assessments *as;
    assess_ctx *main;     /* worker 0 */
    assess_ctx *extra;    /* workers 1 .. : the shared parts borrowed, scratch of their own */
} claim_job;

/* Claim i into its own slot, on the worker's context: nothing in it depends on the thread. */
static int claim_item(void *arg, int worker, size_t i)
{
    claim_job *j = arg;
    cov_assessment *a = &j->as->items[i];
    const cov_claim *cl = &j->c->items[i];
    assessment_init(a, i);
    if (cl->status != COV_TESTABLE) {
        a->verdict = COV_BLIND;
        a->reason = text_dup(cl->reason ? cl->reason : "no adjustment set among the recorded "
                                                       "variables");
        return a->reason == NULL ? COV_ENOMEM : COV_OK;
    }
    a->alpha = j->alpha;
    note_lost = 0;
    int rc = assess_claim(worker == 0 ? j->main : &j->extra[worker - 1], cl, j->opt, j->alpha, a);
    if (rc == COV_OK && note_lost) rc = COV_ENOMEM;
    return rc;
}

int cov_assess_shared(const cov_graph *g, const cov_claims *c, const cov_data *d,
                      const cov_power_options *opt, const cov_xshare *shared,
                      cov_assessments **out, cov_error *err)
{
    *out = NULL;
    if (!(opt->alpha > 0 && opt->alpha < 1) || !(opt->target > 0 && opt->target < 1))
        return cov_fail(err, COV_EINPUT, "", "alpha and target power must lie strictly between "
                        "0 and 1, got %g and %g", opt->alpha, opt->target);
    cov_assessments *as = calloc(1, sizeof *as);
    assess_ctx x;
    int rc = cov_assess_ctx_init(&x, g, d, shared);
    if (as == NULL || rc != COV_OK) {
        rc = COV_ENOMEM;
        goto fail;
    }
    as->opt = *opt;
    as->n = c->n;
    as->items = calloc(c->n ? c->n : 1, sizeof *as->items);
    if (as->items == NULL) {
        rc = COV_ENOMEM;
        goto fail;
    }
    for (size_t i = 0; i < c->n; i++)
        if (c->items[i].status == COV_TESTABLE) as->n_testable++;
    /* Each claim into its own slot on up to opt->threads threads; the first failing claim in
     * claim order is the one reported, whatever the thread count (pool.c). */
    int threads = opt->threads < 1 ? 1 : opt->threads;
    if (threads > COV_ASSESS_MAX_THREADS) threads = COV_ASSESS_MAX_THREADS;
    if ((size_t)threads > as->n_testable) threads = as->n_testable > 1 ? (int)as->n_testable : 1;
    claim_job job = {c, opt, cov_family_alpha(opt, as->n_testable), as, &x, NULL};
    if (threads > 1 && (job.extra = calloc((size_t)threads - 1, sizeof *job.extra)) == NULL) {
        rc = COV_ENOMEM;
        goto fail;
    }
    for (int t = 1; t < threads; t++) cov_assess_ctx_worker(&x, &job.extra[t - 1]);
    size_t bad = cov_assess_pool(c->n, threads, claim_item, &job, &rc);
    for (int t = 1; t < threads; t++) cov_assess_ctx_worker_free(&job.extra[t - 1]);
    free(job.extra);
    if (rc == COV_ENUMERIC) {
        const cov_claim *cl = &c->items[bad];
        cov_fail(err, rc, "", "a power computation did not converge for the claim %s %s %s",
                 g->vars[cl->treatment].name, cov_claim_arrow(cl->kind),
                 g->vars[cl->outcome].name);
        goto fail;
    }
    if (rc != COV_OK) goto fail;
    rc = cov_seed_outcomes(g, x.global, &x.seed_global, x.base, x.index_col, &as->seed_outcome);
    if (rc != COV_OK) goto fail;
    cov_assess_ctx_free(&x);
    *out = as;
    return COV_OK;
fail:
    cov_assess_ctx_free(&x);
    cov_assessments_free(as);
    if (rc == COV_ENOMEM) cov_fail(err, rc, "", "out of memory assessing the claims");
    return rc;
}

void cov_assessments_free(cov_assessments *a)
{
    if (a == NULL) return;
    if (a->items != NULL)
        for (size_t i = 0; i < a->n; i++) {
            free(a->items[i].noise_note);
            free(a->items[i].reason);
            free(a->items[i].caution);
            free(a->items[i].fit_note);
        }
    free(a->items);
    free(a->seed_outcome);
    free(a);
}

int cov_assess_design(const cov_graph *g, const cov_claims *c, const cov_assessments *a,
                      size_t claim, pw_design *out)
{
    (void)g;
    if (a == NULL || c == NULL || claim >= a->n || claim >= c->n) return COV_EINPUT;
    if (c->items[claim].status != COV_TESTABLE || !a->items[claim].has_design) return COV_EINPUT;
    *out = a->items[claim].design;
    return COV_OK;
}
