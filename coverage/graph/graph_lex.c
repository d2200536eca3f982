/* The graph file's lexer: the file's text read and checked, each line split into tokens.
 * See LICENSE. */
#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/graph/graph.h"

int cov_graph_fail(cov_error *err, const char *name, int line, int col, const char *fmt, ...)
{
    if (err != NULL) {
        snprintf(err->where, sizeof err->where, "%s:%d:%d", name, line, col);
        va_list ap;
        va_start(ap, fmt);
        vsnprintf(err->msg, sizeof err->msg, fmt, ap);
        va_end(ap);
    }
    return COV_EINPUT;
}

void cov_tokens_clear(cov_tokens *toks)
{
    for (size_t i = 0; i < toks->n; i++) free(toks->tok[i].text);
    toks->n = 0;
}

static int push_token(cov_tokens *toks, cov_error *err, cov_tok_kind kind, char *text, double num,
                      int col)
{
    if (toks->n == toks->cap) {
        size_t cap = toks->cap ? 2 * toks->cap : 16;
        cov_token *t = realloc(toks->tok, cap * sizeof *t);
        if (t == NULL) {
            free(text);
            return cov_fail(err, COV_ENOMEM, "", "out of memory reading the graph");
        }
        toks->tok = t;
        toks->cap = cap;
    }
    toks->tok[toks->n++] = (cov_token){kind, text, num, col};
    return COV_OK;
}

static int is_word_start(int c)
{
    return (c >= 'A' && c <= 'Z') || (c >= 'a' && c <= 'z') || c == '_';
}
static int is_digit(int c) { return c >= '0' && c <= '9'; }
static int is_word_char(int c) { return is_word_start(c) || is_digit(c) || c == '.'; }

int cov_graph_lex_line(cov_tokens *toks, const char *name, int line, const char *s,
                       const char *e, cov_error *err)
{
    int col = 1;
    const char *q = s;
    while (q < e) {
        unsigned char c = (unsigned char)*q;
        int start_col = col;
        if (c == ' ' || c == '\t') {
            q++;
            col++;
            continue;
        }
        if (c == '#') break;
        if (c == '"') {
            size_t cap = (size_t)(e - q);
            char *buf = malloc(cap + 1);
            if (buf == NULL) return cov_fail(err, COV_ENOMEM, "", "out of memory");
            size_t n = 0;
            const char *r = q + 1;
            int closed = 0;
            while (r < e) {
                if (*r == '"') {
                    closed = 1;
                    r++;
                    break;
                }
                if (*r == '\\') {
                    if (r + 1 < e && (r[1] == '"' || r[1] == '\\')) {
                        buf[n++] = r[1];
                        r += 2;
                        continue;
                    }
                    int bad_col = start_col;
                    for (const char *k = q; k < r; k++)
                        if (((unsigned char)*k & 0xC0) != 0x80) bad_col++;
                    free(buf);
                    if (r + 1 >= e)
                        return cov_graph_fail(err, name, line, bad_col, "found a backslash at the "
                                              "end of the line, expected \\\" or \\\\ inside a "
                                              "quoted name");
                    return cov_graph_fail(err, name, line, bad_col, "found the escape \\%c, "
                                          "expected \\\" or \\\\ inside a quoted name", r[1]);
                }
                buf[n++] = *r++;
            }
            if (!closed) {
                free(buf);
                return cov_graph_fail(err, name, line, start_col, "found an unterminated quoted "
                                      "name, expected a closing '\"' before the end of the line");
            }
            buf[n] = '\0';
            if (n == 0) {
                free(buf);
                return cov_graph_fail(err, name, line, start_col, "found an empty quoted name "
                                      "\"\", expected at least one character");
            }
            for (const char *k = q; k < r; k++)
                if (((unsigned char)*k & 0xC0) != 0x80) col++;
            q = r;
            int rc = push_token(toks, err, COV_TOK_QUOTED, buf, 0, start_col);
            if (rc) return rc;
            continue;
        }
        if (c == '-' && q + 1 < e && q[1] == '>') {
            int rc = push_token(toks, err, COV_TOK_ARROW, NULL, 0, start_col);
            if (rc) return rc;
            q += 2;
            col += 2;
            continue;
        }
        int signed_num = (c == '-' || c == '+') && q + 1 < e &&
                         (is_digit((unsigned char)q[1]) ||
                          (q[1] == '.' && q + 2 < e && is_digit((unsigned char)q[2])));
        if (is_digit(c) || signed_num || (c == '.' && q + 1 < e && is_digit((unsigned char)q[1]))) {
            const char *r = q + 1;
            while (r < e) {
                int d = (unsigned char)*r;
                if (is_word_char(d)) r++;
                else if ((d == '+' || d == '-') && (r[-1] == 'e' || r[-1] == 'E')) r++;
                else break;
            }
            size_t len = (size_t)(r - q);
            char *text = malloc(len + 1);
            if (text == NULL) return cov_fail(err, COV_ENOMEM, "", "out of memory");
            memcpy(text, q, len);
            text[len] = '\0';
            double v;
            /* The one decimal reader (no hexadecimal, inf or nan; a subnormal is a number). */
            if (cov_parse_double(text, &v) != 0) {
                int rc = cov_graph_fail(err, name, line, start_col,
                                        "found '%s', expected a decimal number", text);
                free(text);
                return rc;
            }
            q = r;
            col += (int)len;
            int rc = push_token(toks, err, COV_TOK_NUMBER, text, v, start_col);
            if (rc) return rc;
            continue;
        }
        if (is_word_start(c)) {
            const char *r = q + 1;
            while (r < e && is_word_char((unsigned char)*r)) r++;
            size_t len = (size_t)(r - q);
            char *text = malloc(len + 1);
            if (text == NULL) return cov_fail(err, COV_ENOMEM, "", "out of memory");
            memcpy(text, q, len);
            text[len] = '\0';
            q = r;
            col += (int)len;
            int rc = push_token(toks, err, COV_TOK_WORD, text, 0, start_col);
            if (rc) return rc;
            continue;
        }
        cov_tok_kind k;
        switch (c) {
        case ',': k = COV_TOK_COMMA; break;
        case '[': k = COV_TOK_LBRACK; break;
        case ']': k = COV_TOK_RBRACK; break;
        case '{': k = COV_TOK_LBRACE; break;
        case '}': k = COV_TOK_RBRACE; break;
        case '+': k = COV_TOK_PLUS; break;
        case '-': k = COV_TOK_MINUS; break;
        case '?': k = COV_TOK_QUERY; break;
        default: {
            /* Quote the whole UTF-8 sequence so the message shows the character the user typed. */
            size_t len = 1;
            while (q + len < e && len < 4 && ((unsigned char)q[len] & 0xC0) == 0x80) len++;
            return cov_graph_fail(err, name, line, start_col, "found the character '%.*s', "
                                  "expected a name, a number or one of -> , [ ] { } + - ?",
                                  (int)len, q);
        }
        }
        int rc = push_token(toks, err, k, NULL, 0, start_col);
        if (rc) return rc;
        q++;
        col++;
    }
    return push_token(toks, err, COV_TOK_END, NULL, 0, col);
}

