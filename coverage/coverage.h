/* shoal coverage/: the graph file, the run archive, the claims, coverage measures and reports.
 * See LICENSE. */
#ifndef SHOAL_COVERAGE_H
#define SHOAL_COVERAGE_H

#include <stddef.h>
#include <stdio.h>

#include "power/power.h"

/* Ownership: every object a cov_ function hands out through an out-parameter belongs to the caller,
 * who releases it with the matching _free or _close; every _free and _close accepts NULL. Strings
 * and arrays inside a struct belong to that struct. Library functions never print to stdout or
 * stderr on their own and never exit: the report writers print only to the FILE * they are given. */

/* Status codes of the coverage module. 0 is success. COV_EINPUT is the user's fault (exit 2). */
enum cov_status {
    COV_OK = 0,
    COV_EINPUT,     /* bad graph file, CSV, archive contents or option value */
    COV_ENOMEM,
    COV_EIO,        /* file system or SQLite failure */
    COV_ENUMERIC,   /* a numeric routine failed or did not converge */
    COV_ENOPLOT     /* gnuplot is missing or failed; callers treat it as a warning */
};

/* Where and what went wrong. where is "file:line:column", "file: row R, column C" or empty. */
typedef struct {
    char where[512];
    char msg[1024];
} cov_error;

/* Fill err (which may be NULL) and return status, so callers can write
 * `return cov_fail(err, COV_EINPUT, where, "expected ...")`. */
int cov_fail(cov_error *err, int status, const char *where, const char *fmt, ...)
    __attribute__((format(printf, 4, 5)));

/* ---------------------------------------------------------------------------------------------
 * The graph file (coverage/graph/graph.c). Format: README.md, "The graph file". */

typedef enum { COV_INPUT, COV_OUTPUT, COV_HIDDEN } cov_role;
typedef enum { COV_REAL, COV_INTEGER, COV_BOOL, COV_LEVELS } cov_type;
typedef enum { COV_UNIT_RAW, COV_UNIT_SD } cov_unit;
/* What an amount is counted over on the treatment's side: one unit of the treatment, a step of
 * `step` units (`per STEP`), or the treatment's whole declared range (`over range`). */
typedef enum { COV_PER_UNIT, COV_PER_STEP, COV_PER_RANGE } cov_per;

/* An amount of effect: raw outcome units, or SDs of the outcome, per unit of treatment, per a step
 * of it or over its declared range. value is NAN when the file does not give it. */
typedef struct {
    double value;
    cov_unit unit;
    cov_per per;          /* COV_PER_UNIT unless the file says `per STEP` or `over range` */
    double step;          /* COV_PER_STEP: the step, > 0, in the treatment's units */
} cov_amount;

typedef struct {
    char *name;
    cov_role role;
    cov_type type;
    double lo, hi;        /* inputs: declared range; bool 0..1; levels 0..L-1. Others: NAN */
    char **levels;        /* COV_LEVELS: the level names, in declared order */
    size_t n_levels;
    double noise_sd;      /* outputs: noise SD declared with `noise`, in the output's units; NAN */
    int held;             /* inputs: 1 when `hold` fixes it for planned runs */
    double held_value;    /* the held value (level index for level sets) */
    int line, col;        /* where it is declared */
    char *unit;           /* `unit "TEXT"`: the variable's unit, or NULL; read it by cov_var_unit */
    int ordered;          /* level sets: 1 when declared `ordered` */
    double *positions;    /* ordered level sets: n_levels increasing positions (`at {...}`, else
                             0, 1, ...); NULL otherwise */
    int noise_own;        /* outputs: `noise independent NAME`: no shared run noise */
} cov_var;

/* The unit text of v, or "" when the graph gives none. Never NULL. */
const char *cov_var_unit(const cov_var *v);
/* The factor that turns an amount counted as a says into one per unit of treatment v: 1 per unit,
 * 1 / step per step, 1 / (hi - lo) over the declared range (ordered level sets: the span of their
 * positions). A bool or unordered level treatment has no units to count over: the amount is the
 * difference between two levels, factor 1. NAN when the range is not declared (an output). */
double cov_amount_per_unit_factor(const cov_amount *a, const cov_var *v);
/* The amount as written, "5 per 1000", "2 sd over range", "0.01"; returns buf. */
const char *cov_amount_text(const cov_amount *a, char *buf, size_t size);

