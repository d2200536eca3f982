/* The graph file's parser: a line-oriented description of the model's variables and expected
 * effects, read from the tokens of coverage/graph/graph_lex.c.
 * See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/graph/graph.h"

/* Integers are held in doubles; beyond 2^53 whole numbers are no longer exact. */
#define GRAPH_MAX_WHOLE 9007199254740992.0
/* Names longer than this are not compared for "did you mean": the suggestion is a courtesy. */
#define SUGGEST_MAX_LEN 128

typedef struct {
    size_t *item;
    size_t n, cap;
} index_list;

typedef struct {
    const char *name;
    int line;
    cov_tokens toks;        /* the current line's tokens */
    size_t pos;             /* the next token to read */
    cov_graph *g;
    size_t cap_vars, cap_edges;
    index_list *children;   /* per variable, parallel to g->vars */
    size_t *slot;           /* name hash table: variable index + 1, 0 for empty */
    size_t n_slots;         /* a power of two, kept at least twice the variable count */
    size_t n_recorded;      /* inputs and outputs declared so far */
    int seen_default_effect, seen_margin, seen_design, seen_noise;
    cov_error *err;
} parser;

/* Every parse error names the graph file, the current line and a column. */
#define perr(p, col, ...) cov_graph_fail((p)->err, (p)->name, (p)->line, (col), __VA_ARGS__)

static const char *const reserved_words[] = {
    "input", "output", "hidden", "real", "integer", "bool", "levels", "noise", "default", "effect",
    "margin", "design", "independent", "hold", "expect", "sd"};
#define N_RESERVED (sizeof reserved_words / sizeof reserved_words[0])

static const char *const statement_words[] = {"input", "output", "hidden", "default", "design",
                                              "hold", "noise"};
#define N_STATEMENT (sizeof statement_words / sizeof statement_words[0])

static int is_reserved(const char *w)
{
    for (size_t i = 0; i < N_RESERVED; i++)
        if (strcmp(w, reserved_words[i]) == 0) return 1;
    return 0;
}

/* Levenshtein distance (Levenshtein 1966; the two-row dynamic programme of Wagner & Fischer 1974),
 * on bytes, which is enough to catch typing slips. */
static size_t edit_distance(const char *a, const char *b)
{
    size_t m = strlen(a), n = strlen(b);
    if (m > SUGGEST_MAX_LEN || n > SUGGEST_MAX_LEN) return (size_t)-1;
    size_t prev[SUGGEST_MAX_LEN + 1], cur[SUGGEST_MAX_LEN + 1];
    for (size_t j = 0; j <= n; j++) prev[j] = j;
    for (size_t i = 1; i <= m; i++) {
        cur[0] = i;
        for (size_t j = 1; j <= n; j++) {
            size_t best = prev[j - 1] + (a[i - 1] != b[j - 1]);
            if (prev[j] + 1 < best) best = prev[j] + 1;
            if (cur[j - 1] + 1 < best) best = cur[j - 1] + 1;
            cur[j] = best;
        }
        memcpy(prev, cur, (n + 1) * sizeof prev[0]);
    }
    return prev[n];
}

/* A suggestion is offered when the nearest candidate is within a third of the word's length
 * (at least 2 edits): close enough to be a slip, far enough not to suggest nonsense. */
static const char *nearest(const char *word, const char *const *cand, size_t n_cand,
                           size_t stride)
{
    const char *best = NULL;
    size_t best_d = (size_t)-1;
    for (size_t i = 0; i < n_cand; i++) {
        const char *c = *(const char *const *)((const char *)cand + i * stride);
        size_t d = edit_distance(word, c);
        if (d < best_d) {
            best_d = d;
            best = c;
        }
    }
    size_t limit = strlen(word) / 3;
    if (limit < 2) limit = 2;
    return best != NULL && best_d <= limit ? best : NULL;
}

/* ---- name look-up ---------------------------------------------------------------------------- */

/* FNV-1a (Fowler, Noll & Vo), a simple string hash that spreads short names well. */
static size_t name_hash(const char *s)
{
    unsigned long long h = 1469598103934665603ULL;
    for (; *s; s++) h = (h ^ (unsigned char)*s) * 1099511628211ULL;
    return (size_t)h;
}

/* Index of the variable called name, or -1: open addressing with linear probing. */
static long lookup(const parser *p, const char *name)
{
    if (p->n_slots == 0) return -1;
    for (size_t i = name_hash(name) & (p->n_slots - 1);; i = (i + 1) & (p->n_slots - 1)) {
        size_t k = p->slot[i];
        if (k == 0) return -1;
        if (strcmp(p->g->vars[k - 1].name, name) == 0) return (long)(k - 1);
    }
}

