/* shoal coverage/archive/: the run archive: CSV reading, SQLite archive, columns, one claim's rows. Private to coverage/.
 * See LICENSE. */
#ifndef SHOAL_COVERAGE_ARCHIVE_H
#define SHOAL_COVERAGE_ARCHIVE_H

#include <stdint.h>
#include <stdio.h>

#include "coverage/graph/graph.h"

/* ---- archive and data (coverage/csv.c, coverage/archive.c, coverage/data.c) ------------------ */

/* A streaming RFC 4180 CSV reader. cov_csv_open reads the header row (delimiter comma, tab or
 * semicolon detected from it; a UTF-8 BOM skipped) and rejects an empty or duplicate name
 * (duplicates ignore ASCII case, as SQLite column names do). Errors are COV_EINPUT with
 * err->where "file:line:column" (columns count UTF-8 characters). */
typedef struct cov_csv cov_csv;
/* Columns a CSV header may have: SQLite's default column limit (SQLITE_MAX_COLUMN), which an
 * import could not exceed anyway. */
#define COV_CSV_MAX_COLUMNS 2000
int cov_csv_open(const char *path, cov_csv **out, cov_error *err);
void cov_csv_close(cov_csv *c);
char cov_csv_delimiter(const cov_csv *c);
size_t cov_csv_n_fields(const cov_csv *c);
const char *cov_csv_header(const cov_csv *c, size_t i);
/* Read the next data row: *got is 1 with a row, 0 at the end of the file. Entirely empty lines are
 * skipped. A row with another field count than the header is COV_EINPUT. */
int cov_csv_next(cov_csv *c, int *got, cov_error *err);
/* Field i of the current row, NUL-terminated, valid until the next cov_csv_next; *len may be NULL. */
const char *cov_csv_field(const cov_csv *c, size_t i, size_t *len);
/* The line on which the current row starts. */
long cov_csv_line(const cov_csv *c);

/* The open archive's read-only SQLite connection (owned by the archive: never close it). It is
 * opened with SQLITE_OPEN_NOMUTEX: use it from one thread at a time. Callers that write history
 * into an owned archive open a separate read-write connection of their own. */
struct sqlite3;
struct sqlite3 *cov_archive_db(cov_archive *a);
/* The table of runs, as given to cov_archive_open, and its column names in declared order. */
const char *cov_archive_table(const cov_archive *a);
size_t cov_archive_n_columns(const cov_archive *a);
const char *cov_archive_column(const cov_archive *a, size_t i);

/* Columns that are not graph variables (coverage/archive/extra.c). Whether the table has column
 * name (ASCII case folded); and its values as numbers in the order cov_data_read reads runs, NAN
 * for NULL or text that is not a number. *out is malloc'd (n values). A missing column is
 * COV_EINPUT; COV_EIO, COV_ENOMEM. */
int cov_archive_has_column(const cov_archive *a, const char *name);
int cov_archive_read_number(cov_archive *a, const char *name, double **out, size_t *n,
                            cov_error *err);

/* The plan's predictions (coverage/archive/predictions.c), kept in shoal's own archive or in a
 * side file (tables shoal_plans, shoal_plan_claims, shoal_plan_seeds), and what the runs achieved
 * once the planned runs arrived. */
typedef struct {
    char *kind, *treatment, *outcome;
    double power_now, power_pred, runs_now, runs_after;
    int reaches;              /* predicted to reach the target */
    double achieved;          /* power measured once the runs arrived; NAN until then */
} cov_pred_claim;

typedef struct {
    long long id;
    char made_at[32];         /* UTC, ISO 8601 */
    char digest[65];          /* SHA-256 of the plan file, hex */
    char *plan_file;
    long long runs_before;    /* runs in the archive when the plan was made */
    double target;
    double total_cost;        /* predicted, NAN without a cost column */
    unsigned long *seeds;     /* the planned runs' seeds */
    size_t n_seeds;
    cov_pred_claim *claims;
    size_t n_claims;
    char achieved_at[32];     /* "" until a survey found every planned run */
    size_t arrived;           /* not stored: planned runs the survey found in the archive */
} cov_pred_record;

