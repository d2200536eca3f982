/* shoal coverage/report/: the survey's report: plots, gnuplot pipe, HTML, Markdown, history snapshots. Private to coverage/.
 * See LICENSE. */
#ifndef SHOAL_COVERAGE_REPORT_H
#define SHOAL_COVERAGE_REPORT_H

#include <stdio.h>

#include "coverage/assess/assess.h"
#include "coverage/measure/measure.h"

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
    const cov_pred_record *preds;   /* recorded plans, oldest first (their arrived counts and
                                       achieved powers filled by the survey), or NULL */
    size_t n_preds;
} cov_findings;

/* ---- cautions (coverage/report/caution.c) ------------------------------------------------------
 * What shoal computed that the verdict rests on or cannot promise, per claim and for the campaign.
 * Every format shows the same list; a new caution is one entry in caution.c's table of kinds. */
typedef struct cov_caution_kind cov_caution_kind;
typedef struct cov_cautions cov_cautions;
typedef struct cov_caution_sink cov_caution_sink;   /* private to caution.c */
typedef struct {
    const cov_caution_kind *kind;
    long claim;               /* claim index, or -1 for the campaign as a whole */
    char *text;               /* one or two plain sentences; user names unescaped */
} cov_caution;
struct cov_cautions {
    cov_caution *items;       /* by kind, in the order of the table of kinds; claims in claim order */
    size_t n;
};
struct cov_caution_kind {
    const char *key;          /* stable: "noise", "lack-of-fit", ... (summary.json, JUnit) */
    const char *title;        /* the heading the formats show */
    void (*gather)(const cov_findings *f, const cov_caution_kind *self, cov_caution_sink *s);
};
/* Gather every caution of f (any part of f but graph and claims may be NULL). COV_ENOMEM. */
int cov_cautions_gather(const cov_findings *f, cov_cautions **out);
void cov_cautions_free(cov_cautions *c);
/* The kinds, in display order; *n of them. */
const cov_caution_kind *cov_caution_kinds(size_t *n);
/* How many cautions name claim, and the first of them in *first (NULL when none). */
size_t cov_cautions_of_claim(const cov_cautions *c, size_t claim, const cov_caution **first);
/* Whether item j is about a claim and repeats the text of an earlier item of its kind: the
 * formats show such texts once, after every claim that shares them. */
int cov_caution_is_repeat(const cov_cautions *c, size_t j);
/* The cautions as terminal text within width columns: a heading per kind, claims sharing a text
 * listed together before it. */
void cov_cautions_print(const cov_findings *f, const cov_cautions *c, FILE *out, size_t width);

/* ---- next steps (coverage/report/next.c) ------------------------------------------------------ */
typedef struct {
    char **lines;             /* one step each, plain text; user names unescaped */
    size_t n;
} cov_next_steps;
/* The plan command with its expected need, hidden variables worth recording, gates missed by how
 * much; "nothing to add" when adequate. COV_ENOMEM. */
int cov_next_steps_make(const cov_findings *f, cov_next_steps **out);
void cov_next_steps_free(cov_next_steps *s);
/* "next steps:" and the numbered steps, wrapped to width columns. */
void cov_next_steps_print(const cov_next_steps *s, FILE *out, size_t width);

/* ---- the audit trail (coverage/report/audit.c) ----------------------------------------------- */
typedef struct {
    const char *name;         /* the long option, without "--" */
    char value[160];          /* its value as used */
    int given;                /* 1 when given on the command line, 0 when left at its default */
} cov_audit_option;
/* The survey's options with their values into out (at most cap); returns how many. */
size_t cov_audit_options(const cov_options *o, cov_audit_option *out, size_t cap);
/* The command line as given (o->argv), each word quoted for a POSIX shell where needed. */
void cov_audit_command_line(const cov_options *o, FILE *out);


/* Where a survey keeps its history: in the owned archive, in a --history side file, or nowhere. */
typedef enum { COV_HISTORY_NONE, COV_HISTORY_ARCHIVE, COV_HISTORY_SIDE } cov_history_store;

