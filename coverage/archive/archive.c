/* The SQLite run archive: read-only opening for analysis, and `shoal import`, which appends a CSV
 * file in one transaction stamped as a batch. See LICENSE. */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include <sqlite3.h>

#include "coverage/archive/archive.h"

/* Wait this long for another process's lock before giving up: imports are rare and short. */
#define ARCHIVE_BUSY_MS 5000
/* Page cache for a bulk import (negative: KiB), so the new pages stay in memory until the
 * commit writes them once. */
#define IMPORT_CACHE_KIB "-131072"
#define BATCH_COLUMN "shoal_batch"
#define BATCH_TABLE "shoal_batches"

struct cov_archive {
    sqlite3 *db;
    char *path;
    char *table;
    char **cols;
    size_t n_cols;
    int owned;
};

char *cov_sql_ident(const char *name)
{
    size_t n = 3;
    for (const char *s = name; *s; s++) n += *s == '"' ? 2 : 1;
    char *out = malloc(n), *o = out;
    if (out == NULL) return NULL;
    *o++ = '"';
    for (const char *s = name; *s; s++) {
        if (*s == '"') *o++ = '"';
        *o++ = *s;
    }
    *o++ = '"';
    *o = '\0';
    return out;
}

int cov_ascii_casecmp(const char *a, const char *b)
{
    for (;; a++, b++) {
        int x = (unsigned char)*a, y = (unsigned char)*b;
        if (x >= 'A' && x <= 'Z') x += 'a' - 'A';
        if (y >= 'A' && y <= 'Z') y += 'a' - 'A';
        if (x != y || x == 0) return x - y;
    }
}

/* A failed SQLite call: copy the message at once, since it belongs to the connection. A file
 * that is not a database is the user's input, anything else is an I/O failure. */
static int sql_fail(cov_error *err, sqlite3 *db, const char *path, const char *doing)
{
    int code = db ? sqlite3_errcode(db) : SQLITE_CANTOPEN;
    if (code == SQLITE_NOTADB)
        return cov_fail(err, COV_EINPUT, path, "found a file that is not an SQLite database, "
                        "expected a run archive (make one with shoal import)");
    return cov_fail(err, code == SQLITE_NOMEM ? COV_ENOMEM : COV_EIO, path, "%s: %s", doing,
                    db ? sqlite3_errmsg(db) : "cannot open");
}

/* The column names of table, in declared order; *n 0 when there is no such table or view. */
static int table_columns(sqlite3 *db, const char *table, char ***out, size_t *n)
{
    *out = NULL;
    *n = 0;
    sqlite3_stmt *st = NULL;
    size_t cap = 0;
    char **cols = NULL;
    if (sqlite3_prepare_v2(db, "SELECT name FROM pragma_table_info(?1)", -1, &st, NULL))
        return -1;
    sqlite3_bind_text(st, 1, table, -1, SQLITE_STATIC);
    int r;
    while ((r = sqlite3_step(st)) == SQLITE_ROW) {
        if (*n == cap) {
            cap = cap ? cap * 2 : 32;
            char **c = realloc(cols, cap * sizeof *c);
            if (c == NULL) goto fail;
            cols = c;
        }
        const char *name = (const char *)sqlite3_column_text(st, 0);
        cols[*n] = strdup(name ? name : "");
        if (cols[*n] == NULL) goto fail;
        (*n)++;
    }
    if (r != SQLITE_DONE) goto fail;
    sqlite3_finalize(st);
    *out = cols;
    return 0;
fail:
    sqlite3_finalize(st);
    for (size_t i = 0; i < *n; i++) free(cols[i]);
    free(cols);
    *n = 0;
    return -1;
}

static void free_columns(char **cols, size_t n)
{
    for (size_t i = 0; cols && i < n; i++) free(cols[i]);
    free(cols);
}

int cov_sqlite_has_table(sqlite3 *db, const char *name)
{
    sqlite3_stmt *st = NULL;
    if (sqlite3_prepare_v2(db, "SELECT 1 FROM sqlite_master WHERE type = 'table' AND name = ?1",
                           -1, &st, NULL))
        return -1;
    sqlite3_bind_text(st, 1, name, -1, SQLITE_STATIC);
    int r = sqlite3_step(st);
    sqlite3_finalize(st);
    return r == SQLITE_ROW ? 1 : r == SQLITE_DONE ? 0 : -1;
}

