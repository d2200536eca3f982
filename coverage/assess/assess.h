/* shoal coverage/assess/: the assessment of each claim: test, power, MDE, verdict. Private to coverage/.
 * See LICENSE. */
#ifndef SHOAL_COVERAGE_ASSESS_H
#define SHOAL_COVERAGE_ASSESS_H

#include <stdio.h>

#include "coverage/archive/archive.h"

/* ---- assessment (coverage/assess.c) ----------------------------------------------------------- */

/* The pw_design of an assessed claim with its current figures, so that callers (plots, plan) can
 * ask pw_power about other run counts by changing n. Returns COV_EINPUT for untestable claims. */
int cov_assess_design(const cov_graph *g, const cov_claims *c, const cov_assessments *a,
                      size_t claim, pw_design *out);

/* Write the JSON members every command prints for a claim, without braces: "kind", "treatment",
 * "outcome", "adjustment_set", "effect_of_interest", "effect_unit", "sign", "status", "reason",
 * "steerable", "minimal_adjustment_set" (the `shoal claims --json` fields, in that order). */
void cov_claim_json_fields(FILE *out, const cov_graph *g, const cov_claim *c);
/* The claim's adjustment set as one CSV cell: names joined by ';', a name holding ';' or '"'
 * quoted with its quotes doubled. Returns a malloc'd string, or NULL when out of memory. */
char *cov_claim_csv_set(const cov_graph *g, const cov_claim *c);
/* The CSV fields kind,treatment,outcome,adjustment_set,effect_of_interest,effect_unit,sign,status,
 * steerable (no trailing comma or newline); adjustment_set joins names with ';'. */
void cov_claim_csv_fields(FILE *out, const cov_graph *g, const cov_claim *c);
/* The claim's minimal adjustment set (min_cond) as one CSV field, written like adjustment_set; the
 * CSV writers put it last in the row, as minimal_adjustment_set, so earlier columns keep their place. */
void cov_claim_csv_min_field(FILE *out, const cov_graph *g, const cov_claim *c);
/* The claim's members from the graph's own forms, appended by cov_claim_json_fields: ",
 * "effect_written", "effect_per", "effect_step", "effect_per_unit_factor", "treatment_unit",
 * "outcome_unit", "shape", "rests_on_noise_independence". The CSV form writes the same as
 * COV_CLAIM_CSV_FORMS_HEADER columns, each preceded by a comma (the CSV writers put them last). */
void cov_claim_json_forms(FILE *out, const cov_graph *g, const cov_claim *c);
void cov_claim_csv_forms(FILE *out, const cov_graph *g, const cov_claim *c);
#define COV_CLAIM_CSV_FORMS_HEADER \
    ",effect_written,effect_per,effect_per_unit_factor,treatment_unit,outcome_unit,shape," \
    "rests_on_noise_independence"


/* ---- shape of an effect (coverage/assess/shape.c) -------------------------------------------- */

/* The linear trend of an ordered level-set treatment from a fit whose last t = L - 1 columns are
 * its dummies against level 0 (idx maps them to m's columns). ok = 0 when it cannot be formed (a
 * single level run, or a separating set that fixes part of the level set). */
typedef struct {
    int ok;
    size_t n_present;     /* levels with runs */
    char *unrun;          /* declared levels never run, ", "-joined, or NULL (owned) */
    double sd_eq;         /* the spread with which the t noncentrality is slope sd_eq sqrt(n) /
                             sigma, as for a numeric treatment */
    double slope, slope_se_factor;   /* estimated slope per position unit; its SE / sigma */
    double ss_levels;     /* b' M b: the level set's sum of squares given the separating set */
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
 * when the separating set is empty; otherwise it leaves aside the set's correlation with the
 * basis. Returns COV_OK or COV_ENOMEM. */
int cov_shape_numeric(const double *x, const double *e, size_t m, double n_coef,
                      double sigma_pure, double df_pe, cov_shape_fit *out);

/* An assessment's figures on the effect's shape and units, for the power outputs: the JSON
 * members "effect_written_raw", "test", "omnibus" ({df1, f, p, power} or null),
 * "distinct_values", "shape_checkable", "shape_lack_of_fit" ({f, df1, df2, p, pure_error} or null),
 * "caution"; the CSV columns of COV_SHAPE_CSV_HEADER, each preceded by a comma; and the table's
 * note lines for one claim. */
void cov_assessment_json_shape(FILE *out, const cov_graph *g, const cov_claim *c,
                               const cov_assessment *a);
void cov_assessment_csv_shape(FILE *out, const cov_assessment *a);
void cov_assessment_table_shape(FILE *out, const char *label, const cov_assessment *a);
#define COV_SHAPE_CSV_HEADER \
    ",trend,effect_written_raw,omnibus_f,omnibus_p,omnibus_power,distinct_values,shape_f," \
    "shape_p,caution"

#endif
