/* shoal coverage/base/: shared output helpers: JSON, CSV, text width, claim labels. Private to coverage/.
 * See LICENSE. */
#ifndef SHOAL_COVERAGE_BASE_H
#define SHOAL_COVERAGE_BASE_H

#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <sys/types.h>

#include "coverage/coverage.h"

/* ---- output helpers (coverage/emit.c) -------------------------------------------------------- */

/* Write s as a JSON string literal, quotes included, escaping per RFC 8259 section 7. */
void cov_emit_json_string(FILE *f, const char *s);
/* Write a JSON number; NAN and infinities become null, since JSON has no such numbers. */
void cov_emit_json_number(FILE *f, double x);
/* Write ', "key": ' and x as cov_emit_json_number writes it: one member of a JSON object after
 * its first. key is written as it is (a plain field name, nothing to escape). */
void cov_emit_json_num_field(FILE *f, const char *key, double x);
/* Write s as one RFC 4180 CSV field: quoted when it holds a comma, quote, CR or LF; a text that a
 * spreadsheet would run as a formula (starting with =, +, -, @, tab or CR) gets a leading
 * apostrophe. Numbers go through cov_emit_csv_number and are never prefixed. */
void cov_emit_csv_field(FILE *f, const char *s);
/* s without the apostrophe cov_emit_csv_field put before a formula-like text (for readers of
 * shoal's own CSV files); s itself otherwise. */
const char *cov_csv_unneutralise(const char *s);
/* Write a number for CSV: %.10g, empty for NAN. */
void cov_emit_csv_number(FILE *f, double x);
/* A progress callback for cov_data_read: ctx is the FILE * of notes (a terminal); it rewrites one
 * line "reading the archive NN%" and ends it at 100%. */
void cov_progress_note(double share, void *ctx);
/* ---- the notation of a claim (coverage/emit.c; README "Notation") ------------------------------
 * shoal's own compact form, used by every table, plot, plan and CSV label:
 *   "x -> y"   an effect claim: x has an effect on y;
 *   "x -0-> y" an absence claim: no effect of x on y (the 0 stands for the zero effect);
 * followed by the adjustment set in brackets when it is not empty: "x -0-> y [s, t]".
 * Reports say it in words: "no effect of x on y given s, t". */

/* The arrow of a claim kind: "->" (effect) or "-0->" (absence). Never NULL. */
const char *cov_claim_arrow(cov_claim_kind kind);
/* The word for a claim kind, as JSON, CSV and tables print it: "effect" or "absence". */
const char *cov_claim_kind_word(cov_claim_kind kind);
/* The claim in the compact form with its adjustment set, "a -0-> y [s, t]"; truncated to fit size
 * bytes (size > 0). */
void cov_claim_label(const cov_graph *g, const cov_claim *c, char *buf, size_t size);
/* The claim in words: "an effect of a on y given s, t", "no effect of a on y" (empty adjustment
 * set); truncated to fit size bytes (size > 0). */
void cov_claim_sentence(const cov_graph *g, const cov_claim *c, char *buf, size_t size);
/* The claim without its adjustment set, "a -0-> y"; truncated to fit size bytes (size > 0). */
void cov_claim_pair_label(const cov_graph *g, const cov_claim *c, char *buf, size_t size);
/* Append printf-style text to the heap string *s (NULL counts as empty), after sep when *s is not
 * empty: the notes, reasons and cautions of one claim grow this way. COV_OK, or COV_ENOMEM with *s
 * unchanged. (util.c) */
int cov_text_append(char **s, const char *sep, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));
int cov_text_vappend(char **s, const char *sep, const char *fmt, va_list ap);
/* Width of a UTF-8 string in characters (code points), for aligning table columns. */
size_t cov_text_width(const char *s);
/* The length of the longest prefix of s[0..n) that is well-formed UTF-8 (n when all of it is). */
size_t cov_utf8_valid_prefix(const char *s, size_t n);

/* ---- numbers (coverage/base/number.c) --------------------------------------------------------- */

