/* shoal coverage/assess/: the assessment of each claim: test, power, MDE, verdict. Private to coverage/.
 * See LICENSE. */
#ifndef SHOAL_COVERAGE_ASSESS_H
#define SHOAL_COVERAGE_ASSESS_H

#include <stdio.h>

#include <gsl/gsl_rng.h>

#include "coverage/archive/archive.h"

/* cov_assess with the runs' cross-products already summed by cov_xshare_build (NULL: sum them
 * here). shared must be of the same g and d; it is only read, and the figures are the same bit for
 * bit either way. */
int cov_assess_shared(const cov_graph *g, const cov_claims *c, const cov_data *d,
                      const cov_power_options *opt, const cov_xshare *shared,
                      cov_assessments **out, cov_error *err);

/* ---- assessment (coverage/assess.c) ----------------------------------------------------------- */

/* The pw_design of an assessed claim with its current figures, so that callers (plots, plan) can
 * ask pw_power about other run counts by changing n. Returns COV_EINPUT for untestable claims. */
int cov_assess_design(const cov_graph *g, const cov_claims *c, const cov_assessments *a,
                      size_t claim, pw_design *out);

/* ---- shape of an effect (coverage/assess/shape.c) -------------------------------------------- */

/* The linear trend of an ordered level-set treatment from a fit whose last t = L - 1 columns are
 * its dummies against level 0 (idx maps them to m's columns). ok = 0 when it cannot be formed (a
 * single level run, or an adjustment set that fixes part of the level set). */
typedef struct {
    int ok;
    size_t n_present;     /* levels with runs */
    char *unrun;          /* declared levels never run, ", "-joined, or NULL (owned) */
    double sd_eq;         /* the spread with which the t noncentrality is slope sd_eq sqrt(n) /
                             sigma, as for a numeric treatment */
    double slope, slope_se_factor;   /* estimated slope per position unit; its SE / sigma */
    double ss_levels;     /* b' M b: the level set's sum of squares given the adjustment set */
    double q_linear;      /* the omnibus F noncentrality per (slope / sigma)^2 under a line */
    double ss_trend;      /* the trend contrast's sum of squares */
} cov_trend;
int cov_trend_compute(const cov_var *xv, const pw_xfit *fit, const pw_moments *m,
                      const size_t *idx, size_t k, size_t t, cov_trend *out);
void cov_trend_free(cov_trend *t);

/* Up to this many distinct values, a numeric treatment's lack of fit is tested against one mean
 * per value; above it, against a cubic polynomial. */
#define COV_SHAPE_LEVELS_MAX 10
typedef struct {
    size_t distinct;      /* distinct treatment values among the rows */
    double f, p, df1, df2;    /* lack-of-fit F test of the straight line; NAN when not formed */
    int pure;             /* 1: the denominator is pure error from replicated configurations */
    const char *basis;    /* "levels" or "cubic" (static), NULL when not formed */
} cov_shape_fit;
/* Lack of fit of a straight line in x from its residuals e on m rows (n_coef coefficients in the
 * fit, intercept included): the F of the residuals on a level basis (<= COV_SHAPE_LEVELS_MAX
 * values) or the quadratic and cubic terms, against pure error when sigma_pure is finite. Exact
 * when the adjustment set is empty; otherwise it leaves aside the set's correlation with the
 * basis. Returns COV_OK or COV_ENOMEM. */
int cov_shape_numeric(const double *x, const double *e, size_t m, double n_coef,
                      double sigma_pure, double df_pe, cov_shape_fit *out);
/* The same from a cache of each treatment's basis (its distinct values, value groups or cubic
 * reflectors), for many claims whose treatment key is measured on the same m rows: the basis is
 * made on the first call per key, then each call costs what its residuals cost. The figures equal
 * cov_shape_numeric's bit for bit. c NULL, a key >= n_keys or another m: computed afresh. One
 * cache may serve several threads: each key's basis is made once, under that key's lock. */
