/* shoal coverage/plan/: the plan of next runs: candidates, greedy augmentation, the plan file. Private to coverage/.
 * See LICENSE. */
#ifndef SHOAL_COVERAGE_PLAN_H
#define SHOAL_COVERAGE_PLAN_H

#include <stdio.h>

#include "coverage/assess/assess.h"
#include "coverage/measure/measure.h"

/* ---- plan (plan.c, plan_claims.c, plan_candidates.c, plan_cover.c; the plan file: cmd_plan.c) -- */

/* How the plan predicts one claim's power after the planned runs. */
typedef enum {
    COV_PLAN_STEERED,     /* treatment and adjustment set are inputs: the augmented design's
                             coefficient variance, by Sherman-Morrison updates */
    COV_PLAN_ASSUMED,     /* an output in the treatment or adjustment set: new runs assumed to add
                             information as the current ones do (n scaled) */
    COV_PLAN_UNSIZED,     /* no runs and no declared noise SD for the outcome: cannot be sized */
    COV_PLAN_FIXED        /* untestable on these runs: the outcome (or an output treatment) takes
                             one value in every run, which no setting of the inputs is known to
                             change; no runs are planned for it */
} cov_plan_mode;

typedef struct {
    size_t claim;         /* index into the claims */
    cov_plan_mode mode;
    double power_now;     /* NAN when it cannot be computed from the archive */
    double power_after;   /* predicted after the planned runs; NAN for COV_PLAN_UNSIZED */
    double n_now, n_after;
    int reaches;          /* power_after >= target */
    int unreachable;      /* --budget auto: cannot reach the target within COV_PLAN_AUTO_CAP */
    int from_noise;       /* sigma taken from the graph's declared noise SD */
    int seed_unblocked;   /* the claim's test uses seed blocks, but the planned runs carry fresh
                             seeds and would add nothing to it: sized by the test without them */
} cov_plan_claim;

/* Configurations --budget auto may plan at most; also the largest --budget. */
#define COV_PLAN_AUTO_CAP 5000
/* Seeds per configuration at most, and runs (configurations x seeds) in one plan at most: a
 * plan file of a million lines is already more than one campaign runs, and every seed costs
 * memory before the file is written. */
#define COV_PLAN_MAX_REPLICATES 1000
#define COV_PLAN_MAX_RUNS 1000000

/* Refuse a budget or replicate count beyond the limits above, before any work: COV_EINPUT naming
 * the limit, else COV_OK. */
int cov_plan_check_limits(long budget, int replicates, cov_error *err);

typedef struct {
    size_t n_configs;     /* planned configurations */
    int replicates;       /* runs (seeds) per configuration */
    double *rows;         /* n_configs * n_vars values: inputs set, NAN for the other variables;
                             bools 0/1, level sets the level index */
    unsigned long *seeds; /* n_configs * replicates distinct seeds, configuration-major */
    cov_plan_claim *items;    /* one per testable claim, in claim order */
    size_t n;
    size_t n_vars;
    int capped;           /* --budget auto stopped at the cap */
    size_t n_candidates;  /* size of the candidate set */
    /* Run cost (coverage/plan/plan_models.c): the fitted cost of one run at each configuration
     * (1 without a cost column) and their sum over every planned run. */
    double *cost;         /* n_configs */
    double total_cost;
    int have_cost;        /* a cost model was fitted */
    size_t n_curved;      /* outcomes whose straight mean showed lack of fit (bent mean used) */
    size_t n_hetero;      /* outcomes with a fitted noise model */
    size_t n_kept_inside; /* candidates left out for lying beyond the runs' range */
    size_t n_explore;     /* configurations chosen to learn the models (--rounds) */
} cov_plan;

/* What cov_plan_make_ex adds to cov_plan_make. */
typedef struct {
    const double *run_cost;   /* per archive run (d's order), NAN when missing; NULL: cost 1 */
    double cost_budget;       /* > 0: stop before the planned cost passes it; else unused */
    size_t explore;           /* configurations to add after the search where the models know
                                 least (far from every run): the learning share of a first round */
} cov_plan_extra;

/* Plan budget configurations (budget -1: the fewest that bring every reachable testable claim to
 * the target, at most COV_PLAN_AUTO_CAP) of replicates runs each. d and a may be NULL (no runs
 * yet: the graph's noise SDs size the claims).
 * copt gives the cells (bins, min_runs) whose filling earns a small bonus and copt->seed. Returns
 * COV_OK, COV_EINPUT (bad budget or replicates), COV_ENOMEM, COV_ENUMERIC. */
int cov_plan_make(const cov_graph *g, const cov_claims *c, const cov_data *d,
                  const cov_assessments *a, const cov_power_options *opt,
                  const cov_coverage_options *copt, long budget, int replicates,
                  cov_plan **out, cov_error *err);
void cov_plan_free(cov_plan *p);
/* cov_plan_make with run costs, a cost budget and exploration (x may be NULL: as cov_plan_make). */
int cov_plan_make_ex(const cov_graph *g, const cov_claims *c, const cov_data *d,
                     const cov_assessments *a, const cov_power_options *opt,
                     const cov_coverage_options *copt, long budget, int replicates,
                     const cov_plan_extra *x, cov_plan **out, cov_error *err);