/* The expected shape of an edge's effect: monotone (a slope), or `expect turning` (it rises and
 * falls, or the other way round), which is tested over a level or polynomial basis. */
typedef enum { COV_SHAPE_MONOTONE, COV_SHAPE_TURNING } cov_shape;

typedef struct {
    size_t from, to;      /* variable indices */
    int sign;             /* +1 or -1 when an expected sign is given, else 0 (`expect ?`) */
    cov_shape shape;
    cov_amount effect;    /* smallest effect of interest of this edge; NAN value: the default */
    int line, col;
} cov_edge;

/* A bookkeeping column declared with `ledger` (coverage/graph/ledger.c): kept in the archive,
 * never analysed. */
typedef struct {
    char *name;
    int is_cost;          /* 1 for the column marked `cost` (wall time or money per run) */
    int line, col;        /* where it is declared */
} cov_ledger;

typedef struct {
    char *path;                 /* file name used in messages */
    cov_var *vars;
    size_t n_vars;
    cov_edge *edges;
    size_t n_edges;
    cov_amount default_effect;  /* `default effect`; NAN value when absent */
    cov_amount margin;          /* `default margin`: the equivalence margin for absence claims */
    int inputs_independent;     /* `design independent`: no shared hidden design node */
    char *seed_name;            /* `runseed NAME`: the column holding each run's seed, or NULL */
    int seed_line, seed_col;    /* where it is declared */
    cov_ledger *ledger;         /* `ledger NAME [cost], ...`: bookkeeping columns */
    size_t n_ledger;
    int noise_independent;      /* `noise independent`: outputs share no run noise */
    int default_effect_line, default_effect_col, margin_line, margin_col;   /* where they are */
} cov_graph;

/* Limits the graph file is held to, each refused with its name at file:line:column before any
 * work grows with it: all variables, recorded ones (inputs and outputs, which claims grow with),
 * levels of one variable, and the magnitude and width of a declared range. */
#define COV_MAX_VARIABLES 10000
#define COV_MAX_RECORDED 1000
#define COV_MAX_LEVELS 1000
#define COV_MAX_MAGNITUDE 1e150
#define COV_MIN_RANGE_WIDTH 1e-150

/* Parse a graph file. On a syntax or consistency error returns COV_EINPUT with err->where set to
 * "file:line:column". Returns COV_EIO when the file cannot be read. */
int cov_graph_parse_file(const char *path, cov_graph **out, cov_error *err);
/* The same on text already in memory; name is used in messages. */
int cov_graph_parse_text(const char *name, const char *text, cov_graph **out, cov_error *err);
void cov_graph_free(cov_graph *g);
/* Index of the variable called name, or -1. */
long cov_graph_find(const cov_graph *g, const char *name);
/* The declared seed column's name (`runseed`), or NULL when the graph declares none. */
const char *cov_graph_seed_column(const cov_graph *g);
/* The bookkeeping column marked `cost` (`ledger NAME cost`), or NULL when none is declared. The
 * pointer belongs to g. */
const cov_ledger *cov_graph_cost_column(const cov_graph *g);

/* ---------------------------------------------------------------------------------------------
 * Claims (coverage/graph/claims.c, coverage/graph/dsep.c). */

typedef enum { COV_CLAIM_EFFECT, COV_CLAIM_ABSENCE } cov_claim_kind;
typedef enum { COV_TESTABLE, COV_UNTESTABLE } cov_claim_status;

typedef struct {
    cov_claim_kind kind;
    size_t treatment, outcome;  /* variable indices */
    size_t *cond;               /* the set the test adjusts for, ascending variable indices: the
                                   preferred parent set when all of it is recorded, else min_cond */
    size_t n_cond;
    cov_amount effect;          /* effect of interest (effect claim) or margin (absence claim),
                                   defaults applied */
    int sign;                   /* expected sign from the edge, 0 if none (absence: 0) */
    cov_claim_status status;
    char *reason;               /* untestable: the hidden variable or open path; NULL otherwise */
    int steerable;              /* 1 when the adjustment set holds inputs only */
    size_t *min_cond;           /* a minimal separator among recorded variables, ascending; equal
                                   to cond when cond is already minimal (testable claims only) */
    size_t n_min_cond;
    int rests_on_noise;         /* 1: both ends are outputs and the claim is testable only because
                                   the graph declares their run noise independent */
    cov_shape shape;            /* the edge's expected shape (absence claims: monotone) */
} cov_claim;

