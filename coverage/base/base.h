/* shoal coverage/base/: shared output helpers: JSON, CSV, text width, claim labels. Private to coverage/.
 * See LICENSE. */
#ifndef SHOAL_COVERAGE_BASE_H
#define SHOAL_COVERAGE_BASE_H

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
/* A progress callback for cov_data_read: ctx is the FILE * of notes (a terminal); it rewrites one
 * line "reading the archive NN%" and ends it at 100%. */
void cov_progress_note(double share, void *ctx);
/* The claim as one line of text: "a -> y | {s, t}" for an effect claim, "a _||_ y | {s, t}" for an
 * absence claim; truncated to fit size bytes. */
void cov_claim_label(const cov_graph *g, const cov_claim *c, char *buf, size_t size);
/* Width of a UTF-8 string in characters (code points), for aligning table columns. */
size_t cov_text_width(const char *s);
/* The length of the longest prefix of s[0..n) that is well-formed UTF-8 (n when all of it is). */
size_t cov_utf8_valid_prefix(const char *s, size_t n);

#endif
