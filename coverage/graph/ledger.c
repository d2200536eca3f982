/* The graph file's bookkeeping statements: `runseed NAME` names the column holding each run's seed,
 * `ledger NAME [cost], ...` names columns kept but never analysed (run id, status, wall time).
 * See LICENSE. */
#include <stdlib.h>
#include <string.h>

#include "coverage/graph/graph.h"

/* Column names shoal itself writes into an archive (coverage/archive/archive.c). */
static const char *const taken_names[] = {"shoal_batch"};

/* ASCII-only case folding, as SQLite matches column names: a bookkeeping column that differs from
 * a variable only in case would be the same archive column. */
static int fold_equal(const char *a, const char *b)
{
    for (;; a++, b++) {
        int x = (unsigned char)*a, y = (unsigned char)*b;
        if (x >= 'A' && x <= 'Z') x += 'a' - 'A';
        if (y >= 'A' && y <= 'Z') y += 'a' - 'A';
        if (x != y) return 0;
        if (x == 0) return 1;
    }
}

int cov_ledger_is_statement(const cov_token *tok)
{
    if (tok[0].kind != COV_TOK_WORD) return 0;
    if (strcmp(tok[0].text, "runseed") != 0 && strcmp(tok[0].text, "ledger") != 0) return 0;
    /* `runseed -> y` or `ledger, x -> y` is an edge from a variable with that name. */
    return tok[1].kind != COV_TOK_ARROW && tok[1].kind != COV_TOK_COMMA;
}

static int is_name(const cov_token *t)
{
    return t->kind == COV_TOK_WORD || t->kind == COV_TOK_QUOTED;
}

static int name_fail(cov_error *err, const char *name, int line, const cov_token *t,
                     const char *expected)
{
    char buf[160];
    return cov_graph_fail(err, name, line, t->col, "found %s, expected %s",
                          cov_token_describe(t, buf, sizeof buf), expected);
}

/* Where an earlier declaration of a bookkeeping column called s sits, or 0. */
static int declared_line(const cov_graph *g, const char *s)
{
    if (g->seed_name != NULL && fold_equal(g->seed_name, s)) return g->seed_line;
    for (size_t i = 0; i < g->n_ledger; i++)
        if (fold_equal(g->ledger[i].name, s)) return g->ledger[i].line;
    return 0;
}

/* The seed column identifies runs (coverage/archive/runs.c) and, when runs share seeds across
 * configurations, gives each claim's regression its seed blocks: one additive effect per seed,
 * assumed the same in every configuration (coverage/assess/seedblock.c; README.md, "Seed
 * blocks"). */
static int parse_runseed(cov_graph *g, const cov_token *tok, const char *name, int line,
                         cov_error *err)
{
    if (g->seed_name != NULL)
        return cov_graph_fail(err, name, line, tok[0].col, "found a second 'runseed' statement, "
                              "expected one seed column per graph (the first is on line %d)",
                              g->seed_line);
    if (!is_name(&tok[1])) return name_fail(err, name, line, &tok[1], "the seed column's name");
    if (tok[2].kind != COV_TOK_END)
        return name_fail(err, name, line, &tok[2], "the end of the line after the seed column");
    int earlier = declared_line(g, tok[1].text);
    if (earlier)
        return cov_graph_fail(err, name, line, tok[1].col, "found '%s' already declared as a "
                              "bookkeeping column on line %d, expected the seed column to be "
                              "declared once", tok[1].text, earlier);
    g->seed_name = strdup(tok[1].text);
    if (g->seed_name == NULL) return cov_fail(err, COV_ENOMEM, "", "out of memory");
    g->seed_line = line;
    g->seed_col = tok[1].col;
    return COV_OK;
}

