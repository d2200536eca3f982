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

#endif
