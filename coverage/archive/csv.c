/* A streaming CSV reader after RFC 4180 (header row, quoted fields, CRLF or LF); the delimiter is
 * detected from the header line and a UTF-8 BOM is skipped. See LICENSE. */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "coverage/archive/archive.h"

/* One large read buffer: the importer is bound by parsing and SQLite, not by read(2) calls. */
#define CSV_BUFFER_BYTES (1u << 20)
/* A small file gets a buffer of its own size (at least this much), not the whole megabyte. */
#define CSV_BUFFER_MIN 4096
/* A field or record buffer starts this large and doubles as needed. */
#define CSV_RECORD_START 4096

struct cov_csv {
    FILE *f;
    char *path;
    unsigned char *buf;
    size_t buf_size;
    size_t len, pos;
    int eof;
    char delim;
    unsigned char special[256];  /* 1 for bytes ending an unquoted run: delim, quote, CR, LF, NUL */
    long line, col;              /* position of the next byte: 1-based line, 1-based character */
    int after_cr;                /* the last byte was a CR: an LF now ends no further line */
    char *rec;                   /* the current record's fields, each NUL-terminated */
    size_t rec_len, rec_cap;
    size_t *off;                 /* start of each field in rec */
    size_t *flen;                /* length of each field */
    long *fline, *fcol;          /* where each field starts */
    long end_line, end_col;      /* where the record's last field ends */
    size_t n_off, off_cap;
    char **header;
    size_t n_fields;
    long rec_line;
};

/* Refill the buffer; returns 0 at end of file, -1 on a read error, else 1. */
static int refill(cov_csv *c)
{
    if (c->eof) return 0;
    c->len = fread(c->buf, 1, c->buf_size, c->f);
    c->pos = 0;
    if (c->len == 0) {
        c->eof = 1;
        return ferror(c->f) ? -1 : 0;
    }
    return 1;
}

/* The next byte without consuming it, or -1 at end of file (-2 on a read error). */
static int peek(cov_csv *c)
{
    if (c->pos == c->len) {
        int r = refill(c);
        if (r <= 0) return r == 0 ? -1 : -2;
    }
    return c->buf[c->pos];
}

/* Count one byte into line and column (columns count UTF-8 characters, not bytes). A line ends
 * with LF, CRLF or a lone CR, so files with old Mac line endings get their line numbers. */
static void count_byte(cov_csv *c, int b)
{
    if (b == '\n') {
        if (!c->after_cr) c->line++;
        c->col = 1;
    } else if (b == '\r') {
        c->line++;
        c->col = 1;
    } else if ((b & 0xC0) != 0x80) {
        c->col++;
    }
    c->after_cr = b == '\r';
}

/* Consume one byte, keeping line and column. */
static void advance(cov_csv *c, int b)
{
    c->pos++;
    count_byte(c, b);
}

static int rec_reserve(cov_csv *c, size_t more)
{
    if (c->rec_len + more <= c->rec_cap) return 0;
    size_t cap = c->rec_cap ? c->rec_cap : CSV_RECORD_START;
    while (cap < c->rec_len + more) cap *= 2;
    char *p = realloc(c->rec, cap);
    if (p == NULL) return -1;
    c->rec = p;
    c->rec_cap = cap;
    return 0;
}

static int push_field(cov_csv *c)
{
    if (c->n_off == c->off_cap) {
        size_t cap = c->off_cap ? c->off_cap * 2 : 64;
        size_t *o = realloc(c->off, cap * sizeof *o);
        if (o == NULL) return -1;
        c->off = o;
        size_t *l = realloc(c->flen, cap * sizeof *l);
        if (l == NULL) return -1;
        c->flen = l;
        long *fl = realloc(c->fline, cap * sizeof *fl);
        if (fl == NULL) return -1;
        c->fline = fl;
        long *fc = realloc(c->fcol, cap * sizeof *fc);
        if (fc == NULL) return -1;
        c->fcol = fc;
        c->off_cap = cap;
    }
    c->off[c->n_off] = c->rec_len;
    c->flen[c->n_off] = 0;
    c->fline[c->n_off] = c->line;
    c->fcol[c->n_off] = c->col;
    c->n_off++;
    return 0;
}

