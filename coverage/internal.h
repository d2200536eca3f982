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

/* ---- graph and d-separation (coverage/graph.c, coverage/graph_lex.c, coverage/dsep.c, ...) --- */

/* The graph file's tokens (coverage/graph_lex.c), which coverage/graph.c parses line by line. */
typedef enum {
    COV_TOK_END, COV_TOK_WORD, COV_TOK_QUOTED, COV_TOK_NUMBER, COV_TOK_ARROW, COV_TOK_COMMA,
    COV_TOK_LBRACK, COV_TOK_RBRACK, COV_TOK_LBRACE, COV_TOK_RBRACE, COV_TOK_PLUS, COV_TOK_MINUS
} cov_tok_kind;

typedef struct {
    cov_tok_kind kind;
    char *text;     /* COV_TOK_WORD, COV_TOK_QUOTED, COV_TOK_NUMBER: owned, unescaped */
    double num;     /* COV_TOK_NUMBER */
    int col;        /* 1-based, in characters (UTF-8 continuation bytes do not count) */
} cov_token;

/* A growable array of tokens; the caller frees tok after a last cov_tokens_clear. */
typedef struct {
    cov_token *tok;
    size_t n, cap;
} cov_tokens;

/* Read the whole file at path into *text, NUL-terminated and malloc'd (the caller frees it).
 * Returns COV_OK; COV_EIO when it cannot be opened or read; COV_EINPUT with err->where
 * "path:line:column" when it holds a NUL byte; COV_ENOMEM. */
int cov_graph_read_text(const char *path, char **text, cov_error *err);
/* Append the tokens of line number `line` [s, e) of the graph file `name` to toks, closed by a
 * COV_TOK_END; a '#' starts a comment to the end of the line. Returns COV_OK; COV_EINPUT with
 * err->where "name:line:column" for a character, number or quoted name it cannot read;
 * COV_ENOMEM. */
int cov_graph_lex_line(cov_tokens *toks, const char *name, int line, const char *s, const char *e,
                       cov_error *err);
/* Free the texts of the tokens in toks and empty it, keeping its array for the next line. */
void cov_tokens_clear(cov_tokens *toks);
/* Describe t for a "found ..." message ("the end of the line", "'->'", "the number 3") into buf of
 * size bytes; returns buf. */
const char *cov_token_describe(const cov_token *t, char *buf, size_t size);
/* Fill err with the message fmt and err->where "name:line:col" (err may be NULL); returns
 * COV_EINPUT. */
int cov_graph_fail(cov_error *err, const char *name, int line, int col, const char *fmt, ...)
    __attribute__((format(printf, 5, 6)));

#define COV_NO_NODE ((size_t)-1)

/* The DAG that separator searches work on: node i < g->n_vars is variable i; when the inputs are
 * not declared independent, node g->n_vars is the hidden design node, a parent of every input.
 * Parents and children are stored as offset arrays: the parents of v are par[par_start[v]] up to
 * par[par_start[v + 1] - 1], and likewise for children. */
typedef struct {
    size_t n;             /* nodes */
    size_t n_vars;        /* the graph's variables (nodes 0 .. n_vars - 1) */
    size_t design;        /* the design node, or COV_NO_NODE */
    size_t *par_start, *par;
    size_t *ch_start, *ch;
} cov_dag;

/* Build the DAG of g, with the design node when with_design is 1, leaving out edge skip_edge
 * (an index into g->edges, or COV_NO_NODE for none). Returns COV_OK or COV_ENOMEM. */
int cov_dag_build(const cov_graph *g, int with_design, size_t skip_edge, cov_dag **out);
void cov_dag_free(cov_dag *d);

/* *separated = 1 when the node set in_z (in_z[v] != 0, length d->n) d-separates x and y, by the
 * Bayes-ball reachability walk. x and y must not be in in_z. Returns COV_OK or COV_ENOMEM. */
int cov_dsep_separated(const cov_dag *d, size_t x, size_t y, const unsigned char *in_z,
                       int *separated);
/* A d-connecting path from x to y given in_z: writes its nodes to path (room for 2 * d->n) and
 * the arrows between consecutive nodes to dir (dir[i] = +1: path[i] -> path[i+1]; -1: <-),
 * *len nodes (0 when x and y are d-separated). Returns COV_OK or COV_ENOMEM. */
