/* The plots of index.html: each gnuplot SVG inlined as an SVG element when it holds only what
 * gnuplot writes, else shown as an image from a data URI. See LICENSE. */
#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/report/report.h"

/* RFC 4648 base64, for the data URI of a plot that cannot be inlined. */
static void base64(FILE *out, const unsigned char *b, size_t n)
{
    static const char al[] = "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
    size_t i = 0;
    for (; i + 3 <= n; i += 3) {
        unsigned long v = (unsigned long)b[i] << 16 | (unsigned long)b[i + 1] << 8 | b[i + 2];
        fputc(al[v >> 18 & 63], out), fputc(al[v >> 12 & 63], out);
        fputc(al[v >> 6 & 63], out), fputc(al[v & 63], out);
    }
    if (n - i == 1) {
        unsigned long v = (unsigned long)b[i] << 16;
        fputc(al[v >> 18 & 63], out), fputc(al[v >> 12 & 63], out), fputs("==", out);
    } else if (n - i == 2) {
        unsigned long v = (unsigned long)b[i] << 16 | (unsigned long)b[i + 1] << 8;
        fputc(al[v >> 18 & 63], out), fputc(al[v >> 12 & 63], out);
        fputc(al[v >> 6 & 63], out), fputc('=', out);
    }
}

/* Read a whole file into memory, NUL-terminated after its len bytes; NULL when it is missing or
 * unreadable. */
static char *slurp(const char *path, size_t *len)
{
    FILE *f = fopen(path, "rb");
    if (f == NULL) return NULL;
    size_t cap = 1 << 16, n = 0;
    char *buf = malloc(cap + 1);
    while (buf != NULL) {
        n += fread(buf + n, 1, cap - n, f);
        if (n < cap) break;
        char *bigger = realloc(buf, cap * 2 + 1);
        if (bigger == NULL) free(buf);
        buf = bigger;
        cap *= 2;
    }
    if (buf != NULL && ferror(f)) {
        free(buf);
        buf = NULL;
    }
    fclose(f);
    if (buf != NULL) buf[n] = '\0';
    *len = n;
    return buf;
}

/* ---- inline SVG ------------------------------------------------------------------------------ */

/* gnuplot's svg terminal nests its groups a few levels deep; anything deeper is not its output. */
#define SVG_MAX_DEPTH 64

/* The elements gnuplot's svg terminal (without the mouse option, as coverage/report/plot.c sets it)
 * writes. Anything else, <script> and <foreignObject> above all, keeps the plot out of the DOM.
 * None of them is an HTML element that breaks out of foreign content (HTML Living Standard,
 * 13.2.6.5 "The rules for parsing tokens in foreign content"). */
static const char *const svg_elements[] = {
    "g", "defs", "title", "desc", "rect", "circle", "ellipse", "line", "polyline", "polygon",
    "path", "text", "tspan", "use", "filter", "feFlood", "feComposite", "feOffset",
    "feGaussianBlur", "clipPath", "pattern", "linearGradient", "radialGradient", "stop", "symbol",
};

/* The CSS and transform functions an attribute value may call; url() only with a local #id. */
static const char *const svg_functions[] = {
    "url", "rgb", "rgba", "translate", "scale", "rotate", "matrix", "skewX", "skewY",
};

typedef struct {
    const char *s;     /* the SVG file, NUL-terminated */
    size_t pos;
    FILE *out;         /* NULL: check only */
    size_t plot;       /* 1-based: ids become pPLOT-ID */
    const char *caption;
} svg_walk;

static int span_is(const char *p, size_t n, const char *word)
{
    return strlen(word) == n && strncmp(p, word, n) == 0;
}

/* Attribute names compare without case, as the HTML parser lowercases them (13.2.5.33). */
static int attr_is(const char *p, size_t n, const char *word)
{
    if (strlen(word) != n) return 0;
    for (size_t i = 0; i < n; i++)
        if (tolower((unsigned char)p[i]) != tolower((unsigned char)word[i])) return 0;
    return 1;
}