static int parse_ledger(cov_graph *g, const cov_token *tok, const char *name, int line,
                        cov_error *err)
{
    size_t i = 1;
    for (;;) {
        if (!is_name(&tok[i]))
            return name_fail(err, name, line, &tok[i], "the name of a bookkeeping column");
        const cov_token *nt = &tok[i++];
        int is_cost = 0;
        if (tok[i].kind == COV_TOK_WORD && strcmp(tok[i].text, "cost") == 0) {
            for (size_t k = 0; k < g->n_ledger; k++)
                if (g->ledger[k].is_cost)
                    return cov_graph_fail(err, name, line, tok[i].col, "found a second cost "
                                          "column, expected one (the first, '%s', is on line %d)",
                                          g->ledger[k].name, g->ledger[k].line);
            is_cost = 1;
            i++;
        }
        int earlier = declared_line(g, nt->text);
        if (earlier)
            return cov_graph_fail(err, name, line, nt->col, "found '%s' already declared on line "
                                  "%d, expected each bookkeeping column once", nt->text, earlier);
        cov_ledger *grown = realloc(g->ledger, (g->n_ledger + 1) * sizeof *grown);
        if (grown == NULL) return cov_fail(err, COV_ENOMEM, "", "out of memory");
        g->ledger = grown;
        cov_ledger *l = &g->ledger[g->n_ledger];
        l->name = strdup(nt->text);
        if (l->name == NULL) return cov_fail(err, COV_ENOMEM, "", "out of memory");
        l->is_cost = is_cost;
        l->line = line;
        l->col = nt->col;
        g->n_ledger++;
        if (tok[i].kind == COV_TOK_END) return COV_OK;
        if (tok[i].kind != COV_TOK_COMMA)
            return name_fail(err, name, line, &tok[i], "',', 'cost' or the end of the line");
        i++;
    }
}

int cov_ledger_parse(cov_graph *g, const cov_token *tok, const char *name, int line,
                     cov_error *err)
{
    if (strcmp(tok[0].text, "runseed") == 0) return parse_runseed(g, tok, name, line, err);
    return parse_ledger(g, tok, name, line, err);
}

/* A bookkeeping column may be no variable of the graph and no name shoal writes itself. */
static int check_one(const cov_graph *g, const char *col, int line, int c, const char *what,
                     cov_error *err)
{
    static const char *const roles[] = {"an input", "an output", "a hidden variable"};
    for (size_t v = 0; v < g->n_vars; v++)
        if (fold_equal(g->vars[v].name, col))
            return cov_graph_fail(err, g->path, line, c, "found '%s' declared as %s on line %d "
                                  "and as %s, expected %s to be no variable of the graph: it is "
                                  "kept but never analysed", col, roles[g->vars[v].role],
                                  g->vars[v].line, what, what);
    for (size_t k = 0; k < sizeof taken_names / sizeof taken_names[0]; k++)
        if (fold_equal(taken_names[k], col))
            return cov_graph_fail(err, g->path, line, c, "found '%s', a column shoal writes "
                                  "itself, expected another name for %s", col, what);
    return COV_OK;
}

int cov_ledger_check(const cov_graph *g, cov_error *err)
{
    int rc;
    if (g->seed_name != NULL &&
        (rc = check_one(g, g->seed_name, g->seed_line, g->seed_col, "the seed column", err)))
        return rc;
    for (size_t i = 0; i < g->n_ledger; i++)
        if ((rc = check_one(g, g->ledger[i].name, g->ledger[i].line, g->ledger[i].col,
                            "a bookkeeping column", err)))
            return rc;
    return COV_OK;
}

void cov_ledger_free(cov_graph *g)
{
    free(g->seed_name);
    for (size_t i = 0; i < g->n_ledger; i++) free(g->ledger[i].name);
    free(g->ledger);
    g->seed_name = NULL;
    g->ledger = NULL;
    g->n_ledger = 0;
}

const char *cov_graph_seed_column(const cov_graph *g)
{
    return g->seed_name;
}

const cov_ledger *cov_graph_cost_column(const cov_graph *g)
{
    for (size_t i = 0; i < g->n_ledger; i++)
        if (g->ledger[i].is_cost) return &g->ledger[i];
    return NULL;
}