/* Fill r with the counts and shares of f (the time is the caller's). */
void cov_snapshot_from_findings(const cov_findings *f, cov_snapshot *r);
/* The same with the runs' digest already computed (cov_data_digest of f's graph and data, 64 hex
 * digits), so that the survey can take it beside its other stages; NULL: computed here. */
void cov_snapshot_from_findings_digest(const cov_findings *f, const char *runs_digest,
                                       cov_snapshot *r);
/* Record snapshot r of f in the history kept in db_path (cov_history_record), with one line per
 * claim of f; create_file as there. Returns COV_OK, COV_EIO or COV_ENOMEM (err filled). */
int cov_report_history_record(const char *db_path, int create_file, const cov_findings *f,
                              const cov_snapshot *r, cov_error *err);
/* ---- the claim record (coverage/report/record.c) ---------------------------------------------
 * One record per claim, the same fields under the same names in every output: `shoal claims`
 * (COV_RECORD_CLAIM), `shoal power` and the survey's summary.json and claims.csv
 * (COV_RECORD_ASSESS: the claim fields, then its assessment), `shoal coverage` and the survey's
 * support list (COV_RECORD_SUPPORT: the claim fields, then its support). The fields are one table
 * in record.c: a new field is one line there and appears in JSON and CSV alike (README, "The claim
 * record"). Figures that do not apply (an untestable claim, a part not computed) are null in JSON
 * and empty in CSV. */
enum { COV_RECORD_CLAIM = 1u, COV_RECORD_ASSESS = 2u, COV_RECORD_SUPPORT = 4u };

/* What the records are made from, all borrowed. claims and g are required; assess and support may
 * be NULL (their fields are then null), or hold one item per claim in claim order. */
typedef struct {
    const cov_graph *g;
    const cov_claims *claims;
    const cov_assessments *assess;
    const cov_supports *support;
} cov_record_src;

/* Claim i (< src->claims->n) as one JSON object (no newline) holding the fields of parts. */
void cov_record_json(FILE *out, const cov_record_src *src, size_t i, unsigned parts);
/* The CSV header line of parts, newline included. */
void cov_record_csv_header(FILE *out, unsigned parts);
/* Claims from .. to - 1, one CSV row each under cov_record_csv_header(parts), newline included
 * (RFC 4180 quoting; a set of names is one cell joined by ';'), assembled in memory and written
 * in large blocks (a small block on the stack when memory is short). */
void cov_record_csv_rows(FILE *out, const cov_record_src *src, size_t from, size_t to,
                         unsigned parts);
/* The field names of parts in output order: writes up to cap of them into names and returns how
 * many there are (for tests and documentation checks). */
size_t cov_record_field_names(unsigned parts, const char **names, size_t cap);

/* What the report says besides the findings. */
typedef struct {
    const char *generated;    /* UTC time of the survey */
    int adequate;             /* the verdict, gates included */
    const char *gate_note;    /* NULL, or which --need-* gate failed */
    const char *plot_note;    /* NULL when plots were made; else why they were skipped */
    cov_history_store store;
    const char *history_path; /* archive or side file; NULL with COV_HISTORY_NONE */
    const cov_snapshot *snapshots; /* earlier snapshots and this one, oldest first */
    size_t n_snapshots;
    const cov_cautions *cautions;   /* what the survey computed as cautions, or NULL */
    int recorded;             /* 1 when this survey recorded a snapshot (the runs changed) */
    const char *runs_digest;  /* content digest of the runs (cov_data_digest), or NULL */
    const char *graph_digest; /* SHA-256 of the graph file's bytes, or NULL */
    const cov_next_steps *next;   /* what to do next, or NULL */
} cov_report_info;

/* Write index.html, report.md, summary.json and claims.csv into the existing directory dir. The
 * plots of cov_plot_list already in dir (NAME.svg) are inlined in index.html as <svg> elements (a
 * file that gnuplot's plain svg terminal could not have written becomes an <img> data URI), unless
 * info->plot_note says they were skipped. Every user string is escaped for its format. When
 * f->opt->fault_at("report") returns nonzero it fails halfway (COV_EIO): a test seam.
 * Returns COV_OK, COV_EIO, COV_ENOMEM. */