static int end_field(cov_csv *c)
{
    if (rec_reserve(c, 1)) return -1;
    c->flen[c->n_off - 1] = c->rec_len - c->off[c->n_off - 1];
    c->rec[c->rec_len++] = '\0';
    return 0;
}

static int fail_at(cov_csv *c, long line, long col, cov_error *err, int status, const char *msg)
{
    char where[512];
    snprintf(where, sizeof where, "%s:%ld:%ld", c->path, line, col);
    return cov_fail(err, status, where, "%s", msg);
}

static int fail_nomem(cov_error *err)
{
    return cov_fail(err, COV_ENOMEM, "", "out of memory while reading a CSV file");
}

static int fail_read(cov_csv *c, cov_error *err)
{
    return cov_fail(err, COV_EIO, c->path, "could not read: %s", strerror(errno));
}

/* Read one quoted field: the opening quote is at the current position. RFC 4180 section 2.7: a
 * quote inside a quoted field is written as two quotes. */
static int read_quoted(cov_csv *c, cov_error *err)
{
    long qline = c->line, qcol = c->col;
    advance(c, '"');
    for (;;) {
        if (c->pos == c->len) {
            int r = refill(c);
            if (r < 0) return fail_read(c, err);
            if (r == 0)
                return fail_at(c, qline, qcol, err, COV_EINPUT,
                               "found a quoted field that never closes, expected a closing '\"'");
        }
        /* Copy the run up to the next quote in one go. */
        const unsigned char *p = c->buf + c->pos, *end = c->buf + c->len;
        const unsigned char *q = memchr(p, '"', (size_t)(end - p));
        const unsigned char *stop = q ? q : end;
        size_t n = (size_t)(stop - p);
        if (rec_reserve(c, n)) return fail_nomem(err);
        /* n may be 0 before rec is first allocated: memcpy with a null pointer is undefined. */
        if (n > 0) memcpy(c->rec + c->rec_len, p, n);
        c->rec_len += n;
        for (const unsigned char *s = p; s < stop; s++) {
            /* Every reader of a stored text stops at a NUL: refuse it here as outside quotes. */
            if (*s == '\0')
                return fail_at(c, c->line, c->col, err, COV_EINPUT,
                               "found a NUL byte inside a quoted field, expected text");
            count_byte(c, *s);
        }
        c->pos += n;
        if (q == NULL) continue;
        advance(c, '"');
        int b = peek(c);
        if (b == -2) return fail_read(c, err);
        if (b != '"') return 0;
        advance(c, '"');
        if (rec_reserve(c, 1)) return fail_nomem(err);
        c->rec[c->rec_len++] = '"';
    }
}

/* Read one record into rec/off. *got is 0 at the end of the file. Lines that are entirely empty
 * are skipped (a trailing blank line is common and carries no row). */