static void slot_put(parser *p, size_t var)
{
    size_t i = name_hash(p->g->vars[var].name) & (p->n_slots - 1);
    while (p->slot[i] != 0) i = (i + 1) & (p->n_slots - 1);
    p->slot[i] = var + 1;
}

/* Enter the newest variable, doubling the table when it would pass half full. */
static int index_var(parser *p)
{
    size_t n = p->g->n_vars;
    if (2 * n > p->n_slots) {
        size_t ns = p->n_slots ? 2 * p->n_slots : 64;
        size_t *slot = calloc(ns, sizeof *slot);
        if (slot == NULL) return cov_fail(p->err, COV_ENOMEM, "", "out of memory");
        free(p->slot);
        p->slot = slot;
        p->n_slots = ns;
        for (size_t v = 0; v + 1 < n; v++) slot_put(p, v);
    }
    slot_put(p, n - 1);
    return COV_OK;
}

/* ---- parsing helpers ------------------------------------------------------------------------- */

static cov_token *peek(parser *p) { return &p->toks.tok[p->pos]; }
static cov_token *next(parser *p)
{
    cov_token *t = &p->toks.tok[p->pos];
    if (t->kind != COV_TOK_END) p->pos++;
    return t;
}

static int expect_fail(parser *p, const cov_token *t, const char *expected)
{
    char buf[160];
    return perr(p, t->col, "found %s, expected %s", cov_token_describe(t, buf, sizeof buf),
                expected);
}

static int expect_kind(parser *p, cov_tok_kind kind, const char *expected)
{
    cov_token *t = peek(p);
    if (t->kind != kind) return expect_fail(p, t, expected);
    next(p);
    return COV_OK;
}

static int expect_end(parser *p)
{
    return expect_kind(p, COV_TOK_END, "the end of the line");
}

static int is_word(const cov_token *t, const char *w)
{
    return t->kind == COV_TOK_WORD && strcmp(t->text, w) == 0;
}

/* A name token: a bare word that is not reserved, or a quoted string. */
static int take_name(parser *p, const char *what, cov_token **out)
{
    cov_token *t = peek(p);
    if (t->kind == COV_TOK_WORD && is_reserved(t->text))
        return perr(p, t->col, "found the reserved word '%s', expected %s (quote it, \"%s\", to "
                    "use it as a name)", t->text, what, t->text);
    if (t->kind != COV_TOK_WORD && t->kind != COV_TOK_QUOTED) return expect_fail(p, t, what);
    *out = next(p);
    return COV_OK;
}

/* Names of the declared variables, for suggestions. */
static int resolve(parser *p, const cov_token *t, size_t *out)
{
    long k = lookup(p, t->text);
    if (k >= 0) {
        *out = (size_t)k;
        return COV_OK;
    }
    const char *near = p->g->n_vars
        ? nearest(t->text, (const char *const *)&p->g->vars[0].name, p->g->n_vars, sizeof(cov_var))
        : NULL;
    if (near != NULL)
        return perr(p, t->col, "found the undeclared variable '%s', expected a variable declared "
                    "before this line; did you mean '%s'?", t->text, near);
    return perr(p, t->col, "found the undeclared variable '%s', expected a variable declared "
                "before this line with input, output or hidden", t->text);
}

static int take_number(parser *p, const char *expected, cov_token **out)
{
    cov_token *t = peek(p);
    if (t->kind != COV_TOK_NUMBER) return expect_fail(p, t, expected);
    *out = next(p);
    return COV_OK;
}

static int is_whole(double x) { return x == floor(x) && fabs(x) <= GRAPH_MAX_WHOLE; }

/* The cursor of coverage/graph/graph_forms.c on the current line. */
static cov_cursor cursor(parser *p)
{
    return (cov_cursor){&p->toks, &p->pos, p->name, p->line, p->err};
}

/* An amount: a positive number, then optionally `sd`, then optionally `per STEP` or `over range`
 * (*tail_col: the tail's column, 0 without one). */
static int take_amount_tail(parser *p, const char *what, cov_amount *out, int *tail_col);
static int take_amount(parser *p, const char *what, cov_amount *out)
{
    int tail_col = 0;
    return take_amount_tail(p, what, out, &tail_col);
}

static int take_amount_tail(parser *p, const char *what, cov_amount *out, int *tail_col)
{
    cov_token *t = NULL;
    int rc = take_number(p, what, &t);
    if (rc) return rc;
    if (!(t->num > 0))
        return perr(p, t->col, "found %s, expected %s greater than 0", t->text, what);
    out->value = t->num;
    out->unit = COV_UNIT_RAW;
    if (is_word(peek(p), "sd")) {
        next(p);
        out->unit = COV_UNIT_SD;
    }
    cov_cursor cur = cursor(p);
    return cov_form_amount_tail(&cur, out, tail_col);
}

/* ---- declarations ---------------------------------------------------------------------------- */