int cov_report_write(const cov_findings *f, const cov_report_info *info, const char *dir,
                     cov_error *err);
/* summary.json alone, to any stream (`shoal survey --json` prints it to stdout). */
void cov_report_summary_json(const cov_findings *f, const cov_report_info *info, FILE *out);
/* The verdict as JUnit XML (coverage/report/junit.c): one <testsuite>, a <testcase> per claim
 * (failure: underpowered, or untestable on these runs; skipped: untestable by the graph) and per --need-*
 * gate (failure: missed, with the shortfall). */
void cov_report_junit(const cov_findings *f, const cov_report_info *info, FILE *out);
/* claims.csv alone, to any stream (`shoal survey --csv`). */
void cov_report_claims_csv(const cov_findings *f, FILE *out);
/* Ordering of claims for the terminal and the report: underpowered first by rising power, then
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
/* Claim i's verdict (cov_claim_verdict of its assessment, if any). */
cov_verdict cov_report_verdict(const cov_findings *f, size_t i);
/* The one-line reason the report shows beside claim i's verdict (borrowed from f), or NULL: the
 * verdict's reason (cov_claim_verdict_reason), else the support's reason when support is short. */
const char *cov_report_reason(const cov_findings *f, size_t i);
/* Count the claims of f by verdict into count[COV_AMPLE], count[COV_UNDERPOWERED], count[COV_BLIND]. */
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
/* The plan audit (coverage/report/report_audit.c): the latest recorded plan's predictions against
 * what its runs achieved, and every plan's track record, for the terminal, report.md and
 * index.html. Nothing is written when f->n_preds is 0. */
void cov_report_audit_text(const cov_findings *f, FILE *out);
void cov_report_audit_md(const cov_findings *f, FILE *out);
void cov_report_audit_html(const cov_findings *f, FILE *out);
/* s as HTML text or attribute content (report_html.c): & < > " ' as character references,
 * control characters other than newline and tab as '?'. */
void cov_html_text(FILE *out, const char *s);
/* Write report.md (coverage/report_md.c) of f to out. Returns COV_OK or COV_ENOMEM (no message). */
int cov_report_markdown(const cov_findings *f, const cov_report_info *info, FILE *out);

/* Plots (coverage/plot.c, coverage/plot_claims.c), drawn by gnuplot through a pipe
 * (coverage/gnuplot.c). Each plot is written twice into the report directory: NAME.svg (svg
 * terminal, to inline) and NAME.png (pngcairo). The names, in report order: "graph" (the graph
 * drawn, whenever it has variables), "pairs" (pairwise
 * coverage matrix, when >= 2 inputs), "pair-1" .. "pair-4" (cell grids of the sparsest pairs),
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
/* Rewrite the SVG file at path so that "]]>" outside CDATA sections reads "]]&gt;" (gnuplot leaves
 * '>' in names unescaped; XML 1.0 section 2.4 forbids "]]>" in character data). COV_OK, COV_EIO
 * or COV_ENOMEM (coverage/report/svg_safe.c). */
int cov_svg_make_wellformed(const char *path, cov_error *err);
/* Plot number `number` (1-based) of index.html from DIR/NAME.svg: inline SVG when it holds only
 * what gnuplot writes, else an image from a data URI; its caption and a link to the file
 * (coverage/report/report_figure.c). Returns 1, or 0 when the file cannot be read (nothing
 * written). */
int cov_html_figure(FILE *out, const char *dir, const cov_plot *plot, size_t number);

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
/* The graph drawn ("graph", coverage/report/plot_graph.c): nodes in layers, edges and absences
 * styled by verdict, hidden variables marked; its height in pixels grows with the widest layer. */
int cov_plot_graph(FILE *s, const cov_findings *f, const char *dir);
int cov_plot_graph_height(const cov_findings *f);

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

#endif