typedef struct {
    cov_claim *items;
    size_t n;
} cov_claims;

/* Derive every effect and absence claim that g implies (see README.md, "Claims"). */
int cov_claims_derive(const cov_graph *g, cov_claims **out, cov_error *err);
/* Free claims that cov_claims_derive made (only those: their adjustment sets live in blocks the
 * derivation owns, not in each claim); NULL is allowed. */
void cov_claims_free(cov_claims *c);

/* ---------------------------------------------------------------------------------------------
 * The run archive (coverage/archive/csv.c, coverage/archive/archive.c). */

typedef struct cov_archive cov_archive;

#define COV_DEFAULT_TABLE "runs"

/* Open an SQLite archive read-only. A missing file, a missing table or a file that is not SQLite is
 * COV_EINPUT. table NULL means COV_DEFAULT_TABLE. */
int cov_archive_open(const char *path, const char *table, cov_archive **out, cov_error *err);
void cov_archive_close(cov_archive *a);
/* 1 when the archive was made by `shoal import` (it has shoal's batch table), else 0. */
int cov_archive_owned(const cov_archive *a);
const char *cov_archive_path(const cov_archive *a);

/* Append csv_path to the archive db_path (created when missing) in one transaction, stamped as a
 * new batch. On success writes the batch id and the row count. Bad CSV is COV_EINPUT with
 * err->where "file:line:column". */
int cov_import_csv(const char *csv_path, const char *db_path, const char *table,
                   long long *batch_id, size_t *rows, cov_error *err);

/* Rows of an imported file that the archive already held, by content (the same value in every
 * column of the file; coverage/archive/overlap.c). */
#define COV_OVERLAP_BATCHES 8
typedef struct {
    size_t rows;                          /* rows of the file */
    size_t matched;                       /* of them, rows already in the archive */
    size_t n_batches;                     /* earlier batches holding them (up to 8 listed) */
    long long batch[COV_OVERLAP_BATCHES];
    size_t count[COV_OVERLAP_BATCHES];    /* matched rows per listed batch */
    size_t other;                         /* matched rows in batches beyond the listed ones */
    size_t unbatched;                     /* matched rows that carry no batch (the user's own) */
    char first_batch[512];                /* "batch 1 (imported 2026-...Z from runs.csv)" */
} cov_import_overlap;

/* cov_import_csv with duplicate detection. When every row of the file (at least one) is already
 * in the archive and again is 0, nothing is written and the status is COV_EINPUT naming the
 * earlier batch; with again 1 the rows are appended anyway. ov (may be NULL) receives the overlap
 * found, partial or whole. */
int cov_import_csv_checked(const char *csv_path, const char *db_path, const char *table,
                           int again, long long *batch_id, size_t *rows, cov_import_overlap *ov,
                           cov_error *err);

/* One data problem found while reading, kept as an example for the report. */
typedef struct {
    size_t var;
    size_t row;           /* 1-based row in the table's rowid order */
    double value;
    char what[96];        /* "outside [2, 12]" */
} cov_data_issue;

/* The recorded variables, read once into contiguous columns. */
typedef struct {
    size_t n_runs;
    size_t n_vars;        /* equals the graph's n_vars */
    double **col;         /* col[v][i]: NULL for hidden variables; missing cells are NAN; bools
                             0/1; level sets hold the level index */
    size_t *n_missing;    /* per variable: NULL or NaN cells, out-of-domain cells included */
    size_t *n_outside;    /* per variable: input cells outside the declared domain (stored NAN) */
    cov_data_issue *issues;   /* up to COV_ISSUE_EXAMPLES examples per variable */
    size_t n_issues;
    long long *batch;     /* per run batch id, or NULL when the archive has no batches */
    size_t n_batches;
    /* What counts as one run (coverage/archive/runs.c): rows equal in every input and in the seed
     * are one run (without a seed, rows equal in every input and output). The columns above hold
     * each run once, in the order its first row was read. */
    long long *seed;      /* per run: its seed (`runseed`), COV_SEED_NONE when the cell is empty;
                             NULL when the graph declares no seed column */
    size_t n_rows;        /* rows of the table read, repeats included */
    size_t n_duplicates;  /* rows dropped because an earlier row is the same run */
    size_t n_conflicts;   /* runs sharing inputs and seed with another run but not its outputs
                             (kept as replicates: the simulator or the archive is not consistent) */
    size_t n_configs;     /* distinct configurations (every input) among the runs */
    size_t n_replicated;  /* configurations run more than once */
    size_t n_seeds;       /* distinct seeds among the runs (0 without a seed column) */
    size_t n_shared_seeds;    /* seeds used by two or more configurations (common random numbers) */
    size_t *row_of;       /* per run: the row (0-based, in the order read) it was first read
                             from; NULL when no row repeated an earlier one */
} cov_data;