static int add_var(parser *p, const char *name, cov_var **out)
{
    cov_graph *g = p->g;
    if (g->n_vars == p->cap_vars) {
        size_t cap = p->cap_vars ? 2 * p->cap_vars : 16;
        cov_var *v = realloc(g->vars, cap * sizeof *v);
        if (v == NULL) return cov_fail(p->err, COV_ENOMEM, "", "out of memory");
        g->vars = v;
        index_list *c = realloc(p->children, cap * sizeof *c);
        if (c == NULL) return cov_fail(p->err, COV_ENOMEM, "", "out of memory");
        p->children = c;
        p->cap_vars = cap;
    }
    cov_var *v = &g->vars[g->n_vars];
    memset(v, 0, sizeof *v);
    v->name = strdup(name);
    if (v->name == NULL) return cov_fail(p->err, COV_ENOMEM, "", "out of memory");
    v->lo = v->hi = v->noise_sd = v->held_value = NAN;
    p->children[g->n_vars] = (index_list){NULL, 0, 0};
    g->n_vars++;
    *out = v;
    return index_var(p);
}

/* `[LO, HI]` with LO < HI; whole numbers for integers. */
static int take_range(parser *p, cov_type type, double *lo, double *hi)
{
    cov_token *open = peek(p), *a = NULL, *b = NULL;
    int rc = expect_kind(p, COV_TOK_LBRACK, "'[' starting the range [LO, HI]");
    if (!rc) rc = take_number(p, "the lower end LO of [LO, HI]", &a);
    if (!rc) rc = expect_kind(p, COV_TOK_COMMA, "',' between LO and HI");
    if (!rc) rc = take_number(p, "the upper end HI of [LO, HI]", &b);
    if (!rc) rc = expect_kind(p, COV_TOK_RBRACK, "']' closing the range");
    if (rc) return rc;
    if (type == COV_INTEGER) {
        if (!is_whole(a->num))
            return perr(p, a->col, "found %s, expected a whole number for an integer range",
                        a->text);
        if (!is_whole(b->num))
            return perr(p, b->col, "found %s, expected a whole number for an integer range",
                        b->text);
    }
    if (!(a->num < b->num))
        return perr(p, open->col, "found the %s range [%s, %s], expected LO < HI",
                    a->num == b->num ? "empty" : "inverted", a->text, b->text);
    /* Coverage, discrepancy and the plan work with HI - LO and squares of distances: bounded
     * magnitudes keep every one of them finite and nonzero. */
    if (fabs(a->num) > COV_MAX_MAGNITUDE || fabs(b->num) > COV_MAX_MAGNITUDE ||
        b->num - a->num < COV_MIN_RANGE_WIDTH)
        return perr(p, open->col, "found the range [%s, %s], expected ends within +-%g and a "
                    "width of at least %g (the limits on ranges)", a->text, b->text,
                    COV_MAX_MAGNITUDE, COV_MIN_RANGE_WIDTH);
    *lo = a->num;
    *hi = b->num;
    return COV_OK;
}

/* `{a, b, ...}`: at least two distinct level names. */
static int take_levels(parser *p, cov_var *v)
{
    cov_token *open = peek(p);
    int rc = expect_kind(p, COV_TOK_LBRACE, "'{' starting the list of levels");
    if (rc) return rc;
    size_t cap = 0;
    for (;;) {
        cov_token *t = NULL;
        rc = take_name(p, "a level name", &t);
        if (rc) return rc;
        if (v->n_levels == COV_MAX_LEVELS)
            return perr(p, t->col, "found more than %d levels, expected at most %d (the limit on "
                        "levels of one variable)", COV_MAX_LEVELS, COV_MAX_LEVELS);
        for (size_t i = 0; i < v->n_levels; i++)
            if (strcmp(v->levels[i], t->text) == 0)
                return perr(p, t->col, "found the level '%s' twice, expected distinct levels",
                            t->text);
        if (v->n_levels == cap) {
            cap = cap ? 2 * cap : 4;
            char **l = realloc(v->levels, cap * sizeof *l);
            if (l == NULL) return cov_fail(p->err, COV_ENOMEM, "", "out of memory");
            v->levels = l;
        }
        v->levels[v->n_levels] = strdup(t->text);
        if (v->levels[v->n_levels] == NULL)
            return cov_fail(p->err, COV_ENOMEM, "", "out of memory");
        v->n_levels++;
        if (peek(p)->kind == COV_TOK_COMMA) {
            next(p);
            continue;
        }
        rc = expect_kind(p, COV_TOK_RBRACE, "',' or '}' in the list of levels");
        if (rc) return rc;
        break;
    }
    if (v->n_levels < 2)
        return perr(p, open->col, "found 1 level, expected at least 2 distinct levels");
    return COV_OK;
}