static int read_record(cov_csv *c, int *got, cov_error *err)
{
    c->rec_len = 0;
    c->n_off = 0;
    *got = 0;
    int b;
    for (;;) {
        b = peek(c);
        if (b == -2) return fail_read(c, err);
        if (b == -1) return COV_OK;
        if (b == '\n') {
            advance(c, b);
        } else if (b == '\r') {
            advance(c, b);
            b = peek(c);
            if (b == '\n') advance(c, b);
        } else {
            break;
        }
    }
    c->rec_line = c->line;
    for (;;) {
        if (push_field(c)) return fail_nomem(err);
        b = peek(c);
        if (b == '"') {
            int rc = read_quoted(c, err);
            if (rc) return rc;
            b = peek(c);
            if (b == -2) return fail_read(c, err);
            if (b != -1 && b != c->delim && b != '\r' && b != '\n') {
                char msg[160];
                snprintf(msg, sizeof msg,
                         "found '%c' after a closing quote, expected the delimiter or the end of "
                         "the line (RFC 4180 section 2.6)", b >= 0x20 && b < 0x7f ? b : '?');
                return fail_at(c, c->line, c->col, err, COV_EINPUT, msg);
            }
        } else {
            /* An unquoted run: copy it up to the next special byte. */
            for (;;) {
                if (c->pos == c->len) {
                    int r = refill(c);
                    if (r < 0) return fail_read(c, err);
                    if (r == 0) break;
                }
                const unsigned char *p = c->buf + c->pos, *end = c->buf + c->len, *s = p;
                long col = c->col;
                while (s < end && !c->special[*s]) {
                    col += (*s & 0xC0) != 0x80;
                    s++;
                }
                size_t n = (size_t)(s - p);
                if (rec_reserve(c, n)) return fail_nomem(err);
                if (n > 0) memcpy(c->rec + c->rec_len, p, n);
                c->rec_len += n;
                c->pos += n;
                c->col = col;
                if (n > 0) c->after_cr = 0;
                if (s < end) break;
            }
            b = peek(c);
            if (b == '"')
                return fail_at(c, c->line, c->col, err, COV_EINPUT,
                               "found '\"' inside an unquoted field, expected the whole field in "
                               "quotes with the quote doubled (RFC 4180 section 2.5, 2.7)");
            if (b == 0)
                return fail_at(c, c->line, c->col, err, COV_EINPUT,
                               "found a NUL byte, expected text");
        }
        if (end_field(c)) return fail_nomem(err);
        /* Names and levels pass into JSON, CSV and HTML output, which must stay UTF-8. */
        size_t fi = c->n_off - 1, good = cov_utf8_valid_prefix(c->rec + c->off[fi], c->flen[fi]);
        if (good < c->flen[fi]) {
            char msg[160];
            snprintf(msg, sizeof msg, "found the byte 0x%02X in this field, which is not UTF-8; "
                     "expected UTF-8 text", (unsigned)(unsigned char)c->rec[c->off[fi] + good]);
            return fail_at(c, c->fline[fi], c->fcol[fi], err, COV_EINPUT, msg);
        }
        b = peek(c);
        if (b == -2) return fail_read(c, err);
        if (b == c->delim) {
            advance(c, b);
            continue;
        }
        /* End of the record: LF, CRLF, a lone CR, or the end of the file. */
        c->end_line = c->line;
        c->end_col = c->col;
        if (b == '\r') {
            advance(c, b);
            if (peek(c) == '\n') advance(c, '\n');
        } else if (b == '\n') {
            advance(c, b);
        }
        *got = 1;
        return COV_OK;
    }
}

/* Choose the delimiter that occurs most often outside quotes on the header line; ties go to the
 * comma, then the tab. A one-column file has none and reads as comma-separated. */
static char detect_delimiter(const unsigned char *p, size_t n)
{
    size_t comma = 0, tab = 0, semi = 0;
    int quoted = 0;
    for (size_t i = 0; i < n; i++) {
        if (p[i] == '"') quoted = !quoted;
        else if (!quoted && (p[i] == '\n' || p[i] == '\r')) break;
        else if (!quoted && p[i] == ',') comma++;
        else if (!quoted && p[i] == '\t') tab++;
        else if (!quoted && p[i] == ';') semi++;
    }
    if (tab > comma && tab >= semi) return '\t';
    if (semi > comma && semi > tab) return ';';
    return ',';
}