#define COV_SEED_NONE ((long long)-9223372036854775807LL - 1)

#define COV_ISSUE_EXAMPLES 5

/* Read the graph's recorded variables from the archive. A recorded variable without a column, a
 * non-numeric cell, a bool other than 0/1/true/false or an undeclared level is COV_EINPUT naming
 * the column (and the row). progress may be NULL; it is called now and then with the share done. */
int cov_data_read(cov_archive *a, const cov_graph *g, void (*progress)(double share, void *ctx),
                  void *ctx, cov_data **out, cov_error *err);
/* The same read on `threads` threads (1 or less: exactly cov_data_read): with 2 or more, a second
 * thread copies the rows into the columns while the caller's thread reads the archive; the result,
 * every error (the same first bad cell) and the progress calls are those of the one-thread read. */
int cov_data_read_threads(cov_archive *a, const cov_graph *g, int threads,
                          void (*progress)(double share, void *ctx), void *ctx, cov_data **out,
                          cov_error *err);
void cov_data_free(cov_data *d);
/* A column read row by row in the archive's order (cov_archive_read_number: *n values) turned into
 * one value per run of d, in place: when *n is d->n_rows and rows repeated, the value of each
 * run's first row; *n becomes d->n_runs. Leaves other columns as they are (coverage/archive/
 * runs.c). */
void cov_data_rows_to_runs(const cov_data *d, double *col, size_t *n);

/* ---------------------------------------------------------------------------------------------
 * Per-claim assessment: regression, power, MDE, runs needed (coverage/assess/assess.c). */

typedef enum { COV_AMPLE, COV_UNDERPOWERED, COV_BLIND } cov_verdict;   /* enough / underpowered / untestable */

/* The word printed for a verdict: "ample", "underpowered", "untestable". */
const char *cov_verdict_word(cov_verdict v);

typedef struct {
    double alpha;         /* family-wise level, default 0.05 */
    double target;        /* target power, default 0.80 */
    int bonferroni;       /* 1 (default): Bonferroni over the testable claims */
    int one_sided;        /* 1: one-sided tests where the edge gives a sign */
    int test;             /* COV_TEST_CLASSIC (0) or COV_TEST_ROBUST (HC3, the CLI's default) */
    int power_by;         /* COV_POWER_BY_AUTO (0), _FORMULA or _RESAMPLING */
    unsigned long resample_seed;   /* 0: COV_RESAMPLE_SEED */
    size_t resample_reps; /* wild bootstrap replicates per claim; 0: COV_RESAMPLE_REPS */
    int threads;          /* threads assessing the claims (0 or 1: the calling thread only); the
                             figures and the error reported do not depend on it */
} cov_power_options;

/* The test the figures are for: classic OLS standard errors, or HC3 ones (robust to spread that
 * changes with the inputs). */
enum { COV_TEST_CLASSIC = 0, COV_TEST_ROBUST = 1 };
/* How power is computed: auto resamples where the normal formula cannot be trusted (far from
 * normal, heteroscedastic, discrete or mostly one value); formula never; resampling always (single
 * treatment column claims; the level-set F test always uses the formula). */
enum { COV_POWER_BY_AUTO = 0, COV_POWER_BY_FORMULA = 1, COV_POWER_BY_RESAMPLING = 2 };
/* The method a claim's power came from. */
enum { COV_METHOD_FORMULA = 0, COV_METHOD_RESAMPLED = 1 };
/* The words printed for them: "classic"/"robust", "formula"/"resampled". */
const char *cov_test_word(int test);
const char *cov_method_word(int method);

/* How much of an outcome's variance the runs' seeds explain when seeds are shared across
 * configurations (common random numbers): one block per seed that two or more of the runs share,
 * the other runs in no block; the F test of the blocks added to a regression. */