static int parse_declaration(parser *p, cov_role role)
{
    next(p);
    cov_token *name = NULL;
    int rc = take_name(p, "a variable name", &name);
    if (rc) return rc;
    long prior = lookup(p, name->text);
    if (prior >= 0)
        return perr(p, name->col, "found a second declaration of '%s', expected each variable "
                    "declared once (first declared at line %d)", name->text,
                    p->g->vars[prior].line);
    cov_token *type = peek(p);
    static const char *const types[] = {"real", "integer", "bool", "levels"};
    cov_type ty;
    if (is_word(type, "real")) ty = COV_REAL;
    else if (is_word(type, "integer")) ty = COV_INTEGER;
    else if (is_word(type, "bool")) ty = COV_BOOL;
    else if (is_word(type, "levels")) ty = COV_LEVELS;
    else {
        const char *near = type->kind == COV_TOK_WORD
                               ? nearest(type->text, types, 4, sizeof types[0]) : NULL;
        char buf[160];
        if (near != NULL)
            return perr(p, type->col, "found %s, expected a type: real, integer, bool or levels; "
                        "did you mean '%s'?", cov_token_describe(type, buf, sizeof buf), near);
        return expect_fail(p, type, "a type: real, integer, bool or levels");
    }
    next(p);
    /* Claims grow with about the cube of the recorded variables: refuse before any of it. */
    if (p->g->n_vars == COV_MAX_VARIABLES)
        return perr(p, name->col, "found more than %d variables, expected at most %d (the limit "
                    "on variables)", COV_MAX_VARIABLES, COV_MAX_VARIABLES);
    if (role != COV_HIDDEN && ++p->n_recorded > COV_MAX_RECORDED)
        return perr(p, name->col, "found more than %d inputs and outputs, expected at most %d "
                    "(the limit on recorded variables)", COV_MAX_RECORDED, COV_MAX_RECORDED);
    cov_var *v = NULL;
    rc = add_var(p, name->text, &v);
    if (rc) return rc;
    v->role = role;
    v->type = ty;
    v->line = p->line;
    v->col = name->col;
    double lo = NAN, hi = NAN;
    if (ty == COV_LEVELS) {
        if (role != COV_HIDDEN || peek(p)->kind == COV_TOK_LBRACE) rc = take_levels(p, v);
        if (rc) return rc;
        if (v->n_levels >= 2 && is_word(peek(p), "ordered")) {
            next(p);
            cov_cursor cur = cursor(p);
            rc = cov_form_ordered(&cur, v);
            if (rc) return rc;
        }
        lo = 0;
        hi = (double)v->n_levels - 1;
        if (v->n_levels == 0) lo = hi = NAN;
    } else if (ty == COV_BOOL) {
        lo = 0;
        hi = 1;
    } else if (role == COV_INPUT || peek(p)->kind == COV_TOK_LBRACK) {
        if (role == COV_OUTPUT)
            return expect_fail(p, peek(p),
                               "'noise' or the end of the line (outputs take no range)");
        rc = take_range(p, ty, &lo, &hi);
        if (rc) return rc;
    }
    if (role == COV_INPUT) {
        v->lo = lo;
        v->hi = hi;
    }
    if (role == COV_OUTPUT && is_word(peek(p), "noise")) {
        next(p);
        cov_token *sd = NULL;
        rc = take_number(p, "the noise SD after 'noise'", &sd);
        if (rc) return rc;
        if (!(sd->num > 0))
            return perr(p, sd->col, "found %s, expected a noise SD greater than 0", sd->text);
        v->noise_sd = sd->num;
    }
    if (is_word(peek(p), "unit")) {
        next(p);
        cov_cursor cur = cursor(p);
        rc = cov_form_unit(&cur, &v->unit);
        if (rc) return rc;
    }
    if (peek(p)->kind != COV_TOK_END) {
        if (role == COV_OUTPUT)
            return expect_fail(p, peek(p), "'noise SD', 'unit \"TEXT\"' or the end of the line");
        return expect_fail(p, peek(p), ty == COV_LEVELS ? "'ordered', 'unit \"TEXT\"' or the end "
                           "of the line" : "'unit \"TEXT\"' or the end of the line");
    }
    return COV_OK;
}