int cov_dsep_open_path(const cov_dag *d, size_t x, size_t y, const unsigned char *in_z,
                       size_t *path, int *dir, size_t *len);
/* A minimal d-separator of x and y drawn from the nodes with allowed[v] != 0 (FindMinSep). On
 * success *found = 1 and z (length d->n) marks the separator. When none exists *found = 0 and z
 * marks the largest candidate, allowed nodes among the ancestors of x and y, which leaves some
 * path open. Returns COV_OK or COV_ENOMEM. */
int cov_dsep_minsep(const cov_dag *d, size_t x, size_t y, const unsigned char *allowed,
                    unsigned char *z, int *found);

/* ---- archive and data (coverage/csv.c, coverage/archive.c, coverage/data.c) ------------------ */

/* A streaming RFC 4180 CSV reader. cov_csv_open reads the header row (delimiter comma, tab or
 * semicolon detected from it; a UTF-8 BOM skipped) and rejects an empty or duplicate name
 * (duplicates ignore ASCII case, as SQLite column names do). Errors are COV_EINPUT with
 * err->where "file:line:column" (columns count UTF-8 characters). */
typedef struct cov_csv cov_csv;
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

/* Write name as an SQL identifier in double quotes, doubling embedded quotes, into a new string
 * (NULL when out of memory). Every identifier shoal puts into SQL goes through this. */
char *cov_sql_ident(const char *name);
/* strcmp that folds ASCII A-Z to a-z and nothing else, as SQLite compares column names
 * (coverage/archive.c); unlike strcasecmp it ignores the locale. */
int cov_ascii_casecmp(const char *a, const char *b);

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

/* Write the JSON members every command prints for a claim, without braces: "kind", "treatment",
 * "outcome", "conditioning", "effect_of_interest", "effect_unit", "sign", "status", "reason",
 * "steerable", "minimal_conditioning" (the `shoal claims --json` fields, in that order). */
void cov_claim_json_fields(FILE *out, const cov_graph *g, const cov_claim *c);
/* The claim's separating set as one CSV cell: names joined by ';', a name holding ';' or '"'
 * quoted with its quotes doubled. Returns a malloc'd string, or NULL when out of memory. */
char *cov_claim_csv_set(const cov_graph *g, const cov_claim *c);
/* The CSV fields kind,treatment,outcome,conditioning,effect_of_interest,effect_unit,sign,status,
 * steerable (no trailing comma or newline); conditioning joins names with ';'. */
void cov_claim_csv_fields(FILE *out, const cov_graph *g, const cov_claim *c);
/* The claim's minimal separating set (min_cond) as one CSV field, written like conditioning; the
 * CSV writers put it last in the row, as minimal_conditioning, so earlier columns keep their place. */
void cov_claim_csv_min_field(FILE *out, const cov_graph *g, const cov_claim *c);

/* ---- coverage and support (coverage/space.c, coverage/support.c, ...) ------------------------- */

/* Centred L2 discrepancy squared (Hickernell 1998) of n points in [0,1]^d, row-major; O(n^2 d).
 * Returns NAN when n or d is 0. */
double cov_cd2(const double *x, size_t n, size_t d);
/* Expected CD^2 of n independent uniform points in [0,1]^d: ((5/4)^d - (13/12)^d) / n (derived in
 * coverage/discrepancy.c). */
double cov_cd2_random(size_t n, size_t d);

/* Probe points for the fill distance: n points of [0,1)^d, row-major, a randomized low-discrepancy
 * sequence fixed by seed (coverage/gaps.c says which). Returns COV_OK, COV_ENOMEM. */
int cov_probe_points(size_t n, size_t d, unsigned long seed, double *out);
/* Probe points the fill distance uses for d numeric inputs. */
size_t cov_probe_count(size_t d);
/* Runs cov_fill_gaps measures distances to when given n runs in d dimensions: n, or the size of
 * the fixed-seed subsample that keeps the search within its work limit. */
size_t cov_gap_runs(size_t n, size_t d);

/* Fill distance of the n runs pts (row-major, n x d, unit cube) over cov_probe_count(d) probes:
 * the largest distance from a probe to its nearest run, and up to max_gaps probes farthest from
 * any run (gaps: max_gaps x d, gap_dist: max_gaps; written farthest first). *subsampled is 1 when
 * the distances were measured to a fixed-seed random subsample of the runs (an upper bound).
 * Returns COV_OK, COV_ENOMEM. */