static int name_char(char c)
{
    return isalnum((unsigned char)c) || c == ':' || c == '_' || c == '-' || c == '.';
}

static void svg_put(svg_walk *w, const char *p, size_t n)
{
    if (w->out != NULL) fwrite(p, 1, n, w->out);
}

/* Whether attribute value v (n bytes) calls only the functions above, url() only on #ids. */
static const char *svg_check_value(const char *v, size_t n)
{
    for (size_t i = 0; i < n; i++) {
        if (v[i] == '&' || v[i] == '\\' || v[i] == '<')
            return "a character reference, backslash or less-than sign in an attribute value";
        if (v[i] != '(') continue;
        size_t b = i;
        while (b > 0 && (isalnum((unsigned char)v[b - 1]) || v[b - 1] == '-')) b--;
        int known = 0;
        for (size_t k = 0; k < sizeof svg_functions / sizeof *svg_functions; k++)
            if (span_is(v + b, i - b, svg_functions[k])) known = 1;
        if (!known) return "an unknown function in an attribute value";
        if (span_is(v + b, i - b, "url") && (i + 1 >= n || v[i + 1] != '#'))
            return "a url() reference that is not a local #id";
    }
    return NULL;
}

/* Write value v (n bytes) with every url(#X) turned into url(#pK-X). */
static void svg_put_value(svg_walk *w, const char *v, size_t n)
{
    if (w->out == NULL) return;
    for (size_t i = 0; i < n; i++) {
        fputc(v[i], w->out);
        if (v[i] == '#' && i >= 4 && strncmp(v + i - 4, "url(", 4) == 0)
            fprintf(w->out, "p%zu-", w->plot);
    }
}

/* One start tag at w->pos (just past '<'). depth is the number of open elements; dropped is set
 * when the tag is gnuplot's own <title> of the root, which our caption replaces. *closed is set
 * for a self-closing tag. Returns why the plot cannot be inlined, or NULL. */
