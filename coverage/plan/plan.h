/* shoal coverage/plan/: the plan of next runs: candidates, greedy augmentation, the plan file. Private to coverage/.
 * See LICENSE. */
#ifndef SHOAL_COVERAGE_PLAN_H
#define SHOAL_COVERAGE_PLAN_H

#include <stdio.h>

#include "coverage/assess/assess.h"
#include "coverage/measure/measure.h"

/* ---- plan (coverage/plan.c, plan_candidates.c, plan_cover.c; the plan file: cmd_plan.c) -------- */

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
} cov_plan;

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

/* Shared by the plan files: coverage/plan.c (claims, greedy search), coverage/plan_candidates.c
 * (the candidate set) and coverage/plan_cover.c (the coverage bonus of a candidate). */
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

#endif
