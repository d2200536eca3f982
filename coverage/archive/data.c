/* Reading the graph's recorded variables from the archive into contiguous columns, checking each
 * cell against the variable's declared type and domain. See LICENSE. */
#include <errno.h>
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <sqlite3.h>

#include "coverage/archive/archive.h"

/* Report progress this often: often enough to move a bar, rarely enough to cost nothing. */
#define PROGRESS_EVERY_ROWS 65536
/* Rows gathered row-major before they are copied into the columns: writing 80 columns a cell at a
 * time defeats the processor's store prefetch, while a block of 64 rows (40 KiB for 80 columns)
 * stays in cache and is copied out one column at a time. */
#define STAGE_ROWS 64
/* First guess at the run count when the table's rowids say nothing useful. */
#define START_CAPACITY 1024
/* The rowid span overstates the run count when rows were deleted; beyond this many rows the
 * columns grow by doubling instead of trusting it. */
#define MAX_FIRST_CAPACITY ((size_t)1 << 22)

void cov_data_free(cov_data *d)
{
    if (d == NULL) return;
    if (d->col)
        for (size_t v = 0; v < d->n_vars; v++) free(d->col[v]);
    free(d->col);
    free(d->n_missing);
    free(d->n_outside);
    free(d->issues);
    free(d->batch);
    free(d->seed);
    free(d->row_of);
    free(d);
}

/* The archive column of a variable: an exact match first, then one that differs only in ASCII
 * case, as SQLite itself resolves names. -1 when there is none. */
static long find_column(const cov_archive *a, const char *name)
{
    size_t n = cov_archive_n_columns(a);
    for (size_t i = 0; i < n; i++)
        if (strcmp(cov_archive_column(a, i), name) == 0) return (long)i;
    for (size_t i = 0; i < n; i++)
        if (cov_ascii_casecmp(cov_archive_column(a, i), name) == 0) return (long)i;
    return -1;
}

/* Parse a whole text cell as a number: strtod with end-pointer and errno checks, surrounding
 * blanks allowed. Returns 0 and *x on success. */
static int parse_number(const char *s, double *x)
{
    /* The same reader as import (cov_number_scan): text that import kept as text because it is
     * not a decimal number ("0x1A", "inf") is not read as one here either. */
    while (*s == ' ' || *s == '\t') s++;
    size_t len = strlen(s);
    while (len > 0 && (s[len - 1] == ' ' || s[len - 1] == '\t')) len--;
    char small[128];
    char *copy = NULL;
    const char *t = s;
    if (s[len] != '\0') {
        copy = len < sizeof small ? small : malloc(len + 1);
        if (copy == NULL) return -1;
        memcpy(copy, s, len);
        copy[len] = '\0';
        t = copy;
    }
    int kind = cov_number_scan(t, len, NULL, x, NULL);
    /* "nan" is how many simulators write a missing output: a missing cell, not a number. */
    if (kind == COV_NUM_NONE && cov_ascii_casecmp(t, "nan") == 0) {
        *x = NAN;
        kind = COV_NUM_REAL;
    }
    if (copy != small) free(copy);
    return kind == COV_NUM_INT || kind == COV_NUM_REAL ? 0 : -1;
}

/* What a cell error message needs: the archive, the graph and the row being read. */
typedef struct {
    cov_archive *a;
    const cov_graph *g;
    size_t row;           /* 1-based */
    cov_error *err;
} reader;

static int cell_error(reader *r, size_t v, const char *fmt, const char *found, const char *extra)
{
    char where[512];
    snprintf(where, sizeof where, "%s: row %zu, column %s", cov_archive_path(r->a), r->row,
             r->g->vars[v].name);
    return cov_fail(r->err, COV_EINPUT, where, fmt, found, extra ? extra : "");
}

/* The text of a cell that is not already text, for level matching and messages. */
static void cell_text(sqlite3_stmt *st, int c, char *buf, size_t n)
{
    switch (sqlite3_column_type(st, c)) {
    case SQLITE_INTEGER: snprintf(buf, n, "%lld", (long long)sqlite3_column_int64(st, c)); break;
    case SQLITE_FLOAT: {
        double x = sqlite3_column_double(st, c);
        /* The shortest of %.15g and %.17g that reads back as x, so 0.5 prints as "0.5". */
        snprintf(buf, n, "%.15g", x);
        if (strtod(buf, NULL) != x) snprintf(buf, n, "%.17g", x);
        break;
    }
    case SQLITE_BLOB: snprintf(buf, n, "(binary data)"); break;
    case SQLITE_NULL: snprintf(buf, n, "(null)"); break;
    default: {
        const char *t = (const char *)sqlite3_column_text(st, c);
        snprintf(buf, n, "%s", t ? t : "");
    }
    }
}