/* Read-only by design: analysis never changes the user's archive. The `immutable` URI parameter
 * is not used: it skips locking, and another process appending at the same time would then be
 * read half-written. Plain SQLITE_OPEN_READONLY takes a shared lock and never writes the file. */
int cov_archive_open(const char *path, const char *table, cov_archive **out, cov_error *err)
{
    *out = NULL;
    if (table == NULL) table = COV_DEFAULT_TABLE;
    struct stat sb;
    if (stat(path, &sb) != 0)
        return cov_fail(err, COV_EINPUT, path, "cannot open the archive: %s", strerror(errno));
    if (!S_ISREG(sb.st_mode))
        return cov_fail(err, COV_EINPUT, path, "found a directory or device, expected an SQLite "
                        "archive file");
    int rc = COV_ENOMEM;
    cov_archive *a = calloc(1, sizeof *a);
    if (a == NULL) return cov_fail(err, COV_ENOMEM, path, "out of memory");
    a->path = strdup(path);
    a->table = strdup(table);
    if (a->path == NULL || a->table == NULL) {
        rc = cov_fail(err, COV_ENOMEM, path, "out of memory");
        goto fail;
    }
    /* NOMUTEX: the connection is used by one thread at a time, and reading skips a lock per
     * value (see cov_data_read). */
    if (sqlite3_open_v2(path, &a->db, SQLITE_OPEN_READONLY | SQLITE_OPEN_NOMUTEX, NULL)) {
        rc = sql_fail(err, a->db, path, "cannot open the archive");
        goto fail;
    }
    sqlite3_busy_timeout(a->db, ARCHIVE_BUSY_MS);
    /* A second guard: this connection refuses any statement that would write. */
    if (sqlite3_exec(a->db, "PRAGMA query_only = 1", NULL, NULL, NULL) != SQLITE_OK) {
        rc = sql_fail(err, a->db, path, "cannot read the archive");
        goto fail;
    }
    if (sqlite3_exec(a->db, "SELECT count(*) FROM sqlite_master", NULL, NULL, NULL) != SQLITE_OK) {
        rc = cov_archive_explain_journal(a->db, path, err);
        if (rc == COV_OK) rc = sql_fail(err, a->db, path, "cannot read the archive");
        goto fail;
    }
    if (table_columns(a->db, table, &a->cols, &a->n_cols) != 0) {
        rc = sql_fail(err, a->db, path, "cannot read the archive's tables");
        goto fail;
    }
    if (a->n_cols == 0) {
        rc = cov_fail(err, COV_EINPUT, path, "found no table '%s', expected the table of runs "
                      "(choose another with --table)", table);
        goto fail;
    }
    int owned = cov_sqlite_has_table(a->db, BATCH_TABLE);
    if (owned < 0) {
        rc = sql_fail(err, a->db, path, "cannot read the archive's tables");
        goto fail;
    }
    a->owned = owned;
    *out = a;
    return COV_OK;
fail:
    cov_archive_close(a);
    return rc;
}

void cov_archive_close(cov_archive *a)
{
    if (a == NULL) return;
    sqlite3_close(a->db);
    free_columns(a->cols, a->n_cols);
    free(a->path);
    free(a->table);
    free(a);
}

int cov_archive_owned(const cov_archive *a) { return a->owned; }
const char *cov_archive_path(const cov_archive *a) { return a->path; }
struct sqlite3 *cov_archive_db(cov_archive *a) { return a->db; }
const char *cov_archive_table(const cov_archive *a) { return a->table; }
size_t cov_archive_n_columns(const cov_archive *a) { return a->n_cols; }
const char *cov_archive_column(const cov_archive *a, size_t i) { return a->cols[i]; }

void cov_batches_free(cov_batch *b, size_t n)
{
    for (size_t i = 0; b && i < n; i++) {
        free(b[i].imported_at);
        free(b[i].source);
    }
    free(b);
}

