/* Terminal text wrapped to the terminal's width: words, hanging indents, and text written aside
 * then reflowed. See LICENSE. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/base/base.h"

/* Continuation bytes (10xxxxxx) do not start a character; a colour sequence (ESC [ ... m, which
 * only shoal's own writers put in text passed through raw) takes no column. */
static size_t chars_in(const char *s, size_t n)
{
    size_t w = 0;
    for (size_t i = 0; i < n; i++) {
        if (s[i] == '\033' && i + 1 < n && s[i + 1] == '[') {
            while (i < n && s[i] != 'm') i++;
            continue;
        }
        if (((unsigned char)s[i] & 0xC0) != 0x80) w++;
    }
    return w;
}

/* raw: the text was made safe by its writer already (reflow), so bytes pass as they are. */
static void put_safe(FILE *out, const char *s, size_t n, int raw)
{
    if (raw) {
        fwrite(s, 1, n, out);
        return;
    }
    for (size_t i = 0; i < n; i++) {
        unsigned char ch = (unsigned char)s[i];
        fputc(ch < 0x20 || ch == 0x7f ? '?' : ch, out);
    }
}


static size_t wrap(FILE *out, const char *text, size_t col, size_t indent, size_t width, int raw)
{
    const char *p = text ? text : "";
    if (width < indent + 20) width = indent + 20;   /* a sliver of a column helps no one */
    /* Leading blanks ask for a space before the first word, when it stays on this line. */
    int first = !(*p == ' ' && col > 0);
    while (*p) {
        while (*p == ' ' || *p == '\n' || *p == '\t') p++;
        if (*p == '\0') break;
        size_t len = strcspn(p, " \n\t");
        size_t w = chars_in(p, len);
        if (col + (first ? 0 : 1) + w > width && col > indent) {
            fputc('\n', out);
            for (size_t k = 0; k < indent; k++) fputc(' ', out);
            col = indent;
        } else if (!first) {
            fputc(' ', out);
            col++;
        }
        /* A word longer than the line is cut; the rest continues on the next line. */
        while (col + w > width && w > width - indent) {
            size_t room = width - col, take = 0, seen = 0;
            while (take < len && seen < room) {
                take++;
                while (take < len && ((unsigned char)p[take] & 0xC0) == 0x80) take++;
                seen++;
            }
            put_safe(out, p, take, raw);
            fputc('\n', out);
            for (size_t k = 0; k < indent; k++) fputc(' ', out);
            col = indent;
            p += take;
            len -= take;
            w -= seen;
        }
        put_safe(out, p, len, raw);
        col += w;
        p += len;
        first = 0;
    }
    return col;
}

size_t cov_term_wrap(FILE *out, const char *text, size_t col, size_t indent, size_t width)
{
    return wrap(out, text, col, indent, width, 0);
}

FILE *cov_reflow_begin(cov_reflow *r, FILE *fallback)
{
    r->buf = NULL;
    r->len = 0;
    r->mem = open_memstream(&r->buf, &r->len);
    return r->mem != NULL ? r->mem : fallback;
}

void cov_reflow_end(cov_reflow *r, FILE *out, size_t width)
{
    if (r->mem == NULL) return;   /* the text went straight to out */
    if (fclose(r->mem) != 0 || r->buf == NULL) {
        free(r->buf);
        r->mem = NULL;
        return;
    }
    r->mem = NULL;
    for (char *line = r->buf; *line;) {
        char *nl = strchr(line, '\n');
        size_t n = nl ? (size_t)(nl - line) : strlen(line);
        char saved = line[n];
        line[n] = '\0';
        if (chars_in(line, n) <= width) {
            fputs(line, out);
        } else {
            /* A hanging indent four columns past the line's own. */
            size_t lead = strspn(line, " ");
            for (size_t k = 0; k < lead; k++) fputc(' ', out);
            wrap(out, line + lead, lead, lead + 4, width, 1);
        }
        line[n] = saved;
        if (nl == NULL) break;
        fputc('\n', out);
        line = nl + 1;
    }
    free(r->buf);
    r->buf = NULL;
}