/* What cov_number_scan found. */
enum { COV_NUM_NONE, COV_NUM_INT, COV_NUM_REAL, COV_NUM_RANGE };
/* Read s[0..len) (with s[len] == '\0') as a plain decimal number, the only syntax shoal reads
 * anywhere: [+-]digits[.digits][(e|E)[+-]digits] or [+-].digits[...]; no blanks, hexadecimal,
 * "inf" or "nan". Returns COV_NUM_INT (no point or exponent, at most 18 significant digits: *iv
 * and *dv set), COV_NUM_REAL (*dv set, correctly rounded; a subnormal or zero on underflow),
 * COV_NUM_RANGE (too large for a double) or COV_NUM_NONE. iv, dv and leading_zero may be NULL;
 * *leading_zero is 1 for an integer part such as "007". */
int cov_number_scan(const char *s, size_t len, long long *iv, double *dv, int *leading_zero);

/* ---- safe files (coverage/base/files.c) ------------------------------------------------------- */

/* "a directory", "a FIFO (named pipe)", "a character device", ... for a stat mode. */
const char *cov_file_kind(mode_t mode);
/* Open path for reading, refusing before reading a byte anything that is not a regular file (a
 * FIFO without a writer would hang, a device would feed endless bytes). Returns 0 with *out set,
 * or -1 with why (of why_size bytes) saying what was found and errno 0 (not a regular file, empty
 * name) or the open error (ENOENT for a missing file). */
int cov_open_regular(const char *path, FILE **out, char *why, size_t why_size);
/* Check an output path given to option ("-o", "--history") before any work: not empty, not a
 * symbolic link, a directory (want_dir 1) or a regular file (want_dir 0) when it exists, and not
 * the same file as any of the n_inputs inputs (NULL entries are skipped). Returns COV_OK,
 * COV_EINPUT naming the problem, or COV_EIO when the path cannot be inspected. */
int cov_output_check(const char *path, int want_dir, const char *const *inputs, size_t n_inputs,
                     const char *option, cov_error *err);
/* The permission bits of a new file under the process's umask: 0666 & ~umask. */
mode_t cov_new_file_mode(void);
/* ---- terminal text (coverage/base/wrap.c; cov_term_text is in coverage.h) ----------------------------------------------------- */

/* Columns a table may use when stdout is not a terminal, or its width is unknown. */
#define COV_TERM_WIDTH_DEFAULT 80
/* Write text word by word, control characters as '?', starting at column col of the current line;
 * a word that would pass width starts a new line indented by indent spaces (a word longer than a
 * line is cut). Leading blanks in text put one space before its first word when that word stays
 * on the current line. Returns the column after the last word. Widths count characters. */
size_t cov_term_wrap(FILE *out, const char *text, size_t col, size_t indent, size_t width);

/* Text written aside, then copied to the terminal with every line longer than width wrapped under
 * a hanging indent. cov_reflow_begin returns the stream to write to (fallback itself when memory
 * is short, so the text is never lost); cov_reflow_end copies it to out. */
typedef struct {
    char *buf;
    size_t len;
    FILE *mem;
} cov_reflow;
FILE *cov_reflow_begin(cov_reflow *r, FILE *fallback);
void cov_reflow_end(cov_reflow *r, FILE *out, size_t width);

/* ---- terminal tables (coverage/base/table.c) ------------------------------------------------- */

/* A table whose columns take the width of their widest cell. When a row would pass the terminal's
 * width, the columns marked 'd' (detail) leave the row and follow it as "  heading: value" lines,
 * wrapped; the other columns stay. Cells are copied; control characters print as '?'. */
typedef struct cov_table cov_table;
/* n_cols headings; align holds 'l' or 'r' per column; detail holds 'd' or '.' per column (either
 * may be NULL). NULL when out of memory. */
cov_table *cov_table_new(size_t n_cols, const char *const *head, const char *align,
                         const char *detail);