static int parse_default(parser *p)
{
    next(p);
    cov_token *what = peek(p);
    if (is_word(what, "effect")) {
        next(p);
        if (p->seen_default_effect)
            return perr(p, what->col, "found a second 'default effect', expected one at most");
        p->seen_default_effect = 1;
        p->g->default_effect_line = p->line;
        p->g->default_effect_col = what->col;
        int rc = take_amount(p, "a smallest effect of interest", &p->g->default_effect);
        return rc ? rc : expect_kind(p, COV_TOK_END, "'sd', 'per STEP', 'over range' or the end "
                                     "of the line");
    }
    if (is_word(what, "margin")) {
        next(p);
        if (p->seen_margin)
            return perr(p, what->col, "found a second 'default margin', expected one at most");
        p->seen_margin = 1;
        p->g->margin_line = p->line;
        p->g->margin_col = what->col;
        int rc = take_amount(p, "an equivalence margin", &p->g->margin);
        return rc ? rc : expect_kind(p, COV_TOK_END, "'sd', 'per STEP', 'over range' or the end "
                                     "of the line");
    }
    return expect_fail(p, what, "'effect' or 'margin' after 'default'");
}

static int parse_design(parser *p)
{
    cov_token *first = next(p);
    if (!is_word(peek(p), "independent"))
        return expect_fail(p, peek(p), "'independent' after 'design'");
    next(p);
    if (p->seen_design)
        return perr(p, first->col, "found a second 'design independent', expected one at most");
    p->seen_design = 1;
    p->g->inputs_independent = 1;
    return expect_end(p);
}

/* `noise independent`: no output shares run noise; `noise independent A, B`: these outputs'
 * noise is independent of every other output's. */
static int parse_noise(parser *p)
{
    cov_token *first = next(p);
    if (!is_word(peek(p), "independent"))
        return expect_fail(p, peek(p), "'independent' after 'noise'");
    next(p);
    if (p->g->noise_independent)
        return perr(p, first->col, "found 'noise independent' after 'noise independent' for all "
                    "outputs, expected nothing more about run noise");
    if (peek(p)->kind == COV_TOK_END) {
        if (p->seen_noise)
            return perr(p, first->col, "found 'noise independent' for all outputs after one for "
                        "named outputs, expected one or the other");
        p->g->noise_independent = 1;
        p->seen_noise = 1;
        return COV_OK;
    }
    for (;;) {
        cov_token *t = NULL;
        size_t k;
        int rc = take_name(p, "the name of an output, or the end of the line", &t);
        if (!rc) rc = resolve(p, t, &k);
        if (rc) return rc;
        cov_var *v = &p->g->vars[k];
        if (v->role != COV_OUTPUT)
            return perr(p, t->col, "found the %s '%s', expected an output (run noise is shared by "
                        "outputs)", v->role == COV_INPUT ? "input" : "hidden variable", v->name);
        if (v->noise_own)
            return perr(p, t->col, "found '%s' a second time, expected each output once in "
                        "'noise independent'", v->name);
        v->noise_own = 1;
        if (peek(p)->kind != COV_TOK_COMMA) break;
        next(p);
    }
    p->seen_noise = 1;
    return expect_end(p);
}

static int parse_hold(parser *p)
{
    next(p);
    cov_token *name = NULL;
    size_t k;
    int rc = take_name(p, "the name of an input to hold", &name);
    if (!rc) rc = resolve(p, name, &k);
    if (rc) return rc;
    cov_var *v = &p->g->vars[k];
    if (v->role != COV_INPUT)
        return perr(p, name->col, "found the %s '%s', expected an input (only inputs can be held)",
                    v->role == COV_OUTPUT ? "output" : "hidden variable", v->name);
    if (v->held)
        return perr(p, name->col, "found a second 'hold' for '%s', expected one at most", v->name);
    cov_token *val = peek(p);
    char buf[160];
    double x = NAN;
    if (v->type == COV_LEVELS) {
        if (val->kind != COV_TOK_WORD && val->kind != COV_TOK_QUOTED)
            return expect_fail(p, val, "a level name of the input");
        for (size_t i = 0; i < v->n_levels; i++)
            if (strcmp(v->levels[i], val->text) == 0) x = (double)i;
        if (isnan(x))
            return perr(p, val->col, "found the level '%s', which '%s' does not declare; expected "
                        "one of its levels", val->text, v->name);
    } else if (v->type == COV_BOOL) {
        if (is_word(val, "true") || (val->kind == COV_TOK_NUMBER && val->num == 1)) x = 1;
        else if (is_word(val, "false") || (val->kind == COV_TOK_NUMBER && val->num == 0)) x = 0;
        else return perr(p, val->col, "found %s, expected true or false for the bool input '%s'",
                         cov_token_describe(val, buf, sizeof buf), v->name);
    } else {
        if (val->kind != COV_TOK_NUMBER) return expect_fail(p, val, "a number");
        if (v->type == COV_INTEGER && !is_whole(val->num))
            return perr(p, val->col, "found %s, expected a whole number for the integer input '%s'",
                        val->text, v->name);
        if (val->num < v->lo || val->num > v->hi)
            return perr(p, val->col, "found %s, outside the domain of '%s'; expected a value in "
                        "[%g, %g]", val->text, v->name, v->lo, v->hi);
        x = val->num;
    }
    next(p);
    v->held = 1;
    v->held_value = x;
    return expect_end(p);
}