/* Append r (its id and achieved figures ignored) to db_path, created when create is nonzero, in
 * one transaction. The caller guarantees db_path is shoal's own archive or a side file. */
int cov_pred_save(const char *db_path, int create, const cov_pred_record *r, cov_error *err);
/* Every record in db_path, oldest first; none when the tables (or, with missing_ok, the file)
 * are missing. Free with cov_pred_records_free. COV_OK, COV_EIO, COV_ENOMEM. */
int cov_pred_load(const char *db_path, int missing_ok, cov_pred_record **out, size_t *n,
                  cov_error *err);
/* Store r->achieved_at and each claim's achieved power for record r->id. */
int cov_pred_save_achieved(const char *db_path, const cov_pred_record *r, cov_error *err);
void cov_pred_records_free(cov_pred_record *r, size_t n);

/* One import batch, from the shoal_batches table. */
typedef struct {
    long long id;
    char *imported_at;    /* UTC, ISO 8601: "2026-12-02T01:30:00Z" */
    char *source;         /* the CSV path as given to `shoal import` */
    long long rows;       /* rows the import appended */
} cov_batch;

/* The batches of an owned archive in id order (*n 0 and *out NULL for an archive that is not
 * owned). Free with cov_batches_free. */
int cov_archive_batches(cov_archive *a, cov_batch **out, size_t *n, cov_error *err);
void cov_batches_free(cov_batch *b, size_t n);

/* Append csv_path to the existing archive file db_path in one transaction (cov_import_csv's
 * work once the file is there; coverage/archive/archive_create.c makes new archives). */
int cov_import_into(const char *csv_path, const char *db_path, const char *table, int again,
                    long long *batch_id, size_t *rows, cov_import_overlap *ov, cov_error *err);

/* After a failed first read of the archive at path on the read-only connection db: when a rollback
 * journal left by an interrupted write (a "hot journal") is the cause, fill err with what
 * happened and how to recover, and return COV_EINPUT; else COV_OK (coverage/archive/archive_create.c). */
int cov_archive_explain_journal(struct sqlite3 *db, const char *path, cov_error *err);

/* path as a file name SQLite will not read as a URI ("file:x" becomes "./file:x"); malloc'd,
 * NULL when out of memory (coverage/archive/archive_create.c). */
char *cov_sqlite_filename(const char *path);
/* 1 when the schema of db has a table called name, 0 when not, -1 on an SQLite error (also when
 * the file is not an SQLite database). */
int cov_sqlite_has_table(struct sqlite3 *db, const char *name);

/* Write name as an SQL identifier in double quotes, doubling embedded quotes, into a new string
 * (NULL when out of memory). Every identifier shoal puts into SQL goes through this. */
char *cov_sql_ident(const char *name);
/* strcmp that folds ASCII A-Z to a-z and nothing else, as SQLite compares column names
 * (coverage/archive.c); unlike strcasecmp it ignores the locale. */
int cov_ascii_casecmp(const char *a, const char *b);

/* ---- rows an import would repeat (coverage/overlap.c) ------------------------------------------ */

/* The stored rows of table, hashed over the columns cols (the CSV's, in its order) with their
 * batch. The row hash of a CSV row is built with cov_overlap_start and one cov_overlap_null, _int,
 * _real or _text per field, in column order, matching how the stored values were typed. */
typedef struct cov_overlap cov_overlap;
int cov_overlap_load(struct sqlite3 *db, const char *table, const char *const *cols,
                     size_t n_cols, cov_overlap **out, cov_error *err);
uint64_t cov_overlap_start(void);
uint64_t cov_overlap_null(uint64_t h);
uint64_t cov_overlap_int(uint64_t h, long long v);
uint64_t cov_overlap_real(uint64_t h, double v);
uint64_t cov_overlap_text(uint64_t h, const char *s, size_t len);
/* Count the CSV row with hash h as matched when a stored row has it. */
void cov_overlap_match(cov_overlap *o, uint64_t h);
void cov_overlap_result(const cov_overlap *o, cov_import_overlap *res);
void cov_overlap_free(cov_overlap *o);