/* Read one cell of variable v into *x (NAN when missing). Returns a status. */
static int read_cell(reader *r, sqlite3_stmt *st, int c, size_t v, double *x)
{
    const cov_var *var = &r->g->vars[v];
    int type = sqlite3_column_type(st, c);
    char buf[256];
    if (type == SQLITE_NULL) {
        *x = NAN;
        return COV_OK;
    }
    if (var->type == COV_LEVELS) {
        /* Text is compared as stored: a fixed buffer would cut long level names short. */
        const char *t = type == SQLITE_TEXT ? (const char *)sqlite3_column_text(st, c) : NULL;
        if (t == NULL) {
            cell_text(st, c, buf, sizeof buf);
            t = buf;
        }
        for (size_t k = 0; k < var->n_levels; k++) {
            if (strcmp(t, var->levels[k]) == 0) {
                *x = (double)k;
                return COV_OK;
            }
        }
        /* List the declared levels in the message. */
        char list[512];
        size_t at = 0;
        list[0] = '\0';
        for (size_t k = 0; k < var->n_levels && at < sizeof list; k++)
            at += (size_t)snprintf(list + at, sizeof list - at, "%s%s", k ? ", " : "",
                                   var->levels[k]);
        return cell_error(r, v, "found the level '%.200s', expected one of the declared levels: %s",
                          t, list);
    }
    double val;
    if (type == SQLITE_INTEGER || type == SQLITE_FLOAT) {
        val = sqlite3_column_double(st, c);
    } else if (type == SQLITE_TEXT) {
        const char *t = (const char *)sqlite3_column_text(st, c);
        if (var->type == COV_BOOL && t != NULL) {
            if (cov_ascii_casecmp(t, "true") == 0) {
                *x = 1;
                return COV_OK;
            }
            if (cov_ascii_casecmp(t, "false") == 0) {
                *x = 0;
                return COV_OK;
            }
        }
        if (t == NULL || parse_number(t, &val) != 0) {
            cell_text(st, c, buf, sizeof buf);
            if (var->type == COV_BOOL)
                return cell_error(r, v, "found '%.200s', expected 0, 1, true or false%s", buf,
                                  NULL);
            return cell_error(r, v, "found '%.200s', expected a number%s", buf, NULL);
        }
    } else {
        return cell_error(r, v, "found %s, expected a number%s", "binary data", NULL);
    }
    if (isnan(val)) {
        *x = NAN;
        return COV_OK;
    }
    if (var->type == COV_BOOL) {
        if (val != 0 && val != 1) {
            cell_text(st, c, buf, sizeof buf);
            return cell_error(r, v, "found '%.200s', expected 0, 1, true or false%s", buf, NULL);
        }
    }
    *x = val;
    return COV_OK;
}

/* Is x inside the declared domain of input var? Writes why not into what. */
static int in_domain(const cov_var *var, double x, char *what, size_t n)
{
    if (var->role != COV_INPUT || (var->type != COV_REAL && var->type != COV_INTEGER)) {
        if (isinf(x)) {
            snprintf(what, n, "not finite");
            return 0;
        }
        return 1;
    }
    if (!(x >= var->lo && x <= var->hi)) {
        snprintf(what, n, "outside [%g, %g]", var->lo, var->hi);
        return 0;
    }
    if (var->type == COV_INTEGER && x != floor(x)) {
        snprintf(what, n, "not a whole number in [%g, %g]", var->lo, var->hi);
        return 0;
    }
    return 1;
}

/* Make room for cap rows. A fresh column is mapped at once unless a copier thread maps the
 * columns as it goes (map 0). */
static int grow(cov_data *d, const cov_graph *g, size_t cap, int with_batch, int with_seed, int map)
{
    if (with_seed) {
        long long *sd = realloc(d->seed, cap * sizeof *sd);
        if (sd == NULL) return -1;
        d->seed = sd;
    }
    for (size_t v = 0; v < g->n_vars; v++) {
        if (d->col[v] == NULL && g->vars[v].role == COV_HIDDEN) continue;
        int fresh = d->col[v] == NULL;
        double *p = realloc(d->col[v], cap * sizeof *p);
        if (p == NULL) return -1;
        d->col[v] = p;
        if (fresh && map) cov_stage_prefault(p, cap * sizeof *p);
    }
    if (with_batch) {
        long long *b = realloc(d->batch, cap * sizeof *b);
        if (b == NULL) return -1;
        d->batch = b;
    }
    return 0;
}