/* The plan audit (coverage/plan/plan_audit.c): for each of the n recorded plans, count its runs
 * among the archive's n_runs runs (those after its runs_before whose seed_col value is one of its
 * seeds; without seed_col, the runs imported since), and, unless frozen already, set each claim's
 * achieved power from a (matched by kind, treatment and outcome names). A plan whose runs have all
 * arrived gets achieved_at = now and frozen[k] = 1, for the caller to store. COV_OK, COV_ENOMEM. */
int cov_plan_audit_fill(const cov_graph *g, const cov_claims *c, const cov_assessments *a,
                        size_t n_runs, const double *seed_col, cov_pred_record *recs, size_t n,
                        const char *now, unsigned char *frozen);

/* The SHA-256 digest (FIPS 180-4) of the file at path as 64 lower-case hex digits and a NUL
 * (coverage/plan/plan_digest.c). COV_OK or COV_EIO. */
int cov_sha256_file(const char *path, char hex[65], cov_error *err);

/* A model fitted on coded rows (coverage/plan/plan_models.c): n rows of n_cols coded values
 * (intercept first; numeric[j] marks numeric columns). An outcome model (is_cost 0): the mean is
 * straight, or quadratic in the numeric columns when the extra-sum-of-squares F test finds lack of
 * fit at 5%; the noise is Harvey's (1976) log-linear variance model of its residuals. A cost model
 * (is_cost 1): log-linear in the columns with Duan's smearing. Every prediction holds the numeric
 * columns at the runs' range (no extrapolation beyond it). COV_OK, COV_ENUMERIC (too few rows or a
 * singular design), COV_EINPUT (a cost not positive), COV_ENOMEM. */
typedef struct cov_plan_model cov_plan_model;
int cov_plan_model_fit(const double *rows, const double *y, size_t n, size_t n_cols,
                       const unsigned char *numeric, int is_cost, cov_plan_model **out);
void cov_plan_model_free(cov_plan_model *m);
double cov_plan_model_mean(const cov_plan_model *m, const double *row);
double cov_plan_model_var(const cov_plan_model *m, const double *row);
/* The bent part of the mean: the quadratic and product terms alone (0 for a straight mean). */
double cov_plan_model_bend(const cov_plan_model *m, const double *row);
/* 1 when a coded column of row lies beyond the runs' range by more than slack times its span. */
int cov_plan_model_outside(const cov_plan_model *m, const double *row, double slack);
int cov_plan_model_curved(const cov_plan_model *m);
int cov_plan_model_hetero(const cov_plan_model *m);
double cov_plan_model_sigma2(const cov_plan_model *m);
double cov_plan_model_lof_p(const cov_plan_model *m);

/* The residual variance each steered claim's test will see (coverage/plan/plan_noise.c). Built on
 * the archive's n_rows coded rows with every input present (copied), for n_targets pw_aug
 * targets. A claim is tracked once cov_plan_noise_add_claim fits its outcome's model (y: the
 * outcome per archive row, NAN when missing) and its straight-line design over cols; untracked
 * claims keep scale 1. The scale of a claim is its residual variance over the archive's rows alone
 * divided by the one predicted with the planned runs (below 1 when they add noise or bend). */
typedef struct cov_plan_noise cov_plan_noise;
int cov_plan_noise_alloc(size_t n_cols, const unsigned char *numeric, const double *rows,
                         size_t n_rows, size_t n_targets, cov_plan_noise **out);
void cov_plan_noise_free(cov_plan_noise *nz);
int cov_plan_noise_add_claim(cov_plan_noise *nz, size_t target, size_t outcome, const double *y,
                             const size_t *cols, size_t p);
int cov_plan_noise_tracked(const cov_plan_noise *nz, size_t target);
/* Predict each model at the n_cand coded candidates (borrowed until nz is freed). */
int cov_plan_noise_candidates(cov_plan_noise *nz, const double *cand_rows, size_t n_cand);
/* Every target's scale after k more runs at candidate cand (scale: n_targets values). */
void cov_plan_noise_scales_after(const cov_plan_noise *nz, size_t cand, double k, double *scale);
double cov_plan_noise_scale(const cov_plan_noise *nz, size_t target);
/* Add k runs at the coded row (an increment), or recompute every claim exactly (refresh). */
int cov_plan_noise_commit(cov_plan_noise *nz, const double *row, double k);
int cov_plan_noise_refresh(cov_plan_noise *nz);
/* Outcome models with a bent mean, with a noise model. */
void cov_plan_noise_counts(const cov_plan_noise *nz, size_t *curved, size_t *hetero);
/* 1 when row lies beyond some model's runs by more than slack times the span. */
int cov_plan_noise_outside(const cov_plan_noise *nz, const double *row, double slack);