/* ---- the read's staged blocks (coverage/archive/stage.c) ---------------------------------------- */

/* The read gathers rows row-major in blocks and copies each finished block into the columns
 * (col[vars[k]] for k < n_rec) one column at a time. cov_stage_unstage copies rows [base, base +
 * count) of one block; cov_stage_prefault asks Linux to map a fresh column of `bytes` at once
 * (advice only, and only for columns of 1 MiB or more). */
void cov_stage_unstage(double *const *col, const size_t *vars, size_t n_rec, const double *stage,
                       size_t base, size_t count);
void cov_stage_prefault(void *p, size_t bytes);
/* The copy on a second thread: the reading thread fills cov_stage_block's block of `rows` rows and
 * hands it over with cov_stage_pass (rows [base, base + count), the columns' capacity cap), which
 * returns the next block to fill, waiting while every block of the small ring (about 256 KiB,
 * two blocks at least) waits to be copied. The copier also maps the columns' pages a little ahead
 * of the rows it writes. The copier touches nothing but the blocks and the columns' values: before
 * the reader moves or frees the columns (realloc), cov_stage_drain waits until every block handed
 * over is copied. cov_stage_close hands over a last block (count may be 0) and waits for the
 * copier to finish; cov_stage_abort stops it without copying what is left; both free s (NULL is
 * allowed). cov_stage_open returns COV_ENOMEM, or COV_OK with *out NULL when no thread could be
 * started (then the caller copies its blocks itself). Every allocation is made by the caller's
 * thread, in cov_stage_open. */
typedef struct cov_stage cov_stage;
int cov_stage_open(double *const *col, const size_t *vars, size_t n_rec, size_t rows,
                   cov_stage **out);
double *cov_stage_block(cov_stage *s);
double *cov_stage_pass(cov_stage *s, size_t base, size_t count, size_t cap);
void cov_stage_drain(cov_stage *s);
void cov_stage_close(cov_stage *s, size_t base, size_t count, size_t cap);
void cov_stage_abort(cov_stage *s);

/* ---- what counts as one run (coverage/runs.c) ------------------------------------------------- */

/* Make d hold each run once: rows equal in every input and the seed (d->seed, when the graph
 * declares one; a run with an empty seed cell has no seed) are one run when their outputs are equal
 * too; without a seed, rows equal in every input and output are one run. Missing cells compare
 * equal to each other. Repeats are removed in place (the first row stays; batch, seed and n_missing
 * follow), and d->n_rows, n_duplicates, n_conflicts, n_configs, n_replicated, n_seeds and
 * n_shared_seeds are filled. kept (NULL, or room for d->n_runs flags on entry) receives 1 for each
 * row kept and 0 for each repeat. Returns COV_OK or COV_ENOMEM. */
int cov_runs_identify(cov_data *d, const cov_graph *g, unsigned char *kept, cov_error *err);
/* A number from 1 to 2^31 - 1 that depends on every run's recorded values and seed: the same
 * archive gives the same number, an archive with other runs (almost surely) another. */
unsigned long cov_runs_fingerprint(const cov_data *d);

/* ---- one claim's regression data (coverage/design.c) ------------------------------------------ */

/* The regression of one claim on the archive. Rows are the runs where the treatment, the outcome
 * and every member of the adjustment set are present. Columns: [0] the intercept; then the
 * treatment (one column, or L - 1 dummies against its first level for a level-set treatment);
 * then the adjustment set in ascending variable order (numeric and bool as they are, level sets as
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

/* ---- the history of surveys (coverage/archive/history.c) -------------------------------------- */