typedef struct cov_shape_cache cov_shape_cache;
cov_shape_cache *cov_shape_cache_new(size_t n_keys, size_t m);   /* NULL when out of memory */
void cov_shape_cache_free(cov_shape_cache *c);
int cov_shape_numeric_cached(cov_shape_cache *c, size_t key, const double *x, const double *e,
                             size_t m, double n_coef, double sigma_pure, double df_pe,
                             cov_shape_fit *out);

/* The table's note lines on an assessment's shape and units for one claim (`shoal power`). */
void cov_assessment_table_shape(FILE *out, const char *label, const cov_claim *c,
                                const cov_assessment *a);
/* The verdict of claim c given its assessment a (NULL when not assessed): a's verdict, else
 * underpowered for a testable claim (it cannot be shown ample) and untestable otherwise. The one
 * place this fallback is decided. */
cov_verdict cov_claim_verdict(const cov_claim *c, const cov_assessment *a);
/* The one-line reason for that verdict (borrowed), or NULL: a's reason, else the claim's own
 * reason when it is untestable. */
const char *cov_claim_verdict_reason(const cov_claim *c, const cov_assessment *a);

/* ---- a turning effect of a numeric treatment (coverage/assess/turning.c) ------------------- */

/* 1 when claim c is an effect claim whose edge says `expect turning` and whose treatment is
 * numeric (real or integer): its test is the basis F (PW_TEST_BASIS_F), not the slope. */
int cov_claim_turns(const cov_graph *g, const cov_claim *c);
/* Fit claim c's outcome on its adjustment set and the treatment's Legendre basis over the claim's
 * complete rows of d (all runs, not a sample), and turn a (fitted by the straight line) and its
 * design dz into the basis F test: sigma, df, the observed F and p (omnibus_*), the turn's
 * estimated height and SE, distinct values, and dz's test, df1, ncp_per_run, n_params. The effect
 * of interest a->effect_raw (per unit of treatment on entry) becomes the height of the turn over
 * the reference range: per unit times (hi - lo), the treatment's declared range, else the range
 * its runs span. Too few distinct values, or a basis the adjustment set fixes, make a untestable
 * (verdict COV_BLIND, the reason naming the count). Returns COV_OK or COV_ENOMEM. */
int cov_turning_fitted(const cov_graph *g, const cov_claim *c, const cov_data *d,
                       cov_assessment *a, pw_design *dz);
/* The same design before any run, for a treatment spread evenly over its declared range (a real:
 * continuous; an integer: each value alike); *effect (per unit on entry) becomes the height.
 * Returns COV_OK, or COV_EINPUT when the range has too few values for the basis (*distinct then
 * says how many; may be NULL). */
int cov_turning_planned(const cov_var *x, pw_design *d, double *effect, size_t *distinct);

/* ---- seed blocks (coverage/assess/seedblock.c) ------------------------------------------------ */

/* Each run's seed block over the whole archive: runs whose seed another run also used share a
 * block; every other run (its seed in no other run, or none) is in group n_groups - 1, which
 * stands for a block of its own per run. group is NULL when no two runs share a seed (or the
 * graph declares no seed column). */
typedef struct {
    size_t *group;
    size_t n_groups;
} cov_seed_groups;
int cov_seed_groups_init(const cov_data *d, cov_seed_groups *out);   /* COV_OK, COV_ENOMEM */
void cov_seed_groups_free(cov_seed_groups *s);

/* The regression columns of run i (kk values) for a claim: 1 when complete, 0 to leave it out. */
typedef int (*cov_row_fn)(void *ctx, size_t i, double *row);
/* A claim's columns demeaned by seed block over the rows fill accepts. A row whose seed no other
 * of those rows has (or that has none) is a block of its own: it demeans to zero and is left out
 * of m, though it still counts as a run and a block. m is NULL when no seed is shared by two of
 * the rows (nothing to measure). */
