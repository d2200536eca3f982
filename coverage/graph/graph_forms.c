/* The graph file's forms for what a modeller means by a number: units of variables, effects per
 * a step or over the declared range, ordered level sets with positions. See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/graph/graph.h"

#define cerr(c, col, ...) cov_graph_fail((c)->err, (c)->name, (c)->line, (col), __VA_ARGS__)

static cov_token *cpeek(cov_cursor *c) { return &c->toks->tok[*c->pos]; }
static cov_token *cnext(cov_cursor *c)
{
    cov_token *t = &c->toks->tok[*c->pos];
    if (t->kind != COV_TOK_END) (*c->pos)++;
    return t;
}

static int cfail(cov_cursor *c, const cov_token *t, const char *expected)
{
    char buf[160];
    return cerr(c, t->col, "found %s, expected %s", cov_token_describe(t, buf, sizeof buf),
                expected);
}

static int is_word(const cov_token *t, const char *w)
{
    return t->kind == COV_TOK_WORD && strcmp(t->text, w) == 0;
}

const char *cov_var_unit(const cov_var *v)
{
    return v != NULL && v->unit != NULL ? v->unit : "";
}

int cov_form_unit(cov_cursor *c, char **unit)
{
    cov_token *t = cpeek(c);
    if (t->kind != COV_TOK_QUOTED) return cfail(c, t, "a quoted unit after 'unit', as \"min\"");
    /* A unit goes into table cells, plot axes and report headings: a control character (a
     * carriage return, a tab) would break every one of them. The lexer already ends a quoted text
     * at the end of the line, so a newline cannot get here; a carriage return can. */
    for (const char *q = t->text; *q; q++)
        if ((unsigned char)*q < 0x20 || *q == 0x7f)
            return cerr(c, t->col, "found a control character (0x%02X) in the unit, expected a "
                        "unit on one line without control characters",
                        (unsigned)(unsigned char)*q);
    char *u = strdup(t->text);
    if (u == NULL) return cov_fail(c->err, COV_ENOMEM, "", "out of memory");
    free(*unit);
    *unit = u;
    cnext(c);
    return COV_OK;
}

int cov_form_ordered(cov_cursor *c, cov_var *v)
{
    double *pos = malloc((v->n_levels ? v->n_levels : 1) * sizeof *pos);
    if (pos == NULL) return cov_fail(c->err, COV_ENOMEM, "", "out of memory");
    for (size_t i = 0; i < v->n_levels; i++) pos[i] = (double)i;
    int rc = COV_OK;
    if (is_word(cpeek(c), "at")) {
        cnext(c);
        cov_token *open = cpeek(c);
        if (open->kind != COV_TOK_LBRACE) {
            rc = cfail(c, open, "'{' starting the positions of the levels");
            goto fail;
        }
        cnext(c);
        size_t k = 0;
        for (;;) {
            cov_token *t = cpeek(c);
            if (t->kind != COV_TOK_NUMBER) {
                rc = cfail(c, t, "a number: the position of the next level");
                goto fail;
            }
            if (k == v->n_levels) {
                rc = cerr(c, t->col, "found a position for a level %zu, expected %zu positions, "
                          "one per level of '%s'", k + 1, v->n_levels, v->name);
                goto fail;
            }
            if (k > 0 && !(t->num > pos[k - 1])) {
                rc = cerr(c, t->col, "found the position %s after %g, expected increasing "
                          "positions (the levels are listed in their order)", t->text,
                          pos[k - 1]);
                goto fail;
            }
            pos[k++] = t->num;
            cnext(c);
            if (cpeek(c)->kind == COV_TOK_COMMA) {
                cnext(c);
                continue;
            }
            if (cpeek(c)->kind != COV_TOK_RBRACE) {
                rc = cfail(c, cpeek(c), "',' or '}' in the list of positions");
                goto fail;
            }
            if (k != v->n_levels) {
                rc = cerr(c, cpeek(c)->col, "found %zu positions, expected %zu, one per level of "
                          "'%s'", k, v->n_levels, v->name);
                goto fail;
            }
            cnext(c);
            break;
        }
    }
    free(v->positions);
    v->positions = pos;
    v->ordered = 1;
    return COV_OK;
fail:
    free(pos);
    return rc;
}