int cov_archive_batches(cov_archive *a, cov_batch **out, size_t *n, cov_error *err)
{
    *out = NULL;
    *n = 0;
    if (!a->owned) return COV_OK;
    sqlite3_stmt *st = NULL;
    cov_batch *b = NULL;
    size_t nb = 0, cap = 0;
    int rc = COV_ENOMEM;
    if (sqlite3_prepare_v2(a->db, "SELECT id, imported_at, source, rows FROM " BATCH_TABLE
                           " ORDER BY id", -1, &st, NULL) != SQLITE_OK) {
        rc = sql_fail(err, a->db, a->path, "cannot read the batches");
        goto fail;
    }
    int r;
    while ((r = sqlite3_step(st)) == SQLITE_ROW) {
        if (nb == cap) {
            cap = cap ? cap * 2 : 16;
            cov_batch *p = realloc(b, cap * sizeof *p);
            if (p == NULL) goto nomem;
            b = p;
        }
        const char *at = (const char *)sqlite3_column_text(st, 1);
        const char *src = (const char *)sqlite3_column_text(st, 2);
        b[nb].id = sqlite3_column_int64(st, 0);
        b[nb].rows = sqlite3_column_int64(st, 3);
        b[nb].imported_at = strdup(at ? at : "");
        b[nb].source = strdup(src ? src : "");
        nb++;
        if (b[nb - 1].imported_at == NULL || b[nb - 1].source == NULL) goto nomem;
    }
    if (r != SQLITE_DONE) {
        rc = sql_fail(err, a->db, a->path, "cannot read the batches");
        goto fail;
    }
    sqlite3_finalize(st);
    *out = b;
    *n = nb;
    return COV_OK;
nomem:
    rc = cov_fail(err, COV_ENOMEM, a->path, "out of memory");
fail:
    sqlite3_finalize(st);
    cov_batches_free(b, nb);
    return rc;
}

/* ---- import --------------------------------------------------------------------------------- */

enum { CELL_TEXT, CELL_INT, CELL_REAL };

/* Classify a CSV field as a decimal integer, a decimal real or text, with the one number reader
 * (cov_number_scan) that the archive reader and every other input use too. Only plain decimal
 * syntax counts as a number; "nan", "inf", hex, numbers too large for a double and integers with
 * leading zeros ("007", often an identifier) stay text. */
static int classify(const char *s, size_t len, long long *iv, double *dv)
{
    int leading_zero = 0;
    switch (cov_number_scan(s, len, iv, dv, &leading_zero)) {
    case COV_NUM_INT: return leading_zero ? CELL_TEXT : CELL_INT;
    case COV_NUM_REAL: return leading_zero ? CELL_TEXT : CELL_REAL;
    default: return CELL_TEXT;
    }
}

static int exec_sql(sqlite3 *db, const char *sql)
{
    return sqlite3_exec(db, sql, NULL, NULL, NULL);
}

/* The current time in UTC, ISO 8601. */
static void utc_now(char *buf, size_t n)
{
    time_t t = time(NULL);
    struct tm tm;
    if (gmtime_r(&t, &tm) == NULL || strftime(buf, n, "%Y-%m-%dT%H:%M:%SZ", &tm) == 0)
        snprintf(buf, n, "unknown");
}

/* Create the table of runs, or add the columns this CSV brings, inside the open transaction. */
static int prepare_table(sqlite3 *db, const char *db_path, const char *table, cov_csv *csv,
                         cov_error *err)
{
    char **cols = NULL;
    size_t n_cols = 0;
    char *qt = cov_sql_ident(table);
    char *sql = NULL;
    int rc = COV_ENOMEM;
    if (qt == NULL) goto nomem;
    if (table_columns(db, table, &cols, &n_cols) != 0) {
        rc = sql_fail(err, db, db_path, "cannot read the archive's tables");
        goto fail;
    }
    size_t nf = cov_csv_n_fields(csv);
    if (n_cols == 0) {
        size_t len = strlen(qt) + 64;
        for (size_t i = 0; i < nf; i++) len += 2 * strlen(cov_csv_header(csv, i)) + 8;
        sql = malloc(len);
        if (sql == NULL) goto nomem;
        size_t at = (size_t)snprintf(sql, len, "CREATE TABLE %s(", qt);
        for (size_t i = 0; i < nf; i++) {
            /* No declared type: each value keeps the storage class it was bound with. */
            char *q = cov_sql_ident(cov_csv_header(csv, i));
            if (q == NULL) goto nomem;
            at += (size_t)snprintf(sql + at, len - at, "%s, ", q);
            free(q);
        }
        snprintf(sql + at, len - at, "\"" BATCH_COLUMN "\" INTEGER)");
        if (exec_sql(db, sql) != SQLITE_OK) {
            rc = sql_fail(err, db, db_path, "cannot create the table of runs");
            goto fail;
        }
    } else {
        int has_batch = 0;
        for (size_t j = 0; j < n_cols; j++)
            if (cov_ascii_casecmp(cols[j], BATCH_COLUMN) == 0) has_batch = 1;
        for (size_t i = 0; i <= nf; i++) {
            const char *name = i < nf ? cov_csv_header(csv, i) : BATCH_COLUMN;
            if (i == nf && has_batch) break;
            int found = 0;
            for (size_t j = 0; j < n_cols && !found; j++)
                found = cov_ascii_casecmp(cols[j], name) == 0;
            if (found) continue;
            char *q = cov_sql_ident(name);
            if (q == NULL) goto nomem;
            free(sql);
            size_t len = strlen(qt) + strlen(q) + 64;
            sql = malloc(len);
            if (sql == NULL) {
                free(q);
                goto nomem;
            }
            snprintf(sql, len, "ALTER TABLE %s ADD COLUMN %s%s", qt, q,
                     i == nf ? " INTEGER" : "");
            free(q);
            if (exec_sql(db, sql) != SQLITE_OK) {
                rc = sql_fail(err, db, db_path, "cannot add a column to the table of runs");
                goto fail;
            }
        }
    }
    rc = COV_OK;
    goto done;
nomem:
    rc = cov_fail(err, COV_ENOMEM, db_path, "out of memory");
fail:
done:
    free(sql);
    free(qt);
    free_columns(cols, n_cols);
    return rc;
}