static const char *svg_start_tag(svg_walk *w, size_t depth, int text_only, const char **name,
                                 size_t *name_len, int *closed, int *dropped)
{
    const char *s = w->s;
    size_t p = w->pos, n0 = p;
    while (name_char(s[p])) p++;
    *name = s + n0;
    *name_len = p - n0;
    int root = depth == 0;
    if (root != span_is(s + n0, p - n0, "svg")) return "an svg element nested in the plot";
    if (span_is(s + n0, p - n0, "script")) return "a script element";
    if (span_is(s + n0, p - n0, "foreignObject")) return "a foreignObject element";
    int known = root;
    for (size_t k = 0; k < sizeof svg_elements / sizeof *svg_elements; k++)
        if (span_is(s + n0, p - n0, svg_elements[k])) known = 1;
    if (!known) return "an element that gnuplot's svg terminal does not write";
    if (text_only) return "markup inside title or desc";
    *dropped = depth == 1 && span_is(s + n0, p - n0, "title");
    if (!*dropped) {
        svg_put(w, "<", 1);
        svg_put(w, s + n0, p - n0);
    }
    if (root && w->out != NULL) {
        fputs(" role=\"img\" aria-label=\"", w->out);
        cov_html_text(w->out, w->caption);
        fputc('"', w->out);
    }
    int has_viewbox = 0;
    double width = NAN, height = NAN;
    for (;;) {
        while (isspace((unsigned char)s[p])) p++;
        if (s[p] == '>' || (s[p] == '/' && s[p + 1] == '>')) break;
        size_t a0 = p;
        while (name_char(s[p])) p++;
        size_t a_len = p - a0;
        if (a_len == 0) return "a malformed tag";
        while (isspace((unsigned char)s[p])) p++;
        if (s[p] != '=') return "an attribute without a value";
        p++;
        while (isspace((unsigned char)s[p])) p++;
        char quote = s[p];
        if (quote != '"' && quote != '\'') return "an unquoted attribute value";
        const char *v = s + p + 1, *end = strchr(v, quote);
        if (end == NULL) return "an unterminated attribute value";
        size_t v_len = (size_t)(end - v);
        p += v_len + 2;
        const char *a = s + a0;
        if (a_len >= 2 && tolower((unsigned char)a[0]) == 'o' && tolower((unsigned char)a[1]) == 'n')
            return "an on... event attribute";
        const char *why = svg_check_value(v, v_len);
        if (why != NULL) return why;
        int href = attr_is(a, a_len, "href") ||
                   (a_len > 5 && attr_is(a + a_len - 5, 5, ":href"));
        if (href && (v_len == 0 || v[0] != '#')) return "an href that is not a local #id";
        if (root && attr_is(a, a_len, "viewBox")) has_viewbox = 1;
        if (root && (attr_is(a, a_len, "width") || attr_is(a, a_len, "height"))) {
            char num[32], *num_end;
            snprintf(num, sizeof num, "%.*s", (int)(v_len < 31 ? v_len : 31), v);
            errno = 0;
            double x = strtod(num, &num_end);
            if (num_end != num && *num_end == '\0' && errno == 0 && isfinite(x) && x > 0)
                *(tolower((unsigned char)a[0]) == 'w' ? &width : &height) = x;
        }
        if (*dropped || (root && (attr_is(a, a_len, "role") || attr_is(a, a_len, "aria-label"))))
            continue;
        svg_put(w, " ", 1);
        svg_put(w, a, a_len);
        svg_put(w, "=", 1);
        svg_put(w, &quote, 1);
        if (w->out != NULL && attr_is(a, a_len, "id")) fprintf(w->out, "p%zu-", w->plot);
        if (href) {
            svg_put(w, "#", 1);
            if (w->out != NULL) fprintf(w->out, "p%zu-", w->plot);
            svg_put(w, v + 1, v_len - 1);
        } else {
            svg_put_value(w, v, v_len);
        }
        svg_put(w, &quote, 1);
    }
    *closed = s[p] == '/';
    p += *closed ? 2 : 1;
    w->pos = p;
    if (root) {
        if (*closed) return "an empty plot";
        if (!has_viewbox) {
            /* Without a viewBox the plot cannot scale to the column: derive it from the size. */
            if (!isfinite(width) || !isfinite(height)) return "no viewBox and no numeric size";
            if (w->out != NULL) fprintf(w->out, " viewBox=\"0 0 %.9g %.9g\"", width, height);
        }
        svg_put(w, ">", 1);
        if (w->out != NULL) {
            fputs("<title>", w->out);
            cov_html_text(w->out, w->caption);
            fputs("</title>", w->out);
        }
    } else if (!*dropped) {
        svg_put(w, *closed ? "/>" : ">", *closed ? 2 : 1);
    }
    return NULL;
}

/* Check (w->out NULL) or write (w->out set) the SVG file w->s as an inline <svg> element: the
 * prologue (XML declaration, DOCTYPE, comments) dropped, comments dropped, every id X renamed
 * pK-X together with its references (href="#X", url(#X)), role="img" and the caption as its
 * aria-label and <title>. Returns why it cannot be inlined, or NULL. */