/* ---- edges ----------------------------------------------------------------------------------- */

static int list_push(index_list *l, size_t x)
{
    if (l->n == l->cap) {
        size_t cap = l->cap ? 2 * l->cap : 4;
        size_t *it = realloc(l->item, cap * sizeof *it);
        if (it == NULL) return COV_ENOMEM;
        l->item = it;
        l->cap = cap;
    }
    l->item[l->n++] = x;
    return COV_OK;
}

/* When `to` already reaches `from`, adding from -> to closes a cycle: report it as a path. Depth-
 * first search over the edges read so far (Tarjan 1972). */
static int check_cycle(parser *p, size_t from, size_t to, int col)
{
    size_t n = p->g->n_vars;
    size_t *prev = malloc(n * sizeof *prev), *stack = malloc(n * sizeof *stack);
    int rc = COV_OK;
    if (prev == NULL || stack == NULL) {
        rc = cov_fail(p->err, COV_ENOMEM, "", "out of memory");
        goto fail;
    }
    for (size_t i = 0; i < n; i++) prev[i] = (size_t)-1;
    size_t top = 0;
    stack[top++] = to;
    prev[to] = to;
    int found = 0;
    while (top > 0 && !found) {
        size_t u = stack[--top];
        for (size_t i = 0; i < p->children[u].n; i++) {
            size_t w = p->children[u].item[i];
            if (prev[w] != (size_t)-1) continue;
            prev[w] = u;
            if (w == from) {
                found = 1;
                break;
            }
            stack[top++] = w;
        }
    }
    if (found) {
        /* Walk back from `from` to `to`; the cycle reads from -> to -> ... -> from. */
        size_t len = 0;
        for (size_t u = from; ; u = prev[u]) {
            stack[len++] = u;
            if (u == to) break;
        }
        char msg[900];
        size_t used = 0;
        used += (size_t)snprintf(msg + used, sizeof msg - used, "%s", p->g->vars[from].name);
        for (size_t i = len; i-- > 0 && used < sizeof msg;)
            used += (size_t)snprintf(msg + used, sizeof msg - used, " -> %s",
                                     p->g->vars[stack[i]].name);
        rc = perr(p, col, "found a cycle: %s; expected a graph without cycles", msg);
    }
fail:
    free(prev);
    free(stack);
    return rc;
}

static int add_edge(parser *p, const cov_token *ft, size_t from, const cov_token *tt, size_t to)
{
    cov_graph *g = p->g;
    if (from == to)
        return perr(p, tt->col, "found a cycle: %s -> %s; expected a graph without cycles",
                    g->vars[from].name, g->vars[to].name);
    if (g->vars[to].role == COV_INPUT)
        return perr(p, tt->col, "found an edge into the input '%s', expected edges into outputs "
                    "or hidden variables only (the tester sets inputs)", g->vars[to].name);
    int dup = 0;
    for (size_t i = 0; i < p->children[from].n; i++) dup |= p->children[from].item[i] == to;
    for (size_t i = 0; dup && i < g->n_edges; i++)
        if (g->edges[i].from == from && g->edges[i].to == to)
            return perr(p, tt->col, "found a second edge %s -> %s, expected each edge once (first "
                        "at line %d)", g->vars[from].name, g->vars[to].name, g->edges[i].line);
    int rc = check_cycle(p, from, to, tt->col);
    if (rc) return rc;
    if (g->n_edges == p->cap_edges) {
        size_t cap = p->cap_edges ? 2 * p->cap_edges : 16;
        cov_edge *e = realloc(g->edges, cap * sizeof *e);
        if (e == NULL) return cov_fail(p->err, COV_ENOMEM, "", "out of memory");
        g->edges = e;
        p->cap_edges = cap;
    }
    g->edges[g->n_edges++] = (cov_edge){.from = from, .to = to, .sign = 0,
                                        .shape = COV_SHAPE_MONOTONE,
                                        .effect = {NAN, COV_UNIT_RAW, COV_PER_UNIT, NAN},
                                        .line = p->line, .col = ft->col};
    if (list_push(&p->children[from], to)) return cov_fail(p->err, COV_ENOMEM, "", "out of memory");
    return COV_OK;
}

