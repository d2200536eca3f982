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

/* ---- assessment (coverage/assess.c) ----------------------------------------------------------- */

/* ---- coverage and support (coverage/space.c, coverage/support.c, ...) ------------------------- */

/* ---- survey: plots, report, history (coverage/plot.c, coverage/report.c, ...) ----------------- */

/* ---- plan (coverage/plan.c) -------------------------------------------------------------------- */

#endif