/* Write the plan as CSV to path through a temporary file in the same directory and a rename: one
 * column per input in declaration order (level names, bools 0/1, integers whole), then `seed`
 * (`seed_` with as many underscores as make it unique). Returns COV_OK or COV_EIO. */
int cov_plan_write_csv(const cov_graph *g, const cov_plan *p, const char *path, cov_error *err);

/* Read a plan file (such as cov_plan_write_csv writes) into n_rows rows of g->n_vars values, NAN
 * for non-inputs and inputs the file leaves out. A column that is neither an input nor the seed
 * column, a value outside its input's domain or a level not declared is COV_EINPUT with
 * err->where "file:line:column". *rows is malloc'd; the caller frees it. */
int cov_plan_read_csv(const cov_graph *g, const char *path, double **rows, size_t *n_rows,
                      cov_error *err);

/* Shared by the plan files: plan.c (greedy search), plan_claims.c (the claims' designs),
 * plan_candidates.c (the candidate set) and plan_cover.c (the coverage bonus of a candidate). */
/* Whether v is numeric (real or integer): scaled to [-1, 1] when coded, measured by distance. */
int cov_plan_is_numeric(const cov_var *v);
/* Whether run i of d has a value of variable v (its column exists and the cell is not NAN). */
int cov_plan_var_present(const cov_data *d, size_t v, size_t i);
/* The candidate runs from seed: scrambled Sobol points, the same rounded to the domain ends, the
 * centre and one-at-a-time extremes, then the level combinations (capped) of the level-set inputs
 * of each claim i of c with under[i] nonzero, in claim order. *cand_vals gets *n_cand rows of
 * g->n_vars values (NAN for non-inputs), malloc'd for the caller to free; COV_OK, COV_ENOMEM, or
 * COV_ENUMERIC when the Sobol generator fails (then *cand_vals is NULL). */
int cov_plan_candidates(const cov_graph *g, const cov_claims *c, const unsigned char *under,
                        unsigned long seed, double **cand_vals, size_t *n_cand);
/* The coverage bonus of the candidates: the 2-way cells (copt's bins) still under copt->min_runs
 * runs that a candidate falls in, and its distance to the nearest run. */
typedef struct cov_plan_cover cov_plan_cover;
/* Count d's runs (d may be NULL) in the cells of the n_cand rows cand_vals (borrowed: they must
 * outlive *out) and measure distances to a sample of them drawn from seed + 1; copt NULL means 10
 * bins and min_runs 5. Returns COV_OK or COV_ENOMEM (then *out is NULL). */
int cov_plan_cover_alloc(const cov_graph *g, const cov_data *d, const double *cand_vals,
                         size_t n_cand, const cov_coverage_options *copt, unsigned long seed,
                         cov_plan_cover **out);
/* Candidate c's bonus in [0, 1]: the mean of its share of short cells and its scaled distance. */
double cov_plan_cover_bonus(const cov_plan_cover *cv, size_t c);
/* Count replicates runs at candidate chosen in its cells and in every candidate's distance. */
void cov_plan_cover_commit(cov_plan_cover *cv, size_t chosen, int replicates);
/* Operations one cov_plan_cover_bonus costs (one per input pair), weighed with pw_aug_score_cost. */
double cov_plan_cover_cost(const cov_plan_cover *cv);
/* Free cv; NULL is allowed. */
void cov_plan_cover_free(cov_plan_cover *cv);

/* ---- the plan's working state (plan.c; the claims' part: plan_claims.c) ---------------------- */

/* The coded column layout of the inputs: column 0 is the intercept; numeric inputs are scaled to
 * [-1, 1]; bools are 0/1; a level set has L - 1 dummies against its first level. */
typedef struct {
    size_t n_cols;
    size_t *first, *count;    /* per variable; count 0 for non-inputs */
    size_t *slot;             /* per level-set input: its first level's index in a presence map */
    size_t n_slots;           /* levels over all level-set inputs */
} layout;

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

/* Exact searches for the standardised noncentrality a test needs, cached by what else it depends
 * on (plan_claims.c). */
typedef struct {
    int test, sides;
    double alpha, target, n_levels, df, delta;
} delta_entry;

struct delta_cache {
    delta_entry *e;
    size_t n, cap;
};

/* Code one run's input values vals (g->n_vars) as a row of L's columns. */
void cov_plan_code_row(const cov_graph *g, const layout *L, const double *vals, double *row);
/* q_req^2 / q_mul: the coded information at which claim w reaches its target at n runs. */
double cov_plan_need_at(struct delta_cache *dc, const claim_work *w, double n);
/* Set up each testable claim of st into p: its mode, its test now and, when steered, its design
 * group. Returns COV_OK, COV_ENOMEM or COV_ENUMERIC. */
int cov_plan_setup_claims(struct plan_state *st, const cov_assessments *a, cov_plan *p);
/* Predicted power of plan item it after `added` runs: *power is NAN when the claim cannot be sized
 * or has no contrast to test yet. Returns COV_OK, COV_ENOMEM or COV_ENUMERIC. */
int cov_plan_predict(const struct plan_state *st, const cov_plan_claim *it, double added,
                     double *power);

#endif