/* NAME (, NAME)* (-> NAME (, NAME)*)+ [expect +|-] [effect X [sd]] */
static int parse_edges(parser *p)
{
    size_t first_edge = p->g->n_edges;
    size_t prev_start = p->pos, prev_end;
    int rc = COV_OK;
    /* Check every name of the first list. */
    for (;;) {
        cov_token *t = NULL;
        size_t k;
        rc = take_name(p, "a variable name", &t);
        if (!rc) rc = resolve(p, t, &k);
        if (rc) return rc;
        if (peek(p)->kind != COV_TOK_COMMA) break;
        next(p);
    }
    prev_end = p->pos;
    if (peek(p)->kind != COV_TOK_ARROW) return expect_fail(p, peek(p), "',' or '->'");
    while (peek(p)->kind == COV_TOK_ARROW) {
        next(p);
        size_t cur_start = p->pos;
        for (;;) {
            cov_token *t = NULL;
            size_t k;
            rc = take_name(p, "a variable name after '->'", &t);
            if (!rc) rc = resolve(p, t, &k);
            if (rc) return rc;
            if (peek(p)->kind != COV_TOK_COMMA) break;
            next(p);
        }
        /* Every name of the left list to every name of the right list, left names outermost. The
         * names were resolved above, so these look-ups succeed. */
        for (size_t i = prev_start; i < prev_end; i += 2)
            for (size_t j = cur_start; j < p->pos; j += 2) {
                size_t from = (size_t)lookup(p, p->toks.tok[i].text);
                size_t to = (size_t)lookup(p, p->toks.tok[j].text);
                rc = add_edge(p, &p->toks.tok[i], from, &p->toks.tok[j], to);
                if (rc) return rc;
            }
        prev_start = cur_start;
        prev_end = p->pos;
    }
    int sign = 0, have_sign = 0, have_effect = 0, tail_col = 0;
    cov_shape shape = COV_SHAPE_MONOTONE;
    cov_amount eff = {NAN, COV_UNIT_RAW, COV_PER_UNIT, NAN};
    while (peek(p)->kind != COV_TOK_END) {
        cov_token *t = peek(p);
        if (is_word(t, "expect")) {
            if (have_sign) return perr(p, t->col, "found a second 'expect', expected one at most");
            next(p);
            cov_token *s = peek(p);
            if (s->kind == COV_TOK_PLUS) sign = 1;
            else if (s->kind == COV_TOK_MINUS) sign = -1;
            else if (s->kind == COV_TOK_QUERY) sign = 0;
            else if (is_word(s, "turning")) shape = COV_SHAPE_TURNING;
            else return expect_fail(p, s, "'+', '-', '?' or 'turning' after 'expect'");
            next(p);
            have_sign = 1;
        } else if (is_word(t, "effect")) {
            if (have_effect)
                return perr(p, t->col, "found a second 'effect', expected one at most");
            next(p);
            rc = take_amount_tail(p, "a smallest effect of interest", &eff, &tail_col);
            if (rc) return rc;
            have_effect = 1;
        } else {
            static const char *const notes[] = {"expect", "effect"};
            const char *near = t->kind == COV_TOK_WORD
                                   ? nearest(t->text, notes, 2, sizeof notes[0]) : NULL;
            if (near != NULL)
                return perr(p, t->col, "found the unknown word '%s', expected 'expect', 'effect' "
                            "or the end of the line; did you mean '%s'?", t->text, near);
            return expect_fail(p, t, "'->', ',', 'expect', 'effect' or the end of the line");
        }
    }
    for (size_t i = first_edge; i < p->g->n_edges; i++) {
        p->g->edges[i].sign = sign;
        p->g->edges[i].shape = shape;
        p->g->edges[i].effect = eff;
        cov_cursor cur = cursor(p);
        rc = cov_form_check_amount(&cur, &eff, &p->g->vars[p->g->edges[i].from], tail_col,
                                   "effect");
        if (rc) return rc;
    }
    return COV_OK;
}

/* ---- statements and files -------------------------------------------------------------------- */

static int parse_statement(parser *p)
{
    cov_token *t = peek(p);
    if (t->kind == COV_TOK_END) return COV_OK;
    if (t->kind == COV_TOK_QUOTED) return parse_edges(p);
    if (t->kind != COV_TOK_WORD)
        return expect_fail(p, t, "a statement (input, output, hidden, default, design, hold, "
                           "noise) or an edge");
    if (is_word(t, "input")) return parse_declaration(p, COV_INPUT);
    if (is_word(t, "output")) return parse_declaration(p, COV_OUTPUT);
    if (is_word(t, "hidden")) return parse_declaration(p, COV_HIDDEN);
    if (is_word(t, "default")) return parse_default(p);
    if (is_word(t, "design")) return parse_design(p);
    if (is_word(t, "hold")) return parse_hold(p);
    if (cov_ledger_is_statement(t)) return cov_ledger_parse(p->g, t, p->name, p->line, p->err);
    if (is_word(t, "noise")) return parse_noise(p);
    if (is_reserved(t->text))
        return perr(p, t->col, "found '%s' at the start of a statement, expected a statement "
                    "(input, output, hidden, default, design, hold, noise) or an edge", t->text);
    cov_tok_kind after = p->toks.tok[p->pos + 1].kind;
    if (after == COV_TOK_ARROW || after == COV_TOK_COMMA) return parse_edges(p);
    if (lookup(p, t->text) >= 0)
        return expect_fail(p, &p->toks.tok[p->pos + 1], "'->' or ',' after a variable name");
    const char *near = nearest(t->text, statement_words, N_STATEMENT, sizeof statement_words[0]);
    if (near != NULL)
        return perr(p, t->col, "found the unknown word '%s', expected a statement or an edge; "
                    "did you mean '%s'?", t->text, near);
    return perr(p, t->col, "found the unknown word '%s', expected a statement (input, output, "
                "hidden, default, design, hold, noise) or an edge (NAME -> NAME)", t->text);
}