typedef struct {
    size_t blocks;        /* seed blocks; 0: not measured (no seed shared by two of the runs) */
    size_t unblocked;     /* runs in a block of their own (their seed is in no other run of the
                             regression, or they have none): they add nothing to a blocked test */
    double share;         /* partial R^2 of the blocks given the regressors; NAN: not measured */
    double var_drop;      /* the residual variance estimate's drop with the blocks, df counted */
    double f, df1, df2, p;    /* the F test of the blocks */
} cov_seed_share;

typedef struct {
    size_t claim;         /* index into the claims */
    size_t n;             /* complete cases used */
    double df;
    double estimate, se;  /* observed coefficient and SE, reported only */
    double sigma;         /* residual SD */
    double sd_treatment_resid;   /* sd(X | S), divisor n */
    double vif;           /* 1 / (1 - R^2 of X on S) */
    double effect_raw;    /* effect of interest (or margin) in outcome units per treatment unit */
    double alpha;         /* per-claim level after the family correction */
    double power, power_lo, power_hi;
    double mde, mde_lo, mde_hi;       /* for absence claims: the smallest margin it could show */
    double runs_needed;   /* total runs for the target; INFINITY when unreachable */
    int noise_flag;       /* 1 when the power figure can be off (noise_reasons says why) */
    char *noise_note;     /* why, or NULL */
    int has_pure_error;   /* replicated configurations allow a pure-error sigma */
    double sigma_pure, lof_f, lof_p;
    cov_verdict verdict;
    char *reason;         /* one line: why underpowered or untestable; NULL when ample */
    int has_design;       /* 1 when design holds the claim's test (for cov_assess_design) */
    pw_design design;     /* the test at the current figures (effect = effect_raw) */
    double sd_outcome;    /* the outcome's SD over the complete cases (divisor n - 1), or NAN */
    double excess_kurtosis;   /* of the residuals, or NAN */
    size_t n_diag;        /* rows the residual diagnostics used (a fixed-seed subsample when
                             fewer than n) */
    /* What the graph claims about the effect (README.md, "What the graph claims"). */
    double effect_written_raw;   /* the effect of interest in raw outcome units per the step or
                                    range it was written over (= effect_raw for per-unit amounts) */
    int trend;            /* 1: an ordered level treatment tested by its linear trend (1 df) */
    double omnibus_f, omnibus_p, omnibus_df1;   /* ordered levels: the level set's F beside it */
    double omnibus_power; /* the omnibus F test's power at the same straight-line effect */
    size_t distinct;      /* numeric or ordered treatment: distinct values (levels) run; 0 else */
    double shape_f, shape_p, shape_df1, shape_df2;   /* lack of fit of the straight line; NAN */
    int shape_pure;       /* 1: against pure error from replicated configurations */
    char *caution;        /* shape and never-run-level cautions, "; "-joined, or NULL (they are
                             also in reason, so every output that shows the reason shows them) */
    size_t fixed_var;     /* untestable on these runs: the outcome or treatment that takes one
                             value in every run the claim uses; SIZE_MAX when none */
    double fixed_value;   /* that value (level index for a level set), or NAN */
    double turn_lo, turn_hi;   /* `expect turning` on a numeric treatment: the range over which
                                  effect_raw is the height of the turn (turning.c); NAN else */
    int test;             /* COV_TEST_*: the test power, MDE and runs are for */
    int power_method;     /* COV_METHOD_*: how they were computed */
    double power_formula; /* the normal formula's power for that test (equals power when formula) */
    double mc_se;         /* Monte Carlo SE of a resampled power; NAN for the formula */
    size_t replicates;    /* wild bootstrap replicates behind a resampled power; 0 for the formula */
    double se_robust;     /* HC3 SE of the estimate (on the diagnostic rows, scaled to n); NAN */
    double mode_share;    /* share of the outcome's most common value; NAN when not measured */
    char *fit_note;       /* lack of fit, reported in its own right (not a noise flag); or NULL */
    unsigned noise_reasons;   /* COV_NOISE_* bits: why noise_flag is set */
    int resample_kind;    /* a resampled power's bootstrap: 0 wild (Rademacher), 1 pairs */
    double leave_out_share;   /* the largest share of the SE estimate held by one run, or NAN */
    /* Seed blocks (coverage/assess/seedblock.c; README.md, "Seed blocks"). */
    cov_seed_share seed;  /* how much of the claim's residual variance the seeds explain */
    int seed_blocks_used; /* 1: estimate, se, df, sigma, power, MDE and runs needed are the
                             blocked model's (runs needed then assumes more runs reuse the seeds) */
    double power_unblocked;   /* with blocks used: the power without them; NAN otherwise */
    pw_design design_unblocked;   /* with blocks used: the same test without them (the plan's
                                     runs carry fresh seeds, so it sizes the claim by this) */
} cov_assessment;