/* The figures of one survey: one snapshot in the history. */
typedef struct {
    char at[32];              /* UTC, ISO 8601: "2026-12-02T01:30:00Z" */
    long long n_runs;
    long long n_batches;
    long long n_ample, n_underpowered, n_blind;
    double marginal_share, pairwise_share, threeway_share;   /* NAN when not computed */
    char digest[65];          /* content digest of the runs (cov_data_digest); "" when unknown */
} cov_snapshot;

/* One claim's line in a snapshot (all strings borrowed). */
typedef struct {
    const char *kind, *treatment, *outcome, *verdict;   /* words as the outputs print them */
    int assessed;             /* 0: runs, power, mde and runs_needed are stored as NULL */
    long long runs;
    double power, mde, runs_needed;   /* NAN and infinities are stored as NULL */
} cov_snapshot_claim;

/* Where a snapshot came from (borrowed; either may be NULL, stored as NULL). */
typedef struct {
    const char *graph_path;
    const char *archive_path;
} cov_history_source;

/* Read the snapshots kept in the SQLite file db_path, oldest first. A file without history
 * tables, or (missing_ok 1) no file at all, gives *n = 0. The file is opened read-only. Free *out
 * with free(). Returns COV_OK, COV_EIO, COV_EINPUT (not SQLite), COV_ENOMEM. */
int cov_history_load(const char *db_path, int missing_ok, cov_snapshot **out, size_t *n,
                     cov_error *err);
/* Append snapshot r and its n_claims claim lines to the history tables (shoal_snapshots,
 * shoal_snapshot_claims) of db_path, created when missing, in one transaction; with create_file 1
 * the file itself is created when missing (a side file), else it must exist (shoal's archive).
 * The caller guarantees db_path is shoal's own archive or a side file: never the user's archive.
 * Returns COV_OK or COV_EIO (err filled; nothing written). */
int cov_history_record(const char *db_path, int create_file, const cov_history_source *src,
                       const cov_snapshot *r, const cov_snapshot_claim *claims, size_t n_claims,
                       cov_error *err);
/* The content digest of d (coverage/archive/digest.c): SHA-256 over the run count (8 bytes,
 * little-endian), then, for each recorded variable in graph order, its name and NUL and each value
 * as IEEE 754 binary64 little-endian (missing cells as 0x7ff8000000000000, -0 as +0; bools 0/1,
 * levels by index). 64 hex digits and a NUL into hex. */
void cov_data_digest(const cov_graph *g, const cov_data *d, char hex[65]);

/* The runs' centred cross-products in one pass for both the assessment and each claim's support
 * (coverage/archive/xshare.c): each block of COV_XSHARE_BLOCK runs has its moments computed once
 * (pw_moments_of_block) and merged into two totals, each bit for bit what its reader would have
 * summed on its own: `global`, every complete recorded variable (a level set as its L - 1 dummies
 * against level 0, a level-set output also as its level index) merged block after block in run
 * order, as cov_assess sums it; and `sub`, the complete variables that are not level sets, merged
 * block after block within shards of COV_XSHARE_SHARD runs and the shards in order, as the
 * support's summary sums it. The figures do not depend on threads. */
#define COV_XSHARE_BLOCK 128
#define COV_XSHARE_SHARD 65536
typedef struct {
    size_t k;             /* global columns */
    size_t *base;         /* per variable: its first global column; SIZE_MAX when left out */
    size_t *index_col;    /* per level-set output: the column of its level index; else SIZE_MAX */
    pw_moments *global;   /* NULL when k == 0 or there are no runs */
    size_t k_sub;         /* subset columns */
    size_t *sub_col;      /* per variable: its subset column; SIZE_MAX when left out */
    size_t *sub_global;   /* per subset column: its global column */
    pw_moments *sub;      /* NULL when k_sub == 0 or there are no runs */
} cov_xshare;
/* Build on up to `threads` threads. *out is the caller's (cov_xshare_free, which accepts NULL).
 * COV_OK or COV_ENOMEM. */
int cov_xshare_build(const cov_graph *g, const cov_data *d, int threads, cov_xshare **out);
void cov_xshare_free(cov_xshare *x);

#endif
