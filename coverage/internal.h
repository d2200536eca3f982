/* shoal coverage/: declarations shared between coverage/ files, not part of the public interface.
 * See LICENSE. */
#ifndef SHOAL_COVERAGE_INTERNAL_H
#define SHOAL_COVERAGE_INTERNAL_H

#include <stdio.h>

#include "coverage/coverage.h"

/* ---- output helpers (coverage/emit.c) -------------------------------------------------------- */

/* Write s as a JSON string literal, quotes included, escaping per RFC 8259 section 7. */
void cov_emit_json_string(FILE *f, const char *s);
/* Write a JSON number; NAN and infinities become null, since JSON has no such numbers. */
void cov_emit_json_number(FILE *f, double x);
/* Write s as one RFC 4180 CSV field: quoted when it holds a comma, quote, CR or LF. */
void cov_emit_csv_field(FILE *f, const char *s);
/* Write a number for CSV: %.10g, empty for NAN. */
void cov_emit_csv_number(FILE *f, double x);

/* ---- graph and d-separation (coverage/graph.c, coverage/dsep.c, coverage/claims.c) ----------- */

/* ---- archive and data (coverage/csv.c, coverage/archive.c, coverage/data.c) ------------------ */

/* ---- one claim's regression data (coverage/design.c) ------------------------------------------ */

/* The regression of one claim on the archive. Rows are the runs where the treatment, the outcome
 * and every member of the separating set are present. Columns: [0] the intercept; then the
 * treatment (one column, or L - 1 dummies against its first level for a level-set treatment);
 * then the separating set in ascending variable order (numeric and bool as they are, level sets as
 * L - 1 dummies against the first level; a dummy for a level absent from these rows is dropped). */
typedef struct {
    size_t n, p;          /* rows, columns */
    double *X;            /* n * p, row-major */
    double *y;            /* n outcome values */
    size_t treat_first;   /* first treatment column (always 1) */
    size_t treat_cols;    /* 1, or L - 1 for a level-set treatment */
    size_t *row;          /* the run index in cov_data of each row */
} cov_claim_design;

/* Build the design of claim c. Returns COV_OK (possibly with n == 0), COV_ENOMEM. */
int cov_claim_design_build(const cov_graph *g, const cov_claim *c, const cov_data *d,
                           cov_claim_design **out, cov_error *err);
void cov_claim_design_free(cov_claim_design *cd);

/* ---- assessment (coverage/assess.c) ----------------------------------------------------------- */

/* The pw_design of an assessed claim with its current figures, so that callers (plots, plan) can
 * ask pw_power about other run counts by changing n. Returns COV_EINPUT for untestable claims. */
int cov_assess_design(const cov_graph *g, const cov_claims *c, const cov_assessments *a,
                      size_t claim, pw_design *out);

/* ---- coverage and support (coverage/space.c, coverage/support.c, ...) ------------------------- */

/* ---- survey: plots, report, history (coverage/plot.c, coverage/report.c, ...) ----------------- */

/* Everything one survey found, borrowed (not owned) by the plot and report writers. */
typedef struct {
    const cov_options *opt;
    const cov_graph *graph;
    const cov_claims *claims;
    const cov_data *data;
    const cov_assessments *assess;
    const cov_coverage *coverage;
    const cov_supports *support;
    const double *planned;    /* planned runs from `shoal plan`: n_planned rows of graph->n_vars
                                 values (NAN for non-inputs), or NULL */
    size_t n_planned;
} cov_findings;

/* ---- plan (coverage/plan.c) -------------------------------------------------------------------- */

#endif
