/* A stream that makes text safe for a terminal: control characters (C0, DEL and the C1 range)
 * are written as visible escapes, so a name in a graph or an archive cannot clear the screen,
 * ring the bell, move the cursor or overwrite a verdict. The only escape sequences let through are
 * the five colour codes shoal itself writes (ECMA-48 SGR: reset, bold, dim, yellow, cyan), which
 * change nothing but colour. See LICENSE. */
#define _GNU_SOURCE
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/base/base.h"

static const char *const allowed_sgr[] = {"\033[0m", "\033[1m", "\033[2m", "\033[33m", "\033[36m"};
#define N_ALLOWED (sizeof allowed_sgr / sizeof allowed_sgr[0])
#define PENDING_MAX 8

typedef struct {
    FILE *under;
    unsigned char pending[PENDING_MAX];   /* the start of a colour code or of a 2-byte C1 */
    size_t n_pending;
} term_filter;

/* 1 when pending is a whole allowed colour code, 2 when a proper prefix of one, 0 otherwise. */
static int sgr_match(const unsigned char *p, size_t n)
{
    int prefix = 0;
    for (size_t k = 0; k < N_ALLOWED; k++) {
        size_t len = strlen(allowed_sgr[k]);
        if (n <= len && memcmp(p, allowed_sgr[k], n) == 0) {
            if (n == len) return 1;
            prefix = 1;
        }
    }
    return prefix ? 2 : 0;
}

static void put_escaped(FILE *f, unsigned char b)
{
    switch (b) {
    case '\r': fputs("\\r", f); break;
    case '\a': fputs("\\a", f); break;
    case '\b': fputs("\\b", f); break;
    case '\f': fputs("\\f", f); break;
    case '\v': fputs("\\v", f); break;
    default: fprintf(f, "\\x%02X", b); break;
    }
}

/* Write the pending bytes as they are unsafe: the ESC (or 0xC2) escaped, the rest re-read. */
static void feed(term_filter *t, unsigned char b);

static void flush_pending_unsafe(term_filter *t)
{
    unsigned char copy[PENDING_MAX];
    size_t n = t->n_pending;
    memcpy(copy, t->pending, n);
    t->n_pending = 0;
    if (n == 0) return;
    if (copy[0] == 0xC2) fputc(0xC2, t->under);
    else put_escaped(t->under, copy[0]);
    for (size_t k = 1; k < n; k++) feed(t, copy[k]);
}

static void feed(term_filter *t, unsigned char b)
{
    if (t->n_pending > 0) {
        if (t->pending[0] == 0xC2) {
            t->n_pending = 0;
            /* U+0080..U+009F, the C1 controls (U+009B is a one-byte CSI on some terminals). */
            if (b >= 0x80 && b <= 0x9F) fprintf(t->under, "\\u%04X", b);
            else {
                fputc(0xC2, t->under);
                feed(t, b);
            }
            return;
        }
        t->pending[t->n_pending++] = b;
        int m = sgr_match(t->pending, t->n_pending);
        if (m == 1) {
            fwrite(t->pending, 1, t->n_pending, t->under);
            t->n_pending = 0;
        } else if (m == 0 || t->n_pending == PENDING_MAX) {
            flush_pending_unsafe(t);
        }
        return;
    }
    if (b == 0x1B || b == 0xC2) {
        t->pending[t->n_pending++] = b;
        return;
    }
    if ((b < 0x20 && b != '\n' && b != '\t') || b == 0x7F) put_escaped(t->under, b);
    else fputc(b, t->under);
}

static ssize_t filter_write(void *cookie, const char *buf, size_t size)
{
    term_filter *t = cookie;
    for (size_t i = 0; i < size; i++) feed(t, (unsigned char)buf[i]);
    return ferror(t->under) ? -1 : (ssize_t)size;
}

static int filter_close(void *cookie)
{
    term_filter *t = cookie;
    flush_pending_unsafe(t);
    int rc = fflush(t->under) == 0 ? 0 : -1;
    free(t);
    return rc;
}

FILE *cov_term_filter_open(FILE *under)
{
    term_filter *t = calloc(1, sizeof *t);
    if (t == NULL) return NULL;
    t->under = under;
    cookie_io_functions_t io = {NULL, filter_write, NULL, filter_close};
    FILE *f = fopencookie(t, "w", io);
    if (f == NULL) free(t);
    return f;
}

void cov_term_text(FILE *out, const char *s)
{
    term_filter t = {out, {0}, 0};
    for (const unsigned char *p = (const unsigned char *)(s ? s : ""); *p; p++) feed(&t, *p);
    flush_pending_unsafe(&t);
}