/* The value a variable never leaves, as text: the level name, true/false, or the number. */
void cov_value_text(const cov_var *v, double x, char *buf, size_t size);

/* Why a power figure can be off (cov_assessment.noise_reasons). */
enum {
    COV_NOISE_DISAGREE = 1u,       /* formula and resampled power disagree */
    COV_NOISE_FEW_VALUES = 2u,     /* fewer than 20 runs off a mostly-one-value outcome's value */
    COV_NOISE_ONE_RUN = 4u,        /* leaving the heaviest run out moves power over 5 points */
    COV_NOISE_NEAR_CONSTANT = 8u,  /* one value in more than 95% of runs */
    COV_NOISE_TAIL = 16u,          /* a heavy tail the campaign is too small to have seen */
    COV_NOISE_CLASSIC_HETERO = 32u,   /* classic test under changing spread: its level is off */
    COV_NOISE_FEW_DF = 64u,        /* fewer than 10 residual degrees of freedom */
    COV_NOISE_OTHER = 128u         /* fitted exactly, or a level-set outcome taken as numbers */
};

typedef struct {
    cov_power_options opt;
    size_t n_testable;    /* the family size used for Bonferroni */
    cov_assessment *items;    /* one per claim, in claim order */
    size_t n;
    cov_seed_share *seed_outcome;   /* per variable: each complete outcome given every complete
                                       input; NULL when no two runs share a seed */
} cov_assessments;

/* Assess every claim of c (derived from g) on the runs d (read against g): the adjusted
 * regression of each testable claim on its complete cases, the noise checks, and power, MDE and
 * runs needed at the claim's declared effect of interest (never at the observed effect), at the
 * per-claim level cov_family_alpha(opt, testable claims) and the target power opt->target.
 * opt->alpha and opt->target lie strictly in (0, 1), else COV_EINPUT. Effects and MDEs are in
 * outcome units per treatment unit; powers in [0, 1]. d may hold no runs: claims are then sized
 * from the graph's declared noise SDs where it gives them. On COV_OK *out holds one assessment
 * per claim, in claim order, owned by the caller (cov_assessments_free); on error *out is NULL
 * and err says why. A numeric failure of one claim's figures is reported in its reason (verdict
 * underpowered), not as an error; COV_ENUMERIC only when a power computation did not converge,
 * COV_ENOMEM when out of memory. g, c, d, opt and out must not be NULL. */
int cov_assess(const cov_graph *g, const cov_claims *c, const cov_data *d,
               const cov_power_options *opt, cov_assessments **out, cov_error *err);
/* Free a and everything it owns; NULL is allowed. */
void cov_assessments_free(cov_assessments *a);

/* ---------------------------------------------------------------------------------------------
 * Coverage of the input space and support of each claim (coverage/measure/space.c and friends). */

typedef struct {
    size_t min_runs;      /* m: a bin or cell is covered when it holds at least m runs (5) */
    size_t bins;          /* equal-width bins for numeric inputs (10) */
    int way;              /* highest t-way strength 2 or 3; 0: 3 when inputs <= 20, else 2 */
    double dependence_threshold;   /* |r| or Cramer's V above which a pair is flagged (0.5) */
    unsigned long seed;   /* for subsampling and the scrambled probe set */
    int threads;          /* threads for the shared summaries (1); results do not depend on it */
} cov_coverage_options;

/* Bins of one input's declared domain: bools 2, level sets L, integers with <= 10 values one per
 * value, else opt->bins equal-width bins. Returns the bin of x, or -1 when x is NAN or outside. */
size_t cov_bin_count(const cov_var *v, size_t bins);
long cov_bin_of(const cov_var *v, size_t bins, double x);

typedef struct {
    size_t var;
    size_t n_bins;
    size_t *count;        /* runs per bin */
    double share;         /* share of bins with >= min_runs */
} cov_marginal;

typedef struct {
    size_t a, b;          /* variable indices, a < b */
    size_t na, nb;
    size_t *count;        /* na * nb, row-major: count[i * nb + j] */
    double share;         /* share of cells with >= min_runs */
    size_t n_empty;
} cov_pair;