/* INSERT INTO table(h1, ..., hn, shoal_batch) VALUES(?1, ..., ?n+1). */
static char *insert_sql(const char *table, cov_csv *csv)
{
    size_t nf = cov_csv_n_fields(csv);
    char *qt = cov_sql_ident(table);
    if (qt == NULL) return NULL;
    size_t len = strlen(qt) + 64 + nf * 16;
    for (size_t i = 0; i < nf; i++) len += 2 * strlen(cov_csv_header(csv, i)) + 4;
    char *sql = malloc(len);
    if (sql == NULL) {
        free(qt);
        return NULL;
    }
    size_t at = (size_t)snprintf(sql, len, "INSERT INTO %s(", qt);
    free(qt);
    for (size_t i = 0; i < nf; i++) {
        char *q = cov_sql_ident(cov_csv_header(csv, i));
        if (q == NULL) {
            free(sql);
            return NULL;
        }
        at += (size_t)snprintf(sql + at, len - at, "%s, ", q);
        free(q);
    }
    at += (size_t)snprintf(sql + at, len - at, "\"" BATCH_COLUMN "\") VALUES(");
    for (size_t i = 0; i <= nf; i++)
        at += (size_t)snprintf(sql + at, len - at, i < nf ? "?%zu, " : "?%zu)", i + 1);
    return sql;
}

/* "batch 2 (imported 2026-12-05T14:59:47Z from runs.csv)" for the refusal message. */
static void describe_batch(sqlite3 *db, long long id, char *buf, size_t n)
{
    sqlite3_stmt *st = NULL;
    snprintf(buf, n, "batch %lld", id);
    if (sqlite3_prepare_v2(db, "SELECT imported_at, source FROM " BATCH_TABLE " WHERE id = ?1",
                           -1, &st, NULL) == SQLITE_OK) {
        sqlite3_bind_int64(st, 1, id);
        if (sqlite3_step(st) == SQLITE_ROW)
            snprintf(buf, n, "batch %lld (imported %.40s from %.300s)", id,
                     (const char *)sqlite3_column_text(st, 0),
                     (const char *)sqlite3_column_text(st, 1));
    }
    sqlite3_finalize(st);
}