const char *cov_token_describe(const cov_token *t, char *buf, size_t size)
{
    switch (t->kind) {
    case COV_TOK_END: snprintf(buf, size, "the end of the line"); break;
    case COV_TOK_WORD: snprintf(buf, size, "'%s'", t->text); break;
    case COV_TOK_QUOTED: snprintf(buf, size, "the name \"%s\"", t->text); break;
    case COV_TOK_NUMBER: snprintf(buf, size, "the number %s", t->text); break;
    case COV_TOK_ARROW: snprintf(buf, size, "'->'"); break;
    case COV_TOK_COMMA: snprintf(buf, size, "','"); break;
    case COV_TOK_LBRACK: snprintf(buf, size, "'['"); break;
    case COV_TOK_RBRACK: snprintf(buf, size, "']'"); break;
    case COV_TOK_LBRACE: snprintf(buf, size, "'{'"); break;
    case COV_TOK_RBRACE: snprintf(buf, size, "'}'"); break;
    case COV_TOK_PLUS: snprintf(buf, size, "'+'"); break;
    case COV_TOK_MINUS: snprintf(buf, size, "'-'"); break;
    case COV_TOK_QUERY: snprintf(buf, size, "'?'"); break;
    }
    return buf;
}

int cov_graph_read_text(const char *path, char **text, cov_error *err)
{
    *text = NULL;
    FILE *f = NULL;
    char why[160];
    /* "-" is standard input, as in most command-line tools. */
    if (strcmp(path, "-") == 0) f = stdin;
    else if (cov_open_regular(path, &f, why, sizeof why) != 0)
        return cov_fail(err, errno == 0 ? COV_EINPUT : COV_EIO, path,
                        "cannot open the graph file: %s", why);
    char *buf = NULL;
    size_t len = 0, cap = 0;
    int rc = COV_OK;
    for (;;) {
        if (cap - len < 4096) {
            cap = cap ? 2 * cap : 65536;
            char *nb = realloc(buf, cap + 1);
            if (nb == NULL) {
                rc = cov_fail(err, COV_ENOMEM, path, "out of memory reading the graph file");
                goto fail;
            }
            buf = nb;
        }
        size_t got = fread(buf + len, 1, cap - len, f);
        len += got;
        if (got == 0) break;
    }
    if (ferror(f)) {
        rc = cov_fail(err, COV_EIO, path, "cannot read the graph file: %s", strerror(errno));
        goto fail;
    }
    buf[len] = '\0';
    /* The format is UTF-8 text: a NUL or a stray byte would pass into names, then into JSON. */
    const char *nul = memchr(buf, '\0', len);
    size_t end = nul != NULL ? (size_t)(nul - buf) : len;
    size_t good = cov_utf8_valid_prefix(buf, end);
    if (good < end) nul = buf + good;   /* the first offending byte, NUL or not */
    if (nul != NULL) {
        int line = 1, col = 1;
        for (const char *q = buf; q < nul; q++) {
            if (*q == '\n') {
                line++;
                col = 1;
            } else if (((unsigned char)*q & 0xC0) != 0x80) {
                col++;
            }
        }
        char where[512];
        snprintf(where, sizeof where, "%s:%d:%d", path, line, col);
        if (*nul == '\0')
            rc = cov_fail(err, COV_EINPUT, where, "found a NUL byte, expected UTF-8 text");
        else
            rc = cov_fail(err, COV_EINPUT, where, "found the byte 0x%02X, which is not UTF-8; "
                          "expected UTF-8 text", (unsigned)(unsigned char)*nul);
        goto fail;
    }
    *text = buf;
    buf = NULL;
fail:
    free(buf);
    if (f != stdin) fclose(f);
    return rc;
}