typedef struct {
    cov_coverage_options opt;
    size_t *inputs;       /* the input variable indices */
    size_t n_inputs;
    cov_marginal *marginal;   /* one per input */
    cov_pair *pairs;      /* every pair of inputs */
    size_t n_pairs;
    size_t *worst;        /* pair indices, worst share first */
    double marginal_share;    /* over all bins of all inputs */
    double pairwise_share;    /* over all cells of all pairs */
    double threeway_share;    /* NAN when not computed */
    size_t n_numeric;         /* numeric inputs used for discrepancy and gaps */
    size_t *numeric;
    double cd2;               /* centred L2 discrepancy squared (Hickernell 1998) */
    double cd2_random;        /* its expectation for as many independent uniform points */
    int cd_subsampled;        /* 1 when estimated on a random subsample */
    double fill_distance;     /* in the unit cube of the numeric inputs */
    double *gaps;             /* n_gaps points, n_numeric coordinates each, in the unit cube */
    double *gap_dist;         /* distance from each gap point to the nearest run */
    size_t n_gaps;
    double *dependence;       /* n_inputs * n_inputs: |r| or Cramer's V */
    size_t n_outside;         /* input cells outside their declared domain (data errors; the
                                 archive reader stores them as missing, so runs are not told) */
    size_t n_triples;         /* 3-way combinations counted (0 when not computed) */
    int threeway_sampled;     /* 1 when those are a fixed-seed random sample of all triples */
    size_t cd_n;              /* runs the discrepancy was computed on */
    size_t n_complete;        /* runs with every numeric input present and inside its domain */
    size_t n_probes;          /* probe points of the fill distance */
    int gaps_subsampled;      /* 1 when distances were measured to a random subsample of runs */
    size_t dep_n;             /* runs |r| was computed on (a fixed-seed subsample above 100,000) */
} cov_coverage;

/* Measure how the runs d (read against g) cover the declared input space: the share of bins
 * (marginal) and of cells of every pair (and, with opt->way 3, triple) of inputs holding at least
 * opt->min_runs runs, with opt->bins equal-width bins for numeric inputs; the centred L2
 * discrepancy, fill distance and largest gaps of the numeric inputs in the unit cube; the
 * dependence between inputs. Shares lie in [0, 1], NAN when there is nothing to count (fewer than
 * two inputs for pairs). Subsamples, where the work would be too large, are drawn with opt->seed
 * and flagged. --min-runs >= 1 and --bins >= 2, a usable domain for every input and sizes within
 * the limits of README.md, else COV_EINPUT. On COV_OK *out is the
 * caller's (cov_coverage_free); on error it is NULL and err says why (COV_EINPUT, COV_ENOMEM).
 * g, d, opt and out must not be NULL. */
int cov_coverage_measure(const cov_graph *g, const cov_data *d, const cov_coverage_options *opt,
                         cov_coverage **out, cov_error *err);
/* Free c and everything it owns; NULL is allowed. */
void cov_coverage_free(cov_coverage *c);

typedef struct {
    size_t claim;
    size_t n;                 /* runs with the claim's variables all present */
    size_t distinct;          /* distinct treatment values */
    double spread;            /* SD of the treatment */
    double spread_resid;      /* sd(X | S) */
    double overlap;           /* bool/level treatment: share of runs in strata holding every
                                 level at least min_runs times; numeric: NAN */
    double kish_ess;          /* Kish's effective sample size of the overlap weights */
    double runs_per_config;   /* mean runs per distinct configuration of the claim's variables */
    int pure_error;           /* 1 when replicates allow sigma from pure error */
    int ok;                   /* 1 when support is adequate */
    char *reason;             /* why not, in plain words; NULL when ok */
} cov_support;

typedef struct {
    cov_support *items;       /* one per claim, in claim order; untestable claims have ok = 0 */
    size_t n;
} cov_supports;

/* Measure each claim's support in the runs d: on the complete cases of its treatment, outcome
 * and adjustment set, the distinct treatment values, the treatment's spread and its spread given
 * the adjustment set (sd(X | S), pw_resid_sd, in treatment units, divisor n), for bool and
 * level-set treatments the overlap within propensity strata (each level at least
 * opt->min_runs times) and Kish's effective sample size, the runs per configuration, and whether
 * support is adequate with the reason when not. Untestable claims get ok = 0 and NAN figures. On
 * COV_OK *out holds one item per claim, in claim order, owned by the caller (cov_supports_free);
 * on error it is NULL (COV_ENOMEM, err filled). g, c, d, opt and out must not be NULL. */