typedef struct {
    pw_moments *m;        /* the demeaned cross-products of the rows in shared blocks, or NULL */
    size_t n_groups;      /* the shared blocks (= blocks) */
    size_t blocks;        /* seeds shared by two or more rows */
    size_t unblocked;     /* rows in blocks of their own */
} cov_seed_fit;
int cov_seed_within(const cov_seed_groups *s, size_t n, size_t kk, cov_row_fn fill, void *ctx,
                    cov_seed_fit *out);   /* COV_OK, COV_ENOMEM */
void cov_seed_fit_free(cov_seed_fit *f);
/* The blocked regression of the columns idx (as pw_xfit_solve; raw the same rows' moments not
 * demeaned) beside fit, the one without blocks: the F test of the blocks in *out (NAN figures and
 * blocks 0 when it cannot be formed) and the blocked fit in *blocked (the caller's; NULL then).
 * COV_OK or COV_ENOMEM. */
int cov_seed_measure(const cov_seed_fit *sf, const pw_moments *raw, const size_t *idx, size_t k,
                     size_t t, const pw_xfit *fit, cov_seed_share *out, pw_xfit **blocked);
/* Whether the blocks are material at the claim's level alpha: their F test significant at alpha
 * and the residual variance estimate at least 10% lower with them (seedblock.c says why). */
int cov_seed_material(const cov_seed_share *sh, double alpha);
/* The pw_design n_params of the blocked test: the blocked fit's columns, blocks - 1 and the rows
 * in blocks of their own. */
double cov_seed_n_params(const pw_xfit *blocked, const cov_seed_share *sh);
/* Whether the claim's test uses the blocks: a one-column coefficient t or equivalence test
 * (base->test) whose treatment varies within the blocks, the blocks material at base->alpha, and
 * the blocked test (blocked's sigma and sd(X | S, blocks)) at least as powerful at base->effect as
 * the unblocked one (fit's), whose power and design are then written to *power_unblocked (else
 * NAN) and *unblocked. base
 * holds the claim's test, level, sides, target, effect and n. */
int cov_seed_choose(const cov_seed_share *sh, const pw_design *base, const pw_xfit *fit,
                    const pw_xfit *blocked, double *power_unblocked, pw_design *unblocked);
/* One sentence on a's seed blocks (empty when none were measured): the share, the F test, and
 * when used the power without them and the assumption that further runs reuse the seeds. */
void cov_seed_note(const cov_assessment *a, char *buf, size_t size);
/* Per variable: each outcome whose column is complete against every complete input, with and
 * without the seed blocks of sf (the archive's demeaned global cross-products; raw the global
 * ones, base and index_col their first column per variable or SIZE_MAX). *out is NULL when sf
 * holds no blocks, else the caller's (free). COV_OK, COV_ENOMEM. */
int cov_seed_outcomes(const cov_graph *g, const pw_moments *raw, const cov_seed_fit *sf,
                      const size_t *base, const size_t *index_col, cov_seed_share **out);

/* ---- the rules every command shares (coverage/assess/rules.c) -------------------------------- */

/* The per-claim level after the family correction: alpha / m over the m = n_testable testable
 * claims when opt->bonferroni and m > 1 (Bonferroni; Dunn 1961), else alpha. */
double cov_family_alpha(const cov_power_options *opt, size_t n_testable);
/* The sides of claim c's test: 1 with --one-sided for an effect claim whose edge gives a sign,
 * else 2. */
int cov_claim_sides(const cov_power_options *opt, const cov_claim *c);
/* The test of claim c. fitted: 1 when the runs were fitted, treat_rank the treatment columns the
 * fit kept; 0 when the claim is sized before any usable run (from the declared noise SD and
 * domain), treat_rank then ignored. Absence claims: TOST. Effect claims: the two-proportion test
 * for a bool (or two-level) outcome and a bool treatment when fitted; for a level-set treatment
 * the trend t test when it is ordered and no turning shape is expected (fitted: assess_fitted
 * switches to it once the runs let the trend be formed, cov_trend_compute), else the F test of
 * the level set (fitted: two or more kept treatment columns); else the coefficient's t test. */