int cov_csv_open(const char *path, cov_csv **out, cov_error *err)
{
    *out = NULL;
    int rc = COV_ENOMEM;
    cov_csv *c = calloc(1, sizeof *c);
    if (c == NULL) return fail_nomem(err);
    c->path = strdup(path);
    if (c->path == NULL) goto nomem;
    char why[160];
    /* "-" is standard input, as in most command-line tools. */
    if (strcmp(path, "-") == 0) c->f = stdin;
    else if (cov_open_regular(path, &c->f, why, sizeof why) != 0) {
        rc = cov_fail(err, errno == 0 || errno == ENOENT ? COV_EINPUT : COV_EIO, path,
                      "cannot open: %s", why);
        goto fail;
    }
    struct stat sb;
    c->buf_size = CSV_BUFFER_BYTES;
    if (fstat(fileno(c->f), &sb) == 0 && sb.st_size >= 0 &&
        (unsigned long long)sb.st_size < CSV_BUFFER_BYTES)
        c->buf_size = (size_t)sb.st_size < CSV_BUFFER_MIN ? CSV_BUFFER_MIN : (size_t)sb.st_size;
    c->buf = malloc(c->buf_size);
    if (c->buf == NULL) goto nomem;
    c->line = 1;
    c->col = 1;
    if (refill(c) < 0) {
        rc = fail_read(c, err);
        goto fail;
    }
    if (c->len == 0) {
        rc = fail_at(c, 1, 1, err, COV_EINPUT, "found an empty file, expected a header row");
        goto fail;
    }
    if (c->len >= 3 && c->buf[0] == 0xEF && c->buf[1] == 0xBB && c->buf[2] == 0xBF) c->pos = 3;
    c->delim = detect_delimiter(c->buf + c->pos, c->len - c->pos);
    c->special[(unsigned char)c->delim] = 1;
    c->special['"'] = 1;
    c->special['\r'] = 1;
    c->special['\n'] = 1;
    c->special[0] = 1;

    /* The header row: note where each name starts, for the messages below. */
    int got = 0;
    long line0 = c->line;
    long col0 = c->col;
    rc = read_record(c, &got, err);
    if (rc) goto fail;
    if (!got) {
        rc = fail_at(c, line0, col0, err, COV_EINPUT, "found no header row, expected column names");
        goto fail;
    }
    c->n_fields = c->n_off;
    /* Checked before the duplicate-name check, whose cost grows with the square of the count. */
    if (c->n_fields > COV_CSV_MAX_COLUMNS) {
        char msg[160];
        snprintf(msg, sizeof msg, "found %zu columns in the header, expected at most %d (the "
                 "limit on columns, SQLite's own)", c->n_fields, COV_CSV_MAX_COLUMNS);
        rc = fail_at(c, line0, col0, err, COV_EINPUT, msg);
        goto fail;
    }
    c->header = calloc(c->n_fields, sizeof *c->header);
    if (c->header == NULL) goto nomem;
    for (size_t i = 0; i < c->n_fields; i++) {
        c->header[i] = strdup(c->rec + c->off[i]);
        if (c->header[i] == NULL) goto nomem;
    }
    for (size_t i = 0; i < c->n_fields; i++) {
        char msg[768];
        if (c->header[i][0] == '\0') {
            snprintf(msg, sizeof msg, "found an empty name for column %zu of the header, "
                     "expected a column name", i + 1);
            rc = fail_at(c, c->fline[i], c->fcol[i], err, COV_EINPUT, msg);
            goto fail;
        }
        for (size_t j = 0; j < i; j++) {
            /* SQLite column names ignore ASCII case, so "Load" and "load" would collide. */
            if (cov_ascii_casecmp(c->header[i], c->header[j]) == 0) {
                snprintf(msg, sizeof msg, "found the column name '%.300s' a second time (first "
                         "as column %zu), expected unique names", c->header[i], j + 1);
                rc = fail_at(c, c->fline[i], c->fcol[i], err, COV_EINPUT, msg);
                goto fail;
            }
        }
    }
    *out = c;
    return COV_OK;
nomem:
    rc = fail_nomem(err);
fail:
    cov_csv_close(c);
    return rc;
}

void cov_csv_close(cov_csv *c)
{
    if (c == NULL) return;
    if (c->f && c->f != stdin) fclose(c->f);
    if (c->header)
        for (size_t i = 0; i < c->n_fields; i++) free(c->header[i]);
    free(c->header);
    free(c->path);
    free(c->buf);
    free(c->rec);
    free(c->off);
    free(c->flen);
    free(c->fline);
    free(c->fcol);
    free(c);
}

char cov_csv_delimiter(const cov_csv *c) { return c->delim; }
size_t cov_csv_n_fields(const cov_csv *c) { return c->n_fields; }
const char *cov_csv_header(const cov_csv *c, size_t i) { return c->header[i]; }
long cov_csv_line(const cov_csv *c) { return c->rec_line; }

int cov_csv_next(cov_csv *c, int *got, cov_error *err)
{
    int rc = read_record(c, got, err);
    if (rc || !*got) return rc;
    if (c->n_off != c->n_fields) {
        char msg[256];
        snprintf(msg, sizeof msg, "found %zu field%s on this row, expected %zu as in the header "
                 "(RFC 4180 section 2.4)", c->n_off, c->n_off == 1 ? "" : "s", c->n_fields);
        /* Point at the first field too many, or at the end of a short row. */
        if (c->n_off > c->n_fields)
            return fail_at(c, c->fline[c->n_fields], c->fcol[c->n_fields], err, COV_EINPUT, msg);
        return fail_at(c, c->end_line, c->end_col, err, COV_EINPUT, msg);
    }
    return COV_OK;
}

const char *cov_csv_field(const cov_csv *c, size_t i, size_t *len)
{
    if (len) *len = c->flen[i];
    return c->rec + c->off[i];
}