int cov_import_into(const char *csv_path, const char *db_path, const char *table, int again,
                    long long *batch_id, size_t *rows, cov_import_overlap *ov, cov_error *err)
{
    cov_overlap *seen = NULL;
    cov_import_overlap local;
    if (ov == NULL) ov = &local;
    memset(ov, 0, sizeof *ov);
    if (table == NULL) table = COV_DEFAULT_TABLE;
    *batch_id = 0;
    *rows = 0;
    if (table[0] == '\0' || cov_ascii_casecmp(table, BATCH_TABLE) == 0 ||
        strncmp(table, "sqlite_", 7) == 0 || strncmp(table, "SQLITE_", 7) == 0)
        return cov_fail(err, COV_EINPUT, "", "found the table name '%s', expected a name that is "
                        "not empty, not '" BATCH_TABLE "' and not starting with 'sqlite_'", table);
    cov_csv *csv = NULL;
    sqlite3 *db = NULL;
    sqlite3_stmt *ins = NULL, *st = NULL;
    char *sql = NULL;
    int in_tx = 0, rc;

    rc = cov_csv_open(csv_path, &csv, err);
    if (rc) goto fail;
    size_t nf = cov_csv_n_fields(csv);
    for (size_t i = 0; i < nf; i++) {
        if (cov_ascii_casecmp(cov_csv_header(csv, i), BATCH_COLUMN) == 0) {
            char where[512];
            snprintf(where, sizeof where, "%s:1", csv_path);
            rc = cov_fail(err, COV_EINPUT, where, "found the column name '%s', expected another "
                          "name: shoal keeps the batch of each run there", cov_csv_header(csv, i));
            goto fail;
        }
    }
    /* No SQLITE_OPEN_CREATE: cov_import_csv (archive_create.c) makes a new archive beside the
     * target and links it into place, so this only ever opens a file that exists. */
    if (sqlite3_open_v2(db_path, &db, SQLITE_OPEN_READWRITE, NULL)) {
        rc = sql_fail(err, db, db_path, "cannot open or create the archive");
        goto fail;
    }
    sqlite3_busy_timeout(db, ARCHIVE_BUSY_MS);
    if (nf + 1 > (size_t)sqlite3_limit(db, SQLITE_LIMIT_VARIABLE_NUMBER, -1) ||
        nf + 1 > (size_t)sqlite3_limit(db, SQLITE_LIMIT_COLUMN, -1)) {
        rc = cov_fail(err, COV_EINPUT, csv_path, "found %zu columns, expected at most %d (the "
                      "SQLite column limit)", nf, sqlite3_limit(db, SQLITE_LIMIT_COLUMN, -1) - 1);
        goto fail;
    }
    /* The rollback journal stays on and synchronous stays FULL, so a crash mid-import leaves the
     * archive as it was; the only fsyncs are at the one commit. A large page cache keeps the new
     * pages in memory until then. */
    if (exec_sql(db, "PRAGMA cache_size = " IMPORT_CACHE_KIB) ||
        exec_sql(db, "BEGIN IMMEDIATE")) {
        rc = sql_fail(err, db, db_path, "cannot start the import");
        goto fail;
    }
    in_tx = 1;
    if (exec_sql(db, "CREATE TABLE IF NOT EXISTS " BATCH_TABLE "(id INTEGER PRIMARY KEY, "
                 "imported_at TEXT NOT NULL, source TEXT NOT NULL, rows INTEGER NOT NULL)")) {
        rc = sql_fail(err, db, db_path, "cannot create the batch table");
        goto fail;
    }
    rc = prepare_table(db, db_path, table, csv, err);
    if (rc) goto fail;
    /* The rows already stored, by content, before this batch adds any (coverage/overlap.c). */
    {
        const char **cols = malloc((nf + 1) * sizeof *cols);
        if (cols == NULL) {
            rc = cov_fail(err, COV_ENOMEM, db_path, "out of memory");
            goto fail;
        }
        for (size_t i = 0; i < nf; i++) cols[i] = cov_csv_header(csv, i);
        rc = cov_overlap_load(db, table, cols, nf, &seen, err);
        free(cols);
        if (rc) goto fail;
    }

    char now[32];
    utc_now(now, sizeof now);
    if (sqlite3_prepare_v2(db, "INSERT INTO " BATCH_TABLE "(imported_at, source, rows) "
                           "VALUES(?1, ?2, 0)", -1, &st, NULL) != SQLITE_OK) {
        rc = sql_fail(err, db, db_path, "cannot record the batch");
        goto fail;
    }
    sqlite3_bind_text(st, 1, now, -1, SQLITE_STATIC);
    sqlite3_bind_text(st, 2, csv_path, -1, SQLITE_STATIC);
    if (sqlite3_step(st) != SQLITE_DONE) {
        rc = sql_fail(err, db, db_path, "cannot record the batch");
        goto fail;
    }
    sqlite3_finalize(st);
    st = NULL;
    long long batch = sqlite3_last_insert_rowid(db);

    sql = insert_sql(table, csv);
    if (sql == NULL) {
        rc = cov_fail(err, COV_ENOMEM, db_path, "out of memory");
        goto fail;
    }
    if (sqlite3_prepare_v2(db, sql, -1, &ins, NULL) != SQLITE_OK) {
        rc = sql_fail(err, db, db_path, "cannot prepare the insert");
        goto fail;
    }
    /* Bindings survive sqlite3_reset, so the batch id is bound once. */
    sqlite3_bind_int64(ins, (int)nf + 1, batch);
    size_t n = 0;
    for (;;) {
        int got = 0;
        rc = cov_csv_next(csv, &got, err);
        if (rc) goto fail;
        if (!got) break;
        uint64_t h = cov_overlap_start();
        for (size_t i = 0; i < nf; i++) {
            size_t len;
            const char *f = cov_csv_field(csv, i, &len);
            long long iv;
            double dv;
            int col = (int)i + 1;
            if (len == 0) {
                sqlite3_bind_null(ins, col);
                h = cov_overlap_null(h);
                continue;
            }
            switch (classify(f, len, &iv, &dv)) {
            case CELL_INT:
                sqlite3_bind_int64(ins, col, iv);
                h = cov_overlap_int(h, iv);
                break;
            case CELL_REAL:
                sqlite3_bind_double(ins, col, dv);
                h = cov_overlap_real(h, dv);
                break;
            default:
                sqlite3_bind_text(ins, col, f, (int)len, SQLITE_STATIC);
                h = cov_overlap_text(h, f, len);
                break;
            }
        }
        cov_overlap_match(seen, h);
        if (sqlite3_step(ins) != SQLITE_DONE) {
            rc = sql_fail(err, db, db_path, "cannot insert a row");
            goto fail;
        }
        sqlite3_reset(ins);
        n++;
    }
    cov_overlap_result(seen, ov);
    if (ov->matched > 0) {
        long long first = ov->n_batches > 0 ? ov->batch[0] : 0;
        for (size_t k = 1; k < ov->n_batches; k++)
            if (ov->batch[k] < first) first = ov->batch[k];
        if (first > 0) describe_batch(db, first, ov->first_batch, sizeof ov->first_batch);
        else snprintf(ov->first_batch, sizeof ov->first_batch, "rows the archive held before "
                      "any batch");
    }
    /* A file whose every row is already stored is a repeated import (a script run twice, a
     * retried job): refuse it unless the user asks for it, and leave the archive as it was. */
    if (n > 0 && ov->matched == n && !again) {
        char where[512];
        snprintf(where, sizeof where, "%s", csv_path);
        rc = cov_fail(err, COV_EINPUT, where, "found all %zu rows already in %s, first imported "
                      "as %s; expected new runs, so nothing was imported (pass --again to append "
                      "them anyway: each run still counts once)", n, db_path, ov->first_batch);
        goto fail;
    }
    if (sqlite3_prepare_v2(db, "UPDATE " BATCH_TABLE " SET rows = ?1 WHERE id = ?2", -1, &st,
                           NULL) != SQLITE_OK) {
        rc = sql_fail(err, db, db_path, "cannot record the batch");
        goto fail;
    }
    sqlite3_bind_int64(st, 1, (long long)n);
    sqlite3_bind_int64(st, 2, batch);
    if (sqlite3_step(st) != SQLITE_DONE) {
        rc = sql_fail(err, db, db_path, "cannot record the batch");
        goto fail;
    }
    sqlite3_finalize(st);
    st = NULL;
    sqlite3_finalize(ins);
    ins = NULL;
    if (exec_sql(db, "COMMIT")) {
        rc = sql_fail(err, db, db_path, "cannot commit the import");
        goto fail;
    }
    in_tx = 0;
    if (sqlite3_close(db) != SQLITE_OK) {
        rc = sql_fail(err, db, db_path, "cannot close the archive");
        db = NULL;
        goto fail;
    }
    db = NULL;
    free(sql);
    cov_csv_close(csv);
    cov_overlap_free(seen);
    *batch_id = batch;
    *rows = n;
    return COV_OK;
fail:
    sqlite3_finalize(st);
    sqlite3_finalize(ins);
    if (in_tx) exec_sql(db, "ROLLBACK");
    sqlite3_close(db);
    free(sql);
    cov_csv_close(csv);
    cov_overlap_free(seen);
    return rc;
}