int cov_fill_gaps(const double *pts, size_t n, size_t d, unsigned long seed, size_t max_gaps,
                  double *fill, double *gaps, double *gap_dist, size_t *n_gaps, int *subsampled);

/* Cramer's V (Cramer 1946) of an na x nb table of counts, row-major; empty rows and columns are
 * dropped; no bias correction. NAN when fewer than two non-empty rows or columns remain. */
double cov_cramer_v(const size_t *count, size_t na, size_t nb);
/* |Pearson r| of x and y over the indices where both are finite; NAN when a side is constant. */
double cov_abs_pearson(const double *x, const double *y, size_t n);
/* Fill c->dependence from c->pairs and the data (coverage/dependence.c). */
int cov_dependence_fill(const cov_graph *g, const cov_data *d, cov_coverage *c);

/* Kish's effective sample size (Kish 1965) of weights w: (sum w)^2 / sum w^2; NAN when all are 0. */
double cov_kish_ess(const double *w, size_t n);

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

/* The figures of one survey, one round of the campaign's history (coverage/history.c). */
typedef struct {
    char at[32];              /* UTC, ISO 8601: "2026-12-02T01:30:00Z" */
    long long n_runs;
    long long n_batches;
    long long n_ample, n_thin, n_blind;
    double marginal_share, pairwise_share, threeway_share;   /* NAN when not computed */
} cov_round;

/* Where a survey keeps its history: in the owned archive, in a --history side file, or nowhere. */
typedef enum { COV_HISTORY_NONE, COV_HISTORY_ARCHIVE, COV_HISTORY_SIDE } cov_history_store;

/* Fill r with the counts and shares of f (the time is the caller's). */
void cov_round_from_findings(const cov_findings *f, cov_round *r);
/* Read the rounds kept in the SQLite file db_path, oldest first. A file without history tables,
 * or (side files only, missing_ok 1) no file at all, gives *n = 0. The file is opened read-only.
 * Free *out with free(). Returns COV_OK, COV_EIO, COV_EINPUT (not SQLite), COV_ENOMEM. */
int cov_history_load(const char *db_path, int missing_ok, cov_round **out, size_t *n,
                     cov_error *err);
/* Append round r and each claim's power to the history tables (shoal_rounds, shoal_round_claims)
 * of db_path, created when missing (the side file itself too), in one transaction. The caller
 * guarantees db_path is shoal's own archive or a side file: never the user's archive. */
int cov_history_record(const char *db_path, const cov_findings *f, const cov_round *r,
                       cov_error *err);

/* What the report says besides the findings. */
typedef struct {
    const char *generated;    /* UTC time of the survey */
    int adequate;             /* the verdict, gates included */
    const char *gate_note;    /* NULL, or which --need-* gate failed */
    const char *plot_note;    /* NULL when plots were made; else why they were skipped */
    cov_history_store store;
    const char *history_path; /* archive or side file; NULL with COV_HISTORY_NONE */
    const cov_round *rounds;  /* earlier rounds and this one, oldest first */
    size_t n_rounds;
} cov_report_info;

/* Write index.html, report.md, summary.json and claims.csv into the existing directory dir. The
 * plots of cov_plot_list already in dir (NAME.svg) are inlined in index.html as <svg> elements (a
 * file that gnuplot's plain svg terminal could not have written becomes an <img> data URI), unless
 * info->plot_note says they were skipped. Every user string is escaped for its format. Test hook:
 * with the environment variable SHOAL_TEST_FAULT=report it fails halfway (COV_EIO).
 * Returns COV_OK, COV_EIO, COV_ENOMEM. */
int cov_report_write(const cov_findings *f, const cov_report_info *info, const char *dir,
                     cov_error *err);
/* summary.json alone, to any stream (`shoal survey --json` prints it to stdout). */
void cov_report_summary_json(const cov_findings *f, const cov_report_info *info, FILE *out);
/* claims.csv alone, to any stream (`shoal survey --csv`). */
void cov_report_claims_csv(const cov_findings *f, FILE *out);
/* Ordering of claims for the terminal and the report: thin first by rising power, then
 * untestable, then ample by rising power. Fills order (f->claims->n entries). */
void cov_report_order(const cov_findings *f, size_t *order);

