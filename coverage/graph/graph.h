/* shoal coverage/graph/: the graph file, d-separation and the claims it implies. Private to coverage/.
 * See LICENSE. */
#ifndef SHOAL_COVERAGE_GRAPH_H
#define SHOAL_COVERAGE_GRAPH_H

#include <stdio.h>

#include "coverage/base/base.h"

/* ---- graph and d-separation (coverage/graph.c, coverage/graph_lex.c, coverage/dsep.c, ...) --- */

/* The graph file's tokens (coverage/graph_lex.c), which coverage/graph.c parses line by line. */
typedef enum {
    COV_TOK_END, COV_TOK_WORD, COV_TOK_QUOTED, COV_TOK_NUMBER, COV_TOK_ARROW, COV_TOK_COMMA,
    COV_TOK_LBRACK, COV_TOK_RBRACK, COV_TOK_LBRACE, COV_TOK_RBRACE, COV_TOK_PLUS, COV_TOK_MINUS,
    COV_TOK_QUERY   /* '?': an unknown sign */
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

/* ---- bookkeeping statements (coverage/graph/ledger.c) ---------------------------------------- */

/* 1 when the statement in tok (ending with COV_TOK_END) is `runseed ...` or `ledger ...` rather
 * than an edge from a variable that happens to carry one of those names. */
int cov_ledger_is_statement(const cov_token *tok);
/* Parse `runseed NAME` or `ledger NAME [cost] {, NAME [cost]}` into g. Errors are COV_EINPUT with
 * err->where "name:line:column": a second seed column, a column declared twice, two cost columns.
 * Returns COV_OK, COV_EINPUT or COV_ENOMEM. */
int cov_ledger_parse(cov_graph *g, const cov_token *tok, const char *name, int line,
                     cov_error *err);
/* After the whole file: a seed or bookkeeping column that is also a variable of the graph, or
 * that uses a name shoal reserves, is COV_EINPUT at its declaration. */
int cov_ledger_check(const cov_graph *g, cov_error *err);
/* Free the seed name and the bookkeeping columns of g. */
void cov_ledger_free(cov_graph *g);
/* A read position in one line's tokens, for the statement forms of coverage/graph/graph_forms.c
 * (units, steps and ranges, ordered levels) that graph.c calls. */
typedef struct {
    cov_tokens *toks;
    size_t *pos;          /* the next token to read */
    const char *name;     /* the graph file, for messages */
    int line;
    cov_error *err;
} cov_cursor;

/* After the word `unit`: a quoted text without control characters (a newline, a tab) into
 * *unit (malloc'd; the caller frees it). COV_EINPUT with file:line:column, COV_ENOMEM. */
int cov_form_unit(cov_cursor *c, char **unit);
/* After the word `ordered` of a level set v: the optional `at {P1, P2, ...}` of v->n_levels
 * strictly increasing positions; fills v->ordered and v->positions (0, 1, ... without `at`). */
int cov_form_ordered(cov_cursor *c, cov_var *v);
/* The optional tail of an amount: `per STEP` (STEP > 0) or `over range`; sets a->per, a->step and
 * *col to the tail's column (0 when there is none). */
int cov_form_amount_tail(cov_cursor *c, cov_amount *a, int *col);
/* Whether an edge's amount can be counted over its treatment: `per` needs a numeric or ordered
 * treatment, `over range` a declared numeric range (not a bool, a level set or an output). */
int cov_form_check_amount(cov_cursor *c, const cov_amount *a, const cov_var *treatment, int col,
                          const char *what);

#define COV_NO_NODE ((size_t)-1)

/* The DAG that separator searches work on: node i < g->n_vars is variable i; when the inputs are
 * not declared independent, node g->n_vars is the hidden design node, a parent of every input.
 * When two or more outputs share their run's noise (the default; see `noise independent`), the
 * next node is the hidden run-noise node, a parent of each of those outputs.
 * Parents and children are stored as offset arrays: the parents of v are par[par_start[v]] up to
 * par[par_start[v + 1] - 1], and likewise for children. */
typedef struct {
    size_t n;             /* nodes */
    size_t n_vars;        /* the graph's variables (nodes 0 .. n_vars - 1) */
    size_t design;        /* the design node, or COV_NO_NODE */
    size_t noise;         /* the run-noise node, or COV_NO_NODE */
    size_t *par_start, *par;
    size_t *ch_start, *ch;
} cov_dag;

/* 1 when output v shares its run's noise with other outputs (no `noise independent` covers it). */
int cov_noise_shared(const cov_graph *g, size_t v);

/* Build the DAG of g, with the design node when with_design is 1 and the run-noise node when two
 * or more outputs share run noise, leaving out edge skip_edge
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

/* A workspace for many queries on DAGs of n nodes: each query then costs what it visits, not the
 * size of the graph. One workspace serves one thread. */
typedef struct cov_dsep_ws cov_dsep_ws;
int cov_dsep_ws_alloc(size_t n, cov_dsep_ws **out);
void cov_dsep_ws_free(cov_dsep_ws *w);
/* Remember An(y) in d for the queries that follow with outcome y on d (one ancestral set per
 * outcome, reused across its pairs), until cov_dsep_ws_unfix or another fix. d must stay alive
 * and unchanged meanwhile. */
void cov_dsep_ws_fix_outcome(cov_dsep_ws *w, const cov_dag *d, size_t y);
void cov_dsep_ws_unfix(cov_dsep_ws *w);
/* cov_dsep_minsep with a workspace: the separator (or, when *found is 0, the largest candidate)
 * is written to z (room for d->n) as *nz ascending nodes. allowed is read only on An({x, y}). */
int cov_dsep_minsep_ws(cov_dsep_ws *w, const cov_dag *d, size_t x, size_t y,
                       const unsigned char *allowed, size_t *z, size_t *nz, int *found);
/* cov_dsep_minsep_ws for an allowed set that marks, within An({x, y}), no node but parents of x
 * and of y (the claims' preferred sets): the caller promises this, which lets a pair with the
 * fixed outcome skip both searches when the answer is Pa(y) (see dsep.c). Same results. */
int cov_dsep_minsep_parents_ws(cov_dsep_ws *w, const cov_dag *d, size_t x, size_t y,
                               const unsigned char *allowed, size_t *z, size_t *nz, int *found);
/* cov_dsep_open_path with a workspace; z lists the nz members of in_z. */
int cov_dsep_open_path_ws(cov_dsep_ws *w, const cov_dag *d, size_t x, size_t y,
                          const unsigned char *in_z, const size_t *z, size_t nz, size_t *path,
                          int *dir, size_t *len);
/* cov_dsep_separated with a workspace; z lists the nz members of in_z. */
int cov_dsep_separated_ws(cov_dsep_ws *w, const cov_dag *d, size_t x, size_t y,
                          const unsigned char *in_z, const size_t *z, size_t nz, int *separated);

#endif