pw_test cov_claim_test(const cov_graph *g, const cov_claim *c, int fitted, size_t treat_rank);
/* Whether every claim the graph makes testable is ample: the adequacy gate of `shoal power` and
 * the survey (a claim the runs cannot test after all is not adequately covered; a graph that
 * implies no claim is never adequate). */
int cov_claims_ample(const cov_claims *c, const cov_assessments *as);

/* ---- the recommended test, resampled power, the noise judgement (coverage/assess/noise.c) ---- */

/* Wild bootstrap replicates per claim (Monte Carlo SE of a power at most 0.025), the cap on the
 * user's --replicates, and the default seed. */
#define COV_RESAMPLE_REPS 400
#define COV_RESAMPLE_MAX_REPS 20000
#define COV_RESAMPLE_SEED 20261205UL

/* A claim's design rows: the diagnostic rows (every complete run up to COV_DIAG_MAX_ROWS, else a
 * fixed-seed uniform sample) as X = [1, kept predictors] and y, with the tested contrast. */
typedef struct {
    const double *X;          /* m rows of p values, row-major */
    const double *y;          /* m outcomes */
    size_t m, p;
    const double *contrast;   /* p values: the treatment coefficient, or the least favourable
                                 pairwise contrast of a level set */
    double kurtosis, bp_p, third_ratio, mode_share;   /* residual diagnostics; NAN when unknown */
    int bool_outcome;
    int single_column;        /* 1: the treatment is one column (t test or TOST) */
} cov_claim_rows;

/* Power, MDE and runs for the design d with sigma's interval [sigma_lo, sigma_hi] (NAN: none)
 * into a's figures. Returns a pw_status. */
int cov_size_claim(cov_assessment *a, const pw_design *d, double sigma_lo, double sigma_hi);

/* Size the claim's test dz (effect, sigma, n, alpha set): the test chosen by opt->test (HC3 SEs
 * enter as dz->sigma = sigma x HC3 SE / classic SE), power by formula or, where opt->power_by
 * asks or the noise calls for it, by the wild bootstrap with the declared effect planted; the
 * interval; a->test, a->power_method, a->mc_se; and the noise flag with its reasons appended to
 * a->noise_note. claim seeds the resampling. Returns a pw_status (PW_ENOMEM, or a numerics
 * failure of the formula). */
int cov_assess_noise(const cov_claim_rows *cr, const cov_power_options *opt, size_t claim,
                     cov_assessment *a, pw_design *dz);

/* ---- what the claims of one assessment share (context.c) ------------------------------------ */

/* Residual diagnostics (kurtosis, heteroscedasticity, replicates) use every complete run up to
 * this many, and a fixed-seed random subsample of this size above it: 20,000 rows pin the excess
 * kurtosis to about +-0.035 under normal noise (SE sqrt(24/m)), far finer than the flag needs. */
#define COV_DIAG_MAX_ROWS 20000
#define COV_DIAG_SEED 20261202UL
/* Rows per block of the global cross-products: 128 rows of 80 columns fit the L2 cache. */
#define COV_MOMENT_BLOCK 128

/* How one variable enters a claim's regression: cols columns (level sets: L - 1 dummies against
 * level 0; an outcome level set: its level index as one column). */
typedef struct {
    size_t var;
    size_t cols;
    int dummies;
} assess_term;

/* A claim's variables in regression order: the adjustment set, the treatment, the outcome. */
typedef struct {
    assess_term *terms;
    size_t n_terms;
    size_t k, t;         /* predictor columns, treatment columns */
} assess_layout;