static int cmp_ll(const void *a, const void *b)
{
    long long x = *(const long long *)a, y = *(const long long *)b;
    return (x > y) - (x < y);
}

/* A first guess at the row count without a counting scan: the rowid span. */
static size_t estimate_rows(sqlite3 *db, const char *qt)
{
    char sql[1024];
    size_t est = 0;
    sqlite3_stmt *st = NULL;
    if (strlen(qt) > sizeof sql - 64) return 0;
    snprintf(sql, sizeof sql, "SELECT max(rowid) - min(rowid) + 1 FROM %s", qt);
    if (sqlite3_prepare_v2(db, sql, -1, &st, NULL) == SQLITE_OK && sqlite3_step(st) == SQLITE_ROW)
        if (sqlite3_column_type(st, 0) == SQLITE_INTEGER) {
            long long n = sqlite3_column_int64(st, 0);
            if (n > 0 && n < ((long long)1 << 40)) est = (size_t)n;
        }
    sqlite3_finalize(st);
    return est;
}

/* A seed cell: a whole number (an integer, a whole real or text that reads as one), or empty. */
static int read_seed(const cov_archive *a, const cov_graph *g, sqlite3_stmt *st, int c, size_t row,
                     long long *seed, cov_error *err)
{
    char buf[256];
    int type = sqlite3_column_type(st, c);
    if (type == SQLITE_NULL) {
        *seed = COV_SEED_NONE;
        return COV_OK;
    }
    if (type == SQLITE_INTEGER) {
        *seed = sqlite3_column_int64(st, c);
        if (*seed != COV_SEED_NONE) return COV_OK;
    } else if (type == SQLITE_FLOAT) {
        double x = sqlite3_column_double(st, c);
        /* Whole numbers of magnitude below 2^63 convert exactly. */
        if (x == floor(x) && fabs(x) < 9.2e18) {
            *seed = (long long)x;
            return COV_OK;
        }
    } else if (type == SQLITE_TEXT) {
        const char *t = (const char *)sqlite3_column_text(st, c);
        char *end = NULL;
        errno = 0;
        long long v = t != NULL ? strtoll(t, &end, 10) : 0;
        if (t != NULL && end != t && *end == '\0' && errno == 0 && v != COV_SEED_NONE) {
            *seed = v;
            return COV_OK;
        }
    }
    cell_text(st, c, buf, sizeof buf);
    char where[512];
    snprintf(where, sizeof where, "%s: row %zu, column %s", cov_archive_path(a), row,
             g->seed_name);
    return cov_fail(err, COV_EINPUT, where, "found '%.200s', expected a whole-number seed (the "
                    "seed column declared at %s:%d:%d)", buf, g->path, g->seed_line, g->seed_col);
}

/* Every declared seed and bookkeeping column must be in the table: a declaration that matches no
 * column is a mistake in the graph file (or the wrong archive), named at its line and column. */
static int check_ledger_columns(const cov_archive *a, const cov_graph *g, cov_error *err)
{
    if (g->seed_name != NULL && find_column(a, g->seed_name) < 0)
        return cov_graph_fail(err, g->path, g->seed_line, g->seed_col, "found no column '%s' in "
                              "table '%s' of %s, expected the seed column declared here",
                              g->seed_name, cov_archive_table(a), cov_archive_path(a));
    for (size_t i = 0; i < g->n_ledger; i++)
        if (find_column(a, g->ledger[i].name) < 0)
            return cov_graph_fail(err, g->path, g->ledger[i].line, g->ledger[i].col, "found no "
                                  "column '%s' in table '%s' of %s, expected the bookkeeping "
                                  "column declared here", g->ledger[i].name,
                                  cov_archive_table(a), cov_archive_path(a));
    return COV_OK;
}

int cov_data_read(cov_archive *a, const cov_graph *g, void (*progress)(double share, void *ctx),
                  void *ctx, cov_data **out, cov_error *err)
{
    return cov_data_read_threads(a, g, 1, progress, ctx, out, err);
}