/* Shared by the report files: coverage/report.c (these helpers, summary.json, claims.csv and the
 * writer), coverage/report_html.c and coverage/report_md.c. */
/* The cautions every format prints (what the verdict does not say), cov_report_n_cautions of
 * them. */
extern const char *const cov_report_cautions[];
extern const size_t cov_report_n_cautions;
/* The name of variable v of f->graph. */
const char *cov_report_var(const cov_findings *f, size_t v);
/* The assessment of claim i, or NULL when f->assess is NULL or does not reach i. */
const cov_assessment *cov_report_assessment(const cov_findings *f, size_t i);
/* Claim i's verdict: its assessment's, else thin for a testable claim and untestable otherwise. */
cov_verdict cov_report_verdict(const cov_findings *f, size_t i);
/* The one-line reason for claim i's verdict (borrowed from f), or NULL when there is none. */
const char *cov_report_reason(const cov_findings *f, size_t i);
/* Count the claims of f by verdict into count[COV_AMPLE], count[COV_THIN], count[COV_BLIND]. */
void cov_report_count_verdicts(const cov_findings *f, long long count[3]);
/* "effect" or "absence". */
const char *cov_report_kind(const cov_claim *c);
/* The declared effect of interest ("+0.01", "0.25 sd", "|b| < 0.1 sd") into buf of size bytes. */
void cov_report_effect_text(const cov_claim *c, char *buf, size_t size);
/* x by the printf format fmt (one double) into buf; "-" for NAN, "unreachable" for infinity. */
void cov_report_num_text(double x, const char *fmt, char *buf, size_t size);
/* A share as "12.5%" into buf, or "not computed" when x is not finite. */
void cov_report_share_text(double x, char *buf, size_t size);
/* Write index.html (coverage/report_html.c) of f to out, embedding the plots NAME.svg found in
 * dir unless info->plot_note is set. Returns COV_OK or COV_ENOMEM (err filled). */
int cov_report_html(const cov_findings *f, const cov_report_info *info, const char *dir,
                    FILE *out, cov_error *err);
/* Write report.md (coverage/report_md.c) of f to out. Returns COV_OK or COV_ENOMEM (no message). */
int cov_report_markdown(const cov_findings *f, const cov_report_info *info, FILE *out);

/* Plots (coverage/plot.c, coverage/plot_claims.c), drawn by gnuplot through a pipe
 * (coverage/gnuplot.c). Each plot is written twice into the report directory: NAME.svg (svg
 * terminal, to inline) and NAME.png (pngcairo). The names, in report order: "pairs" (pairwise
 * coverage matrix, when >= 2 inputs), "pair-1" .. "pair-4" (cell grids of the thinnest pairs),
 * then, when some claim is testable, "power" (power bars), "mde" (MDE beside the effect of
 * interest) and "curves" (power over added runs). The SVG files start with an XML declaration
 * and a DOCTYPE, which inlining must drop. */
typedef struct {
    char *name;       /* file name without extension: "pairs", "pair-1", "power", ... */
    char *caption;    /* one plain sentence; holds user names unescaped, so escape it for HTML */
} cov_plot;

typedef struct {
    cov_plot *items;  /* in report order */
    size_t n;
} cov_plots;

/* The plots cov_plot_all writes for f, in order. Needs f->graph, f->claims, f->assess and
 * f->coverage (either of the last two may be NULL: its plots are then left out). COV_ENOMEM. */
int cov_plot_list(const cov_findings *f, cov_plots **out, cov_error *err);
void cov_plots_free(cov_plots *p);

/* Write every plot of cov_plot_list into the existing directory dir, in one gnuplot run with all
 * data sent inline as datablocks (no data files are written). Returns COV_OK; COV_ENOPLOT with a
 * plain message when gnuplot is not on PATH, fails, or leaves a file unwritten (the caller carries
 * on without plots); COV_ENOMEM. gnuplot's warnings, if any, go to note (may be NULL). */
int cov_plot_all(const cov_findings *f, const char *dir, FILE *note, cov_error *err);

/* Shared by the two plot files: coverage/plot.c (the list, the script pieces, the coverage plots)
 * and coverage/plot_claims.c (the claim plots). The usual plot height in pixels; the bytes of a
 * name shown in tics and titles before "..."; the ink of reference lines and markers of the effect
 * of interest; the colour of planned runs (vermilion open triangles, another shape and hue). */