/* Shared across claims: the global cross-products of every complete variable (the fast path). */
typedef struct {
    const cov_graph *g;
    const cov_data *d;
    pw_moments *global;  /* NULL when no variable is complete */
    int global_borrowed; /* global is the shared pass's (cov_xshare), not ours to free */
    size_t *base;        /* first global column of each variable; SIZE_MAX when not included */
    size_t *index_col;   /* level-set outputs: global column of the level index; SIZE_MAX */
    size_t *sample;      /* runs for diagnostics on the fast path */
    size_t n_sample;
    double *mode_share;  /* per complete variable: share of its most common value on the sample */
    /* The sampled runs of every complete variable, gathered once into short contiguous columns
     * (rows 0 .. n_sample - 1): the diagnostics of each claim then read memory in order instead of
     * jumping through million-row columns. */
    cov_data sampled;
    size_t *sample_ids;  /* 0 .. n_sample - 1 */
    /* Scratch reused from claim to claim: large blocks allocated afresh each time cost more in
     * page faults than the diagnostics themselves. */
    double *ws_y, *ws_fit, *ws_keys;
    size_t ws_rows, ws_kk;
    cov_seed_groups seeds;    /* each run's seed block (seedblock.c); group NULL when none */
    cov_seed_fit seed_global; /* the global cross-products demeaned by seed block */
    cov_shape_cache *shape;   /* each treatment's shape basis on the sample (shape.c) */
} assess_ctx;

/* Whether d records variable v (its column exists). */
int cov_assess_is_recorded(const cov_data *d, size_t v);
/* The regression columns of v: L - 1 dummies for a level set, else 1. */
size_t cov_assess_dummy_cols(const cov_var *v);
/* The k + 1 regression values of run i of d in lay's order. */
void cov_assess_fill_row(const cov_data *d, const assess_layout *lay, size_t i, double *row);
/* Whether run i of d has a value of every variable of lay. */
int cov_assess_row_complete(const cov_data *d, const assess_layout *lay, size_t i);
/* Selection sampling (Knuth, TAOCP vol. 2, sec. 3.4.2, Algorithm S): 1 when the next of left
 * candidates is kept (then *want falls by one). */
int cov_assess_sample_keep(gsl_rng *r, size_t *want, size_t left);
/* Set up x for g and d: the global cross-products (borrowed from shared when it summed the same
 * columns, else summed here), the diagnostic sample, the seed blocks. COV_OK or COV_ENOMEM (then
 * cov_assess_ctx_free still frees what was made). */
int cov_assess_ctx_init(assess_ctx *x, const cov_graph *g, const cov_data *d,
                        const cov_xshare *shared);
void cov_assess_ctx_free(assess_ctx *x);
/* Make x's scratch hold rows x kk keys. COV_OK or COV_ENOMEM. */
int cov_assess_ctx_scratch(assess_ctx *x, size_t rows, size_t kk);
/* Claim c's regression layout: its adjustment set, treatment, outcome. COV_OK or COV_ENOMEM. */
int cov_assess_build_layout(const cov_graph *g, const cov_claim *c, assess_layout *lay);
/* Map lay's columns to x's global cross-product columns (fast path). */
void cov_assess_global_index(const assess_ctx *x, const assess_layout *lay, size_t *idx);
/* Whether column i of m takes one value (its centred sum of squares within rounding of zero). */
int cov_assess_moments_constant(const pw_moments *m, size_t i);
/* A context for another thread: x's shared parts borrowed (read only, and the shape cache, which
 * locks), scratch of its own. cov_assess_ctx_worker_free frees that scratch only. */
void cov_assess_ctx_worker(const assess_ctx *x, assess_ctx *w);
void cov_assess_ctx_worker_free(assess_ctx *w);

/* ---- the claims shared out among threads (pool.c) ---------------------------------------------- */

#define COV_ASSESS_MAX_THREADS 64
/* fn(ctx, worker, i) for every item i < n on up to `threads` threads (worker 0 the calling thread,
 * the others 1 .. threads - 1; threads <= 1: every item in the calling thread, in order, as a
 * plain loop). Items are taken in order from one counter; once an item has failed no later item
 * is started, and every item before it is finished. Returns the first failing item in item order, its status
 * in *status, or n with *status COV_OK. Whatever the thread count, the same items fail first, as
 * long as each item's result depends only on the item. */
size_t cov_assess_pool(size_t n, int threads, int (*fn)(void *ctx, int worker, size_t item),
                       void *ctx, int *status);

#endif