int cov_support_measure(const cov_graph *g, const cov_claims *c, const cov_data *d,
                        const cov_coverage_options *opt, cov_supports **out, cov_error *err);
/* Free s and everything it owns; NULL is allowed. */
void cov_supports_free(cov_supports *s);

/* ---------------------------------------------------------------------------------------------
 * Commands (coverage/cmd_*.c). The driver fills cov_options from the command line; each command
 * prints its results to out, writes warnings and progress to note (stderr), and returns a
 * cov_status. *adequate is set to 1 when the command's gate is met and 0 otherwise. */

typedef enum { COV_FMT_TABLE, COV_FMT_CSV, COV_FMT_JSON } cov_format;

typedef struct {
    const char *graph_path;
    const char *archive_path;     /* may be NULL for plan on an empty campaign */
    const char *table;            /* NULL: COV_DEFAULT_TABLE */
    const char *csv_path;         /* import */
    const char *out_path;         /* survey: report directory; plan: CSV file; NULL: default */
    const char *history_path;     /* survey on a read-only archive: side file for history */
    cov_format format;
    int quiet;
    int color;                    /* decided by the driver: terminal and no NO_COLOR */
    int progress;                 /* stderr is a terminal */
    cov_power_options power;
    cov_coverage_options coverage;
    double need_marginal, need_pairwise, need_threeway;   /* gates, NAN when unset */
    long budget;                  /* plan: runs to plan; -1 for auto */
    int replicates;               /* plan: seeds per configuration */
    const char *plan_path;        /* survey: a plan file whose runs the plots overlay, or NULL */
    int again;                    /* import: append a file whose rows the archive already holds */
    /* A test seam, NULL in production (the driver never sets it): called at named points of a
     * long write ("report": the survey's report, halfway); a nonzero return makes the write fail
     * there with COV_EIO, so tests can check that a failure leaves nothing half-written. */
    int (*fault_at)(const char *stage);
    int seed_given;               /* --seed was given (plan: else the seed comes from the archive) */
    const char *cost_column;      /* plan: the archive column holding each run's cost, or NULL */
    double cost_budget;           /* plan: stop before the fitted cost passes it; 0: no limit */
    int rounds;                   /* plan: rounds the campaign is split into (1: one batch) */
    size_t width;                 /* columns of terminal text: the terminal's, else 80 */
    int record_snapshot;          /* survey: record a snapshot even if the runs are unchanged */
    const char *junit_path;       /* survey: write JUnit XML there, or NULL */
    /* The audit trail: the program's version and what the driver was given. */
    const char *version;
    int argc;
    char *const *argv;
    const char *given[48];        /* long names of the options given on the command line */
    size_t n_given;
} cov_options;

/* The whole NUL-terminated s as a finite plain decimal number, the one syntax shoal reads in every
 * file and option (no blanks, hexadecimal, inf or nan; a subnormal is a number): 0 and *out, or
 * -1 (coverage/base/number.c). */
int cov_parse_double(const char *s, double *out);

/* A write-only stream over under that shows control characters as visible escapes ("\x1B",
 * "\r", "\u009B"), letting through only shoal's own colour codes; closing it flushes under but
 * does not close it. NULL when out of memory (coverage/base/term.c). */
FILE *cov_term_filter_open(FILE *under);
/* Write s to out with the same escapes. */
void cov_term_text(FILE *out, const char *s);

/* Fill o with the defaults written in README.md. */
void cov_options_default(cov_options *o);

int cov_cmd_claims(const cov_options *o, FILE *out, FILE *note, int *adequate, cov_error *err);
int cov_cmd_import(const cov_options *o, FILE *out, FILE *note, int *adequate, cov_error *err);
int cov_cmd_check(const cov_options *o, FILE *out, FILE *note, int *adequate, cov_error *err);
int cov_cmd_power(const cov_options *o, FILE *out, FILE *note, int *adequate, cov_error *err);
int cov_cmd_coverage(const cov_options *o, FILE *out, FILE *note, int *adequate, cov_error *err);
int cov_cmd_survey(const cov_options *o, FILE *out, FILE *note, int *adequate, cov_error *err);
int cov_cmd_plan(const cov_options *o, FILE *out, FILE *note, int *adequate, cov_error *err);

#endif