static const char *svg_inline(svg_walk *w)
{
    const char *s = w->s;
    size_t p = 0;
    if (strncmp(s, "\xEF\xBB\xBF", 3) == 0) p = 3;
    for (;;) {   /* the prologue */
        while (isspace((unsigned char)s[p])) p++;
        const char *end;
        if (strncmp(s + p, "<?", 2) == 0 && (end = strstr(s + p, "?>")) != NULL)
            p = (size_t)(end - s) + 2;
        else if (strncmp(s + p, "<!--", 4) == 0 && (end = strstr(s + p + 4, "-->")) != NULL)
            p = (size_t)(end - s) + 3;
        else if (strncmp(s + p, "<!DOCTYPE", 9) == 0 && (end = strchr(s + p, '>')) != NULL &&
                 memchr(s + p, '[', (size_t)(end - s) - p) == NULL)
            p = (size_t)(end - s) + 1;
        else break;
    }
    if (strncmp(s + p, "<svg", 4) != 0 || !(isspace((unsigned char)s[p + 4]) || s[p + 4] == '>'))
        return "no root svg element after the prologue";
    const char *open_name[SVG_MAX_DEPTH];
    size_t open_len[SVG_MAX_DEPTH], depth = 0;
    int text_only = 0, dropping = 0;
    while (s[p] != '\0') {
        if (s[p] != '<') {
            size_t n = strcspn(s + p, "<");
            if (!dropping) svg_put(w, s + p, n);
            p += n;
            continue;
        }
        if (strncmp(s + p, "<!--", 4) == 0) {
            const char *end = strstr(s + p + 4, "-->");
            if (end == NULL) return "an unterminated comment";
            p = (size_t)(end - s) + 3;
            continue;
        }
        if (s[p + 1] == '/') {
            size_t n0 = p + 2, e = n0;
            while (name_char(s[e])) e++;
            size_t n = e - n0;
            while (isspace((unsigned char)s[e])) e++;
            if (s[e] != '>' || depth == 0 || n != open_len[depth - 1] ||
                strncmp(s + n0, open_name[depth - 1], n) != 0)
                return "a mismatched end tag";
            if (!dropping) svg_put(w, s + p, e + 1 - p);
            p = e + 1;
            depth--;
            text_only = dropping = 0;
            if (depth == 0) return NULL;   /* what follows the root is not part of the plot */
            continue;
        }
        if (!isalpha((unsigned char)s[p + 1]))
            return "markup other than elements and comments (CDATA, declarations or processing instructions)";
        const char *name;
        size_t name_len;
        int closed = 0, dropped = 0;
        w->pos = p + 1;
        const char *why = svg_start_tag(w, depth, text_only, &name, &name_len, &closed, &dropped);
        if (why != NULL) return why;
        p = w->pos;
        if (closed) continue;
        if (depth == SVG_MAX_DEPTH) return "elements nested too deeply";
        open_name[depth] = name;
        open_len[depth++] = name_len;
        text_only = span_is(name, name_len, "title") || span_is(name, name_len, "desc");
        dropping = dropped;
    }
    return "the file ends inside the plot";
}

/* One plot as a figure: inline SVG when it passes svg_inline's check, else an image; its caption,
 * and a link to the full-size file beside index.html (small screens shrink the inline one). */
int cov_html_figure(FILE *out, const char *dir, const cov_plot *plot, size_t number)
{
    char path[4096];
    size_t len = 0;
    snprintf(path, sizeof path, "%s/%s.svg", dir, plot->name);
    char *svg = slurp(path, &len);
    if (svg == NULL) return 0;
    svg_walk w = {svg, 0, NULL, number, plot->caption};
    const char *why = strlen(svg) == len ? svg_inline(&w) : "a NUL byte in the file";
    fprintf(out, "<figure id=\"fig-%s\"><div class=\"plot\">", plot->name);
    if (why == NULL) {
        w.out = out;
        svg_inline(&w);
    } else {
        /* Refused markup stays out of the DOM: an image cannot run script or reach out. */
        fprintf(out, "<!-- %s.svg is shown as an image, not inline (refused: %s) -->", plot->name,
                why);
        fputs("<img alt=\"", out);
        cov_html_text(out, plot->caption);
        fputs("\" src=\"data:image/svg+xml;base64,", out);
        base64(out, (const unsigned char *)svg, len);
        fputs("\">", out);
    }
    fputs("</div><figcaption>", out);
    cov_html_text(out, plot->caption);
    fprintf(out, "</figcaption><p class=\"full\"><a href=\"%s.svg\">Full size</a></p></figure>\n",
            plot->name);
    free(svg);
    return 1;
}
