/* Terminal tables that fit the terminal: columns sized to their cells, and, when the row would be
 * wider than the terminal, the detail columns moved under each row as wrapped lines.
 * See LICENSE. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/base/base.h"

struct cov_table {
    size_t n_cols;
    char **head;
    char *align;      /* 'l' or 'r' per column */
    char *detail;     /* 'd': may move under the row; '.' stays in the row */
    char **cells;     /* n_rows * n_cols */
    size_t n_rows, cap;
};

cov_table *cov_table_new(size_t n_cols, const char *const *head, const char *align,
                         const char *detail)
{
    cov_table *t = calloc(1, sizeof *t);
    if (t == NULL) return NULL;
    t->n_cols = n_cols;
    t->head = calloc(n_cols, sizeof *t->head);
    t->align = calloc(n_cols + 1, 1);
    t->detail = calloc(n_cols + 1, 1);
    if (t->head == NULL || t->align == NULL || t->detail == NULL) goto fail;
    for (size_t k = 0; k < n_cols; k++) {
        if ((t->head[k] = strdup(head[k])) == NULL) goto fail;
        t->align[k] = align != NULL && align[k] == 'r' ? 'r' : 'l';
        t->detail[k] = detail != NULL && detail[k] == 'd' ? 'd' : '.';
    }
    return t;
fail:
    cov_table_free(t);
    return NULL;
}

int cov_table_add(cov_table *t, const char *const *cells)
{
    if (t->n_rows == t->cap) {
        size_t cap = t->cap ? 2 * t->cap : 16;
        char **grown = realloc(t->cells, cap * t->n_cols * sizeof *grown);
        if (grown == NULL) return COV_ENOMEM;
        t->cells = grown;
        t->cap = cap;
    }
    char **row = t->cells + t->n_rows * t->n_cols;
    for (size_t k = 0; k < t->n_cols; k++) {
        row[k] = strdup(cells[k] ? cells[k] : "");
        if (row[k] == NULL) {
            for (size_t j = 0; j < k; j++) free(row[j]);
            return COV_ENOMEM;
        }
    }
    t->n_rows++;
    return COV_OK;
}

static void cell(FILE *out, const char *s, size_t width, char align, int last)
{
    size_t w = cov_text_width(s);
    if (align == 'r')
        for (size_t k = w; k < width; k++) fputc(' ', out);
    cov_term_text(out, s);
    if (align != 'r' && !last)
        for (size_t k = w; k < width; k++) fputc(' ', out);
}

int cov_table_print(const cov_table *t, FILE *out, size_t width)
{
    size_t *w = calloc(t->n_cols ? t->n_cols : 1, sizeof *w);
    if (w == NULL) return COV_ENOMEM;
    for (size_t k = 0; k < t->n_cols; k++) {
        w[k] = cov_text_width(t->head[k]);
        for (size_t r = 0; r < t->n_rows; r++) {
            size_t c = cov_text_width(t->cells[r * t->n_cols + k]);
            if (c > w[k]) w[k] = c;
        }
    }
    size_t all = 0;
    for (size_t k = 0; k < t->n_cols; k++) all += w[k] + (k ? 2 : 0);
    int below = all > width;   /* the detail columns move under each row */
    size_t last = 0, kept = 0;
    for (size_t k = 0; k < t->n_cols; k++)
        if (!below || t->detail[k] != 'd') last = k, kept += w[k] + (kept ? 2 : 0);
    if (below && kept > width) {
        /* Still too wide (long names): one block per row, the first column on a line of its own
         * and the others as "heading value" pairs under it. */
        for (size_t r = 0; r < t->n_rows; r++) {
            char **row = t->cells + r * t->n_cols;
            cov_term_wrap(out, row[0], 0, 4, width);
            fputs("\n    ", out);
            size_t col = 4;
            for (size_t k = 1, first = 1; k < t->n_cols; k++) {
                if (t->detail[k] == 'd') continue;
                char pair[512];
                snprintf(pair, sizeof pair, "%s%s %s", first ? "" : ", ", t->head[k], row[k]);
                col = cov_term_wrap(out, pair, col, 6, width);
                first = 0;
            }
            fputc('\n', out);
            for (size_t k = 0; k < t->n_cols; k++) {
                if (t->detail[k] != 'd' || row[k][0] == '\0' || strcmp(row[k], "-") == 0) continue;
                fputs("    ", out);
                col = cov_term_wrap(out, t->head[k], 4, 6, width);
                col = cov_term_wrap(out, ":", col, 6, width);
                fputc(' ', out);
                cov_term_wrap(out, row[k], col + 1, 6, width);
                fputc('\n', out);
            }
        }
        free(w);
        return COV_OK;
    }
    for (size_t k = 0, first = 1; k < t->n_cols; k++) {
        if (below && t->detail[k] == 'd') continue;
        if (!first) fputs("  ", out);
        cell(out, t->head[k], w[k], t->align[k], k == last);
        first = 0;
    }
    fputc('\n', out);
    for (size_t r = 0; r < t->n_rows; r++) {
        char **row = t->cells + r * t->n_cols;
        for (size_t k = 0, first = 1; k < t->n_cols; k++) {
            if (below && t->detail[k] == 'd') continue;
            if (!first) fputs("  ", out);
            cell(out, row[k], w[k], t->align[k], k == last);
            first = 0;
        }
        fputc('\n', out);
        for (size_t k = 0; below && k < t->n_cols; k++) {
            if (t->detail[k] != 'd' || row[k][0] == '\0' || strcmp(row[k], "-") == 0) continue;
            fputs("    ", out);
            size_t col = cov_term_wrap(out, t->head[k], 4, 6, width);
            col = cov_term_wrap(out, ":", col, 6, width);
            fputc(' ', out);
            cov_term_wrap(out, row[k], col + 1, 6, width);
            fputc('\n', out);
        }
    }
    free(w);
    return COV_OK;
}

void cov_table_free(cov_table *t)
{
    if (t == NULL) return;
    for (size_t i = 0; i < t->n_rows * t->n_cols; i++) free(t->cells[i]);
    free(t->cells);
    for (size_t k = 0; t->head != NULL && k < t->n_cols; k++) free(t->head[k]);
    free(t->head);
    free(t->align);
    free(t->detail);
    free(t);
}