void cov_graph_free(cov_graph *g)
{
    if (g == NULL) return;
    for (size_t i = 0; i < g->n_vars; i++) {
        free(g->vars[i].name);
        for (size_t j = 0; j < g->vars[i].n_levels; j++) free(g->vars[i].levels[j]);
        free(g->vars[i].levels);
        free(g->vars[i].unit);
        free(g->vars[i].positions);
    }
    free(g->vars);
    free(g->edges);
    cov_ledger_free(g);
    free(g->path);
    free(g);
}

long cov_graph_find(const cov_graph *g, const char *name)
{
    for (size_t i = 0; i < g->n_vars; i++)
        if (strcmp(g->vars[i].name, name) == 0) return (long)i;
    return -1;
}

int cov_graph_parse_text(const char *name, const char *text, cov_graph **out, cov_error *err)
{
    *out = NULL;
    parser p;
    memset(&p, 0, sizeof p);
    p.name = name ? name : "(graph)";
    p.err = err;
    int rc = COV_OK;
    cov_graph *g = calloc(1, sizeof *g);
    if (g == NULL) return cov_fail(err, COV_ENOMEM, "", "out of memory");
    p.g = g;
    g->default_effect = (cov_amount){NAN, COV_UNIT_RAW, COV_PER_UNIT, NAN};
    g->margin = (cov_amount){NAN, COV_UNIT_RAW, COV_PER_UNIT, NAN};
    g->path = strdup(p.name);
    if (g->path == NULL) {
        rc = cov_fail(err, COV_ENOMEM, "", "out of memory");
        goto fail;
    }
    const char *s = text;
    /* A UTF-8 byte-order mark is not part of the first statement. */
    if ((unsigned char)s[0] == 0xEF && (unsigned char)s[1] == 0xBB && (unsigned char)s[2] == 0xBF)
        s += 3;
    for (p.line = 1; *s != '\0'; p.line++) {
        const char *e = strchr(s, '\n');
        const char *stop = e ? e : s + strlen(s);
        const char *lend = stop;
        if (lend > s && lend[-1] == '\r') lend--;
        cov_tokens_clear(&p.toks);
        p.pos = 0;
        rc = cov_graph_lex_line(&p.toks, p.name, p.line, s, lend, err);
        if (!rc) rc = parse_statement(&p);
        if (rc) goto fail;
        s = e ? e + 1 : stop;
    }
    /* The tool refuses to guess which effect matters: every edge that becomes an effect claim
     * needs a smallest effect of interest, its own or the file's default. */
    if (isnan(g->default_effect.value)) {
        for (size_t i = 0; i < g->n_edges; i++) {
            const cov_edge *ed = &g->edges[i];
            if (!isnan(ed->effect.value) || g->vars[ed->from].role == COV_HIDDEN ||
                g->vars[ed->to].role == COV_HIDDEN)
                continue;
            p.line = ed->line;
            rc = perr(&p, ed->col, "found the edge %s -> %s without a smallest effect of interest, "
                      "expected 'effect X [sd]' on it or a 'default effect X [sd]' line",
                      g->vars[ed->from].name, g->vars[ed->to].name);
            goto fail;
        }
    }
    if ((rc = cov_ledger_check(g, err)) != COV_OK) goto fail;
    cov_tokens_clear(&p.toks);
    free(p.toks.tok);
    for (size_t i = 0; i < g->n_vars; i++) free(p.children[i].item);
    free(p.children);
    free(p.slot);
    *out = g;
    return COV_OK;
fail:
    cov_tokens_clear(&p.toks);
    free(p.toks.tok);
    for (size_t i = 0; i < g->n_vars; i++) free(p.children[i].item);
    free(p.children);
    free(p.slot);
    cov_graph_free(g);
    return rc;
}

int cov_graph_parse_file(const char *path, cov_graph **out, cov_error *err)
{
    *out = NULL;
    char *text = NULL;
    int rc = cov_graph_read_text(path, &text, err);
    if (rc == COV_OK) rc = cov_graph_parse_text(path, text, out, err);
    free(text);
    return rc;
}
