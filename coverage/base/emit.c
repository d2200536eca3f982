/* Escaping for the JSON and CSV writers of every command. See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "coverage/base/base.h"

void cov_emit_json_string(FILE *f, const char *s)
{
    fputc('"', f);
    for (const unsigned char *p = (const unsigned char *)(s ? s : ""); *p; p++) {
        switch (*p) {
        case '"': fputs("\\\"", f); break;
        case '\\': fputs("\\\\", f); break;
        case '\b': fputs("\\b", f); break;
        case '\f': fputs("\\f", f); break;
        case '\n': fputs("\\n", f); break;
        case '\r': fputs("\\r", f); break;
        case '\t': fputs("\\t", f); break;
        default:
            /* '<' is escaped too, so a string can never close a <script> block it is embedded in. */
            if (*p < 0x20 || *p == '<') fprintf(f, "\\u%04x", *p);
            else fputc(*p, f);
        }
    }
    fputc('"', f);
}

void cov_emit_json_number(FILE *f, double x)
{
    if (!isfinite(x)) fputs("null", f);
    else fprintf(f, "%.10g", x);
}

void cov_emit_json_num_field(FILE *f, const char *key, double x)
{
    fprintf(f, ", \"%s\": ", key);
    cov_emit_json_number(f, x);
}

/* Cells a spreadsheet would run as a formula start with one of these (OWASP, "CSV Injection":
 * =, +, -, @, tab and carriage return); such a cell gets a leading apostrophe, the usual practice,
 * which spreadsheets show as text. */
static int formula_start(const char *s)
{
    return s[0] != '\0' && strchr("=+-@\t\r", s[0]) != NULL;
}

const char *cov_csv_unneutralise(const char *s)
{
    return s != NULL && s[0] == '\'' && formula_start(s + 1) ? s + 1 : s;
}

void cov_emit_csv_field(FILE *f, const char *s)
{
    const char *p = s ? s : "";
    int quote = 0, neutralise = formula_start(p);
    for (const char *q = p; *q; q++)
        if (*q == ',' || *q == '"' || *q == '\r' || *q == '\n') quote = 1;
    if (!quote) {
        if (neutralise) fputc('\'', f);
        fputs(p, f);
        return;
    }
    fputc('"', f);
    if (neutralise) fputc('\'', f);
    for (; *p; p++) {
        if (*p == '"') fputc('"', f);
        fputc(*p, f);
    }
    fputc('"', f);
}

void cov_emit_csv_number(FILE *f, double x)
{
    if (isfinite(x)) fprintf(f, "%.10g", x);
    else if (isinf(x)) fputs(x > 0 ? "inf" : "-inf", f);
}

void cov_progress_note(double share, void *ctx)
{
    FILE *note = ctx;
    fprintf(note, "\rreading the archive %3.0f%%", 100 * share);
    if (share >= 1) fputc('\n', note);
    fflush(note);
}

const char *cov_claim_arrow(cov_claim_kind kind)
{
    return kind == COV_CLAIM_EFFECT ? "->" : "-0->";
}

const char *cov_claim_kind_word(cov_claim_kind kind)
{
    return kind == COV_CLAIM_EFFECT ? "effect" : "absence";
}

/* Append the names of c's adjustment set to buf[used..size), joined by ", ". */
static size_t append_set(const cov_graph *g, const cov_claim *c, char *buf, size_t used,
                         size_t size)
{
    for (size_t k = 0; k < c->n_cond && used < size; k++)
        used += (size_t)snprintf(buf + used, size - used, "%s%s", k ? ", " : "",
                                 g->vars[c->cond[k]].name);
    return used;
}

void cov_claim_pair_label(const cov_graph *g, const cov_claim *c, char *buf, size_t size)
{
    snprintf(buf, size, "%s %s %s", g->vars[c->treatment].name, cov_claim_arrow(c->kind),
             g->vars[c->outcome].name);
}

void cov_claim_label(const cov_graph *g, const cov_claim *c, char *buf, size_t size)
{
    size_t used = (size_t)snprintf(buf, size, "%s %s %s", g->vars[c->treatment].name,
                                   cov_claim_arrow(c->kind), g->vars[c->outcome].name);
    if (used >= size || c->n_cond == 0) return;
    used += (size_t)snprintf(buf + used, size - used, " [");
    used = append_set(g, c, buf, used, size);
    if (used < size) snprintf(buf + used, size - used, "]");
}

void cov_claim_sentence(const cov_graph *g, const cov_claim *c, char *buf, size_t size)
{
    size_t used = (size_t)snprintf(buf, size, "%s of %s on %s",
                                   c->kind == COV_CLAIM_EFFECT ? "an effect" : "no effect",
                                   g->vars[c->treatment].name, g->vars[c->outcome].name);
    if (used >= size || c->n_cond == 0) return;
    used += (size_t)snprintf(buf + used, size - used, " given ");
    append_set(g, c, buf, used, size);
}

size_t cov_utf8_valid_prefix(const char *s, size_t n)
{
    /* The well-formed sequences of RFC 3629 section 4 (UTF8-octets): no overlong forms, no
     * surrogates (ED A0-BF), nothing above U+10FFFF (F4 90-BF, F5-FF). */
    const unsigned char *p = (const unsigned char *)s;
    size_t i = 0;
    while (i < n) {
        unsigned char b = p[i];
        size_t more;
        unsigned char lo = 0x80, hi = 0xBF;
        if (b < 0x80) {
            i++;
            continue;
        } else if (b >= 0xC2 && b <= 0xDF) {
            more = 1;
        } else if (b >= 0xE0 && b <= 0xEF) {
            more = 2;
            if (b == 0xE0) lo = 0xA0;
            if (b == 0xED) hi = 0x9F;
        } else if (b >= 0xF0 && b <= 0xF4) {
            more = 3;
            if (b == 0xF0) lo = 0x90;
            if (b == 0xF4) hi = 0x8F;
        } else {
            return i;
        }
        if (n - i <= more) return i;
        if (p[i + 1] < lo || p[i + 1] > hi) return i;
        for (size_t k = 2; k <= more; k++)
            if ((p[i + k] & 0xC0) != 0x80) return i;
        i += more + 1;
    }
    return n;
}

size_t cov_text_width(const char *s)
{
    size_t w = 0;
    for (; *s; s++)
        if (((unsigned char)*s & 0xC0) != 0x80) w++;
    return w;
}