int cov_form_amount_tail(cov_cursor *c, cov_amount *a, int *col)
{
    cov_token *t = cpeek(c);
    a->per = COV_PER_UNIT;
    a->step = NAN;
    *col = 0;
    if (is_word(t, "per")) {
        *col = t->col;
        cnext(c);
        cov_token *s = cpeek(c);
        if (s->kind == COV_TOK_MINUS || (s->kind == COV_TOK_NUMBER && !(s->num > 0)))
            return cerr(c, s->col, "found %s%s, expected a step greater than 0 after 'per'",
                        s->kind == COV_TOK_MINUS ? "'-'" : "the step ",
                        s->kind == COV_TOK_MINUS ? "" : s->text);
        if (s->kind != COV_TOK_NUMBER)
            return cfail(c, s, "a step greater than 0 after 'per', as in 'per 1000'");
        a->per = COV_PER_STEP;
        a->step = s->num;
        cnext(c);
        return COV_OK;
    }
    if (is_word(t, "over")) {
        *col = t->col;
        cnext(c);
        if (!is_word(cpeek(c), "range")) return cfail(c, cpeek(c), "'range' after 'over'");
        cnext(c);
        a->per = COV_PER_RANGE;
        return COV_OK;
    }
    return COV_OK;
}

int cov_form_check_amount(cov_cursor *c, const cov_amount *a, const cov_var *x, int col,
                          const char *what)
{
    if (a->per == COV_PER_UNIT) return COV_OK;
    int numeric = x->type == COV_REAL || x->type == COV_INTEGER;
    if (a->per == COV_PER_STEP && !numeric && !(x->type == COV_LEVELS && x->ordered))
        return cerr(c, col, "found 'per' on the %s of an edge from the %s '%s', expected a "
                    "numeric or ordered treatment (a step of a %s has no size)", what,
                    x->type == COV_BOOL ? "bool" : "unordered level set", x->name,
                    x->type == COV_BOOL ? "bool" : "level set");
    if (a->per == COV_PER_RANGE && (!numeric || !(x->hi > x->lo)))
        return cerr(c, col, "found 'over range' on the %s of an edge from %s '%s', expected a "
                    "numeric input with a declared range [LO, HI]", what,
                    x->type == COV_BOOL     ? "the bool"
                    : x->type == COV_LEVELS ? "the level set"
                                            : "the variable without a declared range,",
                    x->name);
    return COV_OK;
}

double cov_amount_per_unit_factor(const cov_amount *a, const cov_var *v)
{
    int numeric = v->type == COV_REAL || v->type == COV_INTEGER;
    int ordered = v->type == COV_LEVELS && v->ordered && v->positions != NULL && v->n_levels >= 2;
    if (!numeric && !ordered) return 1.0;
    switch (a->per) {
    case COV_PER_UNIT: return 1.0;
    case COV_PER_STEP: return 1.0 / a->step;
    case COV_PER_RANGE:
        if (ordered) return 1.0 / (v->positions[v->n_levels - 1] - v->positions[0]);
        return v->hi > v->lo ? 1.0 / (v->hi - v->lo) : NAN;
    }
    return NAN;
}

const char *cov_amount_text(const cov_amount *a, char *buf, size_t size)
{
    if (isnan(a->value)) {
        snprintf(buf, size, "-");
        return buf;
    }
    char tail[64] = "";
    if (a->per == COV_PER_STEP) snprintf(tail, sizeof tail, " per %.6g", a->step);
    else if (a->per == COV_PER_RANGE) snprintf(tail, sizeof tail, " over range");
    snprintf(buf, size, "%.6g%s%s", a->value, a->unit == COV_UNIT_SD ? " sd" : "", tail);
    return buf;
}