/* Append a row of n_cols cells (NULL cells print empty). COV_OK or COV_ENOMEM. */
int cov_table_add(cov_table *t, const char *const *cells);
int cov_table_print(const cov_table *t, FILE *out, size_t width);   /* COV_OK or COV_ENOMEM */
void cov_table_free(cov_table *t);

/* ---- SHA-256 (coverage/base/sha256.c), FIPS 180-4 ------------------------------------------------ */

typedef struct {
    uint32_t state[8];
    uint64_t bytes;           /* message length so far */
    unsigned char buf[64];
    size_t fill;
    int hw;                   /* 1: the processor's SHA extensions (init sets it; a test may
                                 clear it to check the portable path) */
} cov_sha256;

void cov_sha256_init(cov_sha256 *h);
void cov_sha256_update(cov_sha256 *h, const void *data, size_t n);
/* Finish and write the digest as 64 lower-case hex digits and a NUL; h is spent. */
void cov_sha256_hex(cov_sha256 *h, char hex[65]);
/* The digest of a whole file: coverage/plan/plan_digest.c's cov_sha256_file (with a cov_error). */

/* ---- what counts as one run, in words (coverage/base/runs_text.c) ---------------------------- */

/* "600 runs (1200 rows: 600 repeated rows of the same run counted once); 590 configurations, 10 run
 * more than once; 600 seeds, 0 shared by several configurations", truncated to n bytes. */
void cov_runs_summary(const cov_data *d, char *buf, size_t n);
/* The caution on runs that share inputs and seed but not outputs into buf; returns 1 when there is
 * one, else 0 and buf "". */
int cov_runs_caution(const cov_data *d, const cov_graph *g, char *buf, size_t n);
/* The run figures as one JSON object: rows, runs, repeated_rows, conflicting_runs,
 * configurations, configurations_repeated, seeds, seeds_shared (null without a seed column). */
void cov_runs_json(FILE *f, const cov_data *d);
/* How much of outcome v's variation left by the inputs the seed explains (README.md, "Seed
 * blocks"), and how many of its claims use seed blocks, as one sentence into buf; returns 1, or 0
 * and buf "" when it was not measured (no shared seeds, or v's column has missing cells). */
int cov_seed_outcome_text(const cov_graph *g, const cov_claims *c, const cov_assessments *as,
                          size_t v, char *buf, size_t n);
/* The same for every outcome as a JSON array of {outcome, blocks, unblocked_runs, share,
 * variance_drop, f, df1, df2, p, claims_using_blocks}; null when no two runs share a seed. */
void cov_seed_outcomes_json(FILE *f, const cov_graph *g, const cov_claims *c,
                            const cov_assessments *as);

/* ---- independent jobs on several threads (coverage/base/jobs.c) ------------------------------ */

/* One job: run(arg, err) returns COV_OK or a status with err filled. It must only read what other
 * jobs of the same call read, and write only what no other job reads or writes. */
typedef int (*cov_job_fn)(void *arg, cov_error *err);
typedef struct {
    cov_job_fn run;
    void *arg;
    int rc;               /* set by cov_jobs_run: the job's status, or COV_JOB_SKIPPED */
    cov_error err;        /* the job's own error (filled when rc is a failure) */
} cov_job;
/* rc of a job that did not run because a job before it in the list failed. */
#define COV_JOB_SKIPPED (-1)
#define COV_JOBS_MAX_THREADS 64
/* Run jobs[0..n) on up to `threads` threads, the calling thread among them. With threads <= 1 the
 * calling thread runs them in list order and stops at the first failure. With more, they are
 * started in list order on whichever thread is free, and a job is skipped only when one before it
 * in the list has failed. Either way the result is the status of the first job in list order that
 * failed, with *err copied from that job (err may be NULL), or COV_OK when every job succeeded:
 * the error does not depend on the thread count or on the order in which jobs finish. A thread
 * that cannot be created leaves its jobs to the others; the runner allocates nothing. */
int cov_jobs_run(cov_job *jobs, size_t n, int threads, cov_error *err);

#endif