#define COV_PLOT_H 560
#define COV_PLOT_NAME_SHOWN 28
#define COV_PLOT_INK "#222222"
#define COV_PLOT_PLANNED "#C8471B"

/* Write x to a gnuplot script as %.9g, or NaN when it is not finite (gnuplot skips the point). */
void cov_plot_num(FILE *s, double x);
/* Start a plot: reset, UTF-8 and the SVG terminal at 900 x height pixels, border and tics inked. */
void cov_plot_start(FILE *s, int height);
/* Draw the plot command `plot` into DIR/BASE.svg, then again into DIR/BASE.png (pngcairo). */
void cov_plot_finish(FILE *s, const char *dir, const char *base, int height, const char *plot);
/* "set title 'line1'" with an optional second line (line2 may be NULL), both quoted for gnuplot. */
void cov_plot_title(FILE *s, const char *line1, const char *line2);
/* The name of variable v, cut at a UTF-8 boundary after COV_PLOT_NAME_SHOWN bytes with "..." into
 * buf (size at least COV_PLOT_NAME_SHOWN + 4) when long; otherwise the name itself. */
const char *cov_plot_var_name(const cov_findings *f, size_t v, char *buf, size_t size);

/* The claim plots (coverage/plot_claims.c). How many claims each would show: testable ones
 * (power), those with a positive effect of interest (mde), those whose test cov_assess_design can
 * give again (curves); a plot is drawn only when its count is positive. */
void cov_plot_claim_counts(const cov_findings *f, size_t *power, size_t *mde, size_t *curves);
/* Write the datablock and commands of the "power", "mde" or "curves" plot of f into the script s,
 * drawing into dir. Each needs f->assess and f->claims. Returns COV_OK or COV_ENOMEM. */
int cov_plot_power(FILE *s, const cov_findings *f, const char *dir);
int cov_plot_mde(FILE *s, const cov_findings *f, const char *dir);
int cov_plot_curves(FILE *s, const cov_findings *f, const char *dir);

/* Write s as a gnuplot string literal: single-quoted, ' doubled, control characters and invalid
 * UTF-8 bytes replaced by '?'. The only way user text reaches gnuplot. s may be NULL (""). */
void cov_gp_quote(FILE *f, const char *s);
/* The same for the label of an explicit tic (set xtics ('label' 1)), which gnuplot reads as a
 * format: '%' is doubled as well. */
void cov_gp_quote_tic(FILE *f, const char *s);
/* The same for a file name: bytes kept as they are (not checked as UTF-8), ' doubled; control
 * characters still become '?', so callers refuse names holding them. */
void cov_gp_quote_path(FILE *f, const char *s);
/* Find an executable "gnuplot" on PATH; writes its path into path. 0 when found, else -1. */
int cov_gp_find(char *path, size_t size);
/* Run gnuplot (with -d: no init files) on the script of len bytes fed through a pipe. COV_OK when
 * gnuplot exits with status 0; else COV_ENOPLOT, with gnuplot's last message line in err. */
int cov_gp_run(const char *script, size_t len, FILE *note, cov_error *err);

/* ---- plan (coverage/plan.c, plan_candidates.c, plan_cover.c; the plan file: cmd_plan.c) -------- */

/* How the plan predicts one claim's power after the planned runs. */
typedef enum {
    COV_PLAN_STEERED,     /* treatment and separating set are inputs: the augmented design's
                             coefficient variance, by Sherman-Morrison updates */
    COV_PLAN_ASSUMED,     /* an output in the treatment or separating set: new runs assumed to add
                             information as the current ones do (n scaled) */
    COV_PLAN_UNSIZED      /* no runs and no declared noise SD for the outcome: cannot be sized */
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

/* Configurations --budget auto may plan at most. */
#define COV_PLAN_AUTO_CAP 5000

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
 * of each claim i of c with thin[i] nonzero, in claim order. *cand_vals gets *n_cand rows of
 * g->n_vars values (NAN for non-inputs), malloc'd for the caller to free; COV_OK, COV_ENOMEM, or
 * COV_ENUMERIC when the Sobol generator fails (then *cand_vals is NULL). */
int cov_plan_candidates(const cov_graph *g, const cov_claims *c, const unsigned char *thin,
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