int cov_data_read_threads(cov_archive *a, const cov_graph *g, int threads,
                          void (*progress)(double share, void *ctx), void *ctx, cov_data **out,
                          cov_error *err)
{
    *out = NULL;
    sqlite3 *db = cov_archive_db(a);
    sqlite3_stmt *st = NULL;
    char *sql = NULL, *qt = NULL;
    long *colidx = NULL;
    size_t *vars = NULL;    /* the recorded variables in SELECT order */
    size_t *n_examples = NULL;
    unsigned char *fast = NULL, *whole = NULL;
    double *stage = NULL;   /* the one-thread read's block; with a copier, the block being filled */
    double *own_stage = NULL;
    cov_stage *pipe = NULL;
    double *lo = NULL, *hi = NULL;
    size_t *out_cells = NULL, n_out_cells = 0, cap_out_cells = 0;   /* (row, var) outside */
    unsigned char *kept = NULL;
    int rc = COV_ENOMEM;
    cov_data *d = calloc(1, sizeof *d);
    if (d == NULL) goto nomem;
    d->n_vars = g->n_vars;
    d->col = calloc(g->n_vars ? g->n_vars : 1, sizeof *d->col);
    d->n_missing = calloc(g->n_vars ? g->n_vars : 1, sizeof *d->n_missing);
    d->n_outside = calloc(g->n_vars ? g->n_vars : 1, sizeof *d->n_outside);
    d->issues = calloc(g->n_vars * COV_ISSUE_EXAMPLES + 1, sizeof *d->issues);
    colidx = calloc(g->n_vars + 1, sizeof *colidx);
    vars = calloc(g->n_vars + 1, sizeof *vars);
    n_examples = calloc(g->n_vars + 1, sizeof *n_examples);
    if (!d->col || !d->n_missing || !d->n_outside || !d->issues || !colidx || !vars ||
        !n_examples)
        goto nomem;

    /* Every recorded variable needs a column: name all that are missing at once. */
    size_t n_rec = 0, n_absent = 0;
    char absent[768];
    absent[0] = '\0';
    size_t at = 0;
    for (size_t v = 0; v < g->n_vars; v++) {
        if (g->vars[v].role == COV_HIDDEN) continue;
        /* shoal's own batch column is not a variable's recording, whatever the graph says. */
        if (cov_archive_owned(a) && cov_ascii_casecmp(g->vars[v].name, "shoal_batch") == 0) {
            rc = cov_fail(err, COV_EINPUT, cov_archive_path(a), "the graph's variable '%s' has "
                          "the name of shoal's batch column, which holds import batches, not "
                          "runs' values; expected another name", g->vars[v].name);
            goto fail;
        }
        long c = find_column(a, g->vars[v].name);
        if (c < 0) {
            if (at < sizeof absent)
                at += (size_t)snprintf(absent + at, sizeof absent - at, "%s'%s'",
                                       n_absent ? ", " : "", g->vars[v].name);
            n_absent++;
            continue;
        }
        colidx[n_rec] = c;
        vars[n_rec++] = v;
    }
    if (n_absent > 0) {
        rc = cov_fail(err, COV_EINPUT, cov_archive_path(a), "table '%s' has no column for the "
                      "recorded variable%s %s; expected one column per input and output",
                      cov_archive_table(a), n_absent == 1 ? "" : "s", absent);
        goto fail;
    }
    long batch_col = find_column(a, "shoal_batch");
    int with_batch = batch_col >= 0;
    if ((rc = check_ledger_columns(a, g, err)) != COV_OK) goto fail;
    rc = COV_ENOMEM;
    long seed_col = g->seed_name != NULL ? find_column(a, g->seed_name) : -1;

    /* One SELECT of every needed column, in rowid order (the table's own order for a table
     * without rowids or a view, where ORDER BY rowid is refused). */
    qt = cov_sql_ident(cov_archive_table(a));
    if (qt == NULL) goto nomem;
    size_t len = strlen(qt) + 64;
    for (size_t k = 0; k < n_rec; k++)
        len += 2 * strlen(cov_archive_column(a, (size_t)colidx[k])) + 4;
    len += 32;
    if (seed_col >= 0) len += 2 * strlen(cov_archive_column(a, (size_t)seed_col)) + 4;
    sql = malloc(len);
    if (sql == NULL) goto nomem;
    at = (size_t)snprintf(sql, len, "SELECT ");
    for (size_t k = 0; k < n_rec; k++) {
        char *q = cov_sql_ident(cov_archive_column(a, (size_t)colidx[k]));
        if (q == NULL) goto nomem;
        at += (size_t)snprintf(sql + at, len - at, "%s, ", q);
        free(q);
    }
    at += (size_t)snprintf(sql + at, len - at, "%s", with_batch ? "\"shoal_batch\"" : "NULL");
    if (seed_col >= 0) {
        char *q = cov_sql_ident(cov_archive_column(a, (size_t)seed_col));
        if (q == NULL) goto nomem;
        at += (size_t)snprintf(sql + at, len - at, ", %s", q);
        free(q);
    }
    at += (size_t)snprintf(sql + at, len - at, " FROM %s", qt);
    size_t base = at;
    snprintf(sql + at, len - at, " ORDER BY rowid");
    if (sqlite3_prepare_v2(db, sql, -1, &st, NULL) != SQLITE_OK) {
        sql[base] = '\0';
        if (sqlite3_prepare_v2(db, sql, -1, &st, NULL) != SQLITE_OK) {
            rc = cov_fail(err, COV_EIO, cov_archive_path(a), "cannot read the table of runs: %s",
                          sqlite3_errmsg(db));
            goto fail;
        }
    }

    /* The fast path's bounds per selected column: numbers in a real or integer column need only
     * a range test (a whole-number test too for integer inputs); anything else takes read_cell. */
    fast = calloc(n_rec + 1, 1);
    whole = calloc(n_rec + 1, 1);
    lo = calloc(n_rec + 1, sizeof *lo);
    hi = calloc(n_rec + 1, sizeof *hi);
    if (!fast || !whole || !lo || !hi) goto nomem;
    for (size_t k = 0; k < n_rec; k++) {
        const cov_var *var = &g->vars[vars[k]];
        fast[k] = var->type == COV_REAL || var->type == COV_INTEGER;
        int ranged = var->role == COV_INPUT && isfinite(var->lo) && isfinite(var->hi);
        lo[k] = ranged ? var->lo : -DBL_MAX;
        hi[k] = ranged ? var->hi : DBL_MAX;
        whole[k] = ranged && var->type == COV_INTEGER;
    }

    /* With two threads or more, a second thread copies finished blocks into the columns while
     * this one, which alone calls SQLite and reports cells, keeps reading (coverage/archive/
     * stage.c); the values, counts and messages are the same either way. */
    if (threads >= 2 && cov_stage_open(d->col, vars, n_rec, STAGE_ROWS, &pipe) != COV_OK)
        goto nomem;
    if (pipe != NULL) {
        stage = cov_stage_block(pipe);
    } else {
        own_stage = stage = malloc(STAGE_ROWS * (n_rec ? n_rec : 1) * sizeof *stage);
        if (stage == NULL) goto nomem;
    }

    size_t est = estimate_rows(db, qt);
    size_t cap = est == 0 ? START_CAPACITY : est < MAX_FIRST_CAPACITY ? est : MAX_FIRST_CAPACITY;
    if (grow(d, g, cap, with_batch, seed_col >= 0, pipe == NULL)) goto nomem;
    reader r = {a, g, 0, err};
    size_t n = 0;
    int step;
    while ((step = sqlite3_step(st)) == SQLITE_ROW) {
        if (n == cap) {
            cap *= 2;
            if (pipe != NULL) cov_stage_drain(pipe);   /* the copier must not see columns move */
            if (grow(d, g, cap, with_batch, seed_col >= 0, pipe == NULL)) goto nomem;
        }
        r.row = n + 1;
        double *row = stage + (n % STAGE_ROWS) * n_rec;
        for (size_t k = 0; k < n_rec; k++) {
            size_t v = vars[k];
            double x = NAN;
            /* One column fetch per cell: the value's type and number come from it without a
             * second lookup. The connection is opened with SQLITE_OPEN_NOMUTEX (multi-thread
             * mode), where unprotected and protected sqlite3_value objects are the same (SQLite
             * C interface, "Dynamically Typed Value Object"). */
            sqlite3_value *cell = sqlite3_column_value(st, (int)k);
            int ct = sqlite3_value_type(cell);
            if (fast[k] && (ct == SQLITE_FLOAT || ct == SQLITE_INTEGER)) {
                /* The common case: a number in a real or integer column, inside the domain. */
                x = sqlite3_value_double(cell);
                if (x >= lo[k] && x <= hi[k] && (!whole[k] || x == floor(x))) {
                    row[k] = x;
                    continue;
                }
            } else {
                rc = read_cell(&r, st, (int)k, v, &x);
                if (rc) goto fail;
            }
            if (isnan(x)) {
                d->n_missing[v]++;
            } else {
                char what[96];
                if (!in_domain(&g->vars[v], x, what, sizeof what)) {
                    if (g->vars[v].role == COV_INPUT) {
                        d->n_outside[v]++;
                        if (n_out_cells == cap_out_cells) {
                            size_t nc = cap_out_cells ? 2 * cap_out_cells : 64;
                            size_t *p2 = realloc(out_cells, 2 * nc * sizeof *p2);
                            if (p2 == NULL) goto nomem;
                            out_cells = p2;
                            cap_out_cells = nc;
                        }
                        out_cells[2 * n_out_cells] = n;
                        out_cells[2 * n_out_cells + 1] = v;
                        n_out_cells++;
                    }
                    d->n_missing[v]++;
                    if (n_examples[v]++ < COV_ISSUE_EXAMPLES) {
                        cov_data_issue *is = &d->issues[d->n_issues++];
                        is->var = v;
                        is->row = n + 1;
                        is->value = x;
                        snprintf(is->what, sizeof is->what, "%s", what);
                    }
                    x = NAN;
                }
            }
            row[k] = x;
        }
        if (with_batch)
            d->batch[n] = sqlite3_column_type(st, (int)n_rec) == SQLITE_NULL
                              ? 0 : sqlite3_column_int64(st, (int)n_rec);
        if (seed_col >= 0 &&
            (rc = read_seed(a, g, st, (int)n_rec + 1, n + 1, &d->seed[n], err)) != COV_OK)
            goto fail;
        n++;
        if (n % STAGE_ROWS == 0) {
            if (pipe != NULL) stage = cov_stage_pass(pipe, n - STAGE_ROWS, STAGE_ROWS, cap);
            else cov_stage_unstage(d->col, vars, n_rec, stage, n - STAGE_ROWS, STAGE_ROWS);
        }
        if (progress != NULL && n % PROGRESS_EVERY_ROWS == 0)
            progress(est > n ? (double)n / (double)est : 0.99, ctx);
    }
    if (step != SQLITE_DONE) {
        rc = cov_fail(err, COV_EIO, cov_archive_path(a), "cannot read the table of runs: %s",
                      sqlite3_errmsg(db));
        goto fail;
    }
    if (pipe != NULL) {
        cov_stage_close(pipe, n - n % STAGE_ROWS, n % STAGE_ROWS, cap);
        pipe = NULL;
    } else {
        cov_stage_unstage(d->col, vars, n_rec, stage, n - n % STAGE_ROWS, n % STAGE_ROWS);
    }
    d->n_runs = n;
    /* Each run once (coverage/archive/runs.c); inputs outside their domain are counted again
     * over the runs kept. */
    kept = malloc(n + 1);
    if (kept == NULL) goto nomem;
    if ((rc = cov_runs_identify(d, g, kept, err)) != COV_OK) goto fail;
    if (d->n_duplicates > 0) {
        for (size_t v = 0; v < g->n_vars; v++) d->n_outside[v] = 0;
        for (size_t k = 0; k < n_out_cells; k++)
            if (kept[out_cells[2 * k]]) d->n_outside[out_cells[2 * k + 1]]++;
    }
    n = d->n_runs;
    if (with_batch && n > 0) {
        long long *sorted = malloc(n * sizeof *sorted);
        if (sorted == NULL) goto nomem;
        memcpy(sorted, d->batch, n * sizeof *sorted);
        qsort(sorted, n, sizeof *sorted, cmp_ll);
        d->n_batches = 1;
        for (size_t i = 1; i < n; i++) d->n_batches += sorted[i] != sorted[i - 1];
        free(sorted);
    } else if (!with_batch) {
        free(d->batch);
        d->batch = NULL;
    }
    if (progress != NULL) progress(1.0, ctx);
    *out = d;
    d = NULL;                           /* the caller's now: the cleanup below frees only scratch */
    rc = COV_OK;
    goto done;
nomem:
    rc = cov_fail(err, COV_ENOMEM, cov_archive_path(a), "out of memory while reading the archive");
fail:
done:
    cov_stage_abort(pipe);      /* before the columns are freed below */
    sqlite3_finalize(st);
    free(sql);
    free(qt);
    free(colidx);
    free(vars);
    free(n_examples);
    free(fast);
    free(own_stage);
    free(whole);
    free(lo);
    free(hi);
    free(out_cells);
    free(kept);
    cov_data_free(d);
    return rc;
}
